"""Per-case lists of a columns answer (per stage, station or row) written as JSON text from the
NaN-padded blocks the core returns, a slice of cases at a time.

A batch of whole machines holds tens of millions of such numbers. Converted to a Python list of
floats per case, and written from those lists, they took about half of the answer's time
(``python -m tests.benchmarks --only machine-design``); here orjson writes each case's list
from a numpy view of one row, without a Python number per entry. The text is the same, byte for
byte, as ``orjson.dumps`` of the lists that :func:`service.api.layout._ragged` and
:func:`service.api.layout._ragged_check` make (``tests/api/test_liststext.py``).
"""

from __future__ import annotations

import numpy as np
import orjson

from service.api.outcome import status_objects
from service.core.checks import STATUSES

OPTION = orjson.OPT_SERIALIZE_NUMPY
#: Cases written at a time: the text of a slice stays small beside the answer's arrays.
CASES_PER_PIECE = 2_048
#: Stands for null in a block of whole numbers (outputs that are counts stay far below it).
_NO_WHOLE_NUMBER = np.iinfo(np.int64).min
_NO_WHOLE_NUMBER_TEXT = str(_NO_WHOLE_NUMBER).encode()
#: A status written as its code (one digit: three statuses), then as its string.
_STATUS_TEXTS = [(str(code).encode(), orjson.dumps(status)) for code, status in enumerate(STATUSES)]


def list_lengths(finite: np.ndarray) -> np.ndarray:
    """Per row of a NaN-padded block: the entries up to its last finite one (0 where none is)."""
    return np.where(finite.any(axis=1), finite.shape[1] - np.argmax(finite[:, ::-1], axis=1), 0)


def lists_text(block: np.ndarray, lengths: np.ndarray) -> bytes:
    """``orjson.dumps([row[:n].tolist() if n else None for row, n in zip(block, lengths)])`` of a
    2-D numeric block (NaN written as null): orjson writes each case's row as a numpy view, the
    views of the cases of one length taken from one copy of their block (no Python number, no
    slicing per case)."""
    rows = np.full(len(block), None, dtype=object)
    for n in np.unique(lengths).tolist():
        if n == 0:
            continue
        cases = np.flatnonzero(lengths == n)
        # One object per row (np.fromiter does not make a 2-D array of them), each C-contiguous.
        rows[cases] = np.fromiter(np.ascontiguousarray(block[cases, :n]), dtype=object, count=len(cases))
    return orjson.dumps(rows.tolist(), option=OPTION)


def output_text(block: np.ndarray, integer: bool) -> bytes:
    """A per-stage output of some cases: each case's list up to its last finite entry, a NaN
    before it (an entry that does not apply) null, null for a case without one; whole numbers
    as integers where ``integer``."""
    finite = np.isfinite(block)
    if integer:
        block = np.where(finite, block, 0.0).astype(np.int64)
        block[~finite] = _NO_WHOLE_NUMBER
    text = lists_text(block, list_lengths(finite))
    return text.replace(_NO_WHOLE_NUMBER_TEXT, b"null") if integer else text


def check_text(value: np.ndarray, code: np.ndarray, part: str) -> bytes:
    """The values (``part`` "value") or statuses ("status") of a per-stage (per-row) check of some
    cases: each case's finite entries and their statuses (``code``: positions in STATUSES), null
    for a case without one."""
    finite = np.isfinite(value)
    lengths = finite.sum(axis=1)
    block = value if part == "value" else code
    if (lengths < list_lengths(finite)).any():  # a gap inside a list: the finite entries moved first
        block = np.take_along_axis(block, np.argsort(~finite, axis=1, kind="stable"), axis=1)
    text = lists_text(block, lengths)
    if part == "status":
        for digit, status in _STATUS_TEXTS:
            text = text.replace(digit, status)
    return text


def _pieces(blocks: list, text_of):
    """The JSON list of the cases of consecutive blocks (lists of cases) from the texts of slices of
    each (``text_of(k, start, stop)`` of block ``k``), each text without its brackets and uncopied."""
    slices = [(k, start, min(start + CASES_PER_PIECE, len(block)))
              for k, block in enumerate(blocks) for start in range(0, len(block), CASES_PER_PIECE)]
    if not slices:
        yield b"[]"
        return
    for j, (k, start, stop) in enumerate(slices):
        yield b"[" if j == 0 else b","
        yield memoryview(text_of(k, start, stop))[1:-1]
    yield b"]"


class RaggedColumn:
    """A per-stage (per-station, per-row) output of a columns answer, given as the blocks of
    consecutive cases (one per chunk computed), written by :func:`output_text` a slice of cases
    at a time."""

    def __init__(self, blocks: list[np.ndarray], integer: bool):
        self.blocks, self.integer = blocks, integer

    def __len__(self) -> int:
        return sum(map(len, self.blocks))

    def json_pieces(self):
        yield from _pieces(self.blocks, lambda k, start, stop: output_text(self.blocks[k][start:stop], self.integer))


class RaggedCheck:
    """The values or the statuses (``part``) of a per-stage check of a columns answer, given as the
    blocks of consecutive cases (values and status codes), written by :func:`check_text` a slice of
    cases at a time."""

    def __init__(self, values: list[np.ndarray], codes: list[np.ndarray], part: str):
        self.values, self.codes, self.part = values, codes, part

    def __len__(self) -> int:
        return sum(map(len, self.values))

    def json_pieces(self):
        yield from _pieces(self.values, lambda k, start, stop: check_text(self.values[k][start:stop],
                                                                           self.codes[k][start:stop], self.part))


class StatusColumn:
    """The statuses of a check with one value per case in a columns answer, given as their codes
    (:class:`~service.api.outcome.CheckArrays`), written a slice of cases at a time: not
    one Python list of them all per check, alive beside the answer's arrays."""

    def __init__(self, codes: np.ndarray):
        self.codes = codes

    def __len__(self) -> int:
        return len(self.codes)

    def json_pieces(self):
        yield from _pieces([self.codes], lambda _, start, stop: orjson.dumps(
            status_objects(self.codes[start:stop]).tolist()))
