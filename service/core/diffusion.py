"""Blade-row loading of axial compressors: Lieblein's diffusion factor and solidity sizing.

Every quantity is in the row's own frame: relative velocities and angles for a rotor,
absolute ones for a stator. Angles are measured from the axial direction and are positive
in the direction of rotor motion (the service's convention), so a compressor rotor usually
sees negative relative angles. The diffusion factor uses the magnitude of the change in
tangential velocity, so a row and its mirror image have the same factor, and a row whose
flow crosses the axial direction is credited with its full turning.

Lieblein's diffusion factor [1], [2]:

.. math::

    D = 1 - \\frac{V_2}{V_1} + \\frac{|V_{\\theta 2} - V_{\\theta 1}|}{2 \\sigma V_1}

and, for a row whose streamline changes radius from ``r1`` to ``r2``, the blade-element
form of [2]:

.. math::

    D = 1 - \\frac{V_2}{V_1}
        + \\frac{|r_2 V_{\\theta 2} - r_1 V_{\\theta 1}|}{(r_1 + r_2) \\sigma V_1}

with the solidity ``sigma = chord / pitch`` (true chord, not axial chord). The numerator of the
second form is the change of the absolute angular momentum, i.e. the torque on the blades per
unit mass flow, in both kinds of row; the velocities ``V_1``, ``V_2`` stay in the row's frame. For a
rotor, whose row-frame swirls are relative (``W_theta = V_theta - Omega r``),

.. math::

    r_2 V_{\\theta 2} - r_1 V_{\\theta 1} = r_2 W_{\\theta 2} - r_1 W_{\\theta 1} + \\Omega (r_2^2 - r_1^2)

so a rotor row with a change of radius needs the shaft speed: the last term (the Coriolis
term) is not blade loading, and leaving it out misstates the factor.

The second form is
evaluated as ``|w2 Vtheta2 - w1 Vtheta1| / (2 sigma V1)`` with ``w_k = 2 r_k / (r1 + r2)``:
for equal radii both weights are exactly 1.0 in floating point, so it reduces bit for bit to
the first form.

References
----------
1. Lieblein, S., Schwenk, F. C. and Broderick, R. L. (1953), "Diffusion factor for
   estimating losses and limiting blade loadings in axial-flow-compressor blade elements",
   NACA RM E53D01.
2. Johnsen, I. A. and Bullock, R. O. (eds.) (1965), "Aerodynamic Design of Axial-Flow
   Compressors", NASA SP-36 (the cascade and blade-element chapters by Lieblein and
   co-workers; chapter numbers are not cited because they are recalled from memory).
3. de Haller, P. (1953), "Das Verhalten von Tragflügelgittern in Axialverdichtern und im
   Windkanal", Brennstoff-Wärme-Kraft 5(10).
"""

from __future__ import annotations

import numpy as np

from service.core.angles import cos_tan
from service.core.cases import NumberedReason, broadcast_cases, masked_results
from service.core.checks import RuleCheck, de_haller_check, deceleration_check, solidity_checks
from service.core.triangles import angular_velocity

ROWS = ("rotor", "stator")
SPAN_POSITIONS = ("hub", "mean", "tip")

_LIEBLEIN = "Lieblein, Schwenk & Broderick (1953), NACA RM E53D01; NASA SP-36 (1965)"

#: Diffusion-factor limits per (row, span position): (warn above, fail above, basis). [-]
#: The rotor tip's values are the design brief's; the section-dependent knees of the loss
#: correlations (about 0.4 at a rotor tip, about 0.6 at rotor hub and mean and in stators)
#: are recalled from memory from the loss correlations of NASA SP-36. Where the knee is at 0.6 the warn and
#: fail limits coincide: below it the loss is flat, above it the row is outside the low-loss
#: range of the data.
DIFFUSION_FACTOR_LIMITS = {
    ("rotor", "tip"): (0.45, 0.6, f"{_LIEBLEIN}: rotor-tip loss rises above about 0.4"),
    ("rotor", "mean"): (0.6, 0.6, f"{_LIEBLEIN}: rotor hub and mean loss rises above about 0.6"),
    ("rotor", "hub"): (0.6, 0.6, f"{_LIEBLEIN}: rotor hub and mean loss rises above about 0.6"),
    ("stator", "tip"): (0.6, 0.6, f"{_LIEBLEIN}: stator loss rises above about 0.6"),
    ("stator", "mean"): (0.6, 0.6, f"{_LIEBLEIN}: stator loss rises above about 0.6"),
    ("stator", "hub"): (0.6, 0.6, f"{_LIEBLEIN}: stator loss rises above about 0.6"),
}

