"""The result of a vectorised calculation over many cases.

Every calculation family ends in one ``evaluate_*`` function that returns a
:class:`CaseResults`: the output arrays, the cases that are physically impossible (each
with a reason an engineer can act on), and the design checks. Impossible cases hold NaN in
every output; the HTTP layer turns them into per-case errors.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, replace

import numpy as np

from service.core.checks import RuleCheck


@dataclass(frozen=True)
class CaseResults:
    """Outputs, failures and checks of one calculation over ``size`` cases.

    Parameters
    ----------
    values : dict of str to numpy.ndarray
        Output arrays, each of shape ``(size,)`` (or ``(size, k)`` for per-stage lists).
    failures : list of (str or NumberedReason, numpy.ndarray)
        Reasons with a boolean mask of the cases they apply to; the first reason that
        applies to a case is the one reported. A :class:`NumberedReason` stands for a reason
        whose text states a number of each case (see :func:`reason_texts`).
    checks : dict of str to RuleCheck
        Rules of thumb judged on every case.
    absent : dict of str to numpy.ndarray
        For a list output some of whose entries do not apply (a relative velocity at a station no
        rotor is next to): a boolean mask, broadcastable to the output, of those entries. They hold
        NaN, are answered as null, and are not a failure; any other NaN is.
    """

    values: dict[str, np.ndarray]
    failures: list[tuple[str | NumberedReason, np.ndarray]] = field(default_factory=list)
    checks: dict[str, RuleCheck] = field(default_factory=dict)
    absent: dict[str, np.ndarray] = field(default_factory=dict)

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
        failures = self.failures + [(prefixed(f"{prefix}: ", reason), mask) for reason, mask in other.failures]
        checks = {**self.checks, **{f"{prefix}_{name}": check for name, check in other.checks.items()}}
        return CaseResults(values=values, failures=failures, checks=checks)


@dataclass(frozen=True)
class NumberedReason:
    """A failure reason whose text states a number of each case, kept as one failure entry.

    A batch of sizing cases whose targets are out of reach each has its own smallest reachable
    value in its reason. As one ``(text, mask)`` entry per distinct text, a large batch would
    hold hundreds of full-length masks; as ``(NumberedReason, mask)`` it holds one mask and one
    array of numbers, and the texts are made only for the cases that report them.

    Parameters
    ----------
    text : callable
        ``text(number) -> str``: the reason of a case whose number is ``number``.
    numbers : numpy.ndarray
        Each case's number, already rounded as the text shows it (so that cases of one text
        have one number), of the shape of the failure's mask or broadcastable to it. Cases
        outside the mask may hold anything.
    prefix : str
        Put before every text: the row or stage the failure belongs to.
    """

    text: Callable[[float], str]
    numbers: np.ndarray
    prefix: str = ""

    def texts(self, where) -> tuple[list[str], np.ndarray]:
        """The distinct texts of the cases ``where`` (a boolean mask) and, for each of those cases
        in order, the position of its text in that list."""
        where = np.asarray(where, dtype=bool)
        keys = np.broadcast_to(self.numbers, where.shape)[where]
        unique, inverse = np.unique(keys, return_inverse=True)
        return [self.prefix + self.text(float(key)) for key in unique.tolist()], inverse.reshape(-1)


def reason_texts(reason: str | NumberedReason, where) -> tuple[list[str], np.ndarray]:
    """The distinct texts of a failure reason over the cases ``where`` (a boolean mask), and for
    each of those cases in order the position of its text in that list."""
    if isinstance(reason, str):
        return [reason], np.zeros(np.count_nonzero(where), dtype=np.intp)
    return reason.texts(where)


def prefixed(prefix: str, reason: str | NumberedReason) -> str | NumberedReason:
    """The reason with ``prefix`` put before its text (of every case)."""
    if isinstance(reason, str):
        return prefix + reason
    return replace(reason, prefix=prefix + reason.prefix)


def reason_for(reason: str | NumberedReason, select: Callable[[np.ndarray], np.ndarray]) -> str | NumberedReason:
    """The reason of the cases that ``select`` takes out of (or spreads) a failure's mask, for a
    caller that applies ``select`` to the mask: a slice of rows, a subset put back in place.
    ``select`` is applied to a :class:`NumberedReason`'s numbers as well; a text is the same for
    every case."""
    if isinstance(reason, str):
        return reason
    return replace(reason, numbers=select(reason.numbers))


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
    failures : list of (str or NumberedReason, array_like)
        Reasons with a boolean mask of the cases they apply to; each mask broadcast to ``shape``.
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
    shapes = [a.shape for a in arrays]
    if shapes.count(shapes[0]) == len(shapes):
        return arrays
    shape = max(shapes, key=len) if all(a.size == 1 for a in arrays) else np.broadcast_shapes(*shapes)
    return [to_shape(a, shape) for a in arrays]


def to_shape(array, shape: tuple) -> np.ndarray:
    """``array`` broadcast to ``shape``, read only. One case (shapes such as () and (1,)) takes a
    reshape, not numpy's general broadcast, which costs ten times as much and is paid a few dozen
    times a case."""
    array = np.asarray(array)
    if array.shape == shape:
        return array
    if array.size == 1 and array.ndim <= len(shape) and all(n == 1 for n in shape):
        return array.reshape(shape)
    return np.broadcast_to(array, shape)


#: The reason of a case whose outputs are not all finite numbers (an overflow the core did not foresee).
NOT_FINITE = "the result is not a finite number (overflow): check the magnitudes of the inputs"
#: The largest whole-number output that a double holds exactly.
LARGEST_WHOLE = 2**53 - 1


def failure_codes(failures, values, absent=None, whole_outputs=frozenset()) -> tuple[np.ndarray, list]:
    """Every failure of every case, as one reason code per case: the one place a case is judged failed.

    A case fails for the first of its ``failures`` that applies, else where an output is not a
    finite number (a per-stage row is NaN-padded after its last stage, and an entry marked in
    ``absent`` does not apply: neither is a failure), else where a whole-number output is beyond
    :data:`LARGEST_WHOLE`.

    Parameters
    ----------
    failures : list of (str or NumberedReason, array_like of bool)
        The core's reasons with the cases they apply to (:attr:`CaseResults.failures`).
    values : dict of str to numpy.ndarray
        Float outputs, ``(cases,)`` or ``(cases, k)``.
    absent : dict of str to numpy.ndarray, optional
        Entries that do not apply (:attr:`CaseResults.absent`).
    whole_outputs : set of str
        Outputs answered as whole numbers.

    Returns
    -------
    reason : numpy.ndarray of intp
        Per case: 0 where it succeeded, else 1 + the position of its text in ``reasons``.
    reasons : list of str or None
        The texts; None stands for a reason whose texts differ per case (they follow in the list).
    """
    size = len(next(iter(values.values()))) if values else 0
    reason, reasons = _reason_codes(failures, size)
    reasons.append(NOT_FINITE)
    absent = absent or {}
    for name, array in values.items():
        finite = _finite_cases(np.where(absent[name], 0.0, array) if name in absent else array)
        if name in whole_outputs:
            too_big = np.abs(np.where(np.isfinite(array), array, 0.0)) > LARGEST_WHOLE
            finite &= ~(too_big if too_big.ndim == 1 else too_big.any(axis=1))
        if not finite.all():
            reason[(~finite) & (reason == 0)] = len(reasons)
    return reason, reasons


def _reason_codes(failures, size: int) -> tuple[np.ndarray, list]:
    """The core's own reasons as codes; a reason with a number per case gets a code per distinct text."""
    reasons: list = [text for text, _ in failures]
    reason = np.zeros(size, dtype=np.intp)
    masks = [mask for _, mask in failures]
    codes = range(1, len(masks) + 1)
    if masks and all(type(mask) is np.ndarray and mask.shape == (size,) for mask in masks):
        # A whole machine has a reason per station and row, most of which no case meets: judged in
        # one call, only the masks that hold a case are written.
        codes = (np.flatnonzero(np.array(masks, dtype=bool).any(axis=1)) + 1).tolist()
    # The first reason that applies to a case is the one reported, so the masks go in backwards.
    for code in reversed(codes):
        reason[np.broadcast_to(masks[code - 1], (size,))] = code
    for code, entry in enumerate(list(reasons), start=1):
        if isinstance(entry, str):
            continue
        reasons[code - 1] = None
        where = reason == code
        if where.any():
            texts, which = reason_texts(entry, where)
            reason[where] = len(reasons) + 1 + which
            reasons += texts
    return reason, reasons


def _finite_cases(array: np.ndarray) -> np.ndarray:
    """Per case, whether its outputs are finite; per-stage rows are NaN-padded after the last stage,
    so only an inner NaN or an infinity fails a row."""
    finite = np.isfinite(array)
    if array.ndim == 1:
        return finite
    if not array.shape[1]:
        return np.zeros(len(array), dtype=bool)
    # A padded row is finite from its first entry up to its last finite one (no finite entry after
    # one that is not), and NaN, not infinite, after it.
    valid = finite[:, 0] & np.less_equal(finite[:, 1:], finite[:, :-1]).all(axis=1)
    infinite = np.isinf(array)
    return valid & ~infinite.any(axis=1) if infinite.any() else valid
