"""The answer's layout in each request shape, from the outcomes of the core calls.

One case: a dict (422 where the case failed). Rows: a list of such dicts, or for a stream
:class:`service.api.rowstext.RowsText` / :class:`CaseRows` (the same bytes, written a slice at a
time). Columns: a dict of arrays, and :class:`ErrorsText` for a streamed ``errors``.
"""

from __future__ import annotations

import gc
import math
from typing import TYPE_CHECKING

import numpy as np
import orjson

from service.api.liststext import RaggedCheck, RaggedColumn, StatusColumn, list_lengths
from service.api.outcome import NO_STATUS, Outcome, outcome_of, status_objects
from service.api.problems import PHYSICALLY_IMPOSSIBLE, Problem
from service.core.cases import LARGEST_WHOLE, CaseResults
from service.core.checks import STATUSES

if TYPE_CHECKING:
    from service.api.declarations import Calculation

#: The parts of a check that belong to its rule, not to a case.
RULE_KEYS = ("limit", "fail_limit", "comparison", "basis")


class ErrorsText:
    """The ``errors`` of a batch answer, written as JSON text a slice of cases at a time.

    The same bytes as ``orjson.dumps`` of the list of ``{"index", "detail"}`` of every failed
    case in index order (see :meth:`Outcome.errors`), without a dict per case: the indices are
    an array, each detail is written once, and a slice of cases is one join.
    """

    CASES_PER_PIECE = 4_096

    def __init__(self, outcomes: list[Outcome]):
        indices, details, texts = [], [], []
        for outcome in outcomes:
            failed = np.flatnonzero(outcome.reason)
            indices.append(outcome.index[failed])
            details.append(outcome.reason[failed] - 1 + len(texts))
            texts += outcome.reasons
        self.index = np.concatenate(indices) if indices else np.zeros(0, dtype=np.intp)
        self.detail = np.concatenate(details) if details else np.zeros(0, dtype=np.intp)
        if len(outcomes) > 1:
            order = np.argsort(self.index, kind="stable")
            self.index, self.detail = self.index[order], self.detail[order]
        # The JSON text of each detail that some case reports (a batch in many chunks has thousands
        # of possible reasons, each station's and row's, of which a few apply).
        self.texts: list = [None] * len(texts)
        for k in np.unique(self.detail).tolist():
            self.texts[k] = orjson.dumps(texts[k]) if texts[k] is not None else None

    def __len__(self) -> int:
        return len(self.index)

    def json_pieces(self):
        if not len(self):
            yield b"[]"
            return
        for start in range(0, len(self), self.CASES_PER_PIECE):
            stop = min(start + self.CASES_PER_PIECE, len(self))
            # Each case's texts in one list, the index and the detail filled in by slice.
            parts = [b'{"index":', b"", b',"detail":', b"", b"},"] * (stop - start)
            parts[1::5] = orjson.dumps(self.index[start:stop], option=orjson.OPT_SERIALIZE_NUMPY)[1:-1].split(b",")
            parts[3::5] = map(self.texts.__getitem__, self.detail[start:stop].tolist())
            parts[-1] = b"}]" if stop == len(self) else b"}"
            yield (b"[" if start == 0 else b",") + b"".join(parts)


class CaseRows:
    """The ``results`` of a rows answer whose cases hold lists (per-stage outputs and checks),
    written a slice of cases at a time: the same bytes as ``orjson.dumps`` of the list that
    :func:`rows_body` makes, without holding a dict of every case at once."""

    ROWS_PER_PIECE = 256

    def __init__(self, calculation: Calculation, outcomes: list[Outcome], size: int):
        self.calculation, self.outcomes, self.size = calculation, outcomes, size
        # For each case of the request: its outcome, and its position in that outcome.
        self.owner = np.zeros(size, dtype=np.intp)
        self.position = np.zeros(size, dtype=np.intp)
        for number, outcome in enumerate(outcomes):
            self.owner[outcome.index] = number
            self.position[outcome.index] = np.arange(len(outcome.index))

    def __len__(self) -> int:
        return self.size

    def json_pieces(self):
        if not self.size:
            yield b"[]"
            return
        for start in range(0, self.size, self.ROWS_PER_PIECE):
            stop = min(start + self.ROWS_PER_PIECE, self.size)
            cases = [case_body(self.calculation, self.outcomes[o], p) for o, p in
                     zip(self.owner[start:stop].tolist(), self.position[start:stop].tolist(), strict=True)]
            text = orjson.dumps(cases, option=orjson.OPT_SERIALIZE_NUMPY)
            yield (b"[" if start == 0 else b",") + text[1:-1] + (b"]" if stop == self.size else b"")