#: Below this fraction of the inlet speed the change of angular momentum counts as zero.
_NO_TURNING = 1e-9
#: Relative slack before an extra blade is added, so a solidity that came from an integer
#: count gives that count back rather than one more through round-off.
_COUNT_SLACK = 1e-9


def _check_options(row, span_position):
    if row not in ROWS:
        raise ValueError(f"row must be one of {ROWS}, not {row!r}")
    if span_position not in SPAN_POSITIONS:
        raise ValueError(f"span_position must be one of {SPAN_POSITIONS}, not {span_position!r}")


def _radius_weights(inlet_radius, outlet_radius):
    """Weights ``2 r_k / (r1 + r2)``; exactly (1.0, 1.0) without radii or for equal radii."""
    if inlet_radius is None and outlet_radius is None:
        return 1.0, 1.0
    if inlet_radius is None or outlet_radius is None:
        raise ValueError("inlet_radius and outlet_radius must be given together")
    r1, r2 = broadcast_cases(inlet_radius, outlet_radius)
    total = r1 + r2
    return 2.0 * r1 / total, 2.0 * r2 / total


def _turning(inlet_swirl, outlet_swirl, inlet_radius, outlet_radius, shaft_speed=None):
    """``|r2 Vtheta2 - r1 Vtheta1| / ((r1 + r2) / 2)``, the tangential term's numerator over ``2 sigma V1``.

    For a rotor (``shaft_speed`` given) the swirls are relative, ``W_theta = V_theta - Omega r``, and the
    absolute change of angular momentum is ``r2 W_theta2 - r1 W_theta1 + Omega (r2^2 - r1^2)``; over
    ``(r1 + r2) / 2`` the blade-speed part is ``2 Omega (r2 - r1)``, exactly zero for equal radii.
    """
    w1, w2 = _radius_weights(inlet_radius, outlet_radius)
    change = w2 * np.asarray(outlet_swirl, dtype=float) - w1 * np.asarray(inlet_swirl, dtype=float)
    if shaft_speed is not None and inlet_radius is not None:
        r1, r2, speed = broadcast_cases(inlet_radius, outlet_radius, shaft_speed)
        change = change + 2.0 * angular_velocity(speed) * (r2 - r1)
    return np.abs(change)


def row_velocities(axial_velocity, inlet_angle, outlet_angle, outlet_axial_velocity=None):
    """Speeds and tangential velocities of a row from its axial velocities and flow angles.

    Parameters
    ----------
    axial_velocity : array_like
        Axial velocity at the row inlet; positive. [m s^-1]
    inlet_angle, outlet_angle : array_like
        Flow angles in the row's own frame, from axial, positive in the direction of rotor
        motion. [deg]
    outlet_axial_velocity : array_like, optional
        Axial velocity at the row outlet; defaults to ``axial_velocity``. [m s^-1]

    Returns
    -------
    dict of numpy.ndarray
        ``inlet_velocity``, ``outlet_velocity`` (speeds ``V = Vx / cos(angle)``) and
        ``inlet_swirl``, ``outlet_swirl`` (``Vtheta = Vx tan(angle)``). [m s^-1]
    """
    if outlet_axial_velocity is None:
        outlet_axial_velocity = axial_velocity
    vx1, vx2, a1, a2 = broadcast_cases(axial_velocity, outlet_axial_velocity, inlet_angle, outlet_angle)
    cos1, tan1 = cos_tan(a1)
    cos2, tan2 = cos_tan(a2)
    # Vx / cos(angle) rather than hypot(Vx, Vtheta): one rounding, and no overflow of an
    # intermediate square or sum before the speed itself exceeds the float range.
    with np.errstate(divide="ignore", invalid="ignore"):
        return {
            "inlet_velocity": vx1 / cos1,
            "outlet_velocity": vx2 / cos2,
            "inlet_swirl": vx1 * tan1,
            "outlet_swirl": vx2 * tan2,
        }


