"""Per-case lists written from padded blocks are the same JSON text, byte for byte, as orjson
writes the Python lists the columns layout makes of them.

Reference: ``orjson.dumps(value, option=orjson.OPT_SERIALIZE_NUMPY)`` (orjson, from PyPI) of the
lists of :func:`service.api.layout._ragged` and :func:`service.api.layout._ragged_check`, the
layout of an answer that is not streamed.
"""

from types import SimpleNamespace

import numpy as np
import orjson
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from service.api import liststext
from service.api.layout import _ragged, _ragged_check
from service.api.outcome import NO_STATUS
from service.core.checks import STATUSES

OPTION = orjson.OPT_SERIALIZE_NUMPY
STATUS_OBJECTS = np.array(STATUSES, dtype=object)
#: The piece size a fixture sets holds for every example of a test.
SAME_FIXTURE = [HealthCheck.function_scoped_fixture]

# Numbers and nulls anywhere in a row: padding after the last number, gaps inside, rows without one,
# infinities (written as null), signed zeros, the extremes of a double.
numbers = st.floats(allow_nan=True, allow_infinity=True) | st.sampled_from([np.nan, 0.0, -0.0, 5e-324, 1e300])
# Whole numbers (a count) within what a double holds exactly, and gaps.
whole = st.integers(-(2**53) + 1, 2**53 - 1).map(float) | st.just(np.nan)


def blocks(elements):
    return hnp.arrays(np.float64, st.tuples(st.integers(0, 9), st.integers(1, 6)), elements=elements)


@pytest.fixture(params=[1, 3, 2_048])
def per_piece(request, monkeypatch):
    monkeypatch.setattr(liststext, "CASES_PER_PIECE", request.param)
    return request.param


def _written(writer) -> bytes:
    return b"".join(writer.json_pieces())


def _chunks(block: np.ndarray, cuts: int) -> list[np.ndarray]:
    """The block as the outcomes of chunks computed in turn give it: consecutive cases, each chunk
    as wide as its longest list (at least one entry)."""
    chunks = np.array_split(block, cuts) if len(block) else [block]
    return [c[:, :max(1, int(liststext.list_lengths(np.isfinite(c)).max(initial=0)))] for c in chunks]


@settings(max_examples=150, deadline=None, suppress_health_check=SAME_FIXTURE)
@given(blocks(numbers), st.booleans(), st.integers(1, 4))
def test_an_output_column_is_the_text_of_its_lists(per_piece, block, padded, cuts):
    if padded:  # the usual layout: NaN after each row's own length
        block[np.arange(block.shape[1])[None, :] >= (np.arange(len(block)) % (block.shape[1] + 1))[:, None]] = np.nan
    calculation = SimpleNamespace(_integer_outputs=frozenset())
    expected = orjson.dumps(_ragged(calculation, "x", block), option=OPTION)
    assert _written(liststext.RaggedColumn([block], integer=False)) == expected
    assert _written(liststext.RaggedColumn(_chunks(block, cuts), integer=False)) == expected


@settings(max_examples=100, deadline=None, suppress_health_check=SAME_FIXTURE)
@given(blocks(whole), st.integers(1, 4))
def test_a_whole_number_column_is_the_text_of_its_lists_of_integers(per_piece, block, cuts):
    calculation = SimpleNamespace(_integer_outputs=frozenset({"n"}))
    expected = orjson.dumps(_ragged(calculation, "n", block), option=OPTION)
    assert _written(liststext.RaggedColumn([block], integer=True)) == expected
    assert _written(liststext.RaggedColumn(_chunks(block, cuts), integer=True)) == expected


@settings(max_examples=150, deadline=None, suppress_health_check=SAME_FIXTURE)
@given(st.data())
def test_a_per_stage_check_is_the_text_of_its_finite_entries_and_their_statuses(per_piece, data):
    value = data.draw(blocks(numbers))
    code = data.draw(hnp.arrays(np.uint8, value.shape, elements=st.integers(0, len(STATUSES) - 1)))
    cut = data.draw(st.integers(0, len(value)))
    values, statuses = _ragged_check(value, STATUS_OBJECTS[code])
    in_turn = ([value[:cut], value[cut:]], [code[:cut], code[cut:]])  # two chunks' blocks
    for value_blocks, code_blocks in [([value], [code]), in_turn]:
        for part, expected in (("value", values), ("status", statuses)):
            written = _written(liststext.RaggedCheck(value_blocks, code_blocks, part))
            assert written == orjson.dumps(expected, option=OPTION)


@settings(max_examples=100, deadline=None, suppress_health_check=SAME_FIXTURE)
@given(hnp.arrays(np.uint8, st.integers(0, 9), elements=st.integers(0, NO_STATUS)))
def test_a_check_status_column_is_the_text_of_its_statuses(per_piece, code):
    # A code past the statuses is a case that failed: null, as the layout not streamed writes it.
    expected = [STATUSES[c] if c < NO_STATUS else None for c in code.tolist()]
    assert _written(liststext.StatusColumn(code)) == orjson.dumps(expected)


def test_rows_without_a_list_and_gaps_are_null():
    # Spelled out: null for a row without a number, null inside a list, the padding cut.
    block = np.array([[np.nan, np.nan, np.nan], [1.5, np.nan, 2.0], [3.0, np.nan, np.nan], [np.nan, 4.0, np.nan]])
    assert liststext.output_text(block, integer=False) == b"[null,[1.5,null,2.0],[3.0],[null,4.0]]"
    assert liststext.output_text(block, integer=True) == b"[null,[1,null,2],[3],[null,4]]"
    code = np.array([[0, 0, 0], [1, 2, 0], [2, 0, 0], [0, 1, 0]], dtype=np.uint8)
    assert liststext.check_text(block, code, "value") == b"[null,[1.5,2.0],[3.0],[4.0]]"
    assert liststext.check_text(block, code, "status") == b'[null,["warn","ok"],["fail"],["warn"]]'
