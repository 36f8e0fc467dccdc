"""Turbine blade pitch and blade count from Zweifel's tangential loading coefficient.

Zweifel [1] compares the tangential force a blade actually carries with the force of an
ideal pressure distribution: inlet total pressure along the whole pressure surface and
outlet static pressure along the whole suction surface, over the axial chord ``cx``:

.. math::

    Z_w = \\frac{Y_\\mathrm{actual}}{Y_\\mathrm{ideal}}
        = \\frac{\\rho_2 V_{x2}\\, s\\, |V_{\\theta 1} - V_{\\theta 2}|}{(p_{01} - p_2)\\, c_x}

per unit span, with ``s`` the pitch and stations 1 and 2 the row's inlet and outlet in the
row's own frame (absolute for a stator, relative for a rotor: ``W`` for ``V`` and the
relative total pressure for ``p01``). The axial velocity is taken constant across the row,
so that ``V_theta = V_x tan(alpha)`` at both stations, and the flow is loss-free
(``p02 = p01``).

Two definitions (:data:`DEFINITIONS`):

``incompressible``
    The usual one [1], [2]: with ``p01 - p2 = rho V2^2 / 2`` (the outlet dynamic head),

    .. math:: Z_w = 2 \\frac{s}{c_x} \\cos^2\\alpha_2 \\, |\\tan\\alpha_1 - \\tan\\alpha_2|

``compressible``
    The same force ratio with the isentropic pressure drop of a perfect gas. With
    ``rho V^2 = gamma p M^2`` it is the incompressible value times

    .. math::

        f(M_2) = \\frac{\\rho_2 V_2^2 / 2}{p_{01} - p_2}
               = \\frac{\\gamma M_2^2 / 2}
                       {\\left(1 + \\frac{\\gamma - 1}{2} M_2^2\\right)^{\\gamma/(\\gamma - 1)} - 1}

    which depends on the outlet Mach number and ``gamma`` only: the inlet total
    temperature, the total pressure level and ``cp`` cancel exactly, so the functions here
    do not take them. The outlet Mach number is given directly or follows from the outlet
    static pressure over the inlet total pressure (isentropic, loss-free).

Angles are signed, measured from the axial direction and positive in the direction of
rotor motion, so an inlet angle of the opposite sign to the outlet angle adds to the
turning (a rotor with ``beta2 = +40``, ``beta3 = -60`` turns the flow through 100 deg).

Notes
-----
How much the definitions differ. The ratio ``f`` of compressible to incompressible
coefficient at the same pitch is independent of the angles; computed here for
``gamma = 1.4`` (``gamma = 1.333`` within 0.003 of it), and for a nozzle turning from
0 to 70 deg (axial chord 0.040 m, mean radius 0.35 m) pitched for an incompressible
``Zw = 0.8`` (``s/cx = 1.2446``):

======  =======  ===========  ===========  ======
``M2``  ``f``    ``Zw`` at    ``s/cx``     blades
                 fixed pitch  for 0.8      (up)
======  =======  ===========  ===========  ======
0       1        0.8          1.2446       45
0.05    0.99938  0.7995       1.2454       45
0.3     0.9778   0.7822       1.2728       44
0.5     0.9398   0.7518       1.3243       42
0.7     0.8861   0.7089       1.4046       40
0.9     0.8202   0.6562       1.5174       37
1.0     0.7839   0.6271       1.5876       35
======  =======  ===========  ===========  ======

(``Zw`` at fixed pitch: the compressible coefficient of the row pitched for an
incompressible 0.8; ``s/cx`` for 0.8: the pitch over axial chord for a compressible
target of 0.8, and the blade count it gives rounded up; ``M2 = 0`` is the incompressible
definition). At low Mach number ``f = 1 - M^2/4 + O(M^4)``, the
compressibility correction of the impact pressure [3]: the definitions differ by 2 % at
``M2 = 0.3``, 11 % at 0.7, 18 % at 0.9 and 22 % at 1.0. A target taken from incompressible experience
(about 0.8) applied with the compressible definition therefore gives fewer, more
heavily loaded blades; state which definition a target belongs to.

The criterion was built for accelerating (turbine) rows; the coefficient of a decelerating
row can be computed but the optimum does not apply to it.

Design checks (:func:`zweifel_checks`), on the achieved or analysed coefficient:

- ``zweifel_high``: warn above 1.0, fail above 1.1. Zweifel [1] found the least profile
  loss near 0.8; high-lift low-pressure turbine rows are designed up to about 1.0-1.1
  (common practice), so above 1.0 the row must be a deliberate high-lift design and above
  1.1 it is beyond that range (profile-specific evidence needed).
- ``zweifel_low``: warn below 0.6 (common practice): the pitch is so small that the
  extra blades add wetted area, friction loss, weight and cost without a loading benefit.

Blade counts are ``int64``; a case that cannot be sized has the count 0, which is never a
valid count, and is named in the failure masks of :class:`~service.core.cases.CaseResults`.

References
----------
1. Zweifel, O. (1945), "The spacing of turbo-machine blading, especially with large
   angular deflection", Brown Boveri Review 32(12), pp. 436-444.
2. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of
   Turbomachinery", 7th ed., Butterworth-Heinemann, ch. 3 (turbine cascade correlations).
3. Ames Research Staff (1953), "Equations, tables, and charts for compressible flow",
   NACA Report 1135: eq. 44 (isentropic p/p0) and the series of the impact pressure
   ``(p0 - p)/q = 1 + M^2/4 + (2 - gamma) M^4/24 + ...`` for subsonic flow.
"""