def diffusion_factor(inlet_velocity, outlet_velocity, inlet_swirl, outlet_swirl, solidity,
                     inlet_radius=None, outlet_radius=None, shaft_speed=None):
    """Lieblein's diffusion factor of a blade row.

    .. math::

        D = 1 - \\frac{V_2}{V_1}
            + \\frac{|r_2 V_{\\theta 2} - r_1 V_{\\theta 1}|}{(r_1 + r_2) \\sigma V_1}

    which for ``r1 = r2`` (or no radii) is ``1 - V2/V1 + |Vtheta2 - Vtheta1| / (2 sigma V1)``.

    Parameters
    ----------
    inlet_velocity, outlet_velocity : array_like
        Speeds at the row inlet and outlet in the row's own frame. [m s^-1]
    inlet_swirl, outlet_swirl : array_like
        Tangential velocities at the row inlet and outlet in the row's own frame. [m s^-1]
    solidity : array_like
        Chord over pitch. [-]
    inlet_radius, outlet_radius : array_like, optional
        Radii of the streamline at the row inlet and outlet, both or neither; without them
        the radius is taken as constant. [m]
    shaft_speed : array_like, optional
        A rotor row with radii: the shaft speed, so that the tangential term is the change of
        absolute angular momentum (the torque), ``r2 V_theta2 - r1 V_theta1 = r2 W_theta2 -
        r1 W_theta1 + Omega (r2^2 - r1^2)``, not of the relative one, whose difference is the
        Coriolis term, not blade loading. Leave out for a stator. [rev min^-1]

    Returns
    -------
    numpy.ndarray
        The diffusion factor. [-]

    References
    ----------
    1. Lieblein, Schwenk and Broderick (1953), NACA RM E53D01 (constant radius).
    2. NASA SP-36 (1965) (the form with a change of radius).

    Examples
    --------
    >>> round(float(diffusion_factor(200.0, 146.41, 141.42, 37.89, 1.2)), 4)
    0.4836
    """
    v1, v2, sigma = broadcast_cases(inlet_velocity, outlet_velocity, solidity)
    turning = _turning(inlet_swirl, outlet_swirl, inlet_radius, outlet_radius, shaft_speed)
    # Each term as a ratio to V1 first: 2 sigma V1 overflows at speeds whose ratios do not.
    return 1.0 - v2 / v1 + (turning / v1) / (2.0 * sigma)


def minimum_diffusion_factor(inlet_velocity, outlet_velocity):
    """The smallest diffusion factor any solidity can give: ``1 - V2/V1``.

    The turning term falls towards zero as the solidity grows without bound, with or
    without a change of radius, so this bound holds for both forms.

    Parameters
    ----------
    inlet_velocity, outlet_velocity : array_like
        Speeds at the row inlet and outlet in the row's own frame. [m s^-1]

    Returns
    -------
    numpy.ndarray
        ``1 - V2/V1``; a target at or below it is unreachable. [-]

    References
    ----------
    1. Lieblein, Schwenk and Broderick (1953), NACA RM E53D01.
    """
    v1, v2 = broadcast_cases(inlet_velocity, outlet_velocity)
    return 1.0 - v2 / v1


