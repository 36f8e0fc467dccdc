"""Perfect-gas model and the relations between total and static states.

The gas is calorically perfect: constant specific heat at constant pressure ``cp`` and
constant ratio of specific heats ``gamma``; the gas constant follows as
``R = cp (gamma - 1) / gamma``.
"""

from __future__ import annotations

import numpy as np

#: Named gases: (cp [J kg^-1 K^-1], gamma [-]), the values used in standard gas-turbine
#: textbooks (for example Saravanamuttoo, Rogers, Cohen and Straznicky, "Gas Turbine
#: Theory", for air and for combustion products of kerosene).
GAS_PRESETS = {
    "air": (1005.0, 1.40),
    "combustion_products": (1148.0, 1.333),
}
GAS_NAMES = tuple(GAS_PRESETS)


def gas_properties(gas="air", cp=None, gamma=None):
    """Specific heat and heat-capacity ratio of a named gas, with optional overrides.

    Parameters
    ----------
    gas : str
        One of :data:`GAS_NAMES`.
    cp : array_like, optional
        Specific heat at constant pressure, replacing the preset's. [J kg^-1 K^-1]
    gamma : array_like, optional
        Ratio of specific heats, replacing the preset's. [-]

    Returns
    -------
    cp, gamma : numpy.ndarray
        [J kg^-1 K^-1], [-]
    """
    if gas not in GAS_PRESETS:
        raise ValueError(f"gas must be one of {GAS_NAMES}, not {gas!r}")
    preset_cp, preset_gamma = GAS_PRESETS[gas]
    cp = preset_cp if cp is None else cp
    gamma = preset_gamma if gamma is None else gamma
    return np.asarray(cp, dtype=float), np.asarray(gamma, dtype=float)


def gas_constant(cp, gamma):
    """Specific gas constant of a perfect gas.

    .. math:: R = c_p \\frac{\\gamma - 1}{\\gamma}

    Parameters
    ----------
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        Gas constant. [J kg^-1 K^-1]
    """
    return np.asarray(cp, dtype=float) * (np.asarray(gamma, dtype=float) - 1.0) / gamma


def static_temperature(total_temperature, speed, cp):
    """Static temperature from the total temperature and the flow speed.

    .. math:: T = T_0 - \\frac{V^2}{2 c_p}

    Parameters
    ----------
    total_temperature : array_like
        Stagnation temperature in the frame where ``speed`` is measured. [K]
    speed : array_like
        Flow speed in that frame. [m s^-1]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]

    Returns
    -------
    numpy.ndarray
        Static temperature; at or below zero means the speed is unreachable. [K]
    """
    speed = np.asarray(speed, dtype=float)
    # V (V / 2cp) rather than V^2 / 2cp: the square overflows at speeds whose dynamic
    # temperature is still a number.
    with np.errstate(over="ignore"):
        return np.asarray(total_temperature, dtype=float) - speed * (speed / (2.0 * np.asarray(cp)))


def total_temperature(static_temperature, speed, cp):
    """Total temperature from the static temperature and the flow speed.

    .. math:: T_0 = T + \\frac{V^2}{2 c_p}

    Parameters
    ----------
    static_temperature : array_like
        Static temperature. [K]
    speed : array_like
        Flow speed in the frame of the wanted total temperature. [m s^-1]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]

    Returns
    -------
    numpy.ndarray
        Stagnation temperature in that frame. [K]
    """
    speed = np.asarray(speed, dtype=float)
    with np.errstate(over="ignore"):
        return np.asarray(static_temperature, dtype=float) + speed * (speed / (2.0 * np.asarray(cp)))


def isentropic_pressure_ratio(temperature_ratio, gamma):
    """Pressure ratio of an isentropic change with the given temperature ratio.

    .. math:: \\frac{p_b}{p_a} = \\left(\\frac{T_b}{T_a}\\right)^{\\gamma / (\\gamma - 1)}

    Parameters
    ----------
    temperature_ratio : array_like
        T_b / T_a. [-]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        p_b / p_a. [-]
    """
    gamma = np.asarray(gamma, dtype=float)
    return np.power(np.asarray(temperature_ratio, dtype=float), gamma / (gamma - 1.0))


def speed_of_sound(static_temperature, cp, gamma):
    """Speed of sound in a perfect gas.

    .. math:: a = \\sqrt{\\gamma R T}

    Parameters
    ----------
    static_temperature : array_like
        Static temperature. [K]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        Speed of sound; NaN where the temperature is not positive. [m s^-1]
    """
    temperature = np.asarray(static_temperature, dtype=float)
    # sqrt(gamma R) sqrt(T): the product gamma R T overflows for T above about 1e305 K, where the
    # speed of sound itself is still about 1e155 m/s.
    with np.errstate(invalid="ignore"):
        return np.sqrt(np.asarray(gamma) * gas_constant(cp, gamma)) * np.sqrt(
            np.where(temperature > 0, temperature, np.nan))


def total_to_static_temperature_ratio(mach, gamma):
    """Static over total temperature at a Mach number (NACA Report 1135, eq. 43).

    .. math:: \\frac{T}{T_0} = \\left(1 + \\frac{\\gamma - 1}{2} M^2\\right)^{-1}

    Parameters
    ----------
    mach : array_like
        Mach number. [-]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        T / T0. [-]

    References
    ----------
    1. Ames Research Staff (1953), "Equations, tables, and charts for compressible flow",
       NACA Report 1135.
    """
    gamma = np.asarray(gamma, dtype=float)
    return 1.0 / (1.0 + 0.5 * (gamma - 1.0) * np.square(mach))


def total_to_static_pressure_ratio(mach, gamma):
    """Static over total pressure at a Mach number (NACA Report 1135, eq. 44).

    .. math:: \\frac{p}{p_0} = \\left(1 + \\frac{\\gamma - 1}{2} M^2\\right)^{-\\gamma/(\\gamma - 1)}

    Parameters
    ----------
    mach : array_like
        Mach number. [-]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    numpy.ndarray
        p / p0. [-]
    """
    return isentropic_pressure_ratio(total_to_static_temperature_ratio(mach, gamma), gamma)


def static_state(total_temperature, total_pressure, speed, cp, gamma):
    """Static state of a perfect gas moving at ``speed`` from its total state.

    The total state is taken in the frame where ``speed`` is measured, and the
    deceleration to rest is isentropic.

    Parameters
    ----------
    total_temperature : array_like
        Stagnation temperature. [K]
    total_pressure : array_like
        Stagnation pressure. [Pa]
    speed : array_like
        Flow speed. [m s^-1]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    dict of numpy.ndarray
        ``temperature`` [K], ``pressure`` [Pa], ``density`` [kg m^-3], ``speed_of_sound``
        [m s^-1] and ``mach`` [-]; NaN wherever the static temperature is not positive.
    """
    temperature = static_temperature(total_temperature, speed, cp)
    temperature = np.where(temperature > 0, temperature, np.nan)
    with np.errstate(invalid="ignore"):
        pressure = np.asarray(total_pressure) * isentropic_pressure_ratio(
            temperature / np.asarray(total_temperature), gamma
        )
    density = pressure / gas_constant(cp, gamma) / temperature
    sound = speed_of_sound(temperature, cp, gamma)
    return {
        "temperature": temperature,
        "pressure": pressure,
        "density": density,
        "speed_of_sound": sound,
        "mach": np.asarray(speed) / sound,
    }
