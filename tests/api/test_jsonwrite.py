"""A streamed answer is the same JSON text, byte for byte, as orjson writes it in one piece.

Reference: ``orjson.dumps(value, option=orjson.OPT_SERIALIZE_NUMPY)`` (orjson, from PyPI), the
writer the service used for every answer before large ones were streamed.
"""

import numpy as np
import orjson
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from service.api import jsonwrite

OPTION = orjson.OPT_SERIALIZE_NUMPY

leaves = (st.none() | st.booleans() | st.integers(min_value=-(2**63), max_value=2**63 - 1)
          | st.floats(allow_nan=True, allow_infinity=True) | st.text(max_size=5)
          | hnp.arrays(np.float64, st.integers(0, 5), elements=st.floats(allow_nan=True, allow_infinity=True))
          | hnp.arrays(np.int64, st.integers(0, 5)))
values = st.recursive(
    leaves,
    lambda children: st.lists(children, max_size=12) | st.dictionaries(st.text(max_size=4), children, max_size=5),
    max_leaves=40,
)


@settings(max_examples=200, deadline=None)
@given(values)
def test_pieces_join_to_the_text_of_one_dump(value):
    expected = orjson.dumps(value, option=OPTION)
    original = jsonwrite.ROWS_PER_PIECE, jsonwrite.PIECE_BYTES
    try:
        jsonwrite.ROWS_PER_PIECE, jsonwrite.PIECE_BYTES = 3, 16  # many slices and pieces
        assert b"".join(jsonwrite.pieces(value)) == expected
    finally:
        jsonwrite.ROWS_PER_PIECE, jsonwrite.PIECE_BYTES = original


def test_a_large_columns_answer_is_streamed_and_a_small_one_is_not():
    size = jsonwrite.STREAM_CASES
    body = {"columns": {"a": np.linspace(0.0, 1.0, size), "checks": {}}, "errors": []}
    streamed = jsonwrite.response(body)
    assert streamed.is_streamed and streamed.content_length is None
    assert b"".join(streamed.response) == orjson.dumps(body, option=OPTION)
    small = jsonwrite.response({"columns": {"a": np.zeros(size - 1)}, "errors": []})
    assert not small.is_streamed and small.content_length > 0


def test_a_key_that_is_not_a_string_is_refused_as_orjson_refuses_it():
    with pytest.raises(TypeError, match="str"):
        orjson.dumps({1: 2})
    with pytest.raises(TypeError, match="str"):
        b"".join(jsonwrite.pieces({1: 2}))