def _scalar(calculation: Calculation, name: str, value):
    if isinstance(value, np.ndarray):  # one case's per-stage list, NaN-padded; all NaN where it failed
        finite = np.flatnonzero(np.isfinite(value))
        # The padding after the last value is cut; a NaN before it is an entry that does not apply: null.
        return [_scalar(calculation, name, v) for v in value[: finite[-1] + 1]] if finite.size else None
    if not np.isfinite(value):
        return None
    return int(value) if name in calculation._integer_outputs else float(value)


def _check_entry(check: dict, i: int) -> dict:
    if check["value"].ndim == 1:  # a Python float straight away, rather than through a numpy scalar
        value = check["value"].item(i)
        return {"value": value if math.isfinite(value) else None, "limit": check["limit"],
                "fail_limit": check["fail_limit"], "comparison": check["comparison"], "status": check["status"][i],
                "basis": check["basis"]}
    value, status = check["value"][i], check["status"][i]
    if isinstance(value, np.ndarray):  # one value per stage or row, NaN-padded; all NaN where the case failed
        finite = np.isfinite(value)
        value, status = (value[finite].tolist(), status[finite].tolist()) if finite.any() else (None, None)
    else:
        value = float(value) if np.isfinite(value) else None
    return {
        "value": value,
        "limit": check["limit"],
        "fail_limit": check["fail_limit"],
        "comparison": check["comparison"],
        "status": status,
        "basis": check["basis"],
    }


def case_body(calculation: Calculation, outcome: Outcome, i: int) -> dict:
    body = {}
    for name, array in outcome.values.items():
        if array.ndim == 1:  # a Python float straight away, rather than through a numpy scalar
            value = array.item(i)
            body[name] = ((int(value) if name in calculation._integer_outputs else value)
                          if math.isfinite(value) else None)
        else:
            body[name] = _scalar(calculation, name, array[i])
    body["checks"] = {name: _check_entry(check, i) for name, check in outcome.checks.items()}
    if calculation.defaults:
        body["assumed"] = outcome.assumed
    return body


def single_body(calculation: Calculation, result: CaseResults, assumed: dict | None = None) -> dict:
    """The response to one case, from Python floats taken once out of the core's arrays.

    A quick look proves the usual case sound (no failure, every output finite); anything else is
    judged by the general path, whose failures the core's ``failure_codes`` decides.

    Raises
    ------
    Problem
        422 if the case is physically impossible, with the first reason that applies.
    """
    values = _plain_values(calculation, result)
    checks = _plain_checks(result) if values is not None else None
    if checks is None:
        return _single_body_of(calculation, outcome_of(result, np.zeros(1, dtype=int), calculation._integer_outputs,
                                                       assumed))
    integer = calculation._integer_outputs
    body = {name: int(value) if name in integer else value for name, value in values.items()}
    body["checks"] = checks
    if calculation.defaults:
        body["assumed"] = assumed
    return body


def _plain_values(calculation: Calculation, result: CaseResults) -> dict | None:
    """The one case's outputs as Python floats, or None unless every one is a finite number (and a
    whole number within what a double holds exactly) and no failure applies."""
    try:
        # Every output at once as Python floats: one numpy call rather than two per output.
        block = np.array(list(result.values.values()), dtype=float)
    except ValueError:  # outputs of different shapes
        return None
    if block.shape != (len(result.values), 1) or any(np.asarray(mask).item(0) for _, mask in result.failures):
        return None
    values = dict(zip(result.values, block[:, 0].tolist(), strict=True))
    if not all(map(math.isfinite, values.values())) or any(
            abs(values[name]) > LARGEST_WHOLE for name in calculation._integer_outputs if name in values):
        return None
    return values


def _plain_checks(result: CaseResults) -> dict | None:
    """The one case's checks as plain values, or None where a check holds a list (per stage)."""
    checks = {}
    for name, check in result.checks.items():
        value = np.asarray(check.value, dtype=float)
        if value.ndim != 1:
            return None
        value = value.item(0)
        checks[name] = {"value": value if math.isfinite(value) else None, "limit": check.limit,
                        "fail_limit": check.fail_limit, "comparison": check.comparison,
                        "status": STATUSES[check.status_code.item(0)], "basis": check.basis}
    return checks


