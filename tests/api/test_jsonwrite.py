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
    original = jsonwrite.ROWS_PER_PIECE, jsonwrite.PIECE_BYTES, jsonwrite.NUMBERS_PER_PIECE
    try:
        # Many slices of lists and arrays, many pieces.
        jsonwrite.ROWS_PER_PIECE, jsonwrite.PIECE_BYTES, jsonwrite.NUMBERS_PER_PIECE = 3, 16, 2
        assert b"".join(jsonwrite.pieces(value)) == expected
    finally:
        jsonwrite.ROWS_PER_PIECE, jsonwrite.PIECE_BYTES, jsonwrite.NUMBERS_PER_PIECE = original


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


@pytest.mark.parametrize("per_piece", [1, 2, 1000])
def test_the_errors_of_a_columns_answer_are_written_as_the_list_of_dicts(per_piece):
    # Per-case options split the batch into two groups (two outcomes whose cases interleave),
    # with failures in both, one of them a reason that states a number per case.
    from service.api.calculation import run_calculation
    from service.api.layout import ErrorsText
    from service.api.registry import CALCULATIONS

    diffusion = next(c for c in CALCULATIONS if c.name == "diffusion-factor")
    # Case 2 does not turn the flow; cases 1, 3, 4 and 5 ask for less than 1 - V2/V1.
    columns = {"row": ["rotor", "stator", "rotor", "stator", "rotor", "stator"], "axial_velocity": 150.0,
               "inlet_angle": [-55.0, 45.0, -40.0, 45.0, -55.0, 50.0],
               "outlet_angle": [-35.0, 15.0, -40.0, 15.0, -35.0, 20.0],
               "target_diffusion_factor": [0.45, 0.1, 0.45, 0.2, 0.01, 0.1]}
    listed, _ = run_calculation(diffusion, {"columns": columns}, 100)
    streamed, _ = run_calculation(diffusion, {"columns": columns}, 100, stream=True)
    assert isinstance(streamed["errors"], ErrorsText)
    assert [e["index"] for e in listed["errors"]] == [1, 2, 3, 4, 5]
    assert len({e["detail"] for e in listed["errors"]}) == 4
    assert len(streamed["errors"]) == len(listed["errors"])
    original = ErrorsText.CASES_PER_PIECE
    try:
        ErrorsText.CASES_PER_PIECE = per_piece
        assert b"".join(jsonwrite.pieces(streamed)) == orjson.dumps(listed, option=OPTION)
        assert jsonwrite.response(streamed).get_data() == orjson.dumps(listed, option=OPTION)
    finally:
        ErrorsText.CASES_PER_PIECE = original
    # No failed case: an empty list.
    columns = {**columns, "row": "rotor", "inlet_angle": -55.0, "outlet_angle": [-35.0] * 6,
               "target_diffusion_factor": 0.5}
    streamed, _ = run_calculation(diffusion, {"columns": columns}, 100, stream=True)
    assert len(streamed["errors"]) == 0
    assert b'"errors":[]' in jsonwrite.response(streamed).get_data()
