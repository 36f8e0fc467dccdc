"""Hub and tip triangles: radial equilibrium derived here, textbook identities, properties."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose, assert_array_equal

from service.core import span, triangles
from service.core.triangles import evaluate_stage_from_angles, evaluate_stage_from_duty
from tests.core.helpers import reasons

CP, GAMMA = 1005.0, 1.4


def _law_kwargs(vortex):
    return {"exponent": 0.5} if vortex == "power" else {}


def _mean_swirl(machine, values):
    rotor_in, rotor_out = triangles.ROTOR_STATIONS[machine]
    return values[f"Vtheta{rotor_in}"], values[f"Vtheta{rotor_out}"]


def test_free_vortex_hub_reaction_of_a_fifty_percent_stage_at_hub_to_mean_ratio_0_8():
    # Derived here: a free vortex keeps r Vtheta constant at every station and, by simple radial
    # equilibrium with uniform work, V_x constant, so R = 1 - (Vtheta1 + Vtheta2) / (2U) holds at
    # every radius. With Vtheta ~ 1/r and U ~ r: R(r) = 1 - (1 - R_m) (r_m / r)^2, and at
    # r_h / r_m = 0.8 with R_m = 0.5: R_h = 1 - 0.5 / 0.8^2 = 0.21875.
    stage = evaluate_stage_from_duty("compressor", 0.5, 0.4, 0.5, 300.0)
    result = span.with_span(stage, "compressor", 0.8, 1.2)  # r_m = 1.0 m: hub at 0.8 r_m
    assert_allclose(result.values["reaction_hub"], 1.0 - 0.5 / 0.8**2, rtol=1e-12)
    assert_allclose(result.values["reaction_tip"], 1.0 - 0.5 / 1.2**2, rtol=1e-12)


@pytest.mark.parametrize("machine", triangles.MACHINES)
def test_free_vortex_keeps_r_vtheta_the_work_and_the_axial_velocity_uniform(machine):
    # Dixon & Hall (2014) 7th ed., ch. 6, free-vortex flow: r Vtheta constant at each station,
    # and since h0 is uniform upstream, Euler's work U (Vtheta_out - Vtheta_in) = omega (r Vtheta)
    # is uniform too; radial equilibrium then leaves dV_x/dr = 0.
    stage = evaluate_stage_from_duty(machine, [0.5, 0.8], [0.4, 1.6], [0.5, 0.4], 300.0).values
    rho = np.array([0.7, 1.3])
    for r in rho:
        at = span.span_triangles(machine, stage["blade_speed"], stage["axial_velocity"],
                                 *_mean_swirl(machine, stage), r, "free")
        for k in (1, 2, 3):
            assert_allclose(r * at[f"Vtheta{k}"], stage[f"Vtheta{k}"], rtol=1e-12)
            assert_allclose(at[f"Vx{k}"], stage["axial_velocity"], rtol=1e-12)
        assert_allclose(at["work"], stage["work"], rtol=1e-12)
        assert_allclose(at["blade_speed"], r * stage["blade_speed"], rtol=1e-15)


def _total_enthalpy(machine, at, k):
    """h0 - h01 at station k from Euler's work at this radius (the inlet is uniform)."""
    rotor_out = triangles.ROTOR_STATIONS[machine][1]
    if k < rotor_out:
        return np.zeros_like(at["work"])
    return at["work"] if machine == "compressor" else -at["work"]