def _single_body_of(calculation: Calculation, outcome: Outcome) -> dict:
    if outcome.reason[0]:
        raise _impossible(outcome.reasons[outcome.reason[0] - 1])
    return case_body(calculation, outcome, 0)


def _impossible(reason: str) -> Problem:
    return Problem(422, "Physically impossible case", reason, PHYSICALLY_IMPOSSIBLE)


def rows_body(calculation: Calculation, outcomes: list[Outcome], size: int) -> list:
    results: list = [None] * size
    for outcome in outcomes:
        names = list(outcome.values)
        simple = (all(a.ndim == 1 for a in outcome.values.values()) and not calculation._integer_outputs
                  and not calculation.defaults)
        if simple:
            # Fast path: one tolist() per column instead of one numpy scalar per value.
            columns = [outcome.values[n].tolist() for n in names]
            check_rows = {name: _check_rows(check) for name, check in outcome.checks.items()}
            for j, (i, row) in enumerate(zip(outcome.index.tolist(), zip(*columns, strict=True), strict=True)):
                body = dict(zip(names, row, strict=True))
                body["checks"] = {name: rows[j] for name, rows in check_rows.items()}
                results[i] = body
        else:
            for j, i in enumerate(outcome.index.tolist()):
                results[i] = case_body(calculation, outcome, j)
    return results


def _check_rows(check: dict) -> list[dict]:
    if check["value"].ndim != 1:
        return [_check_entry(check, j) for j in range(len(check["value"]))]
    limit, fail_limit, comparison, basis = (check[k] for k in ("limit", "fail_limit", "comparison", "basis"))
    return [{"value": v, "limit": limit, "fail_limit": fail_limit, "comparison": comparison, "status": s,
             "basis": basis}
            for v, s in zip(check["value"].tolist(), check["status"].tolist(), strict=True)]


def columns_body(calculation: Calculation, outcomes: list[Outcome], size: int, stream: bool = False) -> dict:
    """The ``columns`` of a columns answer; with ``stream``, each per-stage output a
    :class:`~service.api.liststext.RaggedColumn` and each per-stage check's values and statuses a
    :class:`~service.api.liststext.RaggedCheck` (text written as it is sent, from each chunk's
    blocks in turn where one group was computed in chunks). Made with the cyclic garbage collector
    paused: the answer's lists hold numbers, strings and other such lists, no reference cycles, but
    a batch of whole machines not streamed makes millions of them, and a collection every few
    hundred new ones took about a third of the layout's time."""
    enabled = gc.isenabled()
    gc.disable()
    try:
        return _columns_body(calculation, outcomes, size, stream)
    finally:
        if enabled:
            gc.enable()


def _columns_body(calculation: Calculation, outcomes: list[Outcome], size: int, stream: bool) -> dict:
    if len(outcomes) == 1 and len(outcomes[0].index) == size:
        values, checks = outcomes[0].values, outcomes[0].checks
    elif stream and _in_turn(outcomes, size):
        # One group computed in chunks: each chunk's per-stage blocks written in turn, not merged.
        values, checks = _joined_values(outcomes), _joined_checks(outcomes, size)
    else:
        values, checks = _merged_values(outcomes, size), _merged_checks(outcomes, size)
    body = {name: _column_out(calculation, name, array, stream) for name, array in values.items()}
    body["checks"] = {name: _check_column(check, stream) for name, check in checks.items()}
    return body


def _in_turn(outcomes: list[Outcome], size: int) -> bool:
    """Whether the outcomes hold the cases in order, one after the other, and the same outputs and
    checks."""
    start = 0
    for outcome in outcomes:
        index = outcome.index
        if len(index) and (index[0] != start or index[-1] != start + len(index) - 1 or (np.diff(index) != 1).any()):
            return False
        start += len(index)
    first = outcomes[0]
    return start == size and all(outcome.values.keys() == first.values.keys()
                                 and outcome.checks.keys() == first.checks.keys() for outcome in outcomes)


def _joined_values(outcomes: list[Outcome]) -> dict:
    """The outputs of outcomes that hold the cases in turn: a number per case joined, a per-stage
    output as the list of the outcomes' blocks (of different widths)."""
    return {name: np.concatenate([o.values[name] for o in outcomes]) if array.ndim == 1
            else [o.values[name] for o in outcomes] for name, array in outcomes[0].values.items()}