from __future__ import annotations

import numpy as np

from service.core.angles import cos_tan, tangent_difference
from service.core.cases import broadcast_cases, masked_results
from service.core.checks import COMMON_PRACTICE, RuleCheck

ROUNDINGS = ("up", "nearest", "even_up")
DEFINITIONS = ("incompressible", "compressible")

#: Zweifel's optimum, the default sizing target. [-]
OPTIMUM_ZWEIFEL_COEFFICIENT = 0.8
#: Warn above, fail above, warn below (see the module Notes). [-]
HIGH_LIFT_LIMIT = 1.0
BEYOND_HIGH_LIFT_LIMIT = 1.1
LOW_LOADING_LIMIT = 0.6

#: Largest blade count represented exactly: beyond it the float count has no integer meaning.
MAX_BLADE_COUNT = 2**53
#: Relative distance from an integer within which a count is taken as that integer, so that
#: round-off in 2 pi r / s never adds a blade.
_INTEGER_SNAP = 1e-9

ANGLE_REASON = "a flow angle is at or beyond 90 deg from axial (or not finite): the row passes no axial flow"
NO_TURNING_REASON = (
    "the row does not turn the flow (equal inlet and outlet angles): it carries no tangential "
    "load, so no pitch reaches the target Zweifel coefficient"
)


def _check_option(name, value, allowed):
    if value not in allowed:
        raise ValueError(f"{name} must be one of {allowed}, not {value!r}")


def _valid_angles(inlet_angle, outlet_angle):
    return (np.abs(inlet_angle) < 90.0) & (np.abs(outlet_angle) < 90.0)


def _loading_per_pitch_ratio(inlet_angle, outlet_angle):
    """``2 cos^2(alpha2) |tan alpha1 - tan alpha2|``, NaN for angles at or beyond 90 deg.

    The difference of the tangents from :func:`service.core.angles.tangent_difference` (no
    cancellation of two large, nearly equal tangents) and the cosine from the complement of the
    angle (:func:`service.core.angles.cos_tan`: an angle within 1e-12 deg of 90 keeps it).
    """
    inlet, outlet = broadcast_cases(inlet_angle, outlet_angle)
    valid = _valid_angles(inlet, outlet)
    a1 = np.where(valid, inlet, 0.0)
    a2 = np.where(valid, outlet, 0.0)
    cos2 = cos_tan(a2)[0]
    with np.errstate(over="ignore"):
        loading = 2.0 * cos2 * (cos2 * np.abs(tangent_difference(a2, a1)))
    return np.where(valid, loading, np.nan)


def zweifel_coefficient(inlet_angle, outlet_angle, pitch_to_axial_chord):
    """Incompressible Zweifel coefficient of a row (Zweifel 1945).

    .. math:: Z_w = 2 \\frac{s}{c_x} \\cos^2\\alpha_2 \\, |\\tan\\alpha_1 - \\tan\\alpha_2|

    Parameters
    ----------
    inlet_angle : array_like
        Inlet flow angle in the row's frame, from axial, signed. [deg]
    outlet_angle : array_like
        Outlet flow angle in the row's frame, from axial, signed. [deg]
    pitch_to_axial_chord : array_like
        Blade pitch over axial chord. [-]

    Returns
    -------
    numpy.ndarray
        Zweifel coefficient; 0 for a row without turning, NaN for an angle at or beyond
        90 deg. [-]

    References
    ----------
    1. Zweifel (1945), Brown Boveri Review 32; Dixon and Hall (2014), ch. 3.
    """
    return _loading_per_pitch_ratio(inlet_angle, outlet_angle) * np.asarray(pitch_to_axial_chord, dtype=float)


