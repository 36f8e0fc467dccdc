"""Sharing an overall pressure ratio between the stages of an axial compressor or turbine.

Conventions (shared with :mod:`service.core.triangles`):

- ``pressure_ratio`` is greater than one for both machines: ``p0_out / p0_in`` for a
  compressor, the expansion ratio ``p0_in / p0_out`` for a turbine; the same holds for each
  stage's ``stage_pressure_ratio``;
- work, total temperature changes and the loading coefficient ``psi = Delta h0 / U^2`` are
  positive for both machines (work in for a compressor, work out for a turbine);
- total temperature ratios ``tau = T0_out / T0_in`` are taken in the flow direction, so a
  turbine's are below one.

Perfect gas, ``k = (gamma - 1) / gamma``. A polytropic efficiency ``eta_p`` (the isentropic
efficiency of an infinitesimal stage, Saravanamuttoo et al. [1], sec. 2.3; Dixon and Hall
[2], sec. 2.6) gives

.. math::

    \\tau_c = \\Pi^{k / \\eta_p}, \\qquad \\tau_t = \\Pi^{-k \\eta_p}

and an isentropic (total-to-total) efficiency ``eta`` gives

.. math::

    \\tau_c = 1 + \\frac{\\Pi^{k} - 1}{\\eta}, \\qquad
    \\tau_t = 1 - \\eta \\left(1 - \\Pi^{-k}\\right).

With a polytropic efficiency the stage temperature ratios multiply to ``Pi^(k/eta_p)``
(compressor) whatever the split, so the outlet state does not depend on the rule. With the
same isentropic efficiency in every stage it does: each stage after the first starts hotter
than it would on the isentropic path (compressor: preheat; turbine: reheat), so the overall
efficiency falls below the stage efficiency in a compressor and rises above it in a turbine
([1], sec. 2.3; [2], sec. 2.6).

Rules: ``equal_pressure_ratio`` (every stage ``Pi^(1/N)``), ``equal_work`` (every stage the
same total temperature change) and ``weights`` (stage ``i`` does a share ``w_i / sum(w)`` of
the total work). Work shares with a polytropic efficiency are closed-form; with a stage
isentropic efficiency the total temperature change is found with a bracketed root solve
(Chandrupatla's method, :func:`scipy.optimize.elementwise.find_root`), all cases at once.

References
----------
1. Saravanamuttoo, H. I. H., Rogers, G. F. C., Cohen, H., Straznicky, P. V. and
   Nix, A. C. (2017), "Gas Turbine Theory", 7th ed., Pearson, sec. 2.3 (polytropic
   efficiency) and ch. 5 (axial compressor stage design).
2. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of
   Turbomachinery", 7th ed., Butterworth-Heinemann, sec. 2.6 (efficiency of compressors
   and turbines, small-stage efficiency, reheat factor).
3. Smith, S. F. (1965), "A simple correlation of turbine efficiency", Journal of the Royal
   Aeronautical Society 69, 467-470.
"""

from __future__ import annotations

import numpy as np

from service.core.cases import CaseResults
from service.core.checks import COMMON_PRACTICE, RuleCheck
from service.core.triangles import MACHINES

SPLIT_RULES = ("equal_work", "equal_pressure_ratio", "weights")
EFFICIENCY_MODELS = ("polytropic", "stage_isentropic")

#: Largest stage count considered when a stage count is solved or given. [-]
MAX_STAGES = 50
#: Relative tolerance on the total temperature change of the root solve. [-]
SOLVER_RTOL = 1e-12
#: A stage within this relative margin of a stage-count limit counts as meeting it. [-]
LIMIT_RTOL = 1e-9
#: Warn above this compressor stage pressure ratio (core stages 1.15-1.4, common practice). [-]
COMPRESSOR_STAGE_PRESSURE_RATIO_LIMIT = 1.4
#: Warn above these loading coefficients Delta h0 / U^2 (common practice). [-]
LOADING_COEFFICIENT_LIMITS = {"compressor": 0.5, "turbine": 2.5}

# Floor for logarithms of stage temperature terms beyond the feasible range of a turbine's
# bracket: keeps the residual finite (and large) so the bracketed solver can proceed.
_TINY = 1e-300


def _check_option(name, value, options):
    if value not in options:
        raise ValueError(f"{name} must be one of {options}, not {value!r}")


def _cases(*arrays):
    """Broadcast per-case inputs to one 1-D shape of floats."""
    arrays = [np.asarray(a, dtype=float) for a in arrays]
    shape = np.broadcast_shapes(*(a.shape for a in arrays))
    if len(shape) > 1:
        raise ValueError(f"inputs must be scalars or 1-D arrays over cases, not of shape {shape}")
    shape = shape or (1,)
    return [np.broadcast_to(a, shape).astype(float) for a in arrays]


def _cases_and_weights(weights, *arrays):
    """Broadcast per-case inputs and the rows of ``weights`` (or one row for all) together."""
    if weights is None:
        return _cases(*arrays), None
    weights = np.asarray(weights, dtype=float)
    if weights.ndim not in (1, 2) or weights.shape[-1] == 0:
        raise ValueError(f"weights must be a (cases, k) or (k,) array, not of shape {weights.shape}")
    weights = np.atleast_2d(weights)
    *arrays, _ = _cases(*arrays, np.zeros(weights.shape[0]))
    return arrays, np.broadcast_to(weights, (arrays[0].shape[0], weights.shape[1]))


def _exponent(gamma):
    gamma = np.asarray(gamma, dtype=float)
    return (gamma - 1.0) / gamma


def total_temperature_ratio_polytropic(machine, pressure_ratio, polytropic_efficiency, gamma):
    """Total temperature ratio of a compression or expansion of given polytropic efficiency.

    .. math::

        \\frac{T_{0,out}}{T_{0,in}} = \\Pi^{k/\\eta_p} \\;\\mathrm{(compressor)}, \\qquad
        \\Pi^{-k \\eta_p} \\;\\mathrm{(turbine)}, \\qquad k = \\frac{\\gamma - 1}{\\gamma}

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    pressure_ratio : array_like
        ``p0_out / p0_in`` (compressor) or ``p0_in / p0_out`` (turbine); above one. [-]
    polytropic_efficiency : array_like
        Polytropic (small-stage) efficiency, in (0, 1]. [-]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        ``T0_out / T0_in`` in the flow direction (below one for a turbine). [-]

    References
    ----------
    Saravanamuttoo et al. (2017), "Gas Turbine Theory", sec. 2.3; Dixon and Hall (2014),
    sec. 2.6.
    """
    _check_option("machine", machine, MACHINES)
    ratio = np.asarray(pressure_ratio, dtype=float)
    efficiency = np.asarray(polytropic_efficiency, dtype=float)
    k = _exponent(gamma)
    if machine == "compressor":
        return np.power(ratio, k / efficiency)
    return np.power(ratio, -k * efficiency)