@pytest.mark.parametrize("vortex", span.VORTEX_LAWS)
@pytest.mark.parametrize("machine", triangles.MACHINES)
def test_every_law_satisfies_simple_radial_equilibrium_by_finite_differences(machine, vortex):
    # Simple radial equilibrium (Dixon & Hall (2014) 7th ed., ch. 6; Saravanamuttoo et al. (2017)
    # 7th ed., ch. 5), checked here by central differences on the module's answers rather than by
    # its closed-form integral: dh0/dr = V_x dV_x/dr + (Vtheta / r) d(r Vtheta)/dr.
    # Duties at which every law keeps an axial velocity over the span (the forced vortex does not
    # for a heavily swirled turbine nozzle exit).
    phi, psi, reaction = (0.6, 0.35, 0.55) if machine == "compressor" else (0.9, 0.8, 0.5)
    stage = evaluate_stage_from_duty(machine, phi, psi, reaction, 250.0).values
    rho = np.linspace(0.85, 1.15, 3001)
    radius = 0.4 * rho
    at = span.span_triangles(machine, stage["blade_speed"], stage["axial_velocity"], *_mean_swirl(machine, stage),
                             rho, vortex, **_law_kwargs(vortex))
    for k in (1, 2, 3):
        vx, vt = at[f"Vx{k}"], at[f"Vtheta{k}"]
        assert np.all(np.isfinite(vx))
        lhs = np.gradient(_total_enthalpy(machine, at, k), radius)
        rhs = vx * np.gradient(vx, radius) + vt / radius * np.gradient(radius * vt, radius)
        scale = stage["axial_velocity"] ** 2 / 0.4
        assert_allclose(lhs[1:-1], rhs[1:-1], atol=1e-5 * scale)


@pytest.mark.parametrize("vortex", span.VORTEX_LAWS)
def test_the_general_whirl_family_does_uniform_work(vortex):
    # Dixon & Hall (2014) 7th ed., ch. 6, general whirl distribution Vtheta = a r^n -/+ b/r before
    # and after the rotor: the work U (Vtheta2 - Vtheta1) = 2 b omega whatever n (Dixon (2005)
    # 5th ed., eq. 6.14). The forced vortex (Vtheta ~ r at both stations) is not of that family:
    # its work grows as r^2.
    stage = evaluate_stage_from_duty("compressor", 0.55, 0.3, 0.6, 280.0).values
    rho = np.array([0.8, 1.0, 1.2])
    at = span.span_triangles("compressor", 280.0, stage["axial_velocity"], stage["Vtheta1"], stage["Vtheta2"], rho,
                             vortex, **_law_kwargs(vortex))
    if vortex == "forced":
        assert_allclose(at["work"], stage["work"] * rho**2, rtol=1e-12)
    else:
        assert_allclose(at["work"], stage["work"], rtol=1e-12)


def test_first_power_reaction_is_constant_only_where_the_axial_velocity_is():
    # Dixon (2005) 5th ed., eqs. 6.15-6.17: with Vtheta = a r -/+ b/r, 1 - (Vtheta1 + Vtheta2)/(2U)
    # is the constant 1 - a/omega; the true reaction differs where radial equilibrium makes V_x1
    # and V_x2 differ ("incorrectly" called constant reaction). Derived here at two radii.
    stage = evaluate_stage_from_duty("compressor", 0.7, 0.3, 0.6, 280.0).values
    rho = np.array([0.9, 1.1])
    at = span.span_triangles("compressor", 280.0, stage["axial_velocity"], stage["Vtheta1"], stage["Vtheta2"], rho,
                             "constant_reaction")
    assert_allclose(1.0 - (at["Vtheta1"] + at["Vtheta2"]) / (2 * at["blade_speed"]), 0.6, rtol=1e-12)
    h1 = -0.5 * at["V1"] ** 2
    h2 = at["work"] - 0.5 * at["V2"] ** 2
    h3 = at["work"] - 0.5 * at["V3"] ** 2
    assert_allclose(at["reaction"], (h2 - h1) / (h3 - h1), rtol=1e-12)
    assert np.all(np.abs(at["reaction"] - 0.6) > 1e-3)