def solidity_for_diffusion_factor(inlet_velocity, outlet_velocity, inlet_swirl, outlet_swirl,
                                  diffusion_factor, inlet_radius=None, outlet_radius=None, shaft_speed=None):
    """Solidity that gives a row a target diffusion factor (the inverse of :func:`diffusion_factor`).

    .. math::

        \\sigma = \\frac{|r_2 V_{\\theta 2} - r_1 V_{\\theta 1}|}
                       {(r_1 + r_2) V_1 (D - 1 + V_2 / V_1)}

    Parameters
    ----------
    inlet_velocity, outlet_velocity : array_like
        Speeds at the row inlet and outlet in the row's own frame. [m s^-1]
    inlet_swirl, outlet_swirl : array_like
        Tangential velocities at the row inlet and outlet in the row's own frame. [m s^-1]
    diffusion_factor : array_like
        The target diffusion factor. [-]
    inlet_radius, outlet_radius : array_like, optional
        Radii of the streamline at the row inlet and outlet, both or neither. [m]
    shaft_speed : array_like, optional
        A rotor row with radii: the shaft speed (see :func:`diffusion_factor`). [rev min^-1]

    Returns
    -------
    numpy.ndarray
        The solidity (chord over pitch); NaN where no solidity reaches the target (target
        at or below ``1 - V2/V1``, or a row that does not change the angular momentum). [-]

    References
    ----------
    1. Lieblein, Schwenk and Broderick (1953), NACA RM E53D01.
    2. NASA SP-36 (1965).
    """
    v1, v2, target = broadcast_cases(inlet_velocity, outlet_velocity, diffusion_factor)
    turning = _turning(inlet_swirl, outlet_swirl, inlet_radius, outlet_radius, shaft_speed)
    margin = target - (1.0 - v2 / v1)
    reachable = (margin > 0) & (turning > _NO_TURNING * v1)
    with np.errstate(divide="ignore", invalid="ignore"):
        # turning / V1 first: 2 V1 margin overflows at speeds whose ratio does not.
        return np.where(reachable, (turning / v1) / (2.0 * margin), np.nan)


def blade_count_for_solidity(chord, mean_radius, solidity):
    """Smallest whole number of blades at a mean radius that gives at least a solidity.

    Parameters
    ----------
    chord : array_like
        True chord of the blades. [m]
    mean_radius : array_like
        Mean radius of the row. [m]
    solidity : array_like
        Required chord over pitch. [-]

    Returns
    -------
    numpy.ndarray
        ``ceil(2 pi r_m sigma / c)``, as whole-valued floats (NaN where the solidity is
        NaN). A count within a relative 1e-9 below an integer is taken as that integer, so
        round-off does not add a blade. [-]
    """
    chord, radius, sigma = broadcast_cases(chord, mean_radius, solidity)
    with np.errstate(over="ignore"):
        # The length ratio first: 2 pi r sigma overflows before the count does.
        exact = (radius / chord) * (2.0 * np.pi * sigma)
    return np.maximum(np.ceil(exact * (1.0 - _COUNT_SLACK)), 1.0)


def solidity_from_blade_count(chord, mean_radius, blade_count):
    """Solidity of a row of blades at its mean radius.

    Parameters
    ----------
    chord : array_like
        True chord of the blades. [m]
    mean_radius : array_like
        Mean radius of the row. [m]
    blade_count : array_like
        Number of blades. [-]

    Returns
    -------
    numpy.ndarray
        ``N c / (2 pi r_m)``. [-]
    """
    chord, radius, count = broadcast_cases(chord, mean_radius, blade_count)
    with np.errstate(over="ignore"):
        # The length ratio first: N c overflows before the solidity does.
        return (chord / radius) * (count / (2.0 * np.pi))


def diffusion_factor_check(diffusion_factor, row="rotor", span_position="mean"):
    """The loading limit on a row's diffusion factor for its kind and span position.

    Parameters
    ----------
    diffusion_factor : array_like
        The diffusion factor judged. [-]
    row : str
        One of :data:`ROWS`.
    span_position : str
        One of :data:`SPAN_POSITIONS`.

    Returns
    -------
    RuleCheck
        Rotor tip: warn above 0.45, fail above 0.6. Rotor hub and mean, and stators at any
        span: fail above 0.6. See :data:`DIFFUSION_FACTOR_LIMITS`.

    References
    ----------
    1. Lieblein, Schwenk and Broderick (1953), NACA RM E53D01.
    2. NASA SP-36 (1965).
    """
    _check_options(row, span_position)
    warn, fail, basis = DIFFUSION_FACTOR_LIMITS[(row, span_position)]
    if warn == fail:
        return RuleCheck(value=np.asarray(diffusion_factor, dtype=float), limit=fail,
                         comparison="at_most", basis=basis, beyond_limit="fail")
    return RuleCheck(value=np.asarray(diffusion_factor, dtype=float), limit=warn,
                     comparison="at_most", basis=basis, fail_limit=fail)