def total_temperature_ratio_isentropic(machine, pressure_ratio, isentropic_efficiency, gamma):
    """Total temperature ratio of a compression or expansion of given isentropic efficiency.

    .. math::

        \\tau = 1 + \\frac{\\Pi^{k} - 1}{\\eta} \\;\\mathrm{(compressor)}, \\qquad
        \\tau = 1 - \\eta \\left(1 - \\Pi^{-k}\\right) \\;\\mathrm{(turbine)}

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    pressure_ratio : array_like
        ``p0_out / p0_in`` (compressor) or ``p0_in / p0_out`` (turbine); above one. [-]
    isentropic_efficiency : array_like
        Total-to-total isentropic efficiency, in (0, 1]. [-]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        ``T0_out / T0_in`` in the flow direction. [-]

    References
    ----------
    Saravanamuttoo et al. (2017), "Gas Turbine Theory", sec. 2.3.
    """
    _check_option("machine", machine, MACHINES)
    log_ratio = np.log(np.asarray(pressure_ratio, dtype=float))
    efficiency = np.asarray(isentropic_efficiency, dtype=float)
    k = _exponent(gamma)
    if machine == "compressor":
        return 1.0 + np.expm1(k * log_ratio) / efficiency
    return 1.0 + efficiency * np.expm1(-k * log_ratio)


def isentropic_efficiency(machine, pressure_ratio, total_temperature_ratio, gamma):
    """Total-to-total isentropic efficiency of a compression or expansion.

    .. math::

        \\eta_c = \\frac{\\Pi^{k} - 1}{\\tau - 1}, \\qquad
        \\eta_t = \\frac{1 - \\tau}{1 - \\Pi^{-k}}

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    pressure_ratio : array_like
        ``p0_out / p0_in`` (compressor) or ``p0_in / p0_out`` (turbine); above one. [-]
    total_temperature_ratio : array_like
        ``T0_out / T0_in`` in the flow direction. [-]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        Isentropic efficiency. [-]

    References
    ----------
    Dixon and Hall (2014), sec. 2.6.
    """
    _check_option("machine", machine, MACHINES)
    log_ratio = np.log(np.asarray(pressure_ratio, dtype=float))
    change = np.asarray(total_temperature_ratio, dtype=float) - 1.0
    return _isentropic_efficiency(machine, log_ratio, change, _exponent(gamma))


def _isentropic_efficiency(machine, log_ratio, tau_minus_one, k):
    """:func:`isentropic_efficiency` from ``ln Pi`` and ``tau - 1`` themselves: near a pressure ratio
    of one, ``Pi`` and ``tau`` rounded to floats have lost most digits of ``Pi - 1`` and ``tau - 1``."""
    with np.errstate(divide="ignore", invalid="ignore"):
        if machine == "compressor":
            return np.expm1(k * log_ratio) / tau_minus_one
        return tau_minus_one / np.expm1(-k * log_ratio)


def polytropic_efficiency(machine, pressure_ratio, total_temperature_ratio, gamma):
    """Polytropic efficiency of a compression or expansion from its end states.

    The single polytropic efficiency that would give the same outlet total temperature for
    the same pressure ratio (the inverse of :func:`total_temperature_ratio_polytropic`):

    .. math::

        \\eta_{p,c} = \\frac{k \\ln \\Pi}{\\ln \\tau}, \\qquad
        \\eta_{p,t} = \\frac{\\ln (1/\\tau)}{k \\ln \\Pi}

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    pressure_ratio : array_like
        ``p0_out / p0_in`` (compressor) or ``p0_in / p0_out`` (turbine); above one. [-]
    total_temperature_ratio : array_like
        ``T0_out / T0_in`` in the flow direction. [-]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        Polytropic efficiency. [-]

    References
    ----------
    Dixon and Hall (2014), sec. 2.6.
    """
    _check_option("machine", machine, MACHINES)
    log_ratio = np.log(np.asarray(pressure_ratio, dtype=float))
    log_tau = np.log(np.asarray(total_temperature_ratio, dtype=float))
    k = _exponent(gamma)
    if machine == "compressor":
        return k * log_ratio / log_tau
    return -log_tau / (k * log_ratio)


def _log_pressure_ratio_polytropic(machine, tau_minus_one, efficiency, k):
    """``ln Pi`` of a stage from ``tau - 1`` (polytropic efficiency)."""
    if machine == "compressor":
        return efficiency / k * np.log1p(tau_minus_one)
    return -np.log1p(tau_minus_one) / (k * efficiency)


def _log_pressure_ratio_isentropic(machine, tau_minus_one, efficiency, k):
    """``ln Pi`` of a stage from ``tau - 1`` (isentropic efficiency)."""
    if machine == "compressor":
        return np.log1p(efficiency * tau_minus_one) / k
    return -np.log1p(tau_minus_one / efficiency) / k


def _tau_minus_one_polytropic(machine, log_ratio, efficiency, k):
    """``tau - 1`` of a compression or expansion of ``ln Pi`` (polytropic efficiency)."""
    if machine == "compressor":
        return np.expm1(k / efficiency * log_ratio)
    return np.expm1(-k * efficiency * log_ratio)


def _tau_minus_one_isentropic(machine, log_ratio, efficiency, k):
    """``tau - 1`` of a compression or expansion of ``ln Pi`` (isentropic efficiency)."""
    if machine == "compressor":
        return np.expm1(k * log_ratio) / efficiency
    return efficiency * np.expm1(-k * log_ratio)


def weight_counts(weights):
    """Number of weights of each case and whether the case's weights are usable.

    Parameters
    ----------
    weights : array_like
        Relative work shares, shape ``(cases, k)``; a case with fewer stages pads the end of
        its row with NaN. [-]

    Returns
    -------
    count : numpy.ndarray of int64
        Number of weights (finite entries) of each case. [-]
    usable : numpy.ndarray of bool
        True where every weight is positive and the padding, if any, is only at the end.
    """
    weights = np.atleast_2d(np.asarray(weights, dtype=float))
    given = ~np.isnan(weights)
    count = given.sum(axis=1)
    leading = np.arange(weights.shape[1]) < count[:, None]
    with np.errstate(invalid="ignore"):
        positive = np.isfinite(weights) & (weights > 0)
    usable = np.all(given == leading, axis=1) & np.all(positive | ~leading, axis=1) & (count > 0)
    return count.astype(np.int64), usable


