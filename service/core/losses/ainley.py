"""Turbine row losses of the Ainley-Mathieson family, with the Dunham-Came and Kacker-Okapuu revisions.

The family splits a turbine row's stagnation-pressure loss coefficient on the exit dynamic
pressure, ``Y = (p0_in - p0_out) / (p0_out - p_out)``, into profile, secondary, trailing-edge and
tip-clearance parts. What is implemented here, and what is not:

- **Profile loss**: the blend of Ainley and Mathieson's two charts (nozzle blades, inlet angle 0,
  and impulse blades, inlet angle equal to the outlet angle) for blades in between, with the
  thickness correction (AM's eq., Dixon (1998) eq. 3.46), and Kacker and Okapuu's sign-preserving
  form of it. **The two charts themselves (AM 1951, Fig. 4: Y_p against pitch-chord ratio for
  outlet angles 40-80 deg, t/c 0.2, Re 2e5, M < 0.6) are not fitted here**: no published
  approximation was at hand to check a fit against, so their readings are inputs
  (``nozzle_loss``, ``impulse_loss``). Kacker and Okapuu's scaling of the blend (2/3, 0.914) and
  their compressibility factor ``K_p`` are implemented (coefficients from memory).
- **Secondary loss**: Dunham and Came's algebraic form (replacing AM's chart of lambda) and Kacker
  and Okapuu's revision with their aspect-ratio function and ``K_s`` (coefficients from memory).
- **Tip clearance**: Dunham and Came's loss coefficient, and Kacker and Okapuu's efficiency
  decrement for unshrouded rotors (coefficients from memory).
- **Trailing edge**: Kacker and Okapuu's chart of the trailing-edge energy coefficient against
  trailing-edge thickness over throat is **not fitted**; it is replaced by Denton's (1993)
  mixed-out base-pressure relation, a published approximation with the base pressure coefficient
  as an input.
- Shock, incidence (off-design) and Reynolds-number corrections of Kacker and Okapuu are not
  implemented.

Angles are the service's: from axial, signed, positive in the direction of rotor motion, in the
row's own frame. AM measure the inlet angle of a turbine row positive against the outlet's, so
their ratio ``alpha1 / alpha2`` is here ``-inlet_angle / outlet_angle`` (1 for an impulse blade).

References
----------
1. Ainley, D. G. and Mathieson, G. C. R. (1951), "A method of performance estimation for axial-flow
   turbines", ARC R&M 2974.
2. Dunham, J. and Came, P. M. (1970), "Improvements to the Ainley-Mathieson method of turbine
   performance prediction", ASME J. Eng. Power 92, 252-256.
3. Kacker, S. C. and Okapuu, U. (1982), "A mean line prediction method for axial flow turbine
   efficiency", ASME J. Eng. Power 104, 111-119.
4. Dixon, S. L. (1998), "Fluid Mechanics, Thermodynamics of Turbomachinery", 4th ed., ch. 3,
   eq. (3.46) and Fig. 3.25 (the blend and its range 0.15 <= t/c <= 0.25; the chart conditions).
5. Denton, J. D. (1993), "Loss mechanisms in turbomachines", ASME J. Turbomach. 115, 621-656.
"""

from __future__ import annotations

import numpy as np

from service.core.cases import broadcast_cases

PROFILE_REVISIONS = ("ainley_mathieson", "kacker_okapuu")
#: Thickness-to-chord range of the blend's thickness correction (Dixon 1998, eq. 3.46). [-]
THICKNESS_RANGE = (0.15, 0.25)
#: Conditions of AM's profile-loss charts (Dixon 1998, Fig. 3.25): Reynolds number and the highest
#: exit Mach number. [-]
CHART_REYNOLDS = 2.0e5
CHART_MAX_MACH = 0.6
#: Outlet angles of AM's profile-loss charts (AM 1951, Fig. 4; from memory). [deg]
OUTLET_ANGLE_RANGE = (40.0, 80.0)


def _ratio(inlet_angle, outlet_angle):
    a1, a2 = broadcast_cases(inlet_angle, outlet_angle)
    return -a1 / a2