def test_forced_vortex_axial_velocity_follows_the_textbook_closed_form():
    # Dixon (2005) 5th ed., eqs. 6.10 and 6.11: with Vtheta1 = K1 r and Vtheta2 = K2 r,
    # V_x1^2 = const - 2 K1^2 r^2 and V_x2^2 = const - 2 [K2^2 - omega (K2 - K1)] r^2.
    stage = evaluate_stage_from_duty("compressor", 0.6, 0.3, 0.7, 300.0).values
    r_m, rho = 0.5, np.array([0.8, 1.25])
    omega = 300.0 / r_m
    k1, k2 = stage["Vtheta1"] / r_m, stage["Vtheta2"] / r_m
    at = span.span_triangles("compressor", 300.0, stage["axial_velocity"], stage["Vtheta1"], stage["Vtheta2"], rho,
                             "forced")
    r2 = (r_m * rho) ** 2 - r_m**2
    assert_allclose(at["Vx1"] ** 2, stage["axial_velocity"] ** 2 - 2 * k1**2 * r2, rtol=1e-12)
    assert_allclose(at["Vx2"] ** 2, stage["axial_velocity"] ** 2 - 2 * (k2**2 - omega * (k2 - k1)) * r2, rtol=1e-12)


def test_compressor_first_stage_inlet_tip_saravanamuttoo():
    # Saravanamuttoo, Rogers, Cohen & Straznicky, "Gas Turbine Theory", ch. 5, axial compressor
    # design example (from memory, not verified against the book): no inlet guide vanes,
    # C_a = 150 m/s, T01 = 288 K, inlet hub-to-tip ratio 0.5, tip radius 0.2262 m at
    # N = 250 rev/s (tip speed 355 m/s); the book's rotor-tip relative Mach number at inlet is
    # recalled as about 1.16 (from memory). The rotor-exit angle (30 deg) is an input the inlet
    # quantities do not depend on. Without inlet swirl tan(beta1) = -U / C_a at every radius
    # (derived here).
    tip = 0.2262
    hub = 0.5 * tip
    u_mean = 2 * np.pi * 250.0 * 0.5 * (hub + tip)
    stage = evaluate_stage_from_angles("compressor", u_mean, 150.0, 0.0, 30.0, 288.0, 101325.0)
    result = span.with_span(stage, "compressor", hub, tip, total_temperature=288.0, total_pressure=101325.0)
    values = result.values
    assert_allclose(values["blade_speed_tip"], 355.3, atol=0.1)
    assert_allclose(values["M_rel1_tip"], 1.16, atol=0.01)
    for end, radius in (("hub", hub), ("tip", tip)):
        assert_allclose(values[f"beta1_{end}"], -np.degrees(np.arctan(2 * np.pi * 250.0 * radius / 150.0)),
                        rtol=1e-12)
    # Common practice (service/core/span_checks.py): a tip above M_rel 1 is transonic.
    assert result.checks["rotor_tip_relative_mach"].status.tolist() == "warn"


@pytest.mark.parametrize("vortex", span.VORTEX_LAWS)
@pytest.mark.parametrize("machine", triangles.MACHINES)
def test_mean_values_are_todays_answers_exactly(machine, vortex):
    stage = evaluate_stage_from_duty(machine, [0.5, 0.9], [0.4, 0.8], 0.5, 300.0, 700.0, 2e5)
    result = span.with_span(stage, machine, 0.45, 0.55, vortex, total_temperature=700.0, total_pressure=2e5,
                            **_law_kwargs(vortex))
    assert not result.failed().any()
    for name, array in stage.values.items():
        assert_array_equal(result.values[name], array)
    assert set(stage.checks) <= set(result.checks)


duty = st.tuples(
    st.sampled_from(triangles.MACHINES), st.sampled_from(span.VORTEX_LAWS),
    st.floats(0.3, 1.2), st.floats(0.1, 2.5), st.floats(0.0, 1.0), st.floats(100.0, 500.0),
)