def _joined_checks(outcomes: list[Outcome], size: int) -> dict:
    """The checks of outcomes that hold the cases in turn, joined as :func:`_joined_values` joins
    the outputs, the rule's constants as :func:`_merged_constants` finds them."""
    checks = {}
    for name, check in outcomes[0].checks.items():
        parts = [(o.index, o.checks[name]) for o in outcomes]
        blocks = {key: [c[key] for _, c in parts] for key in ("value", "code")}
        joined = {key: np.concatenate(b) for key, b in blocks.items()} if check["value"].ndim == 1 else blocks
        checks[name] = {**joined, **_merged_constants(parts, size)}
    return checks


def _merged_values(outcomes: list[Outcome], size: int) -> dict[str, np.ndarray]:
    """Every output of the outcomes put in place among the request's cases, NaN where an outcome
    has no such output; per-stage lists of different lengths as wide as the widest."""
    widths = _widths(outcome.values for outcome in outcomes)
    columns: dict[str, np.ndarray] = {}
    for outcome in outcomes:
        for name, array in outcome.values.items():
            _place(columns, name, array, outcome.index, (size, widths[name]) if name in widths else (size,), np.nan)
    return columns


def _merged_checks(outcomes: list[Outcome], size: int) -> dict[str, dict]:
    """Every check of the outcomes put in place among the request's cases as :func:`_merged_values`
    puts the outputs (status None, code 0 where an outcome has no such check), the rule's constants
    one per case unless every case shares them."""
    widths = _widths({name: check["value"] for name, check in outcome.checks.items()} for outcome in outcomes)
    checks: dict[str, dict] = {}
    for outcome in outcomes:
        for name, check in outcome.checks.items():
            shape = (size, widths[name]) if name in widths else (size,)
            merged = checks.setdefault(name, {"parts": []})
            _place(merged, "value", check["value"], outcome.index, shape, np.nan)
            _place(merged, "code", check["code"], outcome.index, shape, NO_STATUS)
            merged["parts"].append((outcome.index, check))
    for merged in checks.values():
        merged.update(_merged_constants(merged.pop("parts"), size))
    return checks


def _place(columns: dict, name: str, array: np.ndarray, index: np.ndarray, shape: tuple, fill) -> None:
    target = columns.get(name)
    if target is None:
        dtype = float if fill is np.nan else object if fill is None else array.dtype
        target = columns[name] = np.full(shape, fill, dtype=dtype)
    target[(index, slice(0, array.shape[1])) if array.ndim == 2 else index] = array


def _merged_constants(parts: list, size: int) -> dict:
    """The rule's limit, comparison and basis of a check that several outcomes hold: as each holds
    them (:func:`_rule_constants` judges whether they are shared), put in place among the cases."""
    constants = {}
    for key in RULE_KEYS:
        values = [check[key] for _, check in parts]
        if (sum(len(index) for index, _ in parts) == size and not any(isinstance(v, np.ndarray) for v in values)
                and len(set(values)) == 1):
            # Shared by every case: the value of the case that comes first, as a set of them all keeps it.
            constants[key] = values[min((index.min(), k) for k, (index, _) in enumerate(parts) if len(index))[1]]
            continue
        merged = constants[key] = np.full(size, None, dtype=object)
        for (index, _), value in zip(parts, values, strict=True):
            merged[index] = list(value) if isinstance(value, np.ndarray) and value.dtype != object else value
    return constants


def _widths(blocks) -> dict[str, int]:
    """Per-stage lists of different lengths: each output's block as wide as its widest outcome's."""
    widths: dict[str, int] = {}
    for arrays in blocks:
        for name, array in arrays.items():
            if array.ndim == 2:
                widths[name] = max(widths.get(name, 0), array.shape[1])
    return widths


def assumed_columns(outcomes: list[Outcome], size: int) -> dict:
    """The defaults a columns batch took: one value where every case took the same, else one per
    case (null where a case gave the field)."""
    names = list(dict.fromkeys(name for outcome in outcomes for name in outcome.assumed))
    columns = {}
    for name in names:
        values = np.full(size, None, dtype=object)
        for outcome in outcomes:
            if name in outcome.assumed:
                values[outcome.index] = outcome.assumed[name]
        distinct = set(values.tolist())
        columns[name] = distinct.pop() if len(distinct) == 1 and None not in distinct else values.tolist()
    return columns


