"""Design rules of thumb, judged case by case.

A rule never refuses a design: it reports the value it judged, the limit, a status
(``ok``, ``warn`` or ``fail``) and the basis of the limit (a published source or
"common practice"), so the engineer can see why a row was flagged.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

STATUSES = ("ok", "warn", "fail")
COMPARISONS = ("at_least", "at_most")
COMMON_PRACTICE = "common practice"

#: The statuses as one numpy array, indexed by each case's status code.
_STATUS_TEXTS = np.array(STATUSES)


@dataclass(frozen=True)
class RuleCheck:
    """One rule of thumb applied to an array of cases.

    Parameters
    ----------
    value : numpy.ndarray
        The judged quantity, one entry per case. [-]
    limit : float
        The boundary of the acceptable band; crossing it gives ``beyond_limit``. [-]
    comparison : str
        ``at_least`` (the value should not fall below ``limit``) or ``at_most``.
    basis : str
        Where the limit comes from: a published source, or ``common practice``.
    beyond_limit : str, optional
        Status when ``limit`` is crossed: ``warn`` (default) or ``fail``.
    fail_limit : float, optional
        A second, harder boundary beyond which the status is ``fail``. [-]
    """

    value: np.ndarray
    limit: float
    comparison: str
    basis: str
    beyond_limit: str = "warn"
    fail_limit: float | None = None

    def __post_init__(self):
        if self.comparison not in COMPARISONS:
            raise ValueError(f"comparison must be one of {COMPARISONS}, not {self.comparison!r}")
        if self.beyond_limit not in STATUSES[1:]:
            raise ValueError(f"beyond_limit must be 'warn' or 'fail', not {self.beyond_limit!r}")

    def _crosses(self, boundary: float) -> np.ndarray:
        value = np.asarray(self.value, dtype=float)
        if self.comparison == "at_least":
            return value < boundary
        return value > boundary

    @property
    def status(self) -> np.ndarray:
        """Status of every case: ``ok``, ``warn`` or ``fail``. [-]"""
        return np.asarray(_STATUS_TEXTS[self.status_code], dtype=_STATUS_TEXTS.dtype)

    @property
    def status_code(self) -> np.ndarray:
        """Status of every case as its position in :data:`STATUSES` (``uint8``; ok 0, warn 1,
        fail 2), without a string per case. [-]"""
        code = np.where(self._crosses(self.limit), np.uint8(STATUSES.index(self.beyond_limit)), np.uint8(0))
        if self.fail_limit is not None:
            code[self._crosses(self.fail_limit)] = STATUSES.index("fail")
        return code

    def subset(self, index) -> RuleCheck:
        """The same rule restricted to the cases selected by ``index``."""
        return RuleCheck(
            value=np.asarray(self.value)[index],
            limit=self.limit,
            comparison=self.comparison,
            basis=self.basis,
            beyond_limit=self.beyond_limit,
            fail_limit=self.fail_limit,
        )


def de_haller_check(velocity_ratio) -> RuleCheck:
    """De Haller's limit on the deceleration of a blade row.

    Parameters
    ----------
    velocity_ratio : array_like
        Outlet over inlet speed in the row's own frame (W2/W1 for a rotor, V3/V2 for a
        stator). [-]

    Returns
    -------
    RuleCheck
        Warns below 0.72.

    References
    ----------
    1. de Haller, P. (1953), "Das Verhalten von Tragflügelgittern in Axialverdichtern und im
       Windkanal", Brennstoff-Wärme-Kraft 5(10).
    """
    return RuleCheck(
        value=np.asarray(velocity_ratio, dtype=float),
        limit=0.72,
        comparison="at_least",
        basis="de Haller (1953), Brennstoff-Wärme-Kraft 5(10)",
    )


def deceleration_check(velocity_ratio) -> RuleCheck:
    """The hard floor on the outlet-to-inlet speed ratio of a decelerating row.

    Parameters
    ----------
    velocity_ratio : array_like
        Outlet over inlet speed in the row's own frame. [-]

    Returns
    -------
    RuleCheck
        Fails below 0.5 (common practice: a row that halves its speed separates).
    """
    return RuleCheck(
        value=np.asarray(velocity_ratio, dtype=float),
        limit=0.5,
        comparison="at_least",
        basis=COMMON_PRACTICE,
        beyond_limit="fail",
    )


#: Mean-line solidity band of a compressor row (common practice): the low-speed cascade tests that
#: the diffusion-factor limits rest on span about this range, so a row sized outside it is judged
#: by an extrapolated rule.
SOLIDITY_BAND = (0.5, 2.0)


def solidity_checks(solidity) -> dict[str, RuleCheck]:
    """The band of solidity in which a compressor row's diffusion-factor judgement holds.

    A row that barely turns or decelerates reaches any target diffusion factor with very few
    blades, and a row that turns a lot needs many; both are sized outside the experience the
    limits come from, which these checks make visible.

    Parameters
    ----------
    solidity : array_like
        Chord over pitch at the mean line. [-]

    Returns
    -------
    dict of str to RuleCheck
        ``solidity_low`` warns below 0.5, ``solidity_high`` above 2.0 (common practice).
    """
    value = np.asarray(solidity, dtype=float)
    low, high = SOLIDITY_BAND
    return {
        "solidity_low": RuleCheck(value=value, limit=low, comparison="at_least", basis=COMMON_PRACTICE),
        "solidity_high": RuleCheck(value=value, limit=high, comparison="at_most", basis=COMMON_PRACTICE),
    }
