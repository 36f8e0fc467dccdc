"""Whole-machine design: continuity, Euler work, agreement with the separate methods, a published example."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose, assert_array_equal

from service.core import annulus, checks, diffusion, flowpath, machine, split, triangles, zweifel
from tests.core.helpers import reasons

AIR = {"cp": 1005.0, "gamma": 1.4}
PRODUCTS = {"cp": 1148.0, "gamma": 1.333}

COMPRESSOR = dict(machine="compressor", mass_flow=25.0, total_temperature=288.15, total_pressure=101325.0,
                  pressure_ratio=5.0, shaft_speed=12000.0, polytropic_efficiency=0.9, flow_coefficient=0.5,
                  reaction=0.6, rotor_aspect_ratio=2.5, stator_aspect_ratio=3.0, target_diffusion_factor=0.45,
                  **AIR)
TURBINE = dict(machine="turbine", mass_flow=25.0, total_temperature=1400.0, total_pressure=1.2e6,
               pressure_ratio=4.0, shaft_speed=12000.0, polytropic_efficiency=0.9, flow_coefficient=0.6,
               reaction=0.45, rotor_aspect_ratio=1.8, stator_aspect_ratio=1.4, **PRODUCTS)
HELD = ({"mean_radius": 0.30}, {"hub_radius": 0.24}, {"tip_radius": 0.38})


def design(base, **changes):
    return machine.evaluate_machine_design(**{**base, **changes})



def trimmed(values, name, case=0):
    row = values[name][case]
    return row[np.isfinite(row)]


def _cases():
    for base, count in ((COMPRESSOR, {"stages": 5}), (TURBINE, {"stages": 3})):
        for held in HELD:
            yield pytest.param(base, {**count, **held}, id=f"{base['machine']}-{next(iter(held))}")


CASES = list(_cases())


# --- Conservation ------------------------------------------------------------------------------------


@pytest.mark.parametrize(("base", "layout"), CASES)
def test_continuity_holds_at_every_station(base, layout):
    # rho V_x A = m at every station, and the annulus closes: A = pi (r_t^2 - r_h^2), derived here.
    result = design(base, **layout)
    assert reasons(result) == [None]
    v = result.values
    flow = v["station_density"] * v["station_axial_velocity"] * v["station_area"]
    assert_allclose(flow, base["mass_flow"], rtol=1e-12)
    ring = np.pi * (v["station_tip_radius"] ** 2 - v["station_hub_radius"] ** 2)
    assert_allclose(ring, v["station_area"], rtol=1e-10)
    assert_allclose(v["station_blade_height"], v["station_tip_radius"] - v["station_hub_radius"], rtol=1e-12)
    held = next(name for name in layout if name.endswith("_radius"))
    assert_allclose(v[f"station_{held}"], layout[held], rtol=1e-12)


def station_blade_speeds(values, shaft_speed, case=0):
    """U = 2 pi N r / 60 at every station's own mean radius, from the answer's radii (derived here)."""
    return 2.0 * np.pi * shaft_speed / 60.0 * values["station_mean_radius"][case]


def rotor_station_pairs(machine_name, n):
    """(inlet, outlet) station index (from 0) of every rotor: compressor 2i -> 2i+1, turbine 2i+1 -> 2i+2."""
    first = 2 * np.arange(n) + (0 if machine_name == "compressor" else 1)
    return first, first + 1


@pytest.mark.parametrize(("base", "layout"), CASES)
def test_euler_work_from_the_station_radii_adds_up_to_the_overall_work(base, layout):
    # Euler's equation, written out here from the answer's own station radii, shaft speed and swirl:
    # dh0 = U_out Vtheta_out - U_in Vtheta_in across each rotor (compressor work in; turbine work out,
    # the sign reversed), each U at its station's own radius (DESIGN: blade speed belongs to a radius).
    # The stages must add up to cp (T0_out - T0_in) of the whole machine (issue 13: to rounding).
    result = design(base, **layout)
    v = result.values
    n = int(v["stage_count"][0])
    u = station_blade_speeds(v, base["shaft_speed"])
    swirl = v["station_tangential_velocity"][0]
    inlet, outlet = rotor_station_pairs(base["machine"], n)
    euler = u[outlet] * swirl[outlet] - u[inlet] * swirl[inlet]
    if base["machine"] == "turbine":
        euler = -euler
    assert_allclose(euler, v["stage_work"][0, :n], rtol=1e-9)
    overall = base["cp"] * abs(v["outlet_total_temperature"][0] - base["total_temperature"])
    assert_allclose(euler.sum(), overall, rtol=1e-9)
    assert_allclose(v["work"][0], overall, rtol=1e-12)
    assert_allclose(v["power"][0], base["mass_flow"] * overall, rtol=1e-12)
    # The blade speed the answer reports is the one of the station's radius.
    assert_allclose(v["station_blade_speed"][0, inlet], u[inlet], rtol=1e-9)
    assert_allclose(v["station_blade_speed"][0, outlet], u[outlet], rtol=1e-9)


@pytest.mark.parametrize(("base", "layout"), CASES)
def test_rothalpy_is_conserved_across_every_rotor(base, layout):
    # Rothalpy I = h + W^2/2 - U^2/2 = h0 - U Vtheta is constant through an adiabatic rotor
    # (Dixon & Hall 2014, ch. 1, written out here with h = cp T and the answer's station radii).
    v = design(base, **layout).values
    n = int(v["stage_count"][0])
    u = station_blade_speeds(v, base["shaft_speed"])
    rothalpy = (base["cp"] * v["station_static_temperature"][0] + v["station_relative_velocity"][0] ** 2 / 2
                - u ** 2 / 2)
    inlet, outlet = rotor_station_pairs(base["machine"], n)
    assert_allclose(rothalpy[outlet], rothalpy[inlet], rtol=1e-9)
    # Relative frame: W_theta = V_theta - U at the station's own radius.
    assert_allclose(v["station_relative_tangential_velocity"][0, inlet],
                    v["station_tangential_velocity"][0, inlet] - u[inlet], rtol=1e-9, atol=1e-9)
    assert_allclose(v["station_relative_tangential_velocity"][0, outlet],
                    v["station_tangential_velocity"][0, outlet] - u[outlet], rtol=1e-9, atol=1e-9)


@pytest.mark.parametrize(("base", "layout"), CASES)
def test_static_states_follow_from_the_totals_and_the_speeds(base, layout):
    # T = T0 - V^2 / (2 cp), p = p0 (T/T0)^(gamma/(gamma-1)), rho = p / (R T), M = V / a: derived here.
    v = design(base, **layout).values
    cp, gamma = base["cp"], base["gamma"]
    gas_constant = cp * (gamma - 1) / gamma
    t = v["station_total_temperature"] - v["station_velocity"] ** 2 / (2 * cp)
    assert_allclose(v["station_static_temperature"], t, rtol=1e-12)
    p = v["station_total_pressure"] * (t / v["station_total_temperature"]) ** (gamma / (gamma - 1))
    assert_allclose(v["station_static_pressure"], p, rtol=1e-12)
    assert_allclose(v["station_density"], p / (gas_constant * t), rtol=1e-12)
    sound = np.sqrt(gamma * gas_constant * t)
    assert_allclose(v["station_mach"], v["station_velocity"] / sound, rtol=1e-12)
    assert_allclose(v["station_relative_mach"], v["station_relative_velocity"] / sound, rtol=1e-12)
    assert_allclose(v["station_axial_mach"], v["station_axial_velocity"] / sound, rtol=1e-12)
    # No rotor is next to the compressor outlet or the turbine inlet: no relative quantities there
    # (issue 19 item 3).
    n = int(v["stage_count"][0])
    lone = 2 * n if base["machine"] == "compressor" else 0
    for name in ("station_relative_tangential_velocity", "station_relative_velocity", "station_beta",
                 "station_relative_mach", "station_blade_speed"):
        assert np.isnan(v[name][0, lone]), name
        assert np.isfinite(np.delete(v[name][0, : 2 * n + 1], lone)).all(), name


@pytest.mark.parametrize("machine_name", ["compressor", "turbine"])
@pytest.mark.parametrize("fraction", [0.0, 0.3, 1.0])
def test_the_loss_split_shares_the_stage_entropy_rise(machine_name, fraction):
    # ds = cp ln(T0b/T0a) - R ln(p0b/p0a) between total states (Dixon & Hall 2014, ch. 2): the rotor's
    # share of each stage's rise is the fraction, the stator's the rest, and the stages chain end to end.
    base = COMPRESSOR if machine_name == "compressor" else TURBINE
    v = design(base, mean_radius=0.3, stages=4, rotor_loss_fraction=fraction).values
    cp, gamma = base["cp"], base["gamma"]
    r = cp * (gamma - 1) / gamma
    t0, p0 = v["station_total_temperature"][0], v["station_total_pressure"][0]
    entropy = cp * np.log(t0[1:] / t0[:-1]) - r * np.log(p0[1:] / p0[:-1])
    stage = entropy[0::2] + entropy[1::2]
    first, second = entropy[0::2], entropy[1::2]
    rotor = first if machine_name == "compressor" else second
    assert np.all(stage > 0)
    assert_allclose(rotor, fraction * stage, rtol=1e-9, atol=1e-12)
    assert_allclose(p0[-1], v["outlet_total_pressure"][0], rtol=1e-12)
    # Total temperature changes in the rotors only.
    stator = slice(1, None, 2) if machine_name == "compressor" else slice(0, None, 2)
    assert_allclose(np.diff(t0)[stator], 0.0, atol=1e-9)


# --- Agreement with the separate methods -------------------------------------------------------------


@pytest.mark.parametrize(("base", "layout"), CASES)
def test_the_split_is_the_stage_split_of_the_same_duty(base, layout):
    result = design(base, **layout, rule="equal_pressure_ratio")
    alone = split.evaluate_stage_split(base["machine"], "equal_pressure_ratio", base["pressure_ratio"],
                                       base["total_temperature"], base["total_pressure"], base["cp"], base["gamma"],
                                       polytropic_efficiency=0.9, stages=layout["stages"])
    for name in ("stage_pressure_ratio", "stage_work", "stage_isentropic_efficiency"):
        assert_allclose(result.values[name], alone.values[name], rtol=1e-12)
    for name in ("outlet_total_temperature", "outlet_total_pressure", "isentropic_efficiency"):
        assert_allclose(result.values[name], alone.values[name], rtol=1e-12)


@pytest.mark.parametrize(("base", "layout"), CASES)
def test_every_stage_has_the_triangles_of_its_own_duty(base, layout):
    # A stage's duty (flow coefficient, loading, kinematic reaction) is set at its rotor's design station
    # (compressor rotor inlet, turbine rotor exit) at that station's blade speed: there the triangles of
    # evaluate_stage_from_duty hold. With the mean radius held, the whole stage is that repeating stage.
    v = design(base, **layout, reaction=np.array([[0.5, 0.55, 0.6, 0.65, 0.7][: layout["stages"]]])).values
    n = layout["stages"]
    stage = triangles.evaluate_stage_from_duty(
        base["machine"], v["stage_flow_coefficient"][0, :n], v["stage_loading_coefficient"][0, :n],
        v["stage_kinematic_reaction"][0, :n], v["stage_blade_speed"][0, :n]).values
    beta = v["station_beta"][0]
    mean_held = "mean_radius" in layout
    if base["machine"] == "compressor":
        rotor_in, rotor_out = beta[0:2 * n:2], beta[1:2 * n:2]
        assert_allclose(rotor_in, stage["beta1"], rtol=1e-12)
        assert_allclose(v["station_blade_speed"][0, 0:2 * n:2], v["stage_blade_speed"][0, :n], rtol=1e-12)
        if mean_held:
            assert_allclose(rotor_out, stage["beta2"], rtol=1e-12)
            assert_allclose(v["station_alpha"][0, 1:2 * n:2], stage["alpha2"], rtol=1e-12)
    else:
        rotor_in, rotor_out = beta[1:2 * n:2], beta[2:2 * n + 1:2]
        assert_allclose(rotor_out, stage["beta3"], rtol=1e-12)
        assert_allclose(v["station_blade_speed"][0, 2:2 * n + 1:2], v["stage_blade_speed"][0, :n], rtol=1e-12)
        if mean_held:
            assert_allclose(rotor_in, stage["beta2"], rtol=1e-12)
    assert_allclose(v["stage_kinematic_reaction"][0, 1:n], [0.55, 0.6, 0.65, 0.7][: n - 1], rtol=1e-12)
    assert_allclose(stage["work"], v["stage_work"][0, :n], rtol=1e-12)


@pytest.mark.parametrize(("base", "layout"), CASES)
def test_stage_reaction_is_the_rotor_share_of_the_stage_static_enthalpy_change(base, layout):
    # Issue 19 item 2: reaction = static enthalpy change in the rotor / in the stage (DESIGN's definition;
    # Dixon & Hall 2014, ch. 4 and 5), written out here from the answer's static temperatures (cp constant).
    v = design(base, **layout).values
    n = int(v["stage_count"][0])
    t = v["station_static_temperature"][0]
    first, middle, last = t[0:2 * n:2], t[1:2 * n:2], t[2:2 * n + 1:2]
    if base["machine"] == "compressor":
        expected = (middle - first) / (last - first)
    else:
        expected = (middle - last) / (first - last)
    assert_allclose(v["stage_reaction"][0, :n], expected, rtol=1e-12)


def test_enthalpy_and_kinematic_reaction_agree_for_a_repeating_stage():
    # A repeating stage (same velocity at stage inlet and outlet, constant radius and axial velocity):
    # the enthalpy reaction is the kinematic 1 - (Vtheta1 + Vtheta2) / 2U (Dixon & Hall 2014, ch. 5,
    # derived from h0 = h + V^2/2 and Euler's equation). Mean radius held, one stage whose outlet swirl is
    # its inlet swirl: the stage is repeating.
    v = design(COMPRESSOR, stages=1, mean_radius=0.3, reaction=0.6, pressure_ratio=1.3).values
    assert_allclose(v["stage_kinematic_reaction"][0, 0], 0.6, rtol=1e-12)
    assert_allclose(v["stage_reaction"][0, 0], 0.6, rtol=1e-9)
    # With an outlet swirl other than the inlet's the stage is not repeating, and the two differ.
    v = design(COMPRESSOR, stages=1, mean_radius=0.3, reaction=0.6, pressure_ratio=1.3, outlet_swirl=0.0).values
    assert abs(v["stage_reaction"][0, 0] - 0.6) > 1e-3


@pytest.mark.parametrize("held", HELD, ids=lambda h: next(iter(h)))
def test_turbine_rows_are_the_zweifel_sizing_of_their_own_flow(held):
    v = design(TURBINE, stages=3, zweifel_coefficient=0.85, **held).values
    angles_in, angles_out = v["row_inlet_angle"][0], v["row_outlet_angle"][0]
    sized = zweifel.evaluate_zweifel_sizing(angles_in, angles_out, v["row_axial_chord"][0], v["row_mean_radius"][0],
                                            zweifel_coefficient=0.85)
    assert_array_equal(v["row_blade_count"][0], sized.values["blade_count"])
    assert_allclose(v["row_zweifel_coefficient"][0], sized.values["zweifel_coefficient_achieved"], rtol=1e-12)
    assert np.all(v["row_zweifel_coefficient"][0] <= 0.85 + 1e-12)
    # The rows' frames: stators absolute (alpha), rotors relative (beta), in flow order S1, R1, S2, ...
    assert_allclose(angles_in[0::2], v["station_alpha"][0, 0:-1:2], rtol=1e-12)
    assert_allclose(angles_out[1::2], v["station_beta"][0, 2::2], rtol=1e-12)
    # The aspect ratio is on axial chord: h / c_x per row kind.
    assert_allclose(v["row_blade_height"][0, 0::2] / v["row_axial_chord"][0, 0::2], 1.4, rtol=1e-12)
    assert_allclose(v["row_blade_height"][0, 1::2] / v["row_axial_chord"][0, 1::2], 1.8, rtol=1e-12)


@pytest.mark.parametrize("held", HELD, ids=lambda h: next(iter(h)))
def test_compressor_rows_are_the_diffusion_sizing_of_their_own_flow(held):
    # Each row in NASA SP-36's radius-change form between its stations' mean radii (issue 19 item 4), a
    # rotor's tangential term from the absolute swirl (the shaft speed).
    v = design(COMPRESSOR, stages=4, **held).values
    row = {name: v[name][0] for name in v if name.startswith(("row_", "station_"))}
    for kind, cols in (("rotor", slice(0, None, 2)), ("stator", slice(1, None, 2))):
        speed = {"shaft_speed": COMPRESSOR["shaft_speed"]} if kind == "rotor" else {}
        sized = diffusion.evaluate_diffusion_sizing(
            kind, row["station_axial_velocity"][:-1][cols], row["row_inlet_angle"][cols],
            row["row_outlet_angle"][cols], 0.45, chord=row["row_chord"][cols], mean_radius=row["row_mean_radius"][cols],
            outlet_axial_velocity=row["station_axial_velocity"][1:][cols],
            inlet_radius=row["station_mean_radius"][:-1][cols], outlet_radius=row["station_mean_radius"][1:][cols],
            **speed)
        assert_array_equal(row["row_blade_count"][cols], sized.values["blade_count"])
        assert_allclose(row["row_diffusion_factor"][cols], sized.values["diffusion_factor_achieved"], rtol=1e-12)
        assert_allclose(row["row_de_haller"][cols], sized.values["de_haller"], rtol=1e-12)
    # Solidity is true chord over pitch; the chord is the axial chord over the cosine of the stagger estimate.
    assert_allclose(row["row_solidity"], row["row_chord"] / row["row_pitch"], rtol=1e-12)
    stagger = 0.5 * (row["row_inlet_angle"] + row["row_outlet_angle"])
    assert_allclose(row["row_chord"], row["row_axial_chord"] / np.cos(np.radians(stagger)), rtol=1e-12)
    assert_allclose(row["row_pitch"] * row["row_blade_count"], 2 * np.pi * row["row_mean_radius"], rtol=1e-12)


def test_a_compressor_sized_by_solidity_gets_the_diffusion_factor_of_that_blade_count():
    v = design(COMPRESSOR, stages=3, mean_radius=0.3, target_diffusion_factor=None, solidity=1.3).values
    count = diffusion.blade_count_for_solidity(v["row_chord"][0], 0.3, 1.3)
    assert_array_equal(v["row_blade_count"][0], count)
    assert np.all(v["row_solidity"][0] >= 1.3 - 1e-12)
    analysed = diffusion.evaluate_diffusion_analysis(
        "rotor", v["station_axial_velocity"][0, 0], v["row_inlet_angle"][0, 0], v["row_outlet_angle"][0, 0],
        solidity=v["row_solidity"][0, 0])
    assert_allclose(v["row_diffusion_factor"][0, 0], analysed.values["diffusion_factor"], rtol=1e-12)


def test_solidity_checks_warn_outside_the_band_of_the_cascade_data():
    # Band 0.5 to 2.0: common practice (the low-speed cascade tests behind the diffusion-factor
    # limits span about this range).
    judged = checks.solidity_checks(np.array([0.3, 0.5, 1.2, 2.0, 2.6, np.nan]))
    assert judged["solidity_low"].status.tolist() == ["warn", "ok", "ok", "ok", "ok", "ok"]
    assert judged["solidity_high"].status.tolist() == ["ok", "ok", "ok", "ok", "warn", "ok"]
    assert judged["solidity_low"].basis == judged["solidity_high"].basis == checks.COMMON_PRACTICE


def test_compressor_rows_report_their_solidity_against_the_band():
    # The last stator turns the flow back to axial (outlet_swirl 0): sized for the same diffusion
    # factor as the others, it needs a solidity far above the band, which the check must flag.
    result = design(COMPRESSOR, stages=4, mean_radius=0.3, outlet_swirl=0.0)
    v = result.values
    assert v["row_solidity"][0, -1] > 2.0 and result.checks["stator_solidity_high"].status[0, -1] == "warn"
    for kind, cols in (("rotor", slice(0, None, 2)), ("stator", slice(1, None, 2))):
        solidity = v["row_solidity"][:, cols]
        low, high = result.checks[f"{kind}_solidity_low"], result.checks[f"{kind}_solidity_high"]
        assert_array_equal(low.value, solidity)
        assert_array_equal(low.status == "warn", solidity < 0.5)
        assert_array_equal(high.status == "warn", solidity > 2.0)


@pytest.mark.parametrize(("base", "stage_end"), [(COMPRESSOR, "alpha3"), (TURBINE, "alpha1")])
def test_one_stage_with_the_defaults_is_the_repeating_stage_of_the_triangles(base, stage_end):
    # With the mean radius held and no swirl given, a single stage leaves (compressor) or enters (turbine)
    # with the flow of a repeating stage, so every station equals the triangles method's.
    v = design(base, stages=1, mean_radius=0.3, pressure_ratio=1.4).values
    u = 2 * np.pi * 0.3 * base["shaft_speed"] / 60
    stage = triangles.evaluate_stage_from_duty(base["machine"], base["flow_coefficient"],
                                               v["stage_loading_coefficient"][0, 0], base["reaction"], u,
                                               v["station_total_temperature"][0, 0], base["total_pressure"],
                                               base["cp"], base["gamma"]).values
    assert_allclose(v["station_alpha"][0], [stage["alpha1"], stage["alpha2"], stage["alpha3"]], rtol=1e-12)
    assert_allclose(v["station_velocity"][0], [stage["V1"], stage["V2"], stage["V3"]], rtol=1e-12)
    assert_allclose(v["station_static_temperature"][0, 0], stage["T1"], rtol=1e-12)
    assert_allclose(v["station_density"][0, 0], stage["rho1"], rtol=1e-12)
    assert_allclose(v["stage_blade_speed"][0, 0], u, rtol=1e-12)


# --- Swirl, radii, counts -----------------------------------------------------------------------------


def test_a_compressor_inlet_swirl_sets_the_first_stage_reaction_and_the_outlet_swirl_the_last_stator():
    # V_theta1 = U (1 - R - psi/2) = V_x tan(alpha1), so R = 1 - psi/2 - phi tan(alpha1) (Dixon & Hall 2014,
    # ch. 5, derived here); the last stator turns to the outlet swirl.
    v = design(COMPRESSOR, stages=4, mean_radius=0.3, inlet_swirl=10.0, outlet_swirl=-5.0).values
    psi = v["stage_loading_coefficient"][0, 0]
    assert_allclose(v["stage_kinematic_reaction"][0, 0], 1 - psi / 2 - 0.5 * np.tan(np.radians(10.0)), rtol=1e-12)
    assert_allclose(v["stage_kinematic_reaction"][0, 1:4], 0.6, rtol=1e-12)
    assert_allclose(v["station_alpha"][0, 0], 10.0, rtol=1e-12)
    assert_allclose(v["station_alpha"][0, 8], -5.0, rtol=1e-12)
    # The stator between stages turns to the next rotor's inlet angle.
    stage2 = triangles.evaluate_stage_from_duty("compressor", 0.5, v["stage_loading_coefficient"][0, 1], 0.6,
                                                v["stage_blade_speed"][0, 1]).values
    assert_allclose(v["station_alpha"][0, 2], stage2["alpha1"], rtol=1e-12)


def test_a_turbine_inlet_swirl_is_the_first_nozzle_inlet_and_leaves_the_reactions():
    v = design(TURBINE, stages=2, mean_radius=0.3, inlet_swirl=0.0).values
    assert_allclose(v["station_alpha"][0, 0], 0.0, atol=1e-12)
    assert_allclose(v["stage_kinematic_reaction"][0, :2], 0.45, rtol=1e-12)


def test_with_the_hub_or_tip_held_each_stage_runs_at_the_mean_radius_of_its_rotors_low_swirl_station():
    for base, design_station in ((COMPRESSOR, 0), (TURBINE, 2)):
        for held in HELD[1:]:
            v = design(base, stages=3, **held).values
            stations = design_station + 2 * np.arange(3)
            assert_allclose(v["stage_mean_radius"][0, :3], v["station_mean_radius"][0, stations], rtol=1e-10)
            assert_allclose(v["stage_blade_speed"][0, :3],
                            2 * np.pi * v["stage_mean_radius"][0, :3] * base["shaft_speed"] / 60, rtol=1e-12)
            assert_allclose(v["station_axial_velocity"][0, stations],
                            v["stage_flow_coefficient"][0, :3] * v["stage_blade_speed"][0, :3], rtol=1e-12)


@pytest.mark.parametrize("held", HELD, ids=lambda h: next(iter(h)))
def test_a_loading_limit_gives_the_fewest_stages_at_their_own_blade_speeds(held):
    result = design(COMPRESSOR, max_loading_coefficient=0.35, **held)
    v = result.values
    n = int(v["stage_count"][0])
    assert np.max(trimmed(v, "stage_loading_coefficient")) <= 0.35 * (1 + 1e-9)
    fewer = design(COMPRESSOR, stages=n - 1, **held).values
    assert np.max(trimmed(fewer, "stage_loading_coefficient")) > 0.35


def test_rows_with_different_stage_counts_are_padded_and_per_stage_lists_are_taken_as_given():
    result = design(COMPRESSOR, mean_radius=0.3, stages=np.array([3, 4]), flow_coefficient=np.array([0.5, 0.55]))
    v = result.values
    assert_array_equal(v["stage_count"], [3, 4])
    assert v["station_alpha"].shape == (2, 9) and v["row_blade_count"].shape == (2, 8)
    assert np.all(np.isnan(v["station_alpha"][0, 7:])) and np.all(np.isfinite(v["station_alpha"][1]))
    assert_allclose(trimmed(v, "stage_flow_coefficient", 0), 0.5, rtol=1e-12)
    assert trimmed(v, "flowpath_x", 1).size == 16 and trimmed(v, "flowpath_x", 0).size == 12


def test_axial_layout_stacks_chords_and_gaps():
    v = design(TURBINE, stages=2, mean_radius=0.3, axial_gap=0.4).values
    chord = v["row_axial_chord"][0]
    assert_allclose(v["axial_length"][0], chord.sum() + 0.4 * chord[:-1].sum(), rtol=1e-12)
    assert_allclose(v["row_leading_edge"][0, 1:] - v["row_trailing_edge"][0, :-1], 0.4 * chord[:-1], rtol=1e-12)
    x, hub = v["flowpath_x"][0], v["flowpath_hub_radius"][0]
    assert_allclose(x[0::2], v["row_leading_edge"][0], rtol=1e-12)
    assert_allclose(hub[0::2], v["station_hub_radius"][0, :-1], rtol=1e-12)
    assert_allclose(hub[1::2], v["station_hub_radius"][0, 1:], rtol=1e-12)


# --- The published example ----------------------------------------------------------------------------


def test_saravanamuttoo_axial_compressor_design_example_annulus():
    # Saravanamuttoo, Rogers, Cohen, Straznicky & Nix, "Gas Turbine Theory", ch. 5, the axial compressor
    # design example (from memory): 20 kg/s of air at 288 K and 1.01 bar, pressure ratio 4.15, polytropic
    # efficiency 0.90, axial velocity 150 m/s through the machine, no inlet guide vanes (axial inflow) and
    # axial outflow, tip speed 350 m/s and hub-to-tip ratio 0.5 at the inlet. The book finds the inlet tip
    # radius 0.2262 m, root 0.1131 m, mean 0.1697 m (kept constant), N = 246 rev/s, and an outlet total
    # temperature of about 452 K; the outlet annulus of about 0.190 m tip and 0.149 m root radius (3 figures).
    # Differences: the book shares the temperature rise with work-done factors and a chosen spread of
    # stage temperature rises; neither changes the end states, which depend only on the polytropic
    # efficiency and the axial velocity at the two ends (the stage count, 7 here, does not enter them).
    speed = 350.0 / (2 * np.pi * 0.2262) * 60.0
    u_mean = 2 * np.pi * 0.1697 * speed / 60.0
    result = machine.evaluate_machine_design(
        "compressor", 20.0, 288.0, 1.01e5, 4.15, speed, 0.90, 150.0 / u_mean, 0.5, 3.0, 3.0, mean_radius=0.1697,
        stages=7, inlet_swirl=0.0, target_diffusion_factor=0.45)
    v = result.values
    assert reasons(result) == [None]
    assert_allclose(speed / 60.0, 246.0, atol=0.5)
    assert_allclose(v["station_axial_velocity"][0], 150.0, rtol=1e-12)
    assert_allclose(v["station_tip_radius"][0, 0], 0.2262, atol=5e-4)
    assert_allclose(v["station_hub_radius"][0, 0], 0.1131, atol=5e-4)
    assert_allclose(v["station_hub_to_tip_ratio"][0, 0], 0.5, atol=2e-3)
    assert_allclose(v["outlet_total_temperature"][0], 452.0, atol=1.0)
    assert_allclose(v["outlet_total_pressure"][0], 4.19e5, rtol=2e-3)
    assert_allclose(v["station_tip_radius"][0, -1], 0.190, atol=1e-3)
    assert_allclose(v["station_hub_radius"][0, -1], 0.149, atol=1e-3)


# --- Failures -------------------------------------------------------------------------------------------


def test_cases_the_layout_cannot_close_fail_naming_the_station_and_the_quantity():
    # A mean radius of 5 cm cannot hold the inlet annulus; an axial velocity of 2.5 U (942 m/s) is faster
    # than the inlet's total temperature allows.
    result = design(COMPRESSOR, stages=3, mean_radius=np.array([0.3, 0.05, 0.3]),
                    flow_coefficient=np.array([0.5, 0.5, 2.5]))
    assert reasons(result) == [
        None,
        "station 1: the hub radius is at or below zero (the annulus needs more area than the held mean radius "
        "allows)",
        "station 1: the static temperature is at or below zero (the flow is faster than its total temperature "
        "allows)",
    ]
    assert np.all(np.isnan(result.values["station_alpha"][1:])) and result.values["stage_count"][1] == 0
    assert np.all(np.isfinite(result.values["station_alpha"][0]))


def test_a_choked_annulus_names_the_station_where_the_axial_mach_number_reaches_one():
    # A high flow coefficient at a high blade speed: the axial Mach number passes 1 at the inlet.
    result = design(COMPRESSOR, stages=2, mean_radius=0.3, flow_coefficient=1.1, shaft_speed=20000.0)
    assert reasons(result)[0] == "station 1: the axial Mach number reaches 1 (choked annulus)"


def test_no_stage_count_within_the_maximum_is_a_per_case_failure():
    result = design(COMPRESSOR, mean_radius=0.3, max_stage_pressure_ratio=np.array([1.3, 1.01]))
    found = reasons(result)
    assert found[0] is None
    assert found[1] == f"no stage count up to {split.MAX_STAGES} keeps every stage's pressure ratio within " \
                       "max_stage_pressure_ratio"


def test_a_tip_radius_too_small_for_the_flow_names_the_stage_and_station():
    result = design(COMPRESSOR, stages=2, tip_radius=0.12)
    assert reasons(result)[0].startswith("stage 1: no annulus with the tip radius held passes the mass flow at "
                                         "station 1")


def test_a_per_stage_list_of_the_wrong_length_names_the_input():
    result = design(COMPRESSOR, mean_radius=0.3, stages=np.array([3, 2]), reaction=np.array([[0.5, 0.6, 0.7]]))
    assert reasons(result) == [None, "reaction has a different number of entries than the machine has stages (2)"]


def test_an_unreachable_diffusion_factor_names_the_row():
    result = design(COMPRESSOR, stages=2, mean_radius=0.3, target_diffusion_factor=0.05)
    assert reasons(result)[0].startswith("row 1 (rotor 1): no solidity reaches the target diffusion factor")


def test_unreachable_targets_in_cases_of_different_stage_counts_state_each_row_own_minimum():
    # Cases 0 and 2 have the same flow, so case 0's rotor-1 V2/V1 gives case 2's smallest reachable
    # factor 1 - V2/V1; case 1 has three stages and is laid out apart from them.
    result = design(COMPRESSOR, mean_radius=0.3, stages=np.array([2, 3, 2]),
                    target_diffusion_factor=np.array([0.6, 0.6, 0.05]))
    found = reasons(result)
    assert found[:2] == [None, None]
    smallest = 1.0 - result.values["row_de_haller"][0, 0]
    assert found[2] == "row 1 (rotor 1): " + diffusion.unreachable_target_reason(round(smallest, 3))


def test_invalid_options_raise():
    with pytest.raises(ValueError, match="give exactly one of \\('mean_radius', 'hub_radius', 'tip_radius'\\)"):
        design(COMPRESSOR, stages=2, mean_radius=0.3, hub_radius=0.2)
    with pytest.raises(ValueError, match="apply only to a compressor"):
        design(TURBINE, stages=2, mean_radius=0.3, outlet_swirl=0.0)
    with pytest.raises(ValueError, match="rule must be one of"):
        design(COMPRESSOR, stages=2, mean_radius=0.3, rule="even")


# --- The pieces ------------------------------------------------------------------------------------------


@pytest.mark.parametrize("held", annulus.RADII_HELD)
def test_annulus_from_area_is_the_inverse_of_the_ring_area(held):
    radius = {"mean": 0.3, "hub": 0.25, "tip": 0.35}[held]
    ring = annulus.annulus_from_area(np.array([0.01, 0.1]), held, radius)
    assert_allclose(np.pi * (ring["tip_radius"] ** 2 - ring["hub_radius"] ** 2), [0.01, 0.1], rtol=1e-12)
    assert_allclose(ring[f"{held}_radius"], radius, rtol=1e-12)


def test_annulus_with_the_tip_held_has_no_hub_beyond_the_whole_disc():
    ring = annulus.annulus_from_area(np.pi * 0.2**2 * 1.01, "tip", 0.2)
    assert np.isnan(ring["hub_radius"])


def test_hub_to_tip_ratio_for_flow_finds_the_shortest_blade_that_passes_it():
    # A flow needing an area of 0.05 m^2 whatever the radius: the annulus is the closed form's.
    ratio = annulus.hub_to_tip_ratio_for_flow("tip", np.array([0.3, 0.2]),
                                              lambda ring, which: ring["area"] / 0.05)
    assert_allclose(ratio, np.sqrt(1 - 0.05 / (np.pi * np.array([0.3, 0.2]) ** 2)), rtol=1e-10)


def test_hub_to_tip_ratio_near_a_guess_is_the_closed_form_and_falls_back_without_one():
    # The same closed-form annulus (A = pi r_t^2 (1 - x^2), derived here) from a guess near the root, far from
    # it, and with no guess (NaN: the scan from short blades takes over); a flow no annulus passes gives NaN.
    tip = np.array([0.3, 0.2, 0.25, 0.25])
    expected = np.sqrt(1 - 0.05 / (np.pi * tip ** 2))
    expected[3] = np.nan
    needed = np.array([0.05, 0.05, 0.05, 1.0])
    ratio = annulus.hub_to_tip_ratio_near("tip", tip, lambda ring, which: ring["area"] / needed[which],
                                          np.array([0.8, 0.1, np.nan, 0.5]))
    assert_allclose(ratio, expected, rtol=1e-10)


def test_flowpath_row_mean_and_layout():
    assert_allclose(flowpath.row_mean([1.0, 3.0, 7.0]), [2.0, 5.0])
    layout = flowpath.axial_layout(np.array([0.02, 0.03, 0.04]), 0.5)
    assert_allclose(layout["leading_edge"], [0.0, 0.03, 0.075])
    assert_allclose(layout["station_position"], [0.0, 0.025, 0.0675, 0.115])


# --- Properties ------------------------------------------------------------------------------------------


@settings(max_examples=80, deadline=None)
@given(
    base=st.sampled_from([COMPRESSOR, TURBINE]),
    held=st.sampled_from(HELD),
    stages=st.integers(1, 6),
    phi=st.floats(0.35, 0.9),
    reaction=st.floats(0.3, 0.7),
    speed=st.floats(8000.0, 15000.0),
    fraction=st.floats(0.0, 1.0),
)
def test_every_closed_layout_conserves_mass_and_work(base, held, stages, phi, reaction, speed, fraction):
    # Whatever the duty and whichever radius is held, a case either fails with a reason or closes
    # (issue 13): continuity at every station, each stage's Euler work from the answer's own station radii
    # (U = Omega r at each station) equal to its work and adding up to the machine's total temperature
    # change, and the rothalpy h + W^2/2 - U^2/2 the same on both sides of every rotor (all derived here).
    result = design(base, stages=stages, flow_coefficient=phi, reaction=reaction, shaft_speed=speed,
                    rotor_loss_fraction=fraction, **held)
    found = reasons(result)[0]
    v = result.values
    if found is not None:
        assert v["stage_count"][0] == 0 and np.all(np.isnan(v["station_alpha"]))
        return
    flow = v["station_density"] * v["station_axial_velocity"] * v["station_area"]
    assert_allclose(flow, base["mass_flow"], rtol=1e-10)
    ring = np.pi * (v["station_tip_radius"] ** 2 - v["station_hub_radius"] ** 2)
    assert_allclose(ring, v["station_area"], rtol=1e-9)
    n = stages
    swirl = v["station_tangential_velocity"][0]
    u = station_blade_speeds(v, speed)
    inlet, outlet = rotor_station_pairs(base["machine"], n)
    euler = np.abs(u[outlet] * swirl[outlet] - u[inlet] * swirl[inlet])
    assert_allclose(euler, v["stage_work"][0, :n], rtol=1e-9)
    assert_allclose(euler.sum(), base["cp"] * abs(v["outlet_total_temperature"][0] - base["total_temperature"]),
                    rtol=1e-9)
    rothalpy = base["cp"] * v["station_static_temperature"][0] + v["station_relative_velocity"][0] ** 2 / 2 - u ** 2 / 2
    assert_allclose(rothalpy[outlet], rothalpy[inlet], rtol=1e-9)
    assert np.all(v["station_axial_mach"] < 1) and np.all(v["station_hub_radius"] > 0)


@settings(max_examples=40, deadline=None)
@given(
    base=st.sampled_from([COMPRESSOR, TURBINE]),
    held=st.sampled_from(HELD),
    stages=st.integers(1, 5),
    length=st.sampled_from([1e-3, 0.37, 1.0, 25.0, 1e3]),
    temperature=st.sampled_from([1e-2, 0.5, 1.0, 3.0, 1e2]),
    pressure=st.sampled_from([1e-6, 1e-2, 1.0, 40.0, 1e6]),
)
def test_dimensionless_answers_do_not_depend_on_the_scale(base, held, stages, length, temperature, pressure):
    # Issue 13: dimensionless outputs are invariant under the scalings the physics has (derived here).
    # Lengths x L; total temperature x tau, so every velocity (V^2 ~ cp T) and the blade speed scale with
    # sqrt(tau): shaft speed x sqrt(tau) / L; total pressure x P, so density scales as P / tau and the mass
    # flow rho V A as P L^2 / sqrt(tau). Angles, Mach numbers, ratios, coefficients and blade counts stay.
    scaled = {name: value * length for name, value in held.items()}
    result = design(base, stages=stages, **held)
    other = design(base, stages=stages, **scaled, total_temperature=base["total_temperature"] * temperature,
                   total_pressure=base["total_pressure"] * pressure,
                   shaft_speed=base["shaft_speed"] * np.sqrt(temperature) / length,
                   mass_flow=base["mass_flow"] * pressure * length ** 2 / np.sqrt(temperature))
    assert reasons(other) == reasons(result)
    v, w = result.values, other.values
    assert_array_equal(w["stage_count"], v["stage_count"])
    for name in ("station_alpha", "station_beta", "station_mach", "station_relative_mach", "station_axial_mach",
                 "station_hub_to_tip_ratio", "stage_pressure_ratio", "stage_loading_coefficient",
                 "stage_flow_coefficient", "stage_reaction", "stage_kinematic_reaction", "row_solidity",
                 "row_de_haller", "isentropic_efficiency", "row_stagger"):
        assert_allclose(w[name], v[name], rtol=1e-9, atol=1e-9, err_msg=name)
    judged = "row_diffusion_factor" if base["machine"] == "compressor" else "row_zweifel_coefficient"
    assert_allclose(w[judged], v[judged], rtol=1e-9, atol=1e-12)
    assert_array_equal(w["row_blade_count"], v["row_blade_count"])
    assert_allclose(w["station_mean_radius"], v["station_mean_radius"] * length, rtol=1e-9)
    assert_allclose(w["station_static_temperature"], v["station_static_temperature"] * temperature, rtol=1e-9)
    assert_allclose(w["station_static_pressure"], v["station_static_pressure"] * pressure, rtol=1e-9)