def unreachable_target_reason(smallest):
    """Reason for a target diffusion factor that no solidity reaches (one case).

    Parameters
    ----------
    smallest : float
        The case's smallest reachable diffusion factor, ``1 - V2/V1``. [-]

    Returns
    -------
    str
    """
    return ("no solidity reaches the target diffusion factor: the smallest reachable diffusion "
            f"factor is {smallest:.3f} (1 - V2/V1, approached as the solidity grows without bound)")


def no_turning_reason(smallest):
    """Reason for a sizing of a row that does not change the angular momentum (one case).

    Parameters
    ----------
    smallest : float
        The case's diffusion factor at every solidity, ``1 - V2/V1``. [-]

    Returns
    -------
    str
    """
    return ("the row does not turn the flow (its change of r V_theta is below 1e-9 of the inlet speed times the "
            f"mean radius): its diffusion factor is {smallest:.3f} (1 - V2/V1) at every solidity, so no solidity "
            "gives the target")


def _numbered(reason, number, mask):
    """One failure entry for every case of ``mask``, its text stating the case's ``number``
    rounded as the text shows it."""
    if not mask.any():
        return []
    numbers = np.zeros(mask.shape)
    # Adding 0.0 turns -0.0 into 0.0, so both print alike and are one text.
    numbers[mask] = np.round(number[mask], 3) + 0.0
    return [(NumberedReason(reason, numbers), mask)]


def _check_shaft_speed(row, inlet_radius, shaft_speed):
    """A rotor row with radii needs the shaft speed; nothing else takes it."""
    if row == "rotor" and inlet_radius is not None and shaft_speed is None:
        raise ValueError("a rotor row given inlet_radius and outlet_radius needs shaft_speed: the diffusion "
                         "factor's tangential term is the change of absolute angular momentum")
    if shaft_speed is not None and (row != "rotor" or inlet_radius is None):
        raise ValueError("shaft_speed applies only to a rotor row given inlet_radius and outlet_radius")


def _flow(axial_velocity, inlet_angle, outlet_angle, outlet_axial_velocity, inlet_radius, outlet_radius,
          shaft_speed=None):
    """Row-frame flow, the outputs shared by analysis and sizing, and the input failures."""
    if outlet_axial_velocity is None:
        outlet_axial_velocity = axial_velocity
    flow = row_velocities(axial_velocity, inlet_angle, outlet_angle, outlet_axial_velocity)
    vx1, vx2, a1, a2 = broadcast_cases(axial_velocity, outlet_axial_velocity, inlet_angle, outlet_angle)
    failures = [
        ("axial velocity must be positive at the row inlet and outlet", ~((vx1 > 0) & (vx2 > 0))),
        ("a flow angle is at or beyond 90 deg from axial: the row has no through-flow",
         ~((np.abs(a1) < 90) & (np.abs(a2) < 90))),
    ]
    if inlet_radius is not None or outlet_radius is not None:
        _radius_weights(inlet_radius, outlet_radius)
        r1, r2 = broadcast_cases(inlet_radius, outlet_radius)
        failures.append(("inlet_radius and outlet_radius must be positive", ~((r1 > 0) & (r2 > 0))))
    if shaft_speed is not None:
        failures.append(("shaft_speed must be positive", ~(np.asarray(shaft_speed, dtype=float) > 0)))
    ratio = flow["outlet_velocity"] / flow["inlet_velocity"]
    values = {
        "inlet_velocity": flow["inlet_velocity"],
        "outlet_velocity": flow["outlet_velocity"],
        "tangential_velocity_change": flow["outlet_swirl"] - flow["inlet_swirl"],
        "de_haller": ratio,
        "velocity_ratio": ratio,
    }
    return flow, values, failures


def _common_shape(*arrays):
    return np.broadcast_shapes(*(np.shape(a) for a in arrays if a is not None))