def pitch_to_axial_chord_for_zweifel(inlet_angle, outlet_angle, zweifel_coefficient):
    """Pitch over axial chord that gives a target incompressible Zweifel coefficient.

    .. math:: \\frac{s}{c_x} = \\frac{Z_w}{2 \\cos^2\\alpha_2 \\, |\\tan\\alpha_1 - \\tan\\alpha_2|}

    Parameters
    ----------
    inlet_angle : array_like
        Inlet flow angle in the row's frame, from axial, signed. [deg]
    outlet_angle : array_like
        Outlet flow angle in the row's frame, from axial, signed. [deg]
    zweifel_coefficient : array_like
        Target Zweifel coefficient; positive. [-]

    Returns
    -------
    numpy.ndarray
        Pitch over axial chord; NaN without turning or for an angle at or beyond
        90 deg. [-]

    References
    ----------
    1. Zweifel (1945), Brown Boveri Review 32; Dixon and Hall (2014), ch. 3.
    """
    return _pitch_ratio(_loading_per_pitch_ratio(inlet_angle, outlet_angle), zweifel_coefficient)


def _pitch_ratio(loading_per_pitch_ratio, zweifel_coefficient):
    loading = np.asarray(loading_per_pitch_ratio, dtype=float)
    safe = np.where(loading > 0, loading, 1.0)
    return np.where(loading > 0, np.asarray(zweifel_coefficient, dtype=float) / safe, np.nan)


def compressibility_factor(outlet_mach, gamma=1.4):
    """Compressible over incompressible Zweifel coefficient at the same pitch.

    The outlet dynamic head over the isentropic total-to-static pressure drop:

    .. math::

        f = \\frac{\\gamma M_2^2 / 2}
                  {\\left(1 + \\frac{\\gamma - 1}{2} M_2^2\\right)^{\\gamma/(\\gamma - 1)} - 1}

    Parameters
    ----------
    outlet_mach : array_like
        Outlet Mach number in the row's frame; not negative. [-]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        ``f``; 1 at ``M2 = 0`` (the incompressible limit), NaN for a negative Mach
        number. [-]

    References
    ----------
    1. NACA Report 1135 (1953), eq. 44 (isentropic p/p0) and the subsonic series of the
       impact pressure, ``(p0 - p)/q = 1 + M^2/4 + ...``.
    """
    mach, gamma = broadcast_cases(outlet_mach, gamma)
    c = gamma / (gamma - 1.0)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore", under="ignore"):
        # ln x, x = (gamma - 1) M^2 / 2, from ln M: M^2 leaves the float range (under- or
        # overflows) at Mach numbers whose factor is still a number.
        log_x = np.log(0.5 * (gamma - 1.0)) + 2.0 * np.log(mach)
        x = np.exp(log_x)
        log_drop_base = np.logaddexp(0.0, log_x)  # ln(1 + x), accurate for tiny and huge x
        power = c * log_drop_base  # ln(p0 / p)
        # Small and moderate x: f = c x / expm1(c ln(1 + x)); expm1 keeps the low-Mach limit.
        direct = c * x / np.expm1(power)
        # Large x: f = exp(ln c + ln x - ln(expm1(power))), ln(expm1(y)) = y + ln(1 - e^-y).
        logarithmic = np.exp(np.log(c) + log_x - power - np.log1p(-np.exp(-power)))
        factor = np.where(log_x > 0.0, logarithmic, direct)
        # Below M = 1e-100 the factor is 1 to within M^2/4 < 1e-200 (and x underflows).
        factor = np.where(mach < 1e-100, 1.0, factor)
    # A factor below the smallest normal number has lost its precision: not a number to report.
    factor = np.where(factor >= np.finfo(float).tiny, factor, np.nan)
    return np.where(mach > 0, factor, np.where(mach == 0, 1.0, np.nan))


