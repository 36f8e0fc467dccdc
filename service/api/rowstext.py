"""The ``results`` of a rows answer written as JSON text, a slice of rows at a time.

A 100,000-case rows answer of the triangles is about 180 MB: every case repeats 42 keys and four
checks with their rule texts. A dict per case written by orjson costs more than the numbers
themselves, so the text is assembled instead, with the same bytes as
``orjson.dumps(rows, option=OPT_SERIALIZE_NUMPY)`` of the rows laid out one dict per case.

One case's object is laid out once per outcome as a list of parts (:class:`_RowLayout`): the
constant texts (keys, a rule's limit, comparison and basis) and the slots between them. A slot is
a column of numbers, or a check's status. A slice of rows is then one list (the layout repeated)
whose slots are filled a column at a time by slice assignment, and one join:

- each column's numbers are written by one ``orjson.dumps`` of the array slice and split at the
  commas; columns that are equal bit for bit (an output that repeats another, a check that judges
  an output) are written once and their texts shared, and a column with one value in every case
  is written once, into the constant text around it;
- a status is looked up in a small table of whole texts, one per status, that hold the constant
  texts before and after it (from the check's ``"limit"`` to its ``"basis"`` and the next key).
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

import numpy as np
import orjson

from service.core.checks import STATUSES

NUMPY = orjson.OPT_SERIALIZE_NUMPY
#: The texts are joined as ``str`` (``str.join`` takes about half the time of ``bytes.join`` per
#: part), each byte of orjson's UTF-8 as the one character of Latin-1 with that code, so that
#: encoding the joined text as Latin-1 gives back the very bytes.
BYTES = "latin-1"


class RowsText:
    """The ``results`` of a rows answer, written as JSON text a slice of rows at a time.

    Only for outcomes whose outputs and checks are one number per case (see :meth:`takes`).
    Where outcomes of different options interleave, each outcome's cases in the slice are filled
    the same way, and their parts taken in request order a run of neighbouring cases at a time.
    """

    ROWS_PER_PIECE = 1_000

    def __init__(self, calculation, outcomes: list, size: int):
        self.integer_outputs = calculation._integer_outputs
        self.outcomes, self.size = outcomes, size

    @staticmethod
    def takes(outcomes: list) -> bool:
        return all(o.values or o.checks for o in outcomes) and all(
            a.ndim == 1 for o in outcomes for a in o.values.values()) and all(
            c["value"].ndim == 1 for o in outcomes for c in o.checks.values()) and all(
            len(o.index) < 2 or bool((np.diff(o.index) > 0).all()) for o in outcomes)

    def __len__(self) -> int:
        return self.size

    def json_pieces(self):
        layouts = [_RowLayout(outcome, self.integer_outputs) for outcome in self.outcomes]
        for start in range(0, self.size, self.ROWS_PER_PIECE):
            stop = min(start + self.ROWS_PER_PIECE, self.size)
            if len(layouts) == 1:  # one outcome holds every case, in order
                parts = layouts[0].filled(start, stop)
            else:
                parts = self._interleaved(layouts, start, stop)
            parts[0] = ("[" if start == 0 else ",") + parts[0][1:]
            if stop == self.size:
                parts.append("]")
            yield "".join(parts).encode(BYTES)

    def _interleaved(self, layouts: list[_RowLayout], start: int, stop: int) -> list[str]:
        """The parts of cases ``start`` to ``stop`` where outcomes interleave: each outcome's cases
        in the slice filled at once, then taken in request order a run of neighbours at a time."""
        owner = np.empty(stop - start, dtype=np.intp)
        filled, widths = [], []
        for k, (outcome, layout) in enumerate(zip(self.outcomes, layouts, strict=True)):
            lo, hi = np.searchsorted(outcome.index, (start, stop)).tolist()
            owner[outcome.index[lo:hi] - start] = k
            filled.append(layout.filled(lo, hi) if lo < hi else [])
            widths.append(len(layout.parts))
        runs = np.flatnonzero(np.diff(owner)) + 1
        bounds = [0, *runs.tolist(), stop - start]
        taken = [0] * len(filled)  # parts of each outcome already placed
        parts: list[str] = []
        for k, first, last in zip(owner[bounds[:-1]].tolist(), bounds[:-1], bounds[1:], strict=True):
            end = taken[k] + (last - first) * widths[k]
            parts += filled[k][taken[k]:end]
            taken[k] = end
        return parts


class _Column:
    """A slot filled with the numbers of one column: its values' JSON texts, case by case."""

    def __init__(self, array: np.ndarray, whole: bool):
        self.array, self.whole = np.ascontiguousarray(array, dtype=np.float64), whole
        # Compared bit for bit, so that -0.0 and 0.0 (or two NaNs of other payloads) stay apart.
        self.bits = self.array.view(np.uint64)

    def constant_text(self) -> str | None:
        """The text of the column's one value, if every case holds the same value bit for bit."""
        if len(self.bits) and (self.bits == self.bits[0]).all():
            return self.tokens(0, 1)[0]
        return None

    def tokens(self, lo: int, hi: int) -> list[str]:
        return _whole_tokens(self.array[lo:hi]) if self.whole else _number_tokens(self.array[lo:hi])


class _Status:
    """A slot filled with a check's status in each case, with the constant texts either side."""

    def __init__(self, status: np.ndarray):
        self.status, self.before, self.after = status, "", ""
        self.texts: dict = {}

    def tokens(self, lo: int, hi: int) -> list[str]:
        statuses = self.status[lo:hi].tolist()
        if not self.texts:
            self.texts = {status: self._text(status) for status in (*STATUSES, None)}
        try:
            return list(map(self.texts.__getitem__, statuses))
        except (KeyError, TypeError):  # a status outside STATUSES
            return list(map(self._lookup, statuses))

    def _lookup(self, status) -> str:
        try:
            return self.texts[status]
        except (KeyError, TypeError):
            return self._text(status)

    def _text(self, status) -> str:
        return self.before + orjson.dumps(status, option=NUMPY).decode(BYTES) + self.after