@settings(max_examples=80, deadline=None)
@given(duty)
def test_every_law_gives_the_mean_line_triangles_at_the_mean_radius(case):
    machine, vortex, phi, psi, reaction, u = case
    stage = evaluate_stage_from_duty(machine, phi, psi, reaction, u).values
    at = span.span_triangles(machine, u, stage["axial_velocity"], *_mean_swirl(machine, stage), 1.0, vortex,
                             **_law_kwargs(vortex))
    for name in ("alpha1", "alpha2", "alpha3", "Vx1", "Vx2", "Vx3", "V1", "V2", "V3", "work", "reaction",
                 "de_haller_rotor", "de_haller_stator", "loading_coefficient"):
        assert_allclose(at[name], stage[name], rtol=1e-11, atol=1e-9, err_msg=name)
    for k in triangles.ROTOR_STATIONS[machine]:
        assert_allclose(at[f"beta{k}"], stage[f"beta{k}"], rtol=1e-11, atol=1e-9)


@settings(max_examples=60, deadline=None)
@given(duty, st.floats(1e-7, 1e-4))
def test_hub_mean_and_tip_coincide_as_the_hub_to_tip_ratio_tends_to_one(case, half_height):
    machine, vortex, phi, psi, reaction, u = case
    stage = evaluate_stage_from_duty(machine, phi, psi, reaction, u, 600.0, 3e5)
    result = span.with_span(stage, machine, 1.0 - half_height, 1.0 + half_height, vortex, total_temperature=600.0,
                            total_pressure=3e5, **_law_kwargs(vortex))
    if stage.failed().any():
        return
    assert not result.failed().any()
    values = result.values
    # Every quantity varies smoothly with radius: within a few half-heights of its mean value.
    for name in ("alpha1", "alpha2", "alpha3", "V1", "V2", "V3", "reaction", "work", "T1", "T2", "T3"):
        mean = values[name]
        for end in span.SPAN_ENDS:
            scale = max(abs(float(mean)), float(u), 1.0) if name != "reaction" else max(1.0, abs(float(mean)))
            assert abs(float(values[f"{name}_{end}"]) - float(mean)) <= 200.0 * half_height * scale, (name, end)


def test_hub_at_or_above_tip_fails_the_case_and_says_so():
    stage = evaluate_stage_from_duty("compressor", 0.5, 0.4, 0.5, 300.0)
    result = span.with_span(stage, "compressor", np.array([0.3, 0.5, 0.4]), np.array([0.5, 0.5, 0.3]))
    assert result.failed().tolist() == [False, True, True]
    assert "hub radius is at or above the tip radius" in reasons(result)[1]
    assert np.isnan(result.values["alpha1"][1]) and np.isfinite(result.values["alpha1"][0])


def test_a_law_that_leaves_no_axial_velocity_fails_at_the_station_and_radius_named():
    # First-power swirl at phi 0.5, psi 0.4, R 0.5: with A = U_m (1 - R) = 150 m/s and
    # B = psi U_m / 2 = 60 m/s the rotor-exit V_x^2 = 150^2 - 2 [A^2 (rho^2 - 1) + 2 A B ln rho]
    # (derived here) is negative at the tip rho = 1.2.
    stage = evaluate_stage_from_duty("compressor", 0.5, 0.4, 0.5, 300.0)
    result = span.with_span(stage, "compressor", 0.8, 1.2, "constant_reaction")
    vx2_squared = 150.0**2 - 2 * (150.0**2 * (1.2**2 - 1) + 2 * 150.0 * 60.0 * np.log(1.2))
    assert vx2_squared < 0
    assert bool(result.failed())
    assert "station 2 at the tip" in reasons(result)[0]