def profile_loss_blend(nozzle_loss, impulse_loss, inlet_angle, outlet_angle, thickness_to_chord,
                       revision="kacker_okapuu"):
    """Profile loss of a blade between the nozzle and impulse types, from AM's two chart readings.

    .. math::

        Y_p = \\left[Y_{p,n} + f(r) (Y_{p,i} - Y_{p,n})\\right] \\left(\\frac{t/c}{0.2}\\right)^{r},
        \\quad r = \\alpha_1/\\alpha_2

    with ``f(r) = r^2`` (Ainley and Mathieson) or ``f(r) = |r| r`` (Kacker and Okapuu, so that a
    blade whose inlet flow comes from the outlet's side loses less than a nozzle, not more).

    Parameters
    ----------
    nozzle_loss, impulse_loss : array_like
        AM's chart readings at the row's pitch-chord ratio and outlet angle: nozzle blades (inlet
        angle 0) and impulse blades (inlet angle equal to the outlet angle). [-]
    inlet_angle, outlet_angle : array_like
        Flow angles in the row's own frame, from axial, signed (the service's convention). [deg]
    thickness_to_chord : array_like
        Maximum thickness over chord. [-]
    revision : str
        One of :data:`PROFILE_REVISIONS`.

    Returns
    -------
    numpy.ndarray
        ``Y_p`` (AM's, before Kacker and Okapuu's scaling). [-]

    References
    ----------
    1. Ainley and Mathieson (1951); Dixon (1998), 4th ed., eq. (3.46).
    2. Kacker and Okapuu (1982) (the ``|r| r`` form; from memory).
    """
    if revision not in PROFILE_REVISIONS:
        raise ValueError(f"revision must be one of {PROFILE_REVISIONS}, not {revision!r}")
    yn, yi, tc = broadcast_cases(nozzle_loss, impulse_loss, thickness_to_chord)
    r = _ratio(inlet_angle, outlet_angle)
    weight = r * r if revision == "ainley_mathieson" else np.abs(r) * r
    return (yn + weight * (yi - yn)) * (tc / 0.2) ** r


def compressibility_factor(inlet_mach, exit_mach):
    """Kacker and Okapuu's profile-loss compressibility factor ``K_p``.

    .. math::

        K_1 = 1 \\; (M_2 \\le 0.2), \\quad 1 - 1.25 (M_2 - 0.2) \\; (M_2 > 0.2); \\qquad
        K_2 = (M_1 / M_2)^2; \\qquad K_p = 1 - K_2 (1 - K_1)

    Parameters
    ----------
    inlet_mach, exit_mach : array_like
        Mach numbers in the row's frame. [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Kacker and Okapuu (1982) (from memory).
    """
    m1, m2 = broadcast_cases(inlet_mach, exit_mach)
    k1 = np.where(m2 <= 0.2, 1.0, 1.0 - 1.25 * (m2 - 0.2))
    return 1.0 - (m1 / m2) ** 2 * (1.0 - k1)


def kacker_okapuu_profile_loss(blended_loss, inlet_mach, exit_mach, shock_loss=0.0):
    """Kacker and Okapuu's profile loss: ``Y_p = 0.914 (2/3 Y_p,AMDC K_p + Y_shock)``.

    Parameters
    ----------
    blended_loss : array_like
        :func:`profile_loss_blend` with ``revision="kacker_okapuu"``. [-]
    inlet_mach, exit_mach : array_like
        [-]
    shock_loss : array_like
        Kacker and Okapuu's leading-edge shock loss (not implemented here; 0 for subsonic
        inlets). [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Kacker and Okapuu (1982): 2/3 for the improvement of blading since 1951, 0.914 for the
       trailing-edge loss AM's charts contain (from memory).
    """
    y, ys = broadcast_cases(blended_loss, shock_loss)
    return 0.914 * (2.0 / 3.0 * y * compressibility_factor(inlet_mach, exit_mach) + ys)


def loading_parameter(inlet_angle, outlet_angle):
    """AM's loading parameter ``Z = (C_L / (s/c))^2 cos^2(alpha2) / cos^3(alpha_m)``.

    With ``C_L / (s/c) = 2 |tan(alpha1) - tan(alpha2)| cos(alpha_m)`` and
    ``tan(alpha_m) = (tan(alpha1) + tan(alpha2)) / 2`` (signed angles).

    Parameters
    ----------
    inlet_angle, outlet_angle : array_like
        [deg]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Ainley and Mathieson (1951); Dunham and Came (1970).
    """
    a1, a2 = (np.radians(a) for a in broadcast_cases(inlet_angle, outlet_angle))
    t1, t2 = np.tan(a1), np.tan(a2)
    am = np.arctan(0.5 * (t1 + t2))
    lift_per_pitch = 2.0 * np.abs(t1 - t2) * np.cos(am)
    return lift_per_pitch**2 * np.cos(a2) ** 2 / np.cos(am) ** 3


def dunham_came_secondary_loss(inlet_angle, outlet_angle, height_to_chord):
    """Dunham and Came's secondary loss, ``Y_s = 0.0334 (c/h) (cos a2 / cos a1) Z``.

    Parameters
    ----------
    inlet_angle, outlet_angle : array_like
        [deg]
    height_to_chord : array_like
        Blade height over true chord. [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Dunham and Came (1970) (from memory).
    """
    a1, a2, hc = broadcast_cases(inlet_angle, outlet_angle, height_to_chord)
    return 0.0334 / hc * np.cos(np.radians(a2)) / np.cos(np.radians(a1)) * loading_parameter(a1, a2)


def aspect_ratio_function(height_to_chord):
    """Kacker and Okapuu's aspect-ratio function of the secondary loss.

    ``f = (1 - 0.25 sqrt(2 - h/c)) / (h/c)`` for ``h/c <= 2``, ``1 / (h/c)`` above (continuous
    at 2).

    Parameters
    ----------
    height_to_chord : array_like
        [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Kacker and Okapuu (1982) (from memory).
    """
    hc = np.asarray(height_to_chord, dtype=float)
    short = (1.0 - 0.25 * np.sqrt(np.maximum(2.0 - hc, 0.0))) / hc
    return np.where(hc <= 2.0, short, 1.0 / hc)


