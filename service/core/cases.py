"""The result of a vectorised calculation over many cases.

Every calculation family ends in one ``evaluate_*`` function that returns a
:class:`CaseResults`: the output arrays, the cases that are physically impossible (each
with a reason an engineer can act on), and the design checks. Impossible cases hold NaN in
every output; the HTTP layer turns them into per-case errors.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from service.core.checks import RuleCheck


@dataclass(frozen=True)
class CaseResults:
    """Outputs, failures and checks of one calculation over ``size`` cases.

    Parameters
    ----------
    values : dict of str to numpy.ndarray
        Output arrays, each of shape ``(size,)`` (or ``(size, k)`` for per-stage lists).
    failures : list of (str, numpy.ndarray)
        Reasons with a boolean mask of the cases they apply to; the first reason that
        applies to a case is the one reported.
    checks : dict of str to RuleCheck
        Rules of thumb judged on every case.
    """

    values: dict[str, np.ndarray]
    failures: list[tuple[str, np.ndarray]] = field(default_factory=list)
    checks: dict[str, RuleCheck] = field(default_factory=dict)

    @property
    def shape(self) -> tuple:
        """Shape of the case axis: ``(n,)``, or ``()`` for one case given as scalars."""
        return np.shape(next(iter(self.values.values())))[:1] if self.values else (0,)

    @property
    def size(self) -> int:
        return int(np.prod(self.shape))

    def failed(self) -> np.ndarray:
        """Boolean mask of the cases that could not be computed."""
        mask = np.zeros(self.shape, dtype=bool)
        for _, where in self.failures:
            mask |= np.broadcast_to(where, mask.shape)
        return mask


    def merged(self, other: CaseResults, prefix: str) -> CaseResults:
        """These results with ``other``'s added under ``prefix`` (values, checks, and failure reasons)."""
        failed = other.failed()
        values = {**{name: np.where(failed, np.nan, array) for name, array in self.values.items()},
                  **{f"{prefix}_{name}": array for name, array in other.values.items()}}
        failures = self.failures + [(f"{prefix}: {reason}", mask) for reason, mask in other.failures]
        checks = {**self.checks, **{f"{prefix}_{name}": check for name, check in other.checks.items()}}
        return CaseResults(values=values, failures=failures, checks=checks)


_FLOAT = np.dtype(np.float64)
#: Cases up to which masked_results copies every output rather than checking whether it must.
_SMALL = 64


def _own(array, shape, dtype) -> np.ndarray:
    """A new C-contiguous array of ``shape`` and ``dtype`` holding ``array`` broadcast."""
    result = np.empty(shape, dtype=dtype)
    result[...] = array
    return result


def masked_results(values, failures, checks=None, shape=None, inputs=()) -> CaseResults:
    """Results with every failed case blanked: NaN in float outputs, 0 in integer ones.

    Outputs are masked in place, so a large batch does not hold a second copy of every output;
    only an output that is not a full-shape, contiguous, writable array of its own (a
    broadcast scalar, a view, one of the caller's inputs) is copied first.

    Parameters
    ----------
    values : dict of str to array_like
        Output arrays; each broadcast to ``shape``; integer outputs come back as int64.
    failures : list of (str, array_like)
        Reasons with a boolean mask of the cases they apply to; each broadcast to ``shape``.
    checks : callable, optional
        Called with the masked values and the boolean mask of failed cases, returns the dict
        of :class:`RuleCheck`.
    shape : tuple, optional
        Shape of the case axis; by default the common shape of the values.
    inputs : sequence of array_like
        The caller's inputs: an output that shares memory with one is copied, so the inputs
        are never written to and the outputs never alias them.

    Returns
    -------
    CaseResults
    """
    if shape is None:
        shape = np.broadcast_shapes(*(np.shape(v) for v in values.values()))
    failures = [(reason, mask if np.shape(mask) == shape else _own(mask, shape, bool))
                for reason, mask in failures]
    failed = np.zeros(shape, dtype=bool)
    for _, mask in failures:
        failed |= mask
    any_failed = bool(failed.any())
    # Copying a few cases costs less than finding out whether the copy is needed.
    small = failed.size <= _SMALL
    if small:
        out = _copied_together(values, shape)
        if out is not None:
            if any_failed:
                for array in out.values():
                    array[failed] = np.nan
            return CaseResults(values=out, failures=failures,
                               checks=checks(out, failed) if checks is not None else {})
    guarded = [a for a in inputs if isinstance(a, np.ndarray)]
    out = {}
    for name, array in values.items():
        array = np.asarray(array)
        integer = array.dtype.kind in "iu"
        dtype = np.int64 if integer else np.float64
        if array.shape != shape:
            array = _own(array, shape, dtype)
        elif (small or array.dtype != dtype or not array.flags.c_contiguous
                or not array.flags.writeable or not array.flags.owndata
                or any(np.may_share_memory(array, a) for a in guarded)):
            # Serialisers read outputs as flat buffers, and an output never aliases an input.
            array = np.array(array, dtype=dtype, order="C")
        if any_failed:
            array[failed] = 0 if integer else np.nan
        out[name] = array
    return CaseResults(values=out, failures=failures, checks=checks(out, failed) if checks is not None else {})


def _copied_together(values, shape):
    """Float outputs of a few cases copied in one block (one numpy call rather than one per
    output: for a single case the calls, not the numbers, are the cost); None if some output
    is not a float array of ``shape``. Each output is a row of the block: C-contiguous, its own
    memory apart from the other outputs', never an input's."""
    arrays = [np.asarray(array) for array in values.values()]
    if not all(a.dtype is _FLOAT and a.shape == shape for a in arrays):
        return None
    block = np.array(arrays, dtype=np.float64)
    if not shape:  # one case given as scalars: block[k, ...] keeps each a 0-d array
        return {name: block[k, ...] for k, name in enumerate(values)}
    return dict(zip(values, block, strict=True))


def broadcast_cases(*arrays) -> list[np.ndarray]:
    """Broadcast inputs to their common shape as float arrays (scalars stay 0-d).

    The results are read only: an input that already has the common shape comes back as it is
    (without a view: one case pays numpy's cost per call a dozen times per calculation), so
    callers never write into them.
    """
    arrays = [np.asarray(a, dtype=float) for a in arrays]
    shape = arrays[0].shape
    if any(a.shape != shape for a in arrays):
        shape = np.broadcast_shapes(*(a.shape for a in arrays))
    return [a if a.shape == shape else np.broadcast_to(a, shape) for a in arrays]