def test_a_static_temperature_below_zero_at_the_hub_fails_with_the_radius_named():
    # Free vortex: Vtheta2 grows as r_m / r towards the hub. At the mean line V2 = 150 /
    # cos(alpha2) with tan(alpha2) = 1.4 here, so V2 = 258 m/s and V2^2/(2 cp) = 33 K; at a hub
    # of r_m / 4 the swirl is four times larger and V2_hub^2 / (2 cp) = 460 K (derived here),
    # beyond the 350 K at station 2.
    stage = evaluate_stage_from_duty("compressor", 0.5, 0.8, 0.3, 300.0, 315.0, 1e5)
    assert not stage.failed().any()
    result = span.with_span(stage, "compressor", 0.25, 1.75, total_temperature=315.0, total_pressure=1e5)
    assert bool(result.failed())
    assert reasons(result)[0].startswith("static temperature at station 2 at the hub")


def test_compressor_tip_diffusion_factor_uses_the_solidity_at_the_tip():
    # Lieblein's definition written out here, with the solidity at a radius sigma_m r_m / r
    # (the same chord and blade count along the span).
    stage = evaluate_stage_from_duty("compressor", 0.5, 0.4, 0.5, 300.0)
    v = span.with_span(stage, "compressor", 0.3, 0.5, rotor_solidity=1.2, stator_solidity=1.0).values
    sigma = 1.2 * 0.4 / 0.5
    expected = 1 - v["W2_tip"] / v["W1_tip"] + abs(v["Wtheta2_tip"] - v["Wtheta1_tip"]) / (2 * sigma * v["W1_tip"])
    assert_allclose(v["rotor_solidity_tip"], sigma, rtol=1e-12)
    assert_allclose(v["rotor_diffusion_factor_tip"], expected, rtol=1e-12)


def test_states_at_a_radius_follow_from_the_work_there():
    # T0 after the rotor is T01 + w(r) / cp with the forced vortex's work at that radius; the
    # relative total temperature is conserved through the rotor at constant radius (rothalpy).
    stage = evaluate_stage_from_duty("compressor", 0.6, 0.3, 0.7, 300.0, 288.15, 101325.0)
    v = span.with_span(stage, "compressor", 0.35, 0.55, "forced", total_temperature=288.15,
                       total_pressure=101325.0).values
    for end in span.SPAN_ENDS:
        assert_allclose(v[f"T02_{end}"], 288.15 + v[f"work_{end}"] / CP, rtol=1e-12)
        assert_allclose(v[f"T0_rel1_{end}"], v[f"T0_rel2_{end}"], rtol=1e-12)
        assert_allclose(v[f"T2_{end}"], v[f"T02_{end}"] - v[f"V2_{end}"] ** 2 / (2 * CP), rtol=1e-12)
        a1 = np.sqrt(GAMMA * CP * (GAMMA - 1) / GAMMA * v[f"T1_{end}"])
        assert_allclose(v[f"M_axial1_{end}"], v[f"Vx1_{end}"] / a1, rtol=1e-12)


def test_radii_from_the_mean_radius_and_the_hub_to_tip_ratio_round_trip():
    hub, tip = span.radii_from_mean([0.3, 0.5], [0.5, 0.9])
    ratios = span.radius_ratios(hub, tip)
    assert_allclose(ratios["mean_radius"], [0.3, 0.5], rtol=1e-14)
    assert_allclose(ratios["hub_to_tip_ratio"], [0.5, 0.9], rtol=1e-14)


def test_scalar_in_gives_scalar_out():
    at = span.span_triangles("turbine", 300.0, 200.0, 400.0, -50.0, 0.9, "exponential")
    assert np.ndim(at["alpha2"]) == 0


def test_unknown_vortex_law_and_a_stray_exponent_are_refused_by_name():
    with pytest.raises(ValueError, match="vortex must be one of"):
        span.span_triangles("compressor", 300.0, 150.0, 50.0, 150.0, 0.9, "tornado")
    with pytest.raises(ValueError, match="exponent"):
        span.span_triangles("compressor", 300.0, 150.0, 50.0, 150.0, 0.9, "free", exponent=2.0)
    with pytest.raises(ValueError, match="exponent"):
        span.span_triangles("compressor", 300.0, 150.0, 50.0, 150.0, 0.9, "power")
