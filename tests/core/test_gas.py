"""Perfect-gas relations against published tables, a standard and a reference library."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from service.core import gas

# NACA Report 1135 (Ames Research Staff, 1953), Table I, gamma = 1.4 (from memory; the table
# gives five decimals, hence atol 6e-6): Mach number, p/p0, rho/rho0, T/T0.
NACA_1135_TABLE_I = [
    (0.5, 0.84302, 0.88517, 0.95238),
    (1.0, 0.52828, 0.63394, 0.83333),
    (1.5, 0.27240, 0.39498, 0.68966),
    (2.0, 0.12780, 0.23005, 0.55556),
]


@pytest.mark.parametrize(("mach", "pressure_ratio", "density_ratio", "temperature_ratio"), NACA_1135_TABLE_I)
def test_isentropic_ratios_match_naca_1135(mach, pressure_ratio, density_ratio, temperature_ratio):
    assert_allclose(gas.total_to_static_temperature_ratio(mach, 1.4), temperature_ratio, atol=6e-6)
    assert_allclose(gas.total_to_static_pressure_ratio(mach, 1.4), pressure_ratio, atol=6e-6)
    # Density ratio through the gas law: rho/rho0 = (p/p0) / (T/T0).
    assert_allclose(
        gas.total_to_static_pressure_ratio(mach, 1.4) / gas.total_to_static_temperature_ratio(mach, 1.4),
        density_ratio, atol=6e-6,
    )


@pytest.mark.parametrize(("mach", "pressure_ratio", "density_ratio", "temperature_ratio"), NACA_1135_TABLE_I)
def test_static_state_from_total_state_reproduces_naca_1135(mach, pressure_ratio, density_ratio, temperature_ratio):
    cp, gamma = gas.gas_properties("air")
    t0, p0 = 288.15, 101325.0
    # The speed that gives this Mach number, from energy: T = T0 / (1 + (gamma - 1) M^2 / 2), V = M a.
    static = t0 / (1.0 + 0.5 * (gamma - 1.0) * mach**2)
    speed = mach * np.sqrt(gamma * gas.gas_constant(cp, gamma) * static)
    state = gas.static_state(t0, p0, speed, cp, gamma)
    assert_allclose(state["mach"], mach, rtol=1e-6)
    assert_allclose(state["temperature"] / t0, temperature_ratio, atol=6e-6)
    assert_allclose(state["speed_of_sound"], np.sqrt(gamma * gas.gas_constant(cp, gamma) * static), rtol=1e-12)
    assert_allclose(state["pressure"] / p0, pressure_ratio, atol=6e-6)
    rho0 = p0 / (gas.gas_constant(cp, gamma) * t0)
    assert_allclose(state["density"] / rho0, density_ratio, atol=6e-6)


def test_speed_of_sound_at_sea_level_matches_the_standard_atmosphere():
    # ISO 2533:1975 / ICAO Doc 7488 standard atmosphere: a = 340.294 m/s at 288.15 K.
    cp, gamma = gas.gas_properties("air")
    assert_allclose(gas.speed_of_sound(288.15, cp, gamma), 340.294, rtol=3e-4)


def test_air_preset_against_coolprop():
    coolprop = pytest.importorskip("CoolProp.CoolProp")
    # CoolProp's pseudo-pure air (Lemmon et al. 2000) near sea-level conditions.
    sound = coolprop.PropsSI("A", "T", 288.15, "P", 101325.0, "Air")
    cp_ideal = coolprop.PropsSI("Cp0mass", "T", 288.15, "P", 101325.0, "Air")
    gas_constant = coolprop.PropsSI("gas_constant", "Air") / coolprop.PropsSI("molar_mass", "Air")
    cp, gamma = gas.gas_properties("air")
    assert_allclose(gas.speed_of_sound(288.15, cp, gamma), sound, rtol=1e-3)
    assert_allclose(cp, cp_ideal, rtol=2e-3)
    assert_allclose(gas.gas_constant(cp, gamma), gas_constant, rtol=5e-4)


def test_static_and_total_temperature_are_inverse():
    t0 = np.array([288.15, 1100.0])
    speed = np.array([150.0, 520.0])
    assert_allclose(gas.total_temperature(gas.static_temperature(t0, speed, 1148.0), speed, 1148.0), t0)


def test_unreachable_speed_gives_nan_not_a_negative_temperature():
    state = gas.static_state(300.0, 1e5, 1000.0, 1005.0, 1.4)  # V^2/2cp = 497 K > T0
    assert np.isnan(state["temperature"]) and np.isnan(state["mach"])


def test_overrides_replace_the_preset_values():
    cp, gamma = gas.gas_properties("combustion_products", gamma=1.3)
    assert (float(cp), float(gamma)) == (1148.0, 1.3)


def test_unknown_gas_is_refused_by_name():
    with pytest.raises(ValueError, match="gas must be one of"):
        gas.gas_properties("steam")