def _finish(values, failures, row, span_position, judged, shape, inputs):
    """Mask failed cases to NaN in every output and judge the rules of thumb."""

    def checks(out, failed):
        # The judged factor is an output, or the target (an input, so masked into a copy).
        masked = out[judged] if isinstance(judged, str) else np.where(failed, np.nan, judged)
        return {
            "diffusion_factor": diffusion_factor_check(masked, row, span_position),
            "de_haller": de_haller_check(out["de_haller"]),
            "velocity_ratio": deceleration_check(out["velocity_ratio"]),
            **solidity_checks(out["solidity"]),
        }

    return masked_results(values, failures, checks, shape=shape, inputs=inputs)


def evaluate_diffusion_analysis(row, axial_velocity, inlet_angle, outlet_angle, solidity=None,
                                chord=None, pitch=None, blade_count=None, mean_radius=None,
                                outlet_axial_velocity=None, inlet_radius=None, outlet_radius=None,
                                span_position="mean", shaft_speed=None):
    """Diffusion factor, de Haller number and checks of a blade row of known solidity.

    Parameters
    ----------
    row : str
        One of :data:`ROWS`; with ``span_position`` it selects the diffusion-factor limits.
    axial_velocity : array_like
        Axial velocity at the row inlet; positive. [m s^-1]
    inlet_angle, outlet_angle : array_like
        Flow angles in the row's own frame (relative for a rotor, absolute for a stator),
        from axial, positive in the direction of rotor motion. [deg]
    solidity : array_like, optional
        Chord over pitch. [-]
    chord : array_like, optional
        True chord; with ``pitch``, or with ``blade_count`` and ``mean_radius``, instead of
        ``solidity``. [m]
    pitch : array_like, optional
        Blade pitch at the mean radius. [m]
    blade_count : array_like, optional
        Number of blades. [-]
    mean_radius : array_like, optional
        Mean radius of the row. [m]
    outlet_axial_velocity : array_like, optional
        Axial velocity at the row outlet; defaults to ``axial_velocity``. [m s^-1]
    inlet_radius, outlet_radius : array_like, optional
        Streamline radii at the row inlet and outlet, both or neither (NASA SP-36 form). [m]
    span_position : str
        One of :data:`SPAN_POSITIONS`; default ``mean``.
    shaft_speed : array_like, optional
        Required for a rotor row given radii, not allowed otherwise: the tangential term is then
        the change of absolute angular momentum (:func:`diffusion_factor`). [rev min^-1]

    Returns
    -------
    CaseResults
        Values ``diffusion_factor`` [-], ``de_haller`` and ``velocity_ratio`` (both the
        outlet over inlet speed, judged by different rules) [-], ``tangential_velocity_change``
        (signed ``Vtheta_out - Vtheta_in`` in the row frame, positive in the direction of
        rotor motion) [m s^-1], ``inlet_velocity``, ``outlet_velocity`` [m s^-1] and
        ``solidity`` (as given or as resolved from chord and pitch or blade count) [-].
        Failures: non-positive axial velocity, a flow angle at or beyond 90 deg, non-positive
        radii or solidity. Checks ``diffusion_factor``, ``de_haller``, ``velocity_ratio``,
        ``solidity_low``, ``solidity_high`` (:func:`service.core.checks.solidity_checks`).

    Raises
    ------
    ValueError
        For an unknown ``row`` or ``span_position``, for other than exactly one way of
        giving the solidity, for only one of the two radii, or for ``shaft_speed`` given other
        than with both radii for a rotor.

    References
    ----------
    1. Lieblein, Schwenk and Broderick (1953), NACA RM E53D01.
    2. NASA SP-36 (1965).
    3. de Haller (1953), Brennstoff-Wärme-Kraft 5(10).
    """
    _check_options(row, span_position)
    _check_shaft_speed(row, inlet_radius, shaft_speed)
    given = {name for name, v in (("solidity", solidity), ("chord", chord), ("pitch", pitch),
                                  ("blade_count", blade_count), ("mean_radius", mean_radius))
             if v is not None}
    if given not in ({"solidity"}, {"chord", "pitch"}, {"chord", "blade_count", "mean_radius"}):
        raise ValueError("give the solidity as one of: solidity; chord and pitch; chord, blade_count "
                         f"and mean_radius (got {sorted(given) or 'none'})")
    with np.errstate(divide="ignore", invalid="ignore"):
        if given == {"solidity"}:
            sigma = np.asarray(solidity, dtype=float)
            positive = sigma > 0
        elif given == {"chord", "pitch"}:
            chord_, pitch_ = broadcast_cases(chord, pitch)
            sigma = chord_ / pitch_
            positive = (chord_ > 0) & (pitch_ > 0)
        else:
            chord_, count, radius = broadcast_cases(chord, blade_count, mean_radius)
            sigma = solidity_from_blade_count(chord_, radius, count)
            positive = (chord_ > 0) & (count > 0) & (radius > 0)
        flow, values, failures = _flow(axial_velocity, inlet_angle, outlet_angle, outlet_axial_velocity,
                                       inlet_radius, outlet_radius, shaft_speed)
        failures.append(("solidity, chord, pitch, blade count and mean radius must be positive", ~positive))
        values["diffusion_factor"] = diffusion_factor(
            flow["inlet_velocity"], flow["outlet_velocity"], flow["inlet_swirl"], flow["outlet_swirl"],
            sigma, inlet_radius, outlet_radius, shaft_speed)
        values["solidity"] = sigma
        shape = _common_shape(*values.values(), *(mask for _, mask in failures))
        return _finish(values, failures, row, span_position, "diffusion_factor", shape,
                       (axial_velocity, inlet_angle, outlet_angle, solidity, chord, pitch, blade_count,
                        mean_radius, outlet_axial_velocity, inlet_radius, outlet_radius, shaft_speed))