def _work_shares(rule, stage_count, weights):
    """Work shares (cases, width), zero beyond each case's stage count, and where defined."""
    width = max(1, int(stage_count.max(initial=0)))
    inside = np.arange(width) < stage_count[:, None]
    if rule != "weights":
        with np.errstate(divide="ignore"):
            shares = np.where(inside, 1.0 / stage_count[:, None], 0.0)
        return shares, stage_count >= 1
    count, usable = weight_counts(weights)
    defined = usable & (count == stage_count) & (stage_count >= 1)
    padded = np.zeros((weights.shape[0], width))
    columns = min(width, weights.shape[1])
    padded[:, :columns] = np.nan_to_num(weights[:, :columns])
    padded = np.where(inside & defined[:, None], padded, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        shares = padded / padded.sum(axis=1, keepdims=True)
    return np.where(defined[:, None], shares, 0.0), defined


def _share_temperatures(machine, shares, total_change):
    """Stage ``tau - 1`` when stage i takes a share of ``total_change`` (= dT0 / T0_in).

    ``tau_i - 1 = +-x s_i / (1 +- x sum_{j<i} s_j)``: formed from the share itself, not as the
    difference of two temperature ratios, so a small change keeps its digits.
    """
    sign = 1.0 if machine == "compressor" else -1.0
    before = np.cumsum(shares, axis=1) - shares
    return sign * total_change[:, None] * shares / (1.0 + sign * total_change[:, None] * before)


def _total_change_isentropic(machine, pressure_ratio, shares, efficiency, k):
    """Total temperature change over inlet temperature giving the overall pressure ratio.

    The residual ``sum(ln stage ratio) - ln(overall ratio)`` rises monotonically with the
    total change. The bracket holds for any work shares: the change is at least the single
    isentropic stage's ``Pi^k - 1`` (compressor; preheat only adds) or ``eta (1 - Pi^-k)``
    (turbine; reheat only adds), and at most ``Pi^(k/eta) - 1`` (compressor) or
    ``1 - Pi^(-k eta)`` (turbine), since a stage of isentropic efficiency ``eta`` has a
    polytropic efficiency at least (compressor) or at most (turbine) ``eta``. With one
    efficiency per stage, ``efficiency`` of shape ``(cases, width)``, the same bounds hold with
    the lowest stage efficiency in the compressor's upper and the turbine's lower bound and the
    highest in the turbine's upper bound.
    """
    log_ratio = np.log(pressure_ratio)
    before = np.cumsum(shares, axis=1) - shares
    if efficiency.ndim == 2:
        # One efficiency per stage: the bounds of the stages' lowest and highest efficiency hold.
        used = shares > 0
        low_eta = np.min(np.where(used, efficiency, np.inf), axis=1)
        high_eta = np.max(np.where(used, efficiency, -np.inf), axis=1)
    else:
        low_eta = high_eta = efficiency
    if machine == "compressor":
        lower = np.expm1(k * log_ratio)
        upper = np.expm1(k * log_ratio / low_eta)
    else:
        lower = -low_eta * np.expm1(-k * log_ratio)
        upper = -np.expm1(-k * high_eta * log_ratio)
    # Widened so an efficiency of one (lower == upper) still brackets the root.
    lower, upper = lower * (1.0 - 1e-6), upper * (1.0 + 1e-6)

    def residual(x, case):
        x = x[..., None]
        w, c = shares[case], before[case]
        eta, kk = (efficiency[case] if efficiency.ndim == 2 else efficiency[case, None]), k[case, None]
        with np.errstate(invalid="ignore", divide="ignore"):
            if machine == "compressor":
                log_stage = np.log1p(eta * w * x / (1.0 + x * c)) / kk
            else:
                remaining = 1.0 - x * c
                drop = np.where(remaining > 0, w * x / (eta * remaining), 1.0)
                log_stage = np.where(drop < 1.0, -np.log1p(-drop), -np.log(_TINY)) / kk
        return np.where(w > 0, log_stage, 0.0).sum(axis=-1) - log_ratio[case]

    # Imported here, not at module level: scipy costs every worker ~48 MB at start.
    from scipy.optimize import elementwise

    result = elementwise.find_root(
        residual, (lower, upper), args=(np.arange(len(log_ratio)),),
        tolerances={"xrtol": SOLVER_RTOL},
    )
    return np.where(result.success, result.x, np.nan)


def _per_stage_columns(efficiency, cases, width):
    """A per-stage efficiency (cases, k) as (cases, width): cut or padded with NaN."""
    efficiency = np.broadcast_to(efficiency, (cases, efficiency.shape[-1]))
    out = np.full((cases, width), np.nan)
    columns = min(width, efficiency.shape[1])
    out[:, :columns] = efficiency[:, :columns]
    return out


def _split(machine, rule, efficiency_model, pressure_ratio, stage_count, efficiency, gamma, weights):
    """Stage pressure ratios and total temperature ratios, (cases, width), NaN where undefined.

    ``efficiency`` is per case, ``(cases,)``, or (stage isentropic only) per stage,
    ``(cases, k)``, NaN past a case's stage count.

    Returns ``(ratio, tau, log_ratio, tau_minus_one)``: the last two are exact where the first two,
    rounded to floats near one, have lost the digits of ``Pi - 1`` and ``tau - 1``.
    """
    _check_option("machine", machine, MACHINES)
    _check_option("rule", rule, SPLIT_RULES)
    _check_option("efficiency_model", efficiency_model, EFFICIENCY_MODELS)
    if (rule == "weights") != (weights is not None):
        raise ValueError("weights must be given with rule 'weights', and only with it")
    per_stage = np.ndim(efficiency) == 2
    if per_stage:
        if efficiency_model != "stage_isentropic":
            raise ValueError("a per-stage efficiency must be a stage isentropic efficiency")
        efficiency = np.asarray(efficiency, dtype=float)
        (pressure_ratio, gamma, stage_count, _), weights = _cases_and_weights(
            weights, pressure_ratio, gamma, stage_count, np.zeros(efficiency.shape[0]))
    else:
        (pressure_ratio, efficiency, gamma, stage_count), weights = _cases_and_weights(
            weights, pressure_ratio, efficiency, gamma, stage_count)
    stage_count = np.where(np.isfinite(stage_count), stage_count, 0).astype(np.int64)
    k = _exponent(gamma)
    shares, defined = _work_shares(rule, stage_count, weights)
    if per_stage:
        efficiency = _per_stage_columns(efficiency, pressure_ratio.shape[0], shares.shape[1])
        with np.errstate(invalid="ignore"):
            defined = defined & np.all((efficiency > 0) | (shares <= 0), axis=1)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        eta, kk = (efficiency if per_stage else efficiency[:, None]), k[:, None]
        if rule == "equal_pressure_ratio":
            log_ratio = np.where(shares > 0, (np.log(pressure_ratio) / stage_count)[:, None], np.nan)
            if efficiency_model == "polytropic":
                tau_m1 = _tau_minus_one_polytropic(machine, log_ratio, eta, kk)
            else:
                tau_m1 = _tau_minus_one_isentropic(machine, log_ratio, eta, kk)
        elif efficiency_model == "polytropic":
            overall = _tau_minus_one_polytropic(machine, np.log(pressure_ratio), efficiency, k)
            tau_m1 = _share_temperatures(machine, shares, np.abs(overall))
            log_ratio = _log_pressure_ratio_polytropic(machine, tau_m1, eta, kk)
        else:
            total_change = np.full(pressure_ratio.shape, np.nan)
            if defined.any():
                total_change[defined] = _total_change_isentropic(
                    machine, pressure_ratio[defined], shares[defined], efficiency[defined], k[defined]
                )
            tau_m1 = _share_temperatures(machine, shares, total_change)
            log_ratio = _log_pressure_ratio_isentropic(machine, tau_m1, eta, kk)
        ratio = np.exp(log_ratio)
    undefined = (shares <= 0) | ~defined[:, None]
    return tuple(np.where(undefined, np.nan, a) for a in (ratio, 1.0 + tau_m1, log_ratio, tau_m1))


def stage_pressure_ratios_polytropic(machine, rule, pressure_ratio, stage_count, polytropic_efficiency,
                                     gamma, weights=None):
    """Stage pressure ratios of a split, every stage of the same polytropic efficiency.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    rule : str
        ``equal_work``, ``equal_pressure_ratio`` or ``weights``.
    pressure_ratio : array_like
        Overall ``p0_out / p0_in`` (compressor) or ``p0_in / p0_out`` (turbine). [-]
    stage_count : array_like of int
        Number of stages of each case. [-]
    polytropic_efficiency : array_like
        Polytropic efficiency, in (0, 1]. [-]
    gamma : array_like
        Ratio of specific heats. [-]
    weights : array_like, optional
        Relative work shares, shape ``(cases, k)`` (or one row for every case), for rule
        ``weights`` only; NaN pads the end of a shorter row. [-]

    Returns
    -------
    numpy.ndarray
        Stage pressure ratios (turbine: expansion ratios), shape ``(cases, max stage
        count)``, NaN beyond each case's count and where the weights do not match it. [-]

    Notes
    -----
    Work shares ``s_i`` (``1/N`` for equal work): with ``tau = Pi^(k/eta_p)`` (compressor)
    or ``Pi^(-k eta_p)`` (turbine), the total temperature after stage ``i`` is
    ``T0_in (1 + (tau - 1) sum_{j<=i} s_j)``; each stage's pressure ratio follows from its
    temperature ratio by the polytropic relation. Closed form, no iteration.

    References
    ----------
    Saravanamuttoo et al. (2017), "Gas Turbine Theory", sec. 2.3.
    """
    return _split(machine, rule, "polytropic", pressure_ratio, stage_count, polytropic_efficiency, gamma,
                  weights)[0]


def stage_pressure_ratios_isentropic(machine, rule, pressure_ratio, stage_count, stage_isentropic_efficiency,
                                     gamma, weights=None):
    """Stage pressure ratios of a split, every stage of the same isentropic efficiency.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    rule : str
        ``equal_work``, ``equal_pressure_ratio`` or ``weights``.
    pressure_ratio : array_like
        Overall ``p0_out / p0_in`` (compressor) or ``p0_in / p0_out`` (turbine). [-]
    stage_count : array_like of int
        Number of stages of each case. [-]
    stage_isentropic_efficiency : array_like
        Total-to-total isentropic efficiency of every stage, in (0, 1]. [-]
    gamma : array_like
        Ratio of specific heats. [-]
    weights : array_like, optional
        Relative work shares, shape ``(cases, k)``, for rule ``weights`` only. [-]

    Returns
    -------
    numpy.ndarray
        Stage pressure ratios (turbine: expansion ratios), shape ``(cases, max stage
        count)``, NaN beyond each case's count. [-]

    Notes
    -----
    Equal pressure ratio is closed-form. For work shares the total temperature change
    ``x T0_in`` solves ``sum_i ln Pi_i(x) = ln Pi`` with
    ``Pi_i = (1 + eta x s_i / t_{i-1})^(1/k)`` (compressor) or
    ``Pi_i = (1 - x s_i / (eta t_{i-1}))^(-1/k)`` (turbine), ``t_{i-1}`` the stage's inlet
    over the machine's inlet total temperature; solved by Chandrupatla's bracketed method to
    a relative tolerance :data:`SOLVER_RTOL` on ``x``.

    References
    ----------
    Dixon and Hall (2014), sec. 2.6; Chandrupatla, T. R. (1997), "A new hybrid quadratic/
    bisection algorithm for finding the zero of a nonlinear function without using
    derivatives", Advances in Engineering Software 28(3), 145-149.
    """
    return _split(machine, rule, "stage_isentropic", pressure_ratio, stage_count, stage_isentropic_efficiency,
                  gamma, weights)[0]


def _stage_march(machine, ratio, tau, total_temperature, total_pressure):
    """Stage inlet and outlet total temperatures and pressures from the stage ratios."""
    defined = ~np.isnan(ratio)
    outlet_t = total_temperature[:, None] * np.cumprod(np.where(defined, tau, 1.0), axis=1)
    pressure_factor = np.cumprod(np.where(defined, ratio, 1.0), axis=1)
    if machine == "turbine":
        pressure_factor = 1.0 / pressure_factor
    outlet_p = total_pressure[:, None] * pressure_factor
    inlet_t = np.concatenate([total_temperature[:, None], outlet_t[:, :-1]], axis=1)
    inlet_p = np.concatenate([total_pressure[:, None], outlet_p[:, :-1]], axis=1)
    return [np.where(defined, a, np.nan) for a in (inlet_t, outlet_t, inlet_p, outlet_p)]


def _lower_bound(bound, max_stages):
    """Whole-number lower bound from a real one; a bound met within LIMIT_RTOL counts as met."""
    with np.errstate(invalid="ignore"):
        bound = np.clip(bound * (1.0 - LIMIT_RTOL), 1, max_stages + 1)
    return np.ceil(np.nan_to_num(bound, nan=max_stages + 1)).astype(np.int64)


def _fewest_stages(machine, rule, efficiency_model, pressure_ratio, efficiency, gamma, weights,
                   lowest, limit, worst_stage, max_stages):
    """Smallest count from ``lowest`` up to ``max_stages`` whose worst stage meets ``limit``.

    ``lowest`` must be a proven lower bound; for rule ``weights`` it is the count of
    weights and the only candidate. Returns 0 where no candidate meets the limit.
    """
    _check_option("machine", machine, MACHINES)
    _check_option("rule", rule, SPLIT_RULES)
    _check_option("efficiency_model", efficiency_model, EFFICIENCY_MODELS)
    if (rule == "weights") != (weights is not None):
        raise ValueError("weights must be given with rule 'weights', and only with it")
    highest = np.full(pressure_ratio.shape[0], max_stages, dtype=np.int64)
    if rule == "weights":
        lowest, usable = weight_counts(weights)
        highest = np.where(usable, np.minimum(lowest, max_stages), 0)

    def meets(active, count):
        rows = None if weights is None else weights[active]
        ratio, tau, _, tau_m1 = _split(machine, rule, efficiency_model, pressure_ratio[active], count,
                                       efficiency[active], gamma[active], rows)
        return np.max(worst_stage(active, ratio, tau, tau_m1), axis=1) <= limit[active] * (1.0 + LIMIT_RTOL)

    return fewest_count(np.maximum(lowest, 1), highest, max_stages, meets)


def fewest_count(lowest, highest, max_stages, meets):
    """Per case, the smallest stage count from ``lowest`` to ``highest`` (and ``max_stages``) that
    ``meets`` accepts; 0 where none does.

    Parameters
    ----------
    lowest, highest : numpy.ndarray of int
        Bounds of each case's count; ``lowest`` must be a proven lower bound.
    max_stages : int
        The largest count tried.
    meets : callable
        ``meets(active, count)``: for the cases of index array ``active``, a boolean array of
        whether ``count`` stages meet the limit. Called once per count, with the cases still open.

    Returns
    -------
    numpy.ndarray of int64
        The fewest stages, or 0. [-]
    """
    found = np.zeros(lowest.shape[0], dtype=np.int64)
    pending = lowest <= np.minimum(highest, max_stages)
    for count in range(max(1, int(lowest[pending].min(initial=max_stages + 1))), max_stages + 1):
        active = np.flatnonzero(pending & (lowest <= count))
        if active.size:
            passed = active[meets(active, count)]
            found[passed] = count
            pending[passed] = False
        pending &= count < highest
        if not pending.any():
            break
    return found


def stage_count_for_loading(machine, rule, efficiency_model, pressure_ratio, efficiency, total_temperature,
                            cp, gamma, blade_speed, max_loading_coefficient, weights=None,
                            max_stages=MAX_STAGES):
    """Fewest stages that keep every stage's loading coefficient within a limit.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    rule : str
        ``equal_work``, ``equal_pressure_ratio`` or ``weights``.
    efficiency_model : str
        ``polytropic`` or ``stage_isentropic``: how ``efficiency`` is meant.
    pressure_ratio : array_like
        Overall ``p0_out / p0_in`` (compressor) or ``p0_in / p0_out`` (turbine). [-]
    efficiency : array_like
        Polytropic or stage isentropic efficiency, in (0, 1]. [-]
    total_temperature : array_like
        Inlet total temperature. [K]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]
    gamma : array_like
        Ratio of specific heats. [-]
    blade_speed : array_like
        Mean blade speed U, the same in every stage. [m s^-1]
    max_loading_coefficient : array_like
        Largest allowed ``Delta h0 / U^2`` of any stage. [-]
    weights : array_like, optional
        Relative work shares ``(cases, k)`` for rule ``weights``; they fix the count at
        ``k``, which is returned where it meets the limit. [-]
    max_stages : int
        Largest count tried. [-]

    Returns
    -------
    numpy.ndarray of int64
        Fewest stages, 0 where no count up to ``max_stages`` meets the limit. [-]

    Notes
    -----
    The search starts at a proven lower bound: the mean stage loading
    ``cp dT0_total / (N U^2)`` cannot exceed the largest, and ``dT0_total`` is at least
    that of a single stage of the given efficiency (exact for a polytropic efficiency; with
    a stage isentropic efficiency, preheat and reheat only add work). Counts are then tried
    upward, so the count returned is the fewest.
    """
    arrays, weights = _cases_and_weights(weights, pressure_ratio, efficiency, total_temperature, cp, gamma,
                                         blade_speed, max_loading_coefficient)
    pressure_ratio, efficiency, total_temperature, cp, gamma, blade_speed, limit = arrays
    _check_option("machine", machine, MACHINES)
    to_tau = _tau_minus_one_polytropic if efficiency_model == "polytropic" else _tau_minus_one_isentropic
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        single = to_tau(machine, np.log(pressure_ratio), efficiency, _exponent(gamma))
        bound = cp * total_temperature * np.abs(single) / (limit * blade_speed**2)
    lowest = _lower_bound(bound, max_stages)

    def worst_stage(active, ratio, tau, tau_m1):
        inlet_t = _stage_march(machine, ratio, tau, total_temperature[active], np.ones(active.size))[0]
        return cp[active, None] * inlet_t * np.abs(tau_m1) / blade_speed[active, None] ** 2

    return _fewest_stages(machine, rule, efficiency_model, pressure_ratio, efficiency, gamma, weights,
                          lowest, limit, worst_stage, max_stages)


def stage_count_for_stage_pressure_ratio(machine, rule, efficiency_model, pressure_ratio, efficiency, gamma,
                                         max_stage_pressure_ratio, weights=None, max_stages=MAX_STAGES):
    """Fewest stages that keep every stage's pressure ratio within a limit.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    rule : str
        ``equal_work``, ``equal_pressure_ratio`` or ``weights``.
    efficiency_model : str
        ``polytropic`` or ``stage_isentropic``: how ``efficiency`` is meant.
    pressure_ratio : array_like
        Overall ``p0_out / p0_in`` (compressor) or ``p0_in / p0_out`` (turbine). [-]
    efficiency : array_like
        Polytropic or stage isentropic efficiency, in (0, 1]. [-]
    gamma : array_like
        Ratio of specific heats. [-]
    max_stage_pressure_ratio : array_like
        Largest allowed stage pressure ratio (turbine: expansion ratio ``p0_in/p0_out``). [-]
    weights : array_like, optional
        Relative work shares ``(cases, k)`` for rule ``weights``; they fix the count. [-]
    max_stages : int
        Largest count tried. [-]

    Returns
    -------
    numpy.ndarray of int64
        Fewest stages, 0 where no count up to ``max_stages`` meets the limit. [-]

    Notes
    -----
    The stage ratios multiply to the overall one, so the largest is at least the geometric
    mean ``Pi^(1/N)``: ``N >= ln Pi / ln Pi_max`` is a proven lower bound (exact for equal
    pressure ratios); counts are tried upward from it.
    """
    (pressure_ratio, efficiency, gamma, limit), weights = _cases_and_weights(
        weights, pressure_ratio, efficiency, gamma, max_stage_pressure_ratio)
    with np.errstate(invalid="ignore", divide="ignore"):
        bound = np.log(pressure_ratio) / np.log(limit)
    lowest = _lower_bound(bound, max_stages)
    return _fewest_stages(machine, rule, efficiency_model, pressure_ratio, efficiency, gamma, weights,
                          lowest, limit, lambda active, ratio, tau, tau_m1: ratio, max_stages)


def compressor_stage_pressure_ratio_check(stage_pressure_ratio) -> RuleCheck:
    """Common-practice ceiling on a compressor stage's total pressure ratio.

    Parameters
    ----------
    stage_pressure_ratio : array_like
        Stage ``p0_out / p0_in``, any shape (NaN padding is judged ``ok``). [-]

    Returns
    -------
    RuleCheck
        Warns above 1.4 (common practice: subsonic core compressor stages run about 1.15-1.4;
        transonic fan and front stages go higher by design). A ratio below 1.15 is not
        flagged: a lightly loaded stage is not a risk, and a deliberate choice under
        ``weights``.
    """
    return RuleCheck(
        value=np.asarray(stage_pressure_ratio, dtype=float),
        limit=COMPRESSOR_STAGE_PRESSURE_RATIO_LIMIT,
        comparison="at_most",
        basis=COMMON_PRACTICE,
    )


def stage_loading_check(machine, stage_loading_coefficient) -> RuleCheck:
    """Common-practice ceiling on a stage's loading coefficient ``Delta h0 / U^2``.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    stage_loading_coefficient : array_like
        Stage ``Delta h0 / U^2``, positive, any shape. [-]

    Returns
    -------
    RuleCheck
        Compressor: warns above 0.5 (common practice). The limit follows de Haller's 0.72
        for a repeating 50 % reaction stage at a high flow coefficient: there
        ``W2/W1 = sqrt(phi^2 + (R - psi/2)^2) / sqrt(phi^2 + (R + psi/2)^2)`` reaches 0.72 at
        ``psi = 0.5`` when ``phi`` is about 0.69, and at lower ``psi`` for lower ``phi``; the
        velocity-triangle checks judge the rows directly. Turbine: warns above 2.5 (common
        practice): the edge of the usual design region of Smith's (1965) chart, beyond which
        efficiency falls.
    """
    _check_option("machine", machine, MACHINES)
    return RuleCheck(
        value=np.asarray(stage_loading_coefficient, dtype=float),
        limit=LOADING_COEFFICIENT_LIMITS[machine],
        comparison="at_most",
        basis=COMMON_PRACTICE,
    )


def stages_of_weights(weights, stages=None, max_loading_coefficient=None, max_stage_pressure_ratio=None):
    """The stage count: as given, or where no count and no limit is given, the number of weights.

    Parameters
    ----------
    weights : array_like or None
        Relative work shares, shape ``(cases, k)`` or ``(k,)``. [-]
    stages, max_loading_coefficient, max_stage_pressure_ratio : array_like or None
        The stage count or a limit that decides it, as in :func:`evaluate_stage_split`. [-]

    Returns
    -------
    array_like or None
        ``stages``, or ``k`` where weights alone give the count.
    """
    if weights is None or any(v is not None for v in (stages, max_loading_coefficient, max_stage_pressure_ratio)):
        return stages
    return np.shape(weights)[-1]


def _exactly_one(**given):
    named = [name for name, value in given.items() if value is not None]
    if len(named) != 1:
        raise ValueError(f"give exactly one of {tuple(given)}, not {tuple(named) or 'none'}")
    return named[0], given[named[0]]


def evaluate_stage_split(
    machine, rule, pressure_ratio, total_temperature, total_pressure, cp=1005.0, gamma=1.4, *,
    polytropic_efficiency=None, stage_isentropic_efficiency=None,
    stages=None, max_loading_coefficient=None, max_stage_pressure_ratio=None,
    blade_speed=None, weights=None, mass_flow=None, max_stages=MAX_STAGES,
):
    """Share an overall pressure ratio between stages: stage states, overall state, checks.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    rule : str
        ``equal_work``, ``equal_pressure_ratio`` or ``weights``.
    pressure_ratio : array_like
        Overall ``p0_out / p0_in`` (compressor) or ``p0_in / p0_out`` (turbine); above one. [-]
    total_temperature : array_like
        Inlet total temperature. [K]
    total_pressure : array_like
        Inlet total pressure. [Pa]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]
    gamma : array_like
        Ratio of specific heats. [-]
    polytropic_efficiency, stage_isentropic_efficiency : array_like
        Exactly one: the polytropic efficiency, or the total-to-total isentropic efficiency
        of every stage; in (0, 1]. The stage isentropic efficiency may also be given per
        stage, shape ``(cases, k)`` or ``(1, k)``, front to rear, NaN padding the end of a
        shorter case's row; then ``stages`` must be given and match each row's count. [-]
    stages, max_loading_coefficient, max_stage_pressure_ratio : array_like
        Exactly one: the stage count; or the largest stage ``Delta h0 / U^2`` (needs
        ``blade_speed``); or the largest stage pressure ratio (turbine: expansion ratio).
        A limit solves for the fewest stages that meet it. [-]
    blade_speed : array_like, optional
        Mean blade speed, the same in every stage; gives the loading coefficients. [m s^-1]
    weights : array_like, optional
        Relative work shares for rule ``weights`` only, shape ``(cases, k)`` or ``(k,)`` for
        every case; normalised; NaN may pad the end of a shorter case's row. [-]
    mass_flow : array_like, optional
        Mass flow; gives the power. [kg s^-1]
    max_stages : int
        Largest stage count given or solved. [-]

    Returns
    -------
    CaseResults
        Per stage, shape ``(cases, max stage_count)``, NaN beyond each case's count:
        ``stage_pressure_ratio`` [-], ``stage_inlet_total_temperature``,
        ``stage_outlet_total_temperature`` [K], ``stage_inlet_total_pressure``,
        ``stage_outlet_total_pressure`` [Pa], ``stage_total_temperature_change`` [K],
        ``stage_work`` [J kg^-1], ``stage_isentropic_efficiency`` [-] and, with a blade
        speed, ``stage_loading_coefficient`` [-]. Overall, shape ``(cases,)``:
        ``stage_count`` (int64, 0 where the case failed), ``outlet_total_temperature`` [K],
        ``outlet_total_pressure`` [Pa], ``work`` [J kg^-1], ``total_temperature_change``
        [K], ``isentropic_efficiency`` [-], ``polytropic_efficiency`` [-] (the one given, or
        the equivalent of the whole machine: the single polytropic efficiency giving the
        same outlet total temperature at the overall pressure ratio) and, with a mass flow,
        ``power`` [W]. Work, temperature changes and power are positive for both machines.
        Checks, per stage: ``stage_pressure_ratio`` (compressor only) and, with a blade
        speed, ``stage_loading_coefficient``.

    Notes
    -----
    Scalars broadcast; the cases are always a 1-D axis (a scalar input gives one case).
    Invalid options or combinations of inputs (both or neither efficiency, not exactly one
    of the stage-count inputs, a loading limit without a blade speed, weights without rule
    ``weights`` or the reverse) raise ValueError. A case fails, with NaN outputs, for the
    first of these reasons that applies: an input out of its physical range (named); no
    stage count up to ``max_stages`` meets the limit (for rule ``weights``: the weights' own
    count does not); the number of weights differs from ``stages``; the work split did not
    converge; a turbine outlet total temperature at or below zero (only reachable by
    underflow: a perfect gas gives ``T0_in Pi^(-k eta_p) > 0``); a result that is not a
    finite number.
    """
    _check_option("machine", machine, MACHINES)
    _check_option("rule", rule, SPLIT_RULES)
    if (rule == "weights") != (weights is not None):
        raise ValueError("weights must be given with rule 'weights', and only with it")
    stages = stages_of_weights(weights, stages, max_loading_coefficient, max_stage_pressure_ratio)
    efficiency_name, efficiency_value = _exactly_one(polytropic_efficiency=polytropic_efficiency,
                                   stage_isentropic_efficiency=stage_isentropic_efficiency)
    efficiency_model = "polytropic" if efficiency_name == "polytropic_efficiency" else "stage_isentropic"
    count_name, count_value = _exactly_one(stages=stages, max_loading_coefficient=max_loading_coefficient,
                              max_stage_pressure_ratio=max_stage_pressure_ratio)
    if count_name == "max_loading_coefficient" and blade_speed is None:
        raise ValueError("max_loading_coefficient needs blade_speed")
    per_stage = np.ndim(efficiency_value) == 2
    if per_stage and (efficiency_name != "stage_isentropic_efficiency" or count_name != "stages"):
        raise ValueError("a per-stage efficiency, shape (cases, k), must be stage_isentropic_efficiency with stages")
    given = {
        "pressure_ratio": pressure_ratio, "total_temperature": total_temperature,
        "total_pressure": total_pressure,
        "cp": cp, "gamma": gamma, efficiency_name: None if per_stage else efficiency_value, count_name: count_value,
        "blade_speed": blade_speed, "mass_flow": mass_flow,
    }
    if per_stage:
        efficiency_value = np.asarray(efficiency_value, dtype=float)
        # The per-stage efficiency's rows are cases too: broadcast with the others.
        given["_efficiency_rows"] = np.zeros(efficiency_value.shape[0])
    given = {name: value for name, value in given.items() if value is not None}
    arrays, weights = _cases_and_weights(weights, *given.values())
    inputs = dict(zip(given, arrays, strict=True))
    n = inputs["pressure_ratio"].shape[0]
    if per_stage:
        del inputs["_efficiency_rows"]
        inputs[efficiency_name] = np.broadcast_to(efficiency_value, (n, efficiency_value.shape[1])).astype(float)

    failures = _input_failures(inputs, efficiency_name, count_name, weights, max_stages)
    good = np.ones(n, dtype=bool)
    for _, mask in failures:
        good &= ~mask
    index = np.flatnonzero(good)
    sub = {name: value[index] for name, value in inputs.items()}
    sub_weights = None if weights is None else weights[index]
    efficiency = sub[efficiency_name]

    common = (machine, rule, efficiency_model, sub["pressure_ratio"], efficiency)
    if count_name == "stages":
        count = sub["stages"].astype(np.int64)
    elif count_name == "max_loading_coefficient":
        count = stage_count_for_loading(*common, sub["total_temperature"], sub["cp"], sub["gamma"],
                                        sub["blade_speed"], sub["max_loading_coefficient"], sub_weights,
                                        max_stages)
    else:
        count = stage_count_for_stage_pressure_ratio(*common, sub["gamma"], sub["max_stage_pressure_ratio"],
                                                     sub_weights, max_stages)
    stage_count = np.zeros(n, dtype=np.int64)
    stage_count[index] = count
    if count_name != "stages":
        measure = "loading coefficient" if count_name == "max_loading_coefficient" else "pressure ratio"
        limit_text = f"{measure} within {count_name}"
        if rule == "weights":
            reason = (f"the weighted stages do not keep every stage's {limit_text}; the weights fix "
                      f"the stage count (or exceed {max_stages})")
        else:
            reason = f"no stage count up to {max_stages} keeps every stage's {limit_text}"
        failures.append((reason, good & (stage_count == 0)))

    stages = _split(machine, rule, efficiency_model, sub["pressure_ratio"], np.maximum(count, 1),
                    efficiency, sub["gamma"], sub_weights)
    values = _stage_values(machine, stages, sub, count, efficiency_name, n, index)
    if rule == "weights" and count_name == "stages":
        counts, _ = weight_counts(weights)
        failures.append(("the number of weights does not match stages", good & (counts != stage_count)))
    if efficiency_model == "stage_isentropic" and rule != "equal_pressure_ratio":
        failures.append(("the work split did not converge", good & (stage_count > 0)
                         & np.isnan(values["stage_pressure_ratio"][:, 0])))
    if machine == "turbine":
        with np.errstate(invalid="ignore"):
            failures.append(("the turbine outlet total temperature is at or below zero",
                             good & ~(values["outlet_total_temperature"] > 0)))
    inside = np.arange(values["stage_pressure_ratio"].shape[1]) < stage_count[:, None]
    finite = np.ones(n, dtype=bool)
    for value in values.values():
        finite &= np.all(np.isfinite(value) | ~inside, axis=1) if value.ndim == 2 else np.isfinite(value)
    failures.append(("the split gave a result that is not a finite number", good & ~finite))

    failed = np.zeros(n, dtype=bool)
    for _, mask in failures:
        failed |= mask
    stage_count[failed] = 0
    values = {name: value if name == "stage_count" else np.where(
        failed.reshape((-1,) + (1,) * (value.ndim - 1)), np.nan, value) for name, value in values.items()}
    # CaseResults takes its case count from the first value: a 1-D one leads.
    values = {"stage_count": stage_count, **{k: v for k, v in values.items() if k != "stage_count"}}
    width = max(1, int(stage_count.max(initial=0)))
    values = {name: value[:, :width] if value.ndim == 2 else value for name, value in values.items()}

    checks = {}
    if machine == "compressor":
        checks["stage_pressure_ratio"] = compressor_stage_pressure_ratio_check(values["stage_pressure_ratio"])
    if "stage_loading_coefficient" in values:
        loading = values["stage_loading_coefficient"]
        checks["stage_loading_coefficient"] = stage_loading_check(machine, loading)
    return CaseResults(values=values, failures=failures, checks=checks)


def _input_failures(inputs, efficiency_name, count_name, weights, max_stages):
    """Reasons for inputs outside their physical range (the API's schema rejects most)."""
    def outside(name, low, high=np.inf, low_inclusive=False, high_inclusive=True):
        value = inputs[name]
        with np.errstate(invalid="ignore"):
            above = value >= low if low_inclusive else value > low
            below = value <= high if high_inclusive else value < high
        return ~(np.isfinite(value) & above & below)

    failures = [
        ("pressure_ratio must be a finite number above 1", outside("pressure_ratio", 1.0)),
        ("total_temperature must be positive", outside("total_temperature", 0.0)),
        ("total_pressure must be positive", outside("total_pressure", 0.0)),
        ("cp must be positive", outside("cp", 0.0)),
        ("gamma must be above 1", outside("gamma", 1.0)),
    ]
    if inputs[efficiency_name].ndim == 2:
        # One efficiency per stage: as many finite entries as stages, NaN only padding the end.
        efficiency = inputs[efficiency_name]
        count, usable = weight_counts(np.where(np.isfinite(efficiency), 1.0, np.nan))
        with np.errstate(invalid="ignore"):
            inside = ~np.isfinite(efficiency) | ((efficiency > 0.0) & (efficiency <= 1.0))
        wrong_count = ~usable
        if count_name == "stages":
            wrong_count |= count != inputs["stages"]
        failures += [
            (f"{efficiency_name} must have one entry per stage (NaN only padding the end)", wrong_count),
            (f"{efficiency_name} must be in (0, 1]", ~np.all(inside, axis=1)),
        ]
    else:
        failures.append((f"{efficiency_name} must be in (0, 1]", outside(efficiency_name, 0.0, 1.0)))
    if "blade_speed" in inputs:
        failures.append(("blade_speed must be positive", outside("blade_speed", 0.0)))
    if "mass_flow" in inputs:
        failures.append(("mass_flow must not be negative", outside("mass_flow", 0.0, low_inclusive=True)))
    if count_name == "stages":
        fractional = np.round(inputs["stages"]) != inputs["stages"]
        failures.append((f"stages must be a whole number from 1 to {max_stages}",
                         outside("stages", 1.0, max_stages, low_inclusive=True) | fractional))
    elif count_name == "max_loading_coefficient":
        failures.append(("max_loading_coefficient must be positive", outside("max_loading_coefficient", 0.0)))
    else:
        failures.append(("max_stage_pressure_ratio must be above 1",
                         outside("max_stage_pressure_ratio", 1.0)))
    if weights is not None:
        failures.append(("weights must be positive numbers (NaN may only pad the end of a row)",
                         ~weight_counts(weights)[1]))
    return failures


def _stage_values(machine, stages, sub, count, efficiency_name, n, index):
    """Per-stage and overall outputs of the cases in ``index``, scattered to all ``n`` cases."""
    ratio, tau, log_ratio, tau_m1 = stages
    t_in, p_in, cp, gamma = sub["total_temperature"], sub["total_pressure"], sub["cp"], sub["gamma"]
    k = _exponent(gamma)
    inlet_t, outlet_t, inlet_p, outlet_p = _stage_march(machine, ratio, tau, t_in, p_in)
    change = inlet_t * np.abs(tau_m1)
    with np.errstate(invalid="ignore", divide="ignore"):
        stage = {
            "stage_pressure_ratio": ratio,
            "stage_inlet_total_temperature": inlet_t,
            "stage_outlet_total_temperature": outlet_t,
            "stage_inlet_total_pressure": inlet_p,
            "stage_outlet_total_pressure": outlet_p,
            "stage_total_temperature_change": change,
            "stage_work": cp[:, None] * change,
            "stage_isentropic_efficiency": _isentropic_efficiency(machine, log_ratio, tau_m1, k[:, None]),
        }
        if "blade_speed" in sub:
            stage["stage_loading_coefficient"] = stage["stage_work"] / sub["blade_speed"][:, None] ** 2
        last = np.maximum(count, 1) - 1
        outlet_temperature = outlet_t[np.arange(len(index)), last] if len(index) else np.zeros(0)
        # ln of the overall temperature ratio as the sum of the stages': no difference of
        # temperatures that are nearly equal.
        log_tau = np.nansum(np.log1p(tau_m1), axis=1)
        overall_tau_m1 = np.expm1(log_tau)
        pr = sub["pressure_ratio"]
        log_pr = np.log(pr)
        overall = {
            "outlet_total_temperature": outlet_temperature,
            "outlet_total_pressure": p_in * pr if machine == "compressor" else p_in / pr,
            "total_temperature_change": t_in * np.abs(overall_tau_m1),
            "work": cp * (t_in * np.abs(overall_tau_m1)),
            "isentropic_efficiency": _isentropic_efficiency(machine, log_pr, overall_tau_m1, k),
            "polytropic_efficiency": (sub[efficiency_name] if efficiency_name == "polytropic_efficiency"
                                      else (k * log_pr / log_tau if machine == "compressor"
                                            else -log_tau / (k * log_pr))),
        }
        if "mass_flow" in sub:
            overall["power"] = sub["mass_flow"] * overall["work"]
    values = {}
    for name, value in {**overall, **stage}.items():
        full = np.full((n,) + value.shape[1:], np.nan)
        full[index] = value
        values[name] = full
    return values
