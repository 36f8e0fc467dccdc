"""Hub and tip of a laid-out machine: the free vortex about every station, derived again here."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from service.core import machine, machine_span
from tests.core.helpers import reasons

AIR = {"cp": 1005.0, "gamma": 1.4}
COMPRESSOR = dict(machine="compressor", mass_flow=25.0, total_temperature=288.15, total_pressure=101325.0,
                  pressure_ratio=5.0, shaft_speed=12000.0, polytropic_efficiency=0.9, flow_coefficient=0.5,
                  reaction=0.6, rotor_aspect_ratio=2.5, stator_aspect_ratio=3.0, target_diffusion_factor=0.45,
                  stages=5, **AIR)
TURBINE = dict(machine="turbine", mass_flow=25.0, total_temperature=1400.0, total_pressure=1.2e6,
               pressure_ratio=4.0, shaft_speed=12000.0, polytropic_efficiency=0.9, flow_coefficient=0.6,
               reaction=0.45, rotor_aspect_ratio=1.8, stator_aspect_ratio=1.4, stages=3, cp=1148.0, gamma=1.333)
HELD = ({"mean_radius": 0.30}, {"hub_radius": 0.24}, {"tip_radius": 0.38})


def _cases():
    for base in (COMPRESSOR, TURBINE):
        for held in HELD:
            yield pytest.param(base, held, id=f"{base['machine']}-{next(iter(held))}")


@pytest.mark.parametrize(("base", "held"), list(_cases()))
def test_every_station_is_a_free_vortex_with_uniform_work(base, held):
    # Free vortex (Dixon & Hall 2014, ch. 6): r V_theta is the same at hub, mean and tip of each station, and
    # with U = Omega r the rotor's work U_out V_theta,out - U_in V_theta,in is the same at every radius.
    result = machine.evaluate_machine_design(**base, **held)
    assert reasons(result) == [None]
    v = {name: value[0] for name, value in result.values.items()}
    n = int(v["stage_count"])
    moment = v["station_tangential_velocity"] * v["station_mean_radius"]
    # V_x is uniform along the span, so V_theta = V_x tan(alpha) at the hub and tip.
    swirl_at = {end: v["station_axial_velocity"] * np.tan(np.radians(v[f"station_alpha_{end}"]))
                for end in ("hub", "tip")}
    for end in ("hub", "tip"):
        assert_allclose(swirl_at[end] * v[f"station_{end}_radius"], moment, rtol=1e-12)
    omega = 2 * np.pi * base["shaft_speed"] / 60
    first = 2 * np.arange(n) + (0 if base["machine"] == "compressor" else 1)
    for end in ("hub", "tip"):
        u = omega * v[f"station_{end}_radius"]
        swirl = swirl_at[end]
        work = np.abs(u[first + 1] * swirl[first + 1] - u[first] * swirl[first])
        assert_allclose(work, v["stage_work"][:n], rtol=1e-9)


def test_hub_reaction_of_a_repeating_free_vortex_stage_is_derived_from_the_mean():
    # A 50 % mean-reaction compressor stage, the same annulus at its three stations, hub-to-mean radius
    # ratio 0.8. Free vortex and h = h0 - V^2/2 give R(r) = 1 - (1 - R_m) (r_m / r)^2 (Dixon & Hall 2014,
    # ch. 6; derived: R = 1 - (V_theta1 + V_theta2) / 2U where V3 = V1 and V_x is uniform, and V_theta / U
    # scales with (r_m / r)^2), so at the hub R = 1 - 0.5 / 0.8^2.
    u, vx, psi, reaction, cp = 300.0, 150.0, 0.4, 0.5, 1005.0
    swirl1, swirl2 = u * (1 - reaction - psi / 2), u * (1 - reaction + psi / 2)
    rise = psi * u * u / cp
    one = np.ones((1, 3))
    stations = {
        "station_hub_radius": 0.24 * one, "station_tip_radius": 0.36 * one, "station_mean_radius": 0.30 * one,
        "station_axial_velocity": vx * one, "station_tangential_velocity": np.array([[swirl1, swirl2, swirl1]]),
        "station_total_temperature": np.array([[300.0, 300.0 + rise, 300.0 + rise]]),
        "station_total_pressure": 1e5 * one,
    }
    rows = {"row_solidity": np.ones((1, 2)), "row_mean_radius": 0.3 * np.ones((1, 2))}
    speed = u / 0.30 * 60 / (2 * np.pi)
    values, failures = machine_span.spanwise("compressor", stations, rows, 1, np.array([speed]), np.array([cp]),
                                             np.array([1.4]), np.array([True, True, False]))
    assert not any(mask.any() for _, mask in failures)
    assert_allclose(values["stage_reaction_hub"][0, 0], 1 - 0.5 / 0.8 ** 2, rtol=1e-9)
    assert_allclose(values["stage_reaction_tip"][0, 0], 1 - 0.5 / 1.2 ** 2, rtol=1e-9)
    # The rotor-tip relative Mach number at the rotor inlet, written out: W = hypot(V_x, V_theta r_m/r - U r/r_m).
    tip_swirl, tip_u = swirl1 * 0.30 / 0.36, u * 0.36 / 0.30
    temperature = 300.0 - (vx ** 2 + tip_swirl ** 2) / (2 * cp)
    relative_mach = np.hypot(vx, tip_swirl - tip_u) / np.sqrt(1.4 * cp * 0.4 / 1.4 * temperature)
    assert_allclose(values["stage_rotor_tip_relative_mach"][0, 0], relative_mach, rtol=1e-12)


def test_short_blades_have_their_hub_and_tip_at_the_mean_line():
    # As the hub-to-tip ratio tends to 1 the free vortex gives the mean values at hub and tip.
    v = machine.evaluate_machine_design(**{**COMPRESSOR, "mass_flow": 0.05}, mean_radius=0.3).values
    assert np.nanmin(v["station_hub_to_tip_ratio"]) > 0.99
    for name in ("station_alpha", "station_beta", "station_relative_mach"):
        for end in ("hub", "tip"):
            assert_allclose(v[f"{name}_{end}"], v[name], rtol=5e-3, atol=5e-2, err_msg=name)


def test_the_rotor_tip_and_stator_hub_are_judged_with_their_own_limits():
    # NASA SP-36 limits by span position (service.core.diffusion.DIFFUSION_FACTOR_LIMITS): the rotor tip warns
    # above 0.45; a free-vortex stator's hub sees its largest turning.
    result = machine.evaluate_machine_design(**COMPRESSOR, mean_radius=0.3)
    checks = result.checks
    tip = checks["rotor_diffusion_factor_tip"]
    assert tip.limit == 0.45 and tip.fail_limit == 0.6
    assert_allclose(tip.value, result.values["row_diffusion_factor_tip"][:, 0::2])
    assert checks["stator_diffusion_factor_hub"].limit == 0.6
    # Free vortex: the stator hub turns more than its mean, so its diffusion factor is higher there.
    assert np.all(result.values["row_diffusion_factor_hub"][:, 1::2] > result.values["row_diffusion_factor"][:, 1::2])
    for name in ("stage_reaction_hub", "stage_rotor_tip_relative_mach", "inlet_hub_to_tip_ratio_low",
                 "outlet_hub_to_tip_ratio_high", "smallest_blade_height", "axial_mach", "rotor_de_haller_hub"):
        assert name in checks, name
    turbine = machine.evaluate_machine_design(**TURBINE, mean_radius=0.3).checks
    assert {"exit_swirl", "exit_mach", "stage_reaction_hub"} <= set(turbine)


def test_a_negative_hub_reaction_fails_its_check():
    # A low mean reaction and long blades: R_hub = 1 - (1 - R_m)(r_m/r_h)^2 < 0 (derived as above) fails.
    result = machine.evaluate_machine_design(**{**COMPRESSOR, "reaction": 0.3, "mass_flow": 60.0}, mean_radius=0.3)
    check = result.checks["stage_reaction_hub"]
    assert np.any(check.value < 0) and "fail" in check.status


def test_saravanamuttoo_first_rotor_tip_relative_mach_number():
    # Saravanamuttoo, Rogers, Cohen, Straznicky & Nix, "Gas Turbine Theory", ch. 5, the axial compressor design
    # example (from memory): axial inflow at 150 m/s, tip speed 350 m/s at the inlet tip radius 0.2262 m,
    # 288 K: the rotor's inlet tip sees W = sqrt(350^2 + 150^2) = 380.8 m/s at T1 = 288 - 150^2 / 2010 =
    # 276.8 K, a relative Mach number of about 1.14, the book's figure for the first rotor tip.
    speed = 350.0 / (2 * np.pi * 0.2262) * 60.0
    u_mean = 2 * np.pi * 0.1697 * speed / 60.0
    result = machine.evaluate_machine_design(
        "compressor", 20.0, 288.0, 1.01e5, 4.15, speed, 0.90, 150.0 / u_mean, 0.5, 3.0, 3.0, mean_radius=0.1697,
        stages=7, inlet_swirl=0.0, target_diffusion_factor=0.45)
    tip_mach = result.values["stage_rotor_tip_relative_mach"][0, 0]
    assert_allclose(tip_mach, 1.14, atol=0.01)
    # Derived exactly from the answer's own tip radius: W from the tip blade speed and the axial inflow.
    tip = result.values["station_tip_radius"][0, 0]
    u_tip = 2 * np.pi * tip * speed / 60.0
    temperature = 288.0 - 150.0 ** 2 / (2 * 1005.0)
    assert_allclose(tip_mach, np.hypot(150.0, u_tip) / np.sqrt(1.4 * 1005.0 * 0.4 / 1.4 * temperature), rtol=1e-12)
    assert result.checks["stage_rotor_tip_relative_mach"].status[0, 0] == "warn"
