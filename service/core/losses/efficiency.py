"""Stage efficiencies from row losses, and the conversions between loss coefficients.

A row's loss is the enthalpy its exit state carries above the isentropic state at the same
static pressure, ``Delta h = h_out - h_out,s``. Across a stage of constant total enthalpy in
each row's own frame, a loss in the first row raises the entropy, and along the exit isobar of
the second row ``dh = T ds`` turns the first row's loss into ``(T3 / T2) Delta h``. With the
stage work ``Delta W`` (positive for both machines) and the stations of the service (turbine:
stator 1 -> 2, rotor 2 -> 3; compressor: rotor 1 -> 2, stator 2 -> 3):

Turbine (Dixon and Hall [1], ch. 4):

.. math::

    h_{03} - h_{03ss} \\approx h_3 - h_{3ss} = \\Delta h_R + \\frac{T_3}{T_2}\\Delta h_N

    \\eta_{tt} = \\frac{\\Delta W}{\\Delta W + h_{03} - h_{03ss}}
              = \\left[1 + \\frac{\\zeta_R W_3^2/2 + \\zeta_N V_2^2/2\\; T_3/T_2}{\\Delta W}\\right]^{-1}

    \\eta_{ts} = \\left[1 + \\frac{\\zeta_R W_3^2/2 + \\zeta_N V_2^2/2\\; T_3/T_2 + V_3^2/2}{\\Delta W}\\right]^{-1}

Compressor (the same steps with the rotor first): ``h03ss - h01 = Delta W - (h03 - h03ss)``,

.. math::

    \\eta_{tt} = 1 - \\frac{\\Delta h_S + \\frac{T_3}{T_2}\\Delta h_R}{\\Delta W}, \\qquad
    \\eta_{ts} = 1 - \\frac{\\Delta h_S + \\frac{T_3}{T_2}\\Delta h_R + V_3^2/2}{\\Delta W}

The only approximations are ``h03 - h03ss = h3 - h3ss`` (equal exit kinetic energies) and
``T ds`` integrated at the exit temperature; both are second order in the losses.

Loss coefficients (perfect gas, adiabatic row, exact):

- entropy rise from the stagnation pressures in the row's frame: ``Delta s = R ln(p0_in / p0_out)``;
- enthalpy loss at the exit static temperature: ``Delta h = cp T (1 - exp(-Delta s / cp))``;
- inlet-based (compressor) ``omega = (p0_in - p0_out) / (p0_in - p_in)`` gives
  ``p0_in / p0_out = 1 / (1 - omega (1 - p_in / p0_in))``;
- exit-based (turbine, Ainley's Y) ``Y = (p0_in - p0_out) / (p0_out - p_out)`` gives
  ``p0_in / p0_out = 1 + Y (1 - p_out / p0_out)``;
- Soderberg's ``zeta = Delta h / (V_out^2 / 2)`` is already an enthalpy loss coefficient. At low
  Mach numbers ``zeta`` equals ``Y`` (to first order in the Mach number squared).

References
----------
1. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of
   Turbomachinery", 7th ed., Butterworth-Heinemann, ch. 4 (turbine stage efficiency from the
   nozzle and rotor enthalpy loss coefficients) and ch. 3 (loss coefficients).
2. Denton, J. D. (1993), "Loss mechanisms in turbomachines", ASME J. Turbomach. 115, 621-656
   (entropy as the measure of loss).
"""

from __future__ import annotations

import numpy as np

from service.core import gas
from service.core.cases import broadcast_cases


def entropy_rise(stagnation_pressure_ratio, cp, gamma):
    """Entropy rise of an adiabatic row from its stagnation-pressure ratio.

    Parameters
    ----------
    stagnation_pressure_ratio : array_like
        Inlet over outlet stagnation pressure in the row's frame, ``p0_in / p0_out``. [-]
    cp : array_like
        [J kg^-1 K^-1]
    gamma : array_like
        [-]

    Returns
    -------
    numpy.ndarray
        ``R ln(p0_in / p0_out)``. [J kg^-1 K^-1]
    """
    ratio, cp, gamma = broadcast_cases(stagnation_pressure_ratio, cp, gamma)
    return gas.gas_constant(cp, gamma) * np.log(ratio)


def enthalpy_loss(entropy, static_temperature, cp):
    """Enthalpy above the isentropic state at the same static pressure.

    .. math:: \\Delta h = c_p T (1 - e^{-\\Delta s / c_p})

    Parameters
    ----------
    entropy : array_like
        Entropy rise of the row. [J kg^-1 K^-1]
    static_temperature : array_like
        Static temperature at the row exit. [K]
    cp : array_like
        [J kg^-1 K^-1]

    Returns
    -------
    numpy.ndarray
        [J kg^-1]
    """
    ds, t, cp = broadcast_cases(entropy, static_temperature, cp)
    return cp * t * -np.expm1(-ds / cp)


def entropy_from_enthalpy_loss(enthalpy, static_temperature, cp):
    """The inverse of :func:`enthalpy_loss`. [J kg^-1 K^-1]; NaN if the loss reaches ``cp T``."""
    dh, t, cp = broadcast_cases(enthalpy, static_temperature, cp)
    fraction = dh / (cp * t)
    below = fraction < 1.0
    return np.where(below, -cp * np.log1p(-np.where(below, fraction, 0.0)), np.nan)