class _RowLayout:
    """One outcome's case object as constant texts and slots, in the order of the dict layout:
    the outputs, then ``"checks"`` with each check's value, limit, fail_limit, comparison, status
    and basis."""

    def __init__(self, outcome, integer_outputs: frozenset):
        columns: dict[tuple, list[_Column]] = {}
        items = [item.decode(BYTES) if isinstance(item, bytes) else item
                 for item in _case_items(outcome, integer_outputs, columns)]
        constants = {id(column): column.constant_text() for same in columns.values() for column in same}
        parts = _merged(constants.get(id(item)) or item if isinstance(item, _Column) else item for item in items)
        #: The parts of one case: its texts in place, None where a slot goes.
        self.parts = [part if isinstance(part, str) else None for part in parts]
        self.slots = [(position, part) for position, part in enumerate(parts) if not isinstance(part, str)]

    def filled(self, lo: int, hi: int) -> list[str]:
        """The parts of the outcome's cases ``lo`` to ``hi``, each case's first part led by a comma."""
        width = len(self.parts)
        parts = ["," + self.parts[0], *self.parts[1:]] * (hi - lo)
        texts: dict[int, list[str]] = {}  # a column shared by several slots is written once
        for position, slot in self.slots:
            tokens = texts.get(id(slot))
            if tokens is None:
                tokens = texts[id(slot)] = slot.tokens(lo, hi)
            parts[position::width] = tokens
        return parts


def _case_items(outcome, integer_outputs: frozenset, columns: dict[tuple, list[_Column]]) -> list:
    """One case's object as texts (bytes) and slots, in the order of the dict layout; equal
    columns are listed once in ``columns`` and shared."""
    items: list = []
    for k, (name, array) in enumerate(outcome.values.items()):
        items += [(b"{" if k == 0 else b",") + orjson.dumps(name) + b":",
                  _shared(columns, _Column(array, name in integer_outputs))]
    items.append((b"," if outcome.values else b"{") + b'"checks":{')
    for k, (name, check) in enumerate(outcome.checks.items()):
        items += _check_items((b"," if k else b"") + orjson.dumps(name), check, columns)
    items.append(b"}}")
    return items


def _check_items(key: bytes, check: dict, columns: dict[tuple, list[_Column]]) -> list:
    """A check's member (its key ``key`` already written with the separator before it): the value
    slot, the limit, fail_limit and comparison texts, the status slot and the basis."""
    return [key + b':{"value":',
            _shared(columns, _Column(check["value"], False)),
            b',"limit":' + orjson.dumps(check["limit"], option=NUMPY)
            + b',"fail_limit":' + orjson.dumps(check["fail_limit"], option=NUMPY)
            + b',"comparison":' + orjson.dumps(check["comparison"], option=NUMPY) + b',"status":',
            _Status(check["status"]),
            b',"basis":' + orjson.dumps(check["basis"], option=NUMPY) + b"}"]


def _shared(columns: dict[tuple, list[_Column]], column: _Column) -> _Column:
    """``column``, or an equal one already listed. Columns are listed by a sample of their values,
    so that each is compared in full only with those that may be equal to it."""
    bits = column.bits
    key = (column.whole, len(bits), bits[::max(1, len(bits) // 16)].tobytes(), bits[-1:].tobytes())
    same = columns.setdefault(key, [])
    for other in same:
        if np.array_equal(other.bits, bits):
            return other
    same.append(column)
    return column


def _merged(items: Iterable[Any]) -> list:
    """Adjacent texts joined into one, and each status slot given the texts either side of it
    (but never the case's first text, where the separator between cases goes)."""
    merged: list = []
    for item in items:
        if isinstance(item, str) and merged and isinstance(merged[-1], str):
            merged[-1] += item
        else:
            merged.append(item)
    parts: list = []
    for item in merged:
        if isinstance(item, _Status):
            if len(parts) > 1 and isinstance(parts[-1], str):
                item.before = parts.pop()
            parts.append(item)
        elif isinstance(item, str) and parts and isinstance(parts[-1], _Status) and not parts[-1].after:
            parts[-1].after = item
        else:
            parts.append(item)
    return parts


def _number_tokens(array: np.ndarray) -> list[str]:
    """Each number of a 1-D float array as orjson writes it (NaN as null)."""
    tokens = orjson.dumps(np.ascontiguousarray(array), option=NUMPY).decode(BYTES).split(",")
    tokens[0] = tokens[0][1:]  # the brackets, taken off the first and last number rather than the whole text
    tokens[-1] = tokens[-1][:-1]
    return tokens


def _whole_tokens(array: np.ndarray) -> list[str]:
    """Each number of a float array as a whole number (``int(value)``), null where not finite."""
    finite = np.isfinite(array)
    whole = np.where(finite, array, 0.0)
    if not (np.abs(whole) < 2.0**63).all():
        return orjson.dumps([int(v) if f else None for v, f in zip(array.tolist(), finite.tolist(), strict=True)],
                            option=NUMPY)[1:-1].decode(BYTES).split(",")
    tokens = orjson.dumps(whole.astype(np.int64), option=NUMPY)[1:-1].decode(BYTES).split(",")
    for i in np.flatnonzero(~finite).tolist():
        tokens[i] = "null"
    return tokens
