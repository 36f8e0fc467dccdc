"""The answer's layout in each request shape, from the outcomes of the core calls.

One case: a dict (422 where the case failed). Rows: a list of such dicts, or for a stream
:class:`service.api.rowstext.RowsText` / :class:`CaseRows` (the same bytes, written a slice at a
time). Columns: a dict of arrays, and :class:`ErrorsText` for a streamed ``errors``.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np
import orjson

from service.api.outcome import Outcome, outcome_of
from service.api.problems import PHYSICALLY_IMPOSSIBLE, Problem
from service.core.cases import LARGEST_WHOLE, CaseResults
from service.core.checks import STATUSES

if TYPE_CHECKING:
    from service.api.declarations import Calculation


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
        # Each detail's JSON text (a reason that no case reports has none).
        self.texts = [orjson.dumps(text) if text is not None else None for text in texts]

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


def columns_body(calculation: Calculation, outcomes: list[Outcome], size: int) -> dict:
    if len(outcomes) == 1 and len(outcomes[0].index) == size:
        outcome = outcomes[0]
        columns = {name: _column_out(calculation, name, array) for name, array in outcome.values.items()}
        columns["checks"] = {name: _check_column(check, size) for name, check in outcome.checks.items()}
        return columns
    columns: dict[str, Any] = {}
    checks: dict[str, dict] = {}
    for outcome in outcomes:
        for name, array in outcome.values.items():
            target = columns.setdefault(name, np.full((size,) + array.shape[1:], np.nan))
            if target.shape[1:] != array.shape[1:]:  # per-stage lists of different lengths
                width = max(target.shape[1], array.shape[1])
                target = columns[name] = _pad(target, width)
                array = _pad(array, width)
            target[outcome.index] = array
        for name, check in outcome.checks.items():
            merged = checks.setdefault(name, {k: np.full(size, None, dtype=object) for k in check})
            for key, value in check.items():
                merged[key][outcome.index] = list(value) if isinstance(value, np.ndarray) else value
    body = {name: _column_out(calculation, name, array) for name, array in columns.items()}
    body["checks"] = {
        name: {"value": _nan_to_none(merged["value"].tolist()), **_rule_constants(merged),
               "status": merged["status"].tolist()}
        for name, merged in checks.items()
    }
    return body


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


def _pad(array: np.ndarray, width: int) -> np.ndarray:
    return np.pad(array, [(0, 0), (0, width - array.shape[1])], constant_values=np.nan)


def _column_out(calculation: Calculation, name: str, array: np.ndarray):
    if array.ndim == 2:
        return [_scalar(calculation, name, row) if np.isfinite(row).any() else None for row in array]
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


def _check_column(check: dict, size: int) -> dict:
    if check["value"].ndim != 1:
        rows = [_check_entry(check, j) for j in range(size)]
        return {"value": [r["value"] for r in rows], **_rule_constants(check), "status": [r["status"] for r in rows]}
    return {"value": check["value"], **_rule_constants(check), "status": check["status"].tolist()}


def _rule_constants(check: dict) -> dict:
    """The rule's limit, comparison and basis: one value when the whole batch shares it (as a
    scalar in request columns broadcasts), otherwise one per case."""
    constants = {}
    for key in ("limit", "fail_limit", "comparison", "basis"):
        value = check[key]
        if isinstance(value, np.ndarray):
            # None is a value here too (a rule without a fail_limit), not a missing one.
            distinct = set(value.tolist())
            value = distinct.pop() if len(distinct) == 1 else _nan_to_none(value.tolist())
        constants[key] = value
    return constants


def _nan_to_none(values: list) -> list:
    return [None if isinstance(v, float) and not np.isfinite(v) else v for v in values]