def outlet_mach_from_pressure(inlet_total_pressure, outlet_pressure, gamma=1.4):
    """Isentropic outlet Mach number from the inlet total and outlet static pressures.

    .. math::

        M_2 = \\sqrt{\\frac{2}{\\gamma - 1}
              \\left[\\left(\\frac{p_{01}}{p_2}\\right)^{(\\gamma - 1)/\\gamma} - 1\\right]}

    Parameters
    ----------
    inlet_total_pressure : array_like
        Total pressure at the row inlet in the row's frame (relative for a rotor). [Pa]
    outlet_pressure : array_like
        Static pressure at the row outlet. [Pa]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        Outlet Mach number of a loss-free expansion; NaN unless
        ``0 < outlet_pressure <= inlet_total_pressure``. [-]

    References
    ----------
    1. NACA Report 1135 (1953), eq. 44 inverted.
    """
    p01, p2, gamma = broadcast_cases(inlet_total_pressure, outlet_pressure, gamma)
    valid = (p2 > 0) & (p2 <= p01)
    safe_p01 = np.where(valid, p01, 1.0)
    safe_p2 = np.where(valid, p2, 1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        # ln(p01 / p2): from the exact difference p2 - p01 (Sterbenz) through log1p where the
        # pressures are within a factor of two, so p2 = p01 (1 - 1e-15) keeps its digits; from the
        # two logarithms otherwise, so that the ratio itself never overflows.
        near = -np.log1p((safe_p2 - safe_p01) / safe_p01)
        far = np.log(safe_p01) - np.log(safe_p2)
        log_ratio = np.where(safe_p2 >= 0.5 * safe_p01, near, far)
        mach = np.sqrt(2.0 / (gamma - 1.0) * np.expm1((gamma - 1.0) / gamma * log_ratio))
    return np.where(valid, mach, np.nan)


def zweifel_coefficient_compressible(inlet_angle, outlet_angle, pitch_to_axial_chord, outlet_mach, gamma=1.4):
    """Compressible Zweifel coefficient from the outlet Mach number.

    .. math::

        Z_w = \\frac{\\rho_2 V_{x}\\, s\\, |V_{\\theta 1} - V_{\\theta 2}|}{(p_{01} - p_2)\\, c_x}
            = 2 \\frac{s}{c_x} \\cos^2\\alpha_2 |\\tan\\alpha_1 - \\tan\\alpha_2| \\, f(M_2)

    Parameters
    ----------
    inlet_angle : array_like
        Inlet flow angle in the row's frame, from axial, signed. [deg]
    outlet_angle : array_like
        Outlet flow angle in the row's frame, from axial, signed. [deg]
    pitch_to_axial_chord : array_like
        Blade pitch over axial chord. [-]
    outlet_mach : array_like
        Outlet Mach number in the row's frame. [-]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        Zweifel coefficient; NaN where :func:`zweifel_coefficient` or
        :func:`compressibility_factor` is. [-]

    Notes
    -----
    Constant axial velocity across the row, loss-free expansion from the inlet total
    state; ``f`` is :func:`compressibility_factor`.
    """
    return zweifel_coefficient(inlet_angle, outlet_angle, pitch_to_axial_chord) * compressibility_factor(
        outlet_mach, gamma
    )


def zweifel_coefficient_compressible_from_pressure(
    inlet_angle, outlet_angle, pitch_to_axial_chord, inlet_total_pressure, outlet_pressure, gamma=1.4
):
    """Compressible Zweifel coefficient from the inlet total and outlet static pressures.

    As :func:`zweifel_coefficient_compressible` with the outlet Mach number of
    :func:`outlet_mach_from_pressure`.

    Parameters
    ----------
    inlet_angle : array_like
        Inlet flow angle in the row's frame, from axial, signed. [deg]
    outlet_angle : array_like
        Outlet flow angle in the row's frame, from axial, signed. [deg]
    pitch_to_axial_chord : array_like
        Blade pitch over axial chord. [-]
    inlet_total_pressure : array_like
        Total pressure at the row inlet in the row's frame (relative for a rotor). [Pa]
    outlet_pressure : array_like
        Static pressure at the row outlet. [Pa]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        Zweifel coefficient; NaN also unless ``0 < outlet_pressure <= inlet_total_pressure``. [-]
    """
    mach = outlet_mach_from_pressure(inlet_total_pressure, outlet_pressure, gamma)
    return zweifel_coefficient_compressible(inlet_angle, outlet_angle, pitch_to_axial_chord, mach, gamma)


def pitch_to_axial_chord_for_zweifel_compressible(
    inlet_angle, outlet_angle, zweifel_coefficient, outlet_mach, gamma=1.4
):
    """Pitch over axial chord for a target compressible Zweifel coefficient (outlet Mach).

    .. math:: \\frac{s}{c_x} = \\frac{Z_w}{2 \\cos^2\\alpha_2 |\\tan\\alpha_1 - \\tan\\alpha_2| \\, f(M_2)}

    Parameters
    ----------
    inlet_angle : array_like
        Inlet flow angle in the row's frame, from axial, signed. [deg]
    outlet_angle : array_like
        Outlet flow angle in the row's frame, from axial, signed. [deg]
    zweifel_coefficient : array_like
        Target compressible Zweifel coefficient; positive. [-]
    outlet_mach : array_like
        Outlet Mach number in the row's frame; positive. [-]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        Pitch over axial chord; NaN without turning, for an angle at or beyond 90 deg or a
        negative Mach number. [-]
    """
    loading = _loading_per_pitch_ratio(inlet_angle, outlet_angle) * compressibility_factor(outlet_mach, gamma)
    return _pitch_ratio(loading, zweifel_coefficient)


def pitch_to_axial_chord_for_zweifel_compressible_from_pressure(
    inlet_angle, outlet_angle, zweifel_coefficient, inlet_total_pressure, outlet_pressure, gamma=1.4
):
    """Pitch over axial chord for a target compressible Zweifel coefficient (pressures).

    As :func:`pitch_to_axial_chord_for_zweifel_compressible` with the outlet Mach number of
    :func:`outlet_mach_from_pressure`.

    Parameters
    ----------
    inlet_angle : array_like
        Inlet flow angle in the row's frame, from axial, signed. [deg]
    outlet_angle : array_like
        Outlet flow angle in the row's frame, from axial, signed. [deg]
    zweifel_coefficient : array_like
        Target compressible Zweifel coefficient; positive. [-]
    inlet_total_pressure : array_like
        Total pressure at the row inlet in the row's frame (relative for a rotor). [Pa]
    outlet_pressure : array_like
        Static pressure at the row outlet. [Pa]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        Pitch over axial chord; NaN also unless ``0 < outlet_pressure <= inlet_total_pressure``. [-]
    """
    mach = outlet_mach_from_pressure(inlet_total_pressure, outlet_pressure, gamma)
    return pitch_to_axial_chord_for_zweifel_compressible(
        inlet_angle, outlet_angle, zweifel_coefficient, mach, gamma
    )


def axial_chord_from_aspect_ratio(blade_height, aspect_ratio):
    """Axial chord from the blade height and the aspect ratio on axial chord.

    .. math:: c_x = h / (h / c_x)

    Parameters
    ----------
    blade_height : array_like
        Blade height (span) at the row. [m]
    aspect_ratio : array_like
        Blade height over axial chord; positive. [-]

    Returns
    -------
    numpy.ndarray
        Axial chord; NaN unless both inputs are positive. [m]
    """
    height, ratio = broadcast_cases(blade_height, aspect_ratio)
    valid = (height > 0) & (ratio > 0)
    return np.where(valid, height / np.where(valid, ratio, 1.0), np.nan)


def pitch_for_blade_count(mean_radius, blade_count):
    """Pitch at the mean radius of a row of ``blade_count`` blades.

    .. math:: s = 2 \\pi r_m / N

    Parameters
    ----------
    mean_radius : array_like
        Mean radius of the row. [m]
    blade_count : array_like
        Number of blades; a whole number of at least 1. [-]

    Returns
    -------
    numpy.ndarray
        Pitch; NaN unless the radius is positive and the count a whole number >= 1. [m]
    """
    radius, count = broadcast_cases(mean_radius, blade_count)
    valid = (radius > 0) & (count >= 1) & (count == np.floor(count)) & np.isfinite(radius)
    with np.errstate(over="ignore"):
        # r / N first: 2 pi r overflows for radii whose pitch is still a number.
        return np.where(valid, radius / np.where(valid, count, 1.0) * (2.0 * np.pi), np.nan)


def _snap_to_integer(x):
    nearest = np.round(x)
    return np.where(np.abs(x - nearest) <= _INTEGER_SNAP * np.abs(x), nearest, x)


def blade_count_for_pitch(mean_radius, pitch, rounding="up"):
    """Whole number of blades that gives about ``pitch`` at the mean radius.

    The exact count ``2 pi r_m / s`` is rounded by ``rounding``:

    - ``up``: the next whole count (the pitch shrinks, so the Zweifel coefficient does not
      rise above the one of ``pitch``);
    - ``nearest``: the nearest whole count, halves rounded up, at least 1;
    - ``even_up``: the next even count (at least the ``up`` count), e.g. for rows assembled
      in pairs or to avoid odd counts in vibration planning.

    A count within 1e-9 (relative) of a whole number is taken as that number, so that
    round-off never adds a blade.

    Parameters
    ----------
    mean_radius : array_like
        Mean radius of the row. [m]
    pitch : array_like
        Wanted pitch at the mean radius. [m]
    rounding : str
        One of :data:`ROUNDINGS`.

    Returns
    -------
    numpy.ndarray of int64
        Blade count; 0 (never a valid count) unless radius and pitch are positive and
        finite and the count does not exceed :data:`MAX_BLADE_COUNT`. [-]
    """
    _check_option("rounding", rounding, ROUNDINGS)
    radius, pitch = broadcast_cases(mean_radius, pitch)
    valid = (radius > 0) & (pitch > 0) & np.isfinite(radius) & np.isfinite(pitch)
    with np.errstate(over="ignore"):
        # r / s first: 2 pi r overflows for radii whose count is still a number.
        exact = np.where(valid, radius, 0.0) / np.where(valid, pitch, 1.0) * (2.0 * np.pi)
    exact = _snap_to_integer(exact)
    if rounding == "up":
        count = np.ceil(exact)
    elif rounding == "nearest":
        count = np.maximum(np.floor(exact + 0.5), 1.0)
    else:
        count = 2.0 * np.ceil(_snap_to_integer(0.5 * exact))
    valid &= np.isfinite(count) & (count <= MAX_BLADE_COUNT)
    return np.where(valid, count, 0.0).astype(np.int64)


def zweifel_checks(zweifel_coefficient):
    """The design checks on a row's Zweifel coefficient.

    Parameters
    ----------
    zweifel_coefficient : array_like
        Achieved or analysed Zweifel coefficient. [-]

    Returns
    -------
    dict of str to RuleCheck
        ``zweifel_high``: warn above 1.0, fail above 1.1 (optimum about 0.8, Zweifel 1945;
        high-lift low-pressure rows up to about 1.0-1.1, common practice).
        ``zweifel_low``: warn below 0.6 (common practice: needlessly many blades).
    """
    value = np.asarray(zweifel_coefficient, dtype=float)
    return {
        "zweifel_high": RuleCheck(
            value=value,
            limit=HIGH_LIFT_LIMIT,
            comparison="at_most",
            basis="Zweifel (1945), Brown Boveri Review 32 (optimum about 0.8); "
            "high-lift low-pressure turbine rows up to about 1.0-1.1: common practice",
            beyond_limit="warn",
            fail_limit=BEYOND_HIGH_LIFT_LIMIT,
        ),
        "zweifel_low": RuleCheck(
            value=value,
            limit=LOW_LOADING_LIMIT,
            comparison="at_least",
            basis=COMMON_PRACTICE,
        ),
    }


def _loading_and_failures(inlet_angle, outlet_angle, definition, outlet_mach, inlet_total_pressure,
                          outlet_pressure, gamma):
    """Zw per unit s/cx under ``definition``, the failures of the flow inputs, and extra values."""
    _check_option("definition", definition, DEFINITIONS)
    pressure_given = inlet_total_pressure is not None or outlet_pressure is not None
    inlet, outlet = broadcast_cases(inlet_angle, outlet_angle)
    failures = [(ANGLE_REASON, ~_valid_angles(inlet, outlet))]
    loading = _loading_per_pitch_ratio(inlet, outlet)
    extra = {}
    if definition == "incompressible":
        if outlet_mach is not None or pressure_given:
            raise ValueError("outlet_mach, inlet_total_pressure and outlet_pressure apply only to "
                             "definition='compressible'")
        return loading, failures, extra
    pressures_given = inlet_total_pressure is not None and outlet_pressure is not None
    if pressure_given != pressures_given or (outlet_mach is not None) == pressures_given:
        raise ValueError("definition='compressible' needs either outlet_mach or both "
                         "inlet_total_pressure and outlet_pressure")
    if outlet_mach is None:
        p01, p2, gamma_b = broadcast_cases(inlet_total_pressure, outlet_pressure, gamma)
        failures += [
            ("inlet total pressure must be positive", ~(p01 > 0)),
            ("outlet static pressure must be positive", ~(p2 > 0)),
            ("outlet static pressure is at or above the inlet total pressure: the row does not "
             "expand the flow", ~(p2 < p01)),
        ]
        outlet_mach = outlet_mach_from_pressure(p01, p2, gamma_b)
    mach, gamma_b = broadcast_cases(outlet_mach, gamma)
    with np.errstate(invalid="ignore", divide="ignore"):
        factor = compressibility_factor(mach, gamma_b)
    failures += [
        ("outlet Mach number must be positive", ~(mach > 0)),
        ("gamma must be above 1", ~(gamma_b > 1)),
        ("the outlet Mach number is so high that the compressibility factor (outlet dynamic head over the "
         "pressure drop) is below the smallest normal floating-point number", (mach > 0) & ~np.isfinite(factor)),
    ]
    loading = loading * factor
    extra["outlet_mach"] = mach
    return loading, failures, extra


def _finish(values, failures, judged, inputs):
    return masked_results(values, failures, lambda out, failed: zweifel_checks(out[judged]), inputs=inputs)


def evaluate_zweifel_sizing(
    inlet_angle, outlet_angle, axial_chord, mean_radius,
    zweifel_coefficient=OPTIMUM_ZWEIFEL_COEFFICIENT, rounding="up", definition="incompressible",
    outlet_mach=None, inlet_total_pressure=None, outlet_pressure=None, gamma=1.4, *, loading_per_pitch_ratio=None,
):
    """Pitch and whole blade count of a row for a target Zweifel coefficient.

    The pitch over axial chord at the target, the blade count ``2 pi r_m / s`` rounded by
    ``rounding``, the pitch of that count and the Zweifel coefficient it achieves
    (proportional to the pitch: ``Zw_achieved = Zw_target * N_exact / N``).

    Parameters
    ----------
    inlet_angle : array_like
        Inlet flow angle in the row's frame (absolute for a stator, relative for a rotor),
        from axial, signed. [deg]
    outlet_angle : array_like
        Outlet flow angle in the row's frame, from axial, signed. [deg]
    axial_chord : array_like
        Axial chord of the row. [m]
    mean_radius : array_like
        Mean radius of the row. [m]
    zweifel_coefficient : array_like
        Target Zweifel coefficient (default 0.8). [-]
    rounding : str
        One of :data:`ROUNDINGS` (see :func:`blade_count_for_pitch`).
    definition : str
        One of :data:`DEFINITIONS`. ``compressible`` needs ``outlet_mach`` or both
        ``inlet_total_pressure`` and ``outlet_pressure``.
    outlet_mach : array_like, optional
        Outlet Mach number in the row's frame. [-]
    inlet_total_pressure : array_like, optional
        Inlet total pressure in the row's frame (relative for a rotor). [Pa]
    outlet_pressure : array_like, optional
        Outlet static pressure. [Pa]
    gamma : array_like
        Ratio of specific heats (compressible only). [-]
    loading_per_pitch_ratio : array_like, optional
        The incompressible ``2 cos^2(alpha2) |tan alpha1 - tan alpha2|`` where the caller has it
        from velocities, ``2 Vx |V_theta1 - V_theta2| / V2^2``, more precisely than from angles
        rounded to degrees (a few ulps short of 90 deg); the angles still decide the failures. [-]

    Returns
    -------
    CaseResults
        Values ``pitch_to_axial_chord`` [-], ``blade_count`` [-] (int64, 0 where the case
        failed), ``pitch`` [m], ``zweifel_coefficient_achieved`` [-], and for the
        compressible definition ``outlet_mach`` [-]; failures (angle at or beyond 90 deg, no
        turning, non-positive chord, radius or target, compressible flow inputs); the checks
        of :func:`zweifel_checks` on the achieved coefficient.

    Raises
    ------
    ValueError
        For an unknown ``rounding`` or ``definition``, or flow inputs that do not match the
        definition.
    """
    _check_option("rounding", rounding, ROUNDINGS)
    loading, failures, extra = _loading_and_failures(
        inlet_angle, outlet_angle, definition, outlet_mach, inlet_total_pressure, outlet_pressure, gamma
    )
    if loading_per_pitch_ratio is not None:
        if definition != "incompressible":
            raise ValueError("loading_per_pitch_ratio applies only to definition='incompressible'")
        loading = np.where(np.isnan(loading), np.nan, loading_per_pitch_ratio)
    chord, radius, target = broadcast_cases(axial_chord, mean_radius, zweifel_coefficient)
    failures += [
        (NO_TURNING_REASON, loading == 0),
        ("axial chord must be positive", ~(chord > 0)),
        ("mean radius must be positive", ~(radius > 0)),
        ("target Zweifel coefficient must be positive", ~(target > 0)),
    ]
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        ratio = _pitch_ratio(loading, target)
        # The count depends on r / s = (r / cx) / (s / cx) only: in ratios to the chord, the pitch of a
        # lightly loaded row (s / cx near the float maximum) does not overflow before the count.
        count = blade_count_for_pitch(radius / chord, ratio, rounding)
        pitch = pitch_for_blade_count(radius, count)
        achieved = loading * pitch / chord
    failures.append(
        ("no whole blade count can be formed (pitch and radius out of range)", count == 0)
    )
    values = {
        "pitch_to_axial_chord": ratio,
        "blade_count": count,
        "pitch": pitch,
        "zweifel_coefficient_achieved": achieved,
        **extra,
    }
    return _finish(values, failures, "zweifel_coefficient_achieved",
                   (inlet_angle, outlet_angle, axial_chord, mean_radius, zweifel_coefficient, outlet_mach,
                    inlet_total_pressure, outlet_pressure, gamma))


def evaluate_zweifel_analysis(
    inlet_angle, outlet_angle, axial_chord, *, pitch=None, blade_count=None, mean_radius=None,
    definition="incompressible", outlet_mach=None, inlet_total_pressure=None, outlet_pressure=None,
    gamma=1.4,
):
    """Zweifel coefficient of a given row: its pitch, or its blade count and mean radius.

    Parameters
    ----------
    inlet_angle : array_like
        Inlet flow angle in the row's frame (absolute for a stator, relative for a rotor),
        from axial, signed. [deg]
    outlet_angle : array_like
        Outlet flow angle in the row's frame, from axial, signed. [deg]
    axial_chord : array_like
        Axial chord of the row. [m]
    pitch : array_like, optional
        Blade pitch at the mean radius; give either this or ``blade_count`` with
        ``mean_radius``. [m]
    blade_count : array_like, optional
        Number of blades; a whole number of at least 1. [-]
    mean_radius : array_like, optional
        Mean radius of the row. [m]
    definition : str
        One of :data:`DEFINITIONS` (see :func:`evaluate_zweifel_sizing`).
    outlet_mach, inlet_total_pressure, outlet_pressure, gamma : array_like, optional
        As in :func:`evaluate_zweifel_sizing`. [-], [Pa], [Pa], [-]

    Returns
    -------
    CaseResults
        Values ``zweifel_coefficient`` [-] (0 for a row without turning), ``pitch_to_axial_chord``
        [-], ``pitch`` [m], and for the compressible definition ``outlet_mach`` [-]; failures
        (angle at or beyond 90 deg, non-positive chord, pitch or radius, a blade count that
        is not a whole number >= 1, compressible flow inputs); the checks of
        :func:`zweifel_checks` on the coefficient.

    Raises
    ------
    ValueError
        Unless exactly one of ``pitch`` or (``blade_count`` and ``mean_radius``) is given;
        for an unknown ``definition``, or flow inputs that do not match it.
    """
    count_given = (blade_count is not None, mean_radius is not None)
    by_count = all(count_given)
    if (pitch is None and not by_count) or (pitch is not None and any(count_given)):
        raise ValueError("give either pitch, or blade_count and mean_radius")
    loading, failures, extra = _loading_and_failures(
        inlet_angle, outlet_angle, definition, outlet_mach, inlet_total_pressure, outlet_pressure, gamma
    )
    if by_count:
        radius, count = broadcast_cases(mean_radius, blade_count)
        failures += [
            ("mean radius must be positive", ~(radius > 0)),
            ("blade count must be a whole number of at least 1",
             ~((count >= 1) & (count == np.floor(count)))),
        ]
        pitch = pitch_for_blade_count(radius, count)
    pitch = np.asarray(pitch, dtype=float)
    (chord,) = broadcast_cases(axial_chord)
    failures += [
        ("axial chord must be positive", ~(chord > 0)),
        ("pitch must be positive", ~(pitch > 0)),
    ]
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = pitch / chord
    values = {
        "zweifel_coefficient": loading * ratio,
        "pitch_to_axial_chord": ratio,
        "pitch": pitch,
        **extra,
    }
    return _finish(values, failures, "zweifel_coefficient",
                   (inlet_angle, outlet_angle, axial_chord, pitch, blade_count, mean_radius, outlet_mach,
                    inlet_total_pressure, outlet_pressure, gamma))


def evaluate_zweifel_row(inlet_angle, outlet_angle, *, axial_chord=None, blade_height=None, aspect_ratio=None,
                         mean_radius=None, blade_count=None, pitch=None,
                         zweifel_coefficient=OPTIMUM_ZWEIFEL_COEFFICIENT, rounding="up", **flow):
    """A turbine row sized (mean radius alone) or analysed (blade count and mean radius, or pitch).

    The axial chord is given, or follows from the blade height and the aspect ratio
    (:func:`axial_chord_from_aspect_ratio`); the answer holds the axial chord used.

    Parameters
    ----------
    inlet_angle, outlet_angle : array_like
        Flow angles in the row's frame, from axial, signed. [deg]
    axial_chord : array_like, optional
        Axial chord. [m]
    blade_height, aspect_ratio : array_like, optional
        Blade height [m] and height over axial chord [-], where ``axial_chord`` is not given.
    mean_radius : array_like, optional
        Mean radius: alone it sizes the row, with ``blade_count`` it analyses it. [m]
    blade_count, pitch : array_like, optional
        The row analysed: its whole blade count (with ``mean_radius``) [-], or its pitch [m].
    zweifel_coefficient : array_like
        Sizing: the target Zweifel coefficient. [-]
    rounding : str
        Sizing: how the blade count is rounded (:func:`evaluate_zweifel_sizing`).
    **flow
        ``definition``, ``outlet_mach``, ``inlet_total_pressure``, ``outlet_pressure``, ``gamma``
        as in :func:`evaluate_zweifel_sizing`.

    Returns
    -------
    CaseResults
        As :func:`evaluate_zweifel_sizing` or :func:`evaluate_zweifel_analysis`, with ``axial_chord``.

    References
    ----------
    Zweifel, O. (1945), "The spacing of turbo-machine blading, especially with large angular
    deflection", Brown Boveri Review 32, 436-444.
    """
    if axial_chord is None:
        axial_chord = axial_chord_from_aspect_ratio(blade_height, aspect_ratio)
    if pitch is None and blade_count is None:
        result = evaluate_zweifel_sizing(inlet_angle, outlet_angle, axial_chord, mean_radius,
                                         zweifel_coefficient=zweifel_coefficient, rounding=rounding, **flow)
    else:
        result = evaluate_zweifel_analysis(inlet_angle, outlet_angle, axial_chord, pitch=pitch,
                                           blade_count=blade_count, mean_radius=mean_radius, **flow)
    result.values["axial_chord"] = axial_chord
    return result