def evaluate_diffusion_sizing(row, axial_velocity, inlet_angle, outlet_angle, target_diffusion_factor,
                              chord=None, mean_radius=None, outlet_axial_velocity=None,
                              inlet_radius=None, outlet_radius=None, span_position="mean", shaft_speed=None):
    """Solidity (and with chord and mean radius the blade count) for a target diffusion factor.

    Parameters
    ----------
    row : str
        One of :data:`ROWS`.
    axial_velocity : array_like
        Axial velocity at the row inlet; positive. [m s^-1]
    inlet_angle, outlet_angle : array_like
        Flow angles in the row's own frame, from axial, positive in the direction of rotor
        motion. [deg]
    target_diffusion_factor : array_like
        The diffusion factor the row should have. [-]
    chord, mean_radius : array_like, optional
        True chord [m] and mean radius [m], both or neither; with them the blade count is
        rounded up, so the achieved factor is at or below the target.
    outlet_axial_velocity : array_like, optional
        Axial velocity at the row outlet; defaults to ``axial_velocity``. [m s^-1]
    inlet_radius, outlet_radius : array_like, optional
        Streamline radii at the row inlet and outlet, both or neither (NASA SP-36 form). [m]
    span_position : str
        One of :data:`SPAN_POSITIONS`; default ``mean``.
    shaft_speed : array_like, optional
        Required for a rotor row given radii, not allowed otherwise (:func:`diffusion_factor`).
        [rev min^-1]

    Returns
    -------
    CaseResults
        Values ``solidity`` [-], ``minimum_diffusion_factor`` (``1 - V2/V1``) [-],
        ``de_haller``, ``velocity_ratio`` [-], ``tangential_velocity_change``,
        ``inlet_velocity``, ``outlet_velocity`` [m s^-1]; with chord and mean radius also
        ``blade_count`` [-], ``pitch`` (``2 pi r_m / N``) [m] and
        ``diffusion_factor_achieved`` [-]. Failures: as the analysis, plus an unreachable
        target and a row without turning; these two reasons state the case's smallest
        reachable factor, each as one :class:`~service.core.cases.NumberedReason`. Checks
        ``diffusion_factor`` (on the achieved factor, or the target without a blade count),
        ``de_haller``, ``velocity_ratio``, ``solidity_low``, ``solidity_high`` (on the
        ``solidity`` output, the one the target needs).

    Raises
    ------
    ValueError
        For an unknown ``row`` or ``span_position``, for only one of a pair of
        ``chord``/``mean_radius`` or ``inlet_radius``/``outlet_radius``, or for ``shaft_speed``
        given other than with both radii for a rotor.

    References
    ----------
    1. Lieblein, Schwenk and Broderick (1953), NACA RM E53D01.
    2. NASA SP-36 (1965).
    """
    _check_options(row, span_position)
    _check_shaft_speed(row, inlet_radius, shaft_speed)
    if (chord is None) != (mean_radius is None):
        raise ValueError("chord and mean_radius must be given together")
    with np.errstate(divide="ignore", invalid="ignore"):
        flow, values, failures = _flow(axial_velocity, inlet_angle, outlet_angle, outlet_axial_velocity,
                                       inlet_radius, outlet_radius, shaft_speed)
        v1, v2 = flow["inlet_velocity"], flow["outlet_velocity"]
        target = np.asarray(target_diffusion_factor, dtype=float)
        if chord is not None:
            chord_, radius = broadcast_cases(chord, mean_radius)
            failures.append(("chord and mean radius must be positive", ~((chord_ > 0) & (radius > 0))))
        sigma = solidity_for_diffusion_factor(v1, v2, flow["inlet_swirl"], flow["outlet_swirl"], target,
                                              inlet_radius, outlet_radius, shaft_speed)
        values.update(solidity=sigma, minimum_diffusion_factor=minimum_diffusion_factor(v1, v2))
        judged = target
        if chord is not None:
            count = blade_count_for_solidity(chord_, radius, sigma)
            values["blade_count"] = count
            values["pitch"] = radius / count * (2.0 * np.pi)
            values["diffusion_factor_achieved"] = diffusion_factor(
                v1, v2, flow["inlet_swirl"], flow["outlet_swirl"],
                solidity_from_blade_count(chord_, radius, count), inlet_radius, outlet_radius, shaft_speed)
            judged = "diffusion_factor_achieved"

        shape = _common_shape(target, *values.values(), *(mask for _, mask in failures))
        smallest = np.broadcast_to(values["minimum_diffusion_factor"], shape)
        invalid = np.zeros(shape, dtype=bool)
        for _, mask in failures:
            invalid |= mask
        turning = _turning(flow["inlet_swirl"], flow["outlet_swirl"], inlet_radius, outlet_radius, shaft_speed)
        unreachable = ~invalid & ~(target > smallest)
        no_turning = ~invalid & ~unreachable & ~(turning > _NO_TURNING * v1)
        failures += _numbered(unreachable_target_reason, smallest, np.broadcast_to(unreachable, shape))
        failures += _numbered(no_turning_reason, smallest, np.broadcast_to(no_turning, shape))
        return _finish(values, failures, row, span_position, judged, shape,
                       (axial_velocity, inlet_angle, outlet_angle, target_diffusion_factor, chord,
                        mean_radius, outlet_axial_velocity, inlet_radius, outlet_radius, shaft_speed))


def evaluate_diffusion_row(row, axial_velocity, inlet_angle, outlet_angle, target_diffusion_factor=None, **row_data):
    """A compressor row sized for a target diffusion factor where one is given, else analysed.

    Parameters
    ----------
    row : str
        One of :data:`ROWS`.
    axial_velocity, inlet_angle, outlet_angle : array_like
        As in :func:`evaluate_diffusion_analysis`. [m s^-1], [deg], [deg]
    target_diffusion_factor : array_like, optional
        The diffusion factor to size the row for; without it the row is analysed. [-]
    **row_data
        The other keywords of :func:`evaluate_diffusion_sizing` (sizing) or
        :func:`evaluate_diffusion_analysis` (analysis).

    Returns
    -------
    CaseResults
        As the function called.

    References
    ----------
    Lieblein, S., Schwenk, F. C. and Broderick, R. L. (1953), NACA RM E53D01; NASA SP-36 (1965), ch. 6.
    """
    if target_diffusion_factor is None:
        return evaluate_diffusion_analysis(row, axial_velocity, inlet_angle, outlet_angle, **row_data)
    return evaluate_diffusion_sizing(row, axial_velocity, inlet_angle, outlet_angle, target_diffusion_factor,
                                     **row_data)
