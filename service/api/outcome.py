"""A core call per group and its results as an :class:`Outcome`: values, checks and per-case failures.

Every failure of a case, a core reason or a non-finite output, becomes a reason code here, and
the failed cases' outputs become NaN (written as null).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from service.core.cases import CaseResults, failure_codes
from service.core.checks import STATUSES

if TYPE_CHECKING:
    from service.api.declarations import Calculation


@dataclass
class Outcome:
    index: np.ndarray
    values: dict[str, np.ndarray]
    checks: dict[str, Any]
    reason: np.ndarray  # per case: 0 where it succeeded, else 1 + its position in ``reasons``
    reasons: list[str | None]  # None for a reason with a number per case: its texts come later in the list
    assumed: dict[str, Any] = field(default_factory=dict)  # the defaults these cases took

    def errors(self) -> list[dict]:
        """``{"index", "detail"}`` of every failed case, found with numpy rather than a loop."""
        failed = np.flatnonzero(self.reason)
        return [{"index": i, "detail": self.reasons[k - 1]}
                for i, k in zip(self.index[failed].tolist(), self.reason[failed].tolist(), strict=True)]


#: Types of a JSON number as parsed: scalars, told apart without a numpy call.
_PLAIN_NUMBERS = (float, int)


def chunks(size: int, chunk: int | None):
    """(start, stop) of each chunk of ``size`` cases: one chunk without a chunk size."""
    if not chunk or size <= chunk:
        return [(0, size)]
    return [(start, min(start + chunk, size)) for start in range(0, size, chunk)]


def sliced(data: dict, size: int, start: int, stop: int) -> dict:
    """The inputs of cases ``start`` to ``stop``: every per-case array sliced (a view), the rest as is."""
    return {name: (value[start:stop] if isinstance(value, np.ndarray) and value.ndim and len(value) == size
                   else value)
            for name, value in data.items()}


def evaluate(calculation: Calculation, options: dict, data: dict, size: int) -> CaseResults:
    """The core's results for ``size`` cases, scalars broadcast (as views: no copy per case)."""
    inputs = {}
    for name, value in data.items():
        if name in options or value is None or isinstance(value, str):
            inputs[name] = value
        elif isinstance(value, np.ndarray) and value.ndim == 2:
            inputs[name] = value if len(value) == size else np.broadcast_to(value, (size, value.shape[-1]))
        elif type(value) in _PLAIN_NUMBERS or np.ndim(value) == 0:
            inputs[name] = np.array((value,)) if size == 1 else np.broadcast_to(np.asarray(value), (size,))
        else:
            inputs[name] = value
    with np.errstate(all="ignore"):
        return calculation.compute(options, inputs)


def outcome_of(result: CaseResults, index: np.ndarray, integer_outputs=frozenset(), assumed=None) -> Outcome:
    """Failures as reason codes (judged by the core's :func:`~service.core.cases.failure_codes`),
    failed cases masked to NaN, statuses as codes (:class:`CheckArrays`): whole-array operations,
    none a loop over the cases."""
    values, own = {}, set()
    for name, array in result.values.items():
        # An input passed through as an output can be a broadcast view; the writer needs it whole.
        whole = np.ascontiguousarray(array, dtype=float)
        if whole is not array and whole.flags.owndata:
            own.add(name)
        values[name] = whole
    reason, reasons = failure_codes(result.failures, values, result.absent, integer_outputs)
    failed = reason != 0
    failed_cases = np.flatnonzero(failed)
    if failed_cases.size:
        values = {name: _blanked(a, failed_cases, name in own) for name, a in values.items()}
    checks = {name: _check_of(check, failed, failed_cases) for name, check in result.checks.items()}
    return Outcome(index=index, values=values, checks=checks, reason=reason, reasons=reasons, assumed=assumed or {})


def _check_of(check, failed: np.ndarray, failed_cases: np.ndarray) -> dict:
    value = np.ascontiguousarray(check.value, dtype=float)
    if failed_cases.size:
        value = _blanked(value, failed_cases, value is not check.value and value.flags.owndata)
    # Per stage or row too, whole rows NO_STATUS where a case failed.
    code = np.array(np.broadcast_to(check.status_code, value.shape), dtype=np.uint8)
    code[failed] = NO_STATUS
    return CheckArrays(value=value, code=code, limit=check.limit, fail_limit=check.fail_limit,
                       comparison=check.comparison, basis=check.basis)


def _blanked(array: np.ndarray, failed_cases: np.ndarray, own: bool) -> np.ndarray:
    """``array`` with NaN in the failed cases (rows, by position): written in place into an
    array of this layer's own, kept as it is where the core has blanked them already (as it does
    for the cases it failed), else a copy, so that an array of the core's is never written to."""
    if own:
        array[failed_cases] = np.nan
        return array
    if np.isnan(array[failed_cases]).all():
        return array
    array = array.copy()
    array[failed_cases] = np.nan
    return array


#: The status code of a case that failed (the codes below it are positions in STATUSES).
NO_STATUS = len(STATUSES)
#: Every status as one shared Python object, and None for a case that failed.
_STATUS_OBJECTS = np.array([*STATUSES, None], dtype=object)


def status_objects(code: np.ndarray) -> np.ndarray:
    """Status codes as an object array of the shared status strings, None where a case failed: a
    lookup into :data:`_STATUS_OBJECTS` rather than one new string per case."""
    return _STATUS_OBJECTS[code]


class CheckArrays(dict):
    """A check of some cases: ``value``, ``code`` (a uint8 status code per case, or per stage or row:
    a position in STATUSES, NO_STATUS where the case failed) and the rule's constants.

    ``check["status"]``, the statuses as shared strings, is made on first use and kept (the rows of
    an answer read it a case at a time); a columns answer writes its statuses from the codes and
    never makes it, which spares a pointer per case and check of a large batch."""

    def __missing__(self, key):
        if key != "status":
            raise KeyError(key)
        status = self["status"] = status_objects(self["code"])
        return status