def kacker_okapuu_secondary_loss(inlet_angle, outlet_angle, height_to_chord, axial_chord_to_height,
                                 inlet_mach, exit_mach):
    """Kacker and Okapuu's secondary loss, ``1.2 K_s 0.0334 f(h/c) (cos a2 / cos a1) Z``.

    ``K_s = 1 - (b_x/h)^2 (1 - K_p)`` lowers the loss of an accelerating row.

    Parameters
    ----------
    inlet_angle, outlet_angle : array_like
        [deg]
    height_to_chord : array_like
        Blade height over true chord. [-]
    axial_chord_to_height : array_like
        Axial chord over blade height. [-]
    inlet_mach, exit_mach : array_like
        [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Kacker and Okapuu (1982) (from memory).
    """
    a1, a2, hc, bh = broadcast_cases(inlet_angle, outlet_angle, height_to_chord, axial_chord_to_height)
    k_s = 1.0 - bh**2 * (1.0 - compressibility_factor(inlet_mach, exit_mach))
    return (1.2 * k_s * 0.0334 * aspect_ratio_function(hc) * np.cos(np.radians(a2)) / np.cos(np.radians(a1))
            * loading_parameter(a1, a2))


def dunham_came_tip_clearance_loss(clearance_to_chord, height_to_chord, inlet_angle, outlet_angle, coefficient=0.5):
    """Dunham and Came's tip-clearance loss, ``Y_k = B (c/h) (k/c)^0.78 Z``.

    Parameters
    ----------
    clearance_to_chord : array_like
        Tip clearance over true chord (for a shrouded blade Kacker and Okapuu's effective
        clearance, the seal clearance over the number of seals to the power 0.42). [-]
    height_to_chord : array_like
        [-]
    inlet_angle, outlet_angle : array_like
        [deg]
    coefficient : array_like
        ``B``: 0.5 for a plain tip (Ainley and Mathieson's), 0.37 for a shrouded blade (Kacker and
        Okapuu's). [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Dunham and Came (1970); Kacker and Okapuu (1982) (from memory).
    """
    kc, hc, b = broadcast_cases(clearance_to_chord, height_to_chord, coefficient)
    return b / hc * kc**0.78 * loading_parameter(inlet_angle, outlet_angle)


def kacker_okapuu_tip_clearance_efficiency(clearance_to_height, outlet_angle, tip_to_mean_radius):
    """Kacker and Okapuu's relative efficiency decrement of an unshrouded rotor's tip clearance.

    .. math:: \\frac{\\Delta\\eta}{\\eta_0} = 0.93 \\frac{k}{h \\cos\\alpha_2} \\frac{r_{tip}}{r_{mean}}

    Parameters
    ----------
    clearance_to_height : array_like
        Tip clearance over blade height. [-]
    outlet_angle : array_like
        Rotor relative outlet angle. [deg]
    tip_to_mean_radius : array_like
        [-]

    Returns
    -------
    numpy.ndarray
        ``Delta eta / eta_0``, the fraction of the zero-clearance efficiency lost. [-]

    References
    ----------
    1. Kacker and Okapuu (1982) (from memory).
    """
    k, a2, rr = broadcast_cases(clearance_to_height, outlet_angle, tip_to_mean_radius)
    return 0.93 * k / np.cos(np.radians(a2)) * rr


def denton_trailing_edge_loss(thickness_to_throat, base_pressure_coefficient, momentum_thickness_to_throat=0.0,
                              displacement_thickness_to_throat=0.0):
    """Mixed-out loss behind a thick trailing edge (Denton's base-pressure relation).

    .. math:: \\zeta = -C_{pb} \\frac{t}{w} + \\frac{2\\theta}{w} + \\left(\\frac{\\delta^* + t}{w}\\right)^2

    with ``w = s cos(alpha2)`` the throat. Without the boundary layers (counted in the profile
    loss) it is the trailing edge's own part. It replaces Kacker and Okapuu's trailing-edge chart,
    which is not fitted here.

    Parameters
    ----------
    thickness_to_throat : array_like
        Trailing-edge thickness over throat width. [-]
    base_pressure_coefficient : array_like
        ``(p_base - p_ref) / (rho V2^2 / 2)``, usually negative. [-]
    momentum_thickness_to_throat, displacement_thickness_to_throat : array_like
        Boundary layers at the trailing edge, both surfaces together. [-]

    Returns
    -------
    numpy.ndarray
        Energy loss coefficient on the exit kinetic energy (equal to ``Y`` at low Mach numbers). [-]

    References
    ----------
    1. Denton (1993), ASME J. Turbomach. 115, the trailing-edge loss (from memory).
    """
    t, cpb, theta, delta = broadcast_cases(thickness_to_throat, base_pressure_coefficient,
                                           momentum_thickness_to_throat, displacement_thickness_to_throat)
    return -cpb * t + 2.0 * theta + (delta + t) ** 2