def _ragged(calculation: Calculation, name: str, array: np.ndarray) -> list:
    """Each case's list of a per-stage (per-station, per-row) output at its own length: what
    :func:`_scalar` gives the case in a rows answer, null for a case without a value, converted a
    block of one length (one stage count) at a time. A NaN inside a list (an entry that does not
    apply) is kept, which orjson writes as null, as it writes the None of :func:`_scalar`."""
    finite = np.isfinite(array)
    length = list_lengths(finite)
    integer = name in calculation._integer_outputs
    lists: list = [None] * len(array)
    for n in np.unique(length).tolist():
        if n == 0:
            continue
        cases = np.flatnonzero(length == n)
        block = array[cases, :n]
        if integer:
            block = np.where(finite[cases, :n], block, 0.0).astype(np.int64)
        for i, values in zip(cases.tolist(), block.tolist(), strict=True):
            lists[i] = values
    if integer:  # a whole number list with a gap inside: one by one, as rows give it
        for i in np.flatnonzero(finite.sum(axis=1) < length).tolist():
            lists[i] = _scalar(calculation, name, array[i])
    return lists


def _ragged_check(value: np.ndarray, status: np.ndarray) -> tuple[list, list]:
    """Each case's values and statuses of a per-stage (per-row) check: its finite entries, None where
    it has none, as :func:`_check_entry` gives them, converted a block at a time."""
    finite = np.isfinite(value)
    lengths = list_lengths(finite).tolist()
    out_values = [row[:n] if n else None for row, n in zip(value.tolist(), lengths, strict=True)]
    out_statuses = [row[:n] if n else None for row, n in zip(status.tolist(), lengths, strict=True)]
    for i in np.flatnonzero(finite.sum(axis=1) < np.asarray(lengths)):  # a gap inside: its finite entries
        out_values[i], out_statuses[i] = value[i][finite[i]].tolist(), status[i][finite[i]].tolist()
    return out_values, out_statuses


def _column_out(calculation: Calculation, name: str, array, stream: bool = False):
    if isinstance(array, list):  # the blocks of outcomes in turn (streamed only)
        return RaggedColumn(array, name in calculation._integer_outputs)
    if array.ndim == 2:
        integer = name in calculation._integer_outputs
        return RaggedColumn([array], integer) if stream else _ragged(calculation, name, array)
    if name in calculation._integer_outputs:
        return _whole_numbers(array)
    return array  # orjson writes numpy arrays directly; NaN becomes null


def _whole_numbers(array: np.ndarray):
    """``[int(v) if finite else None for v in array]``, converted by numpy rather than one by one."""
    finite = np.isfinite(array)
    if not (np.abs(array[finite]) < 2.0**63).all():
        return [int(v) if math.isfinite(v) else None for v in array.tolist()]
    if finite.all():
        return array.astype(np.int64)  # orjson writes it as the same whole numbers
    whole = np.full(len(array), None, dtype=object)
    whole[finite] = array[finite].astype(np.int64).astype(object)
    return whole.tolist()


def _check_column(check: dict, stream: bool) -> dict:
    if isinstance(check["value"], list):  # the blocks of outcomes in turn (streamed only)
        value, status = (RaggedCheck(check["value"], check["code"], part) for part in ("value", "status"))
        return {"value": value, **_rule_constants(check), "status": status}
    if check["value"].ndim != 1:
        if stream:
            value, status = (RaggedCheck([check["value"]], [check["code"]], part) for part in ("value", "status"))
        else:
            value, status = _ragged_check(check["value"], status_objects(check["code"]))
        return {"value": value, **_rule_constants(check), "status": status}
    status = StatusColumn(check["code"]) if stream else status_objects(check["code"]).tolist()
    return {"value": check["value"], **_rule_constants(check), "status": status}


def _rule_constants(check: dict) -> dict:
    """The rule's limit, comparison and basis: one value when the whole batch shares it (as a
    scalar in request columns broadcasts), otherwise one per case."""
    constants = {}
    for key in RULE_KEYS:
        value = check[key]
        if isinstance(value, np.ndarray):
            # None is a value here too (a rule without a fail_limit), not a missing one.
            distinct = set(value.tolist())
            value = distinct.pop() if len(distinct) == 1 else _nan_to_none(value.tolist())
        constants[key] = value
    return constants


def _nan_to_none(values: list) -> list:
    return [None if isinstance(v, float) and not np.isfinite(v) else v for v in values]