def pressure_ratio_from_inlet_loss(loss_coefficient, inlet_mach, gamma):
    """``p0_in / p0_out`` of a row from its inlet-based loss coefficient (compressor ``omega``).

    Parameters
    ----------
    loss_coefficient : array_like
        ``(p0_in - p0_out) / (p0_in - p_in)``. [-]
    inlet_mach : array_like
        Inlet Mach number in the row's frame. [-]
    gamma : array_like
        [-]

    Returns
    -------
    numpy.ndarray
        [-]; NaN where the loss would take the whole stagnation pressure.
    """
    w, m, gamma = broadcast_cases(loss_coefficient, inlet_mach, gamma)
    static_over_total = gas.total_to_static_pressure_ratio(m, gamma)  # p / p0
    remaining = 1.0 - w * (1.0 - static_over_total)
    return np.where(remaining > 0.0, 1.0 / np.where(remaining > 0.0, remaining, 1.0), np.nan)


def pressure_ratio_from_exit_loss(loss_coefficient, exit_mach, gamma):
    """``p0_in / p0_out`` of a row from its exit-based loss coefficient (Ainley's ``Y``).

    Parameters
    ----------
    loss_coefficient : array_like
        ``(p0_in - p0_out) / (p0_out - p_out)``. [-]
    exit_mach : array_like
        Exit Mach number in the row's frame. [-]
    gamma : array_like
        [-]

    Returns
    -------
    numpy.ndarray
        [-]
    """
    y, m, gamma = broadcast_cases(loss_coefficient, exit_mach, gamma)
    return 1.0 + y * (1.0 - gas.total_to_static_pressure_ratio(m, gamma))


def turbine_stage_efficiencies(stator_loss, rotor_loss, T2, T3, work, V3):
    """Total-to-total and total-to-static efficiency of a turbine stage from its row losses.

    Parameters
    ----------
    stator_loss : array_like
        Stator (nozzle) enthalpy loss ``h2 - h2s`` at ``T2``. [J kg^-1]
    rotor_loss : array_like
        Rotor enthalpy loss ``h3 - h3s`` at ``T3``. [J kg^-1]
    T2, T3 : array_like
        Static temperatures at the stator and rotor exits. [K]
    work : array_like
        Stage work, positive. [J kg^-1]
    V3 : array_like
        Absolute exit speed. [m s^-1]

    Returns
    -------
    total_to_total, total_to_static : numpy.ndarray
        [-]

    References
    ----------
    1. Dixon and Hall (2014), 7th ed., ch. 4 (see the module docstring).
    """
    dn, dr, t2, t3, w, v3 = broadcast_cases(stator_loss, rotor_loss, T2, T3, work, V3)
    losses = dr + dn * t3 / t2
    return 1.0 / (1.0 + losses / w), 1.0 / (1.0 + (losses + 0.5 * v3**2) / w)


def compressor_stage_efficiencies(rotor_loss, stator_loss, T2, T3, work, V3):
    """Total-to-total and total-to-static efficiency of a compressor stage from its row losses.

    Parameters
    ----------
    rotor_loss : array_like
        Rotor enthalpy loss ``h2 - h2s`` at ``T2``. [J kg^-1]
    stator_loss : array_like
        Stator enthalpy loss ``h3 - h3s`` at ``T3``. [J kg^-1]
    T2, T3 : array_like
        Static temperatures at the rotor and stator exits. [K]
    work : array_like
        Stage work, positive. [J kg^-1]
    V3 : array_like
        Absolute exit speed. [m s^-1]

    Returns
    -------
    total_to_total, total_to_static : numpy.ndarray
        [-]

    References
    ----------
    1. Dixon and Hall (2014), 7th ed., ch. 4, the turbine relation with the rows in the
       compressor's order (derived in the module docstring).
    """
    dr, ds, t2, t3, w, v3 = broadcast_cases(rotor_loss, stator_loss, T2, T3, work, V3)
    losses = ds + dr * t3 / t2
    return 1.0 - losses / w, 1.0 - (losses + 0.5 * v3**2) / w


#: Sutherland's law for air: reference viscosity [Pa s], reference temperature [K] and
#: Sutherland's constant [K] (White, F. M. (2006), "Viscous Fluid Flow", 3rd ed., McGraw-Hill,
#: Table 1-2; from memory).
SUTHERLAND_AIR = (1.716e-5, 273.15, 110.4)


def sutherland_viscosity(static_temperature):
    """Dynamic viscosity of air by Sutherland's law.

    .. math:: \\mu = \\mu_0 \\left(\\frac{T}{T_0}\\right)^{3/2} \\frac{T_0 + S}{T + S}

    Parameters
    ----------
    static_temperature : array_like
        [K]

    Returns
    -------
    numpy.ndarray
        [Pa s]

    References
    ----------
    1. White (2006), "Viscous Fluid Flow", 3rd ed., Table 1-2 (air; from memory).
    """
    mu0, t0, s = SUTHERLAND_AIR
    t = np.asarray(static_temperature, dtype=float)
    return mu0 * (t / t0) ** 1.5 * (t0 + s) / (t + s)
