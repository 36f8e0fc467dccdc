"""Zweifel coefficient, pitch and blade count.

Sources: Zweifel, O. (1945), Brown Boveri Review 32(12) (the definition: actual over ideal
tangential force); Dixon, S. L. and Hall, C. A. (2014), 7th ed., ch. 3 (the incompressible
form, recalled from memory); NACA Report 1135 (1953) (isentropic relations, Table I values
and the impact-pressure series, recalled from memory). Most checks re-derive the
coefficient independently here from the force balance on one blade pitch.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose, assert_array_equal

from service.core import zweifel

GAMMA = 1.4


def force_balance_incompressible(inlet_angle, outlet_angle, pitch, axial_chord, density=1.2, vx=120.0):
    """Actual over ideal tangential force per unit span, incompressible and loss-free.

    Zweifel (1945): actual force from the momentum change over one pitch, ideal force from
    inlet total pressure on the pressure side and outlet static pressure on the suction
    side over the axial chord; incompressible, p01 - p2 is the outlet dynamic head.
    """
    v_theta_in = vx * np.tan(np.radians(inlet_angle))
    v_theta_out = vx * np.tan(np.radians(outlet_angle))
    actual = density * vx * pitch * np.abs(v_theta_in - v_theta_out)
    ideal = 0.5 * density * (vx**2 + v_theta_out**2) * axial_chord
    return actual / ideal


def force_balance_compressible(inlet_angle, outlet_angle, pitch, axial_chord, outlet_mach,
                               total_temperature, total_pressure, cp, gamma):
    """The same force ratio for a perfect gas expanding loss-free to ``outlet_mach``.

    Outlet static state from the inlet total state (NACA Report 1135, eq. 43-44), axial
    velocity constant across the row.
    """
    gas_constant = cp * (gamma - 1.0) / gamma
    temperature = total_temperature / (1.0 + 0.5 * (gamma - 1.0) * outlet_mach**2)
    pressure = total_pressure * (temperature / total_temperature) ** (gamma / (gamma - 1.0))
    density = pressure / (gas_constant * temperature)
    speed = outlet_mach * np.sqrt(gamma * gas_constant * temperature)
    vx = speed * np.cos(np.radians(outlet_angle))
    v_theta_out = speed * np.sin(np.radians(outlet_angle))
    v_theta_in = vx * np.tan(np.radians(inlet_angle))
    actual = density * vx * pitch * np.abs(v_theta_in - v_theta_out)
    ideal = (total_pressure - pressure) * axial_chord
    return actual / ideal


ROWS = [
    (0.0, 70.0),  # nozzle with axial inlet
    (-10.0, 65.0),  # nozzle with some inlet swirl against the turning
    (40.0, -60.0),  # rotor, relative angles beta2, beta3
    (-40.0, 60.0),  # the same rotor mirrored
    (30.0, 10.0),  # a decelerating row: computable, though the optimum does not apply
]


@pytest.mark.parametrize(("inlet", "outlet"), ROWS)
def test_incompressible_definition_is_the_force_ratio(inlet, outlet):
    pitch, chord = 0.031, 0.027
    expected = force_balance_incompressible(inlet, outlet, pitch, chord)
    assert_allclose(zweifel.zweifel_coefficient(inlet, outlet, pitch / chord), expected, rtol=1e-12)


def test_axial_inlet_reduces_to_sine_of_twice_the_outlet_angle():
    # 2 cos^2(a) tan(a) = sin(2a): the usual nozzle form (Dixon & Hall, ch. 3, from memory).
    outlet = np.array([50.0, 60.0, 70.0, 75.0])
    assert_allclose(zweifel.zweifel_coefficient(0.0, outlet, 1.1), 1.1 * np.sin(np.radians(2 * outlet)),
                    rtol=1e-12)


def test_angles_on_opposite_sides_add_as_in_the_textbook_form():
    # Dixon & Hall (2014), ch. 3 (from memory): Z = 2 (s/b) cos^2(a2) (tan a1 + tan a2) with
    # a1 and a2 measured on opposite sides of the axial direction. beta2 = +40, beta3 = -60.
    textbook = 2 * 0.7 * np.cos(np.radians(60)) ** 2 * (np.tan(np.radians(40)) + np.tan(np.radians(60)))
    assert_allclose(zweifel.zweifel_coefficient(40.0, -60.0, 0.7), textbook, rtol=1e-12)
    # Same-side subtraction would give about a third of it: the signs matter.
    assert zweifel.zweifel_coefficient(40.0, -60.0, 0.7) > 2.5 * zweifel.zweifel_coefficient(40.0, 60.0, 0.7)


@pytest.mark.parametrize(("inlet", "outlet"), ROWS)
@pytest.mark.parametrize("mach", [0.2, 0.6, 0.95, 1.2])
@pytest.mark.parametrize(("total_temperature", "total_pressure", "cp", "gamma"),
                         [(1600.0, 1.6e6, 1148.0, 1.333), (300.0, 1.0e5, 1005.0, 1.4)])
def test_compressible_definition_is_the_force_ratio(inlet, outlet, mach, total_temperature,
                                                     total_pressure, cp, gamma):
    # Different total states and cp give the same coefficient: they cancel in the ratio.
    pitch, chord = 0.05, 0.04
    expected = force_balance_compressible(inlet, outlet, pitch, chord, mach, total_temperature,
                                          total_pressure, cp, gamma)
    actual = zweifel.zweifel_coefficient_compressible(inlet, outlet, pitch / chord, mach, gamma)
    assert_allclose(actual, expected, rtol=1e-11)
    p2 = total_pressure * (1 + 0.5 * (gamma - 1) * mach**2) ** (-gamma / (gamma - 1))
    from_pressure = zweifel.zweifel_coefficient_compressible_from_pressure(
        inlet, outlet, pitch / chord, total_pressure, p2, gamma)
    assert_allclose(from_pressure, expected, rtol=1e-11)


def test_specification_example():
    # Check value from the specification (not a published case): nozzle 0 -> 70 deg,
    # cx 0.040 m, r_m 0.35 m, target 0.8 -> s/cx 1.2446, 45 blades rounded up, Zw 0.785.
    result = zweifel.evaluate_zweifel_sizing(0.0, 70.0, 0.040, 0.35)
    assert_allclose(result.values["pitch_to_axial_chord"], 1.2446, atol=5e-5)
    assert result.values["blade_count"].dtype == np.int64
    assert_array_equal(result.values["blade_count"], 45)
    assert_allclose(result.values["pitch"], 2 * np.pi * 0.35 / 45, rtol=1e-12)
    assert_allclose(result.values["zweifel_coefficient_achieved"], 0.785, atol=5e-4)
    assert not result.failed().any()
    assert_array_equal(result.checks["zweifel_high"].status, "ok")
    assert_array_equal(result.checks["zweifel_low"].status, "ok")


def test_aspect_ratio_gives_the_axial_chord():
    # Definition of the aspect ratio on axial chord: h / cx.
    assert_allclose(zweifel.axial_chord_from_aspect_ratio(0.12, 3.0), 0.040, rtol=1e-12)
    chord = zweifel.axial_chord_from_aspect_ratio(0.12, 3.0)
    assert_array_equal(zweifel.evaluate_zweifel_sizing(0.0, 70.0, chord, 0.35).values["blade_count"], 45)
    assert np.isnan(zweifel.axial_chord_from_aspect_ratio([0.1, -0.1], [0.0, 2.0])).all()


@pytest.mark.parametrize(("inlet", "outlet"), [(0.0, 70.0), (40.0, -60.0), (-40.0, 60.0), (5.0, -72.0)])
def test_sizing_then_analysis_gives_back_the_target(inlet, outlet):
    chord, radius, target = 0.035, 0.42, 0.83
    sized = zweifel.evaluate_zweifel_sizing(inlet, outlet, chord, radius, target).values
    exact_pitch = sized["pitch_to_axial_chord"] * chord
    # Before rounding: the force balance at the unrounded pitch is the target.
    assert_allclose(force_balance_incompressible(inlet, outlet, exact_pitch, chord), target, rtol=1e-12)
    back = zweifel.evaluate_zweifel_analysis(inlet, outlet, chord, pitch=exact_pitch).values
    assert_allclose(back["zweifel_coefficient"], target, rtol=1e-12)
    # After rounding: analysing the blade count gives the achieved value.
    counted = zweifel.evaluate_zweifel_analysis(
        inlet, outlet, chord, blade_count=sized["blade_count"], mean_radius=radius).values
    assert_allclose(counted["zweifel_coefficient"], sized["zweifel_coefficient_achieved"], rtol=1e-12)
    assert_allclose(counted["pitch"], sized["pitch"], rtol=1e-12)


def test_rotor_and_stator_signs():
    # Force balance with signed tangential velocities (Zweifel 1945; Dixon & Hall ch. 3).
    chord, radius = 0.03, 0.30
    for inlet, outlet in [(0.0, 70.0), (40.0, -60.0)]:
        sized = zweifel.evaluate_zweifel_sizing(inlet, outlet, chord, radius).values
        assert_allclose(force_balance_incompressible(inlet, outlet, sized["pitch"], chord),
                        sized["zweifel_coefficient_achieved"], rtol=1e-12)
        flipped = zweifel.evaluate_zweifel_sizing(-inlet, -outlet, chord, radius).values
        for name in sized:
            assert_allclose(flipped[name], sized[name], rtol=1e-14)
    rotor = zweifel.evaluate_zweifel_sizing(40.0, -60.0, chord, radius).values
    # The rotor turns through 100 deg: |tan 40 + tan 60| = 2.5712 (not tan 60 - tan 40).
    assert_allclose(rotor["pitch_to_axial_chord"],
                    0.8 / (2 * 0.25 * (np.tan(np.radians(40)) + np.tan(np.radians(60)))), rtol=1e-12)


def test_rounding_modes():
    chord = 0.04
    radius = np.linspace(0.2, 0.6, 41)
    inlet, outlet = 0.0, 70.0
    results = {mode: zweifel.evaluate_zweifel_sizing(inlet, outlet, chord, radius, rounding=mode).values
               for mode in zweifel.ROUNDINGS}
    exact = 2 * np.pi * radius / (results["up"]["pitch_to_axial_chord"] * chord)
    up = results["up"]["blade_count"]
    assert (up >= exact).all() and (up - exact < 1).all()
    assert (results["up"]["zweifel_coefficient_achieved"] <= 0.8).all()
    even = results["even_up"]["blade_count"]
    assert (even % 2 == 0).all() and (even >= up).all() and (even - up <= 1).all()
    nearest = results["nearest"]["blade_count"]
    assert (np.abs(nearest - exact) <= 0.5).all()
    for values in results.values():
        assert values["blade_count"].dtype == np.int64
        assert_allclose(values["zweifel_coefficient_achieved"], 0.8 * exact / values["blade_count"],
                        rtol=1e-12)


def test_round_off_does_not_add_a_blade():
    # A radius chosen so that exactly 40 blades give the target pitch.
    ratio = zweifel.pitch_to_axial_chord_for_zweifel(0.0, 70.0, 0.8)
    radius = 40 * ratio * 0.04 / (2 * np.pi)
    for mode, count in (("up", 40), ("nearest", 40), ("even_up", 40)):
        assert_array_equal(zweifel.blade_count_for_pitch(radius, ratio * 0.04, mode), count)
    assert_array_equal(zweifel.blade_count_for_pitch(radius * 41 / 40, ratio * 0.04, "even_up"), 42)


def test_compressible_tends_to_incompressible_at_low_mach():
    # f = 1 - M^2/4 + O(M^4) (NACA Report 1135 impact-pressure series): at M = 0.05 the
    # definitions differ by 6.3e-4, so they must agree within 1e-3 and differ by more than 5e-4.
    inc = zweifel.zweifel_coefficient(0.0, 70.0, 1.2446)
    comp = zweifel.zweifel_coefficient_compressible(0.0, 70.0, 1.2446, 0.05, GAMMA)
    assert_allclose(comp, inc, rtol=1e-3)
    assert inc - comp > 5e-4 * inc
    mach = np.array([0.05, 0.3, 0.5, 0.7, 0.9, 1.0, 1.3])
    difference = inc - zweifel.zweifel_coefficient_compressible(0.0, 70.0, 1.2446, mach, GAMMA)
    assert (np.diff(difference) > 0).all()


@pytest.mark.parametrize("mach", [0.1, 0.3, 0.5])
def test_compressibility_factor_matches_the_impact_pressure_series(mach):
    # NACA Report 1135 (from memory): (p0 - p)/q = 1 + M^2/4 + (2 - g) M^4/24
    # + (2 - g)(3 - 2g) M^6/192 + ...; truncation below 1e-4 at M = 0.5.
    g = GAMMA
    series = 1 + mach**2 / 4 + (2 - g) * mach**4 / 24 + (2 - g) * (3 - 2 * g) * mach**6 / 192
    assert_allclose(zweifel.compressibility_factor(mach, g), 1 / series, rtol=1e-4)


@pytest.mark.parametrize(("mach", "pressure_ratio"),
                         [(0.3, 0.9395), (0.5, 0.8430), (0.7, 0.7209), (0.9, 0.5913), (1.0, 0.5283)])
def test_outlet_mach_from_pressure_matches_naca_1135_table(mach, pressure_ratio):
    # NACA Report 1135, Table I, gamma = 1.4, p/p0 to four places (from memory); the
    # rounding of p/p0 (5e-5) moves M by at most 2e-4 here.
    assert_allclose(zweifel.outlet_mach_from_pressure(1.0, pressure_ratio, GAMMA), mach, atol=2.5e-4)


def test_documented_table_of_the_two_definitions():
    # The figures in the module Notes, recomputed from the force balance above (T0 1200 K,
    # p0 10 bar: any total state gives the same ratio).
    mach = np.array([0.05, 0.3, 0.5, 0.7, 0.9, 1.0])
    documented_factor = np.array([0.99938, 0.9778, 0.9398, 0.8861, 0.8202, 0.7839])
    documented_zw = np.array([0.7995, 0.7822, 0.7518, 0.7089, 0.6562, 0.6271])
    documented_ratio = np.array([1.2454, 1.2728, 1.3243, 1.4046, 1.5174, 1.5876])
    documented_count = np.array([45, 44, 42, 40, 37, 35])
    pitch_ratio = zweifel.pitch_to_axial_chord_for_zweifel(0.0, 70.0, 0.8)
    assert_allclose(pitch_ratio, 1.2446, atol=5e-5)
    zw = force_balance_compressible(0.0, 70.0, pitch_ratio, 1.0, mach, 1200.0, 1.0e6, 1005.0, GAMMA)
    assert_allclose(zw, documented_zw, atol=5e-5)
    assert_allclose(zw / 0.8, documented_factor, atol=5e-5)
    sized = zweifel.evaluate_zweifel_sizing(0.0, 70.0, 0.040, 0.35, definition="compressible",
                                            outlet_mach=mach, gamma=GAMMA).values
    assert_allclose(sized["pitch_to_axial_chord"], documented_ratio, atol=5e-5)
    assert_array_equal(sized["blade_count"], documented_count)
    achieved = force_balance_compressible(0.0, 70.0, sized["pitch"], 0.040, mach, 1200.0, 1.0e6, 1005.0,
                                          GAMMA)
    assert_allclose(achieved, sized["zweifel_coefficient_achieved"], rtol=1e-11)


def test_mach_and_pressure_paths_agree_in_evaluate():
    p01 = 4.0e5
    p2 = np.array([3.9e5, 3.0e5, 2.1e5, 1.5e5])
    mach = zweifel.outlet_mach_from_pressure(p01, p2, 1.333)
    kwargs = dict(definition="compressible", gamma=1.333)
    from_pressure = zweifel.evaluate_zweifel_sizing(10.0, -65.0, 0.05, 0.5, inlet_total_pressure=p01,
                                                    outlet_pressure=p2, **kwargs).values
    from_mach = zweifel.evaluate_zweifel_sizing(10.0, -65.0, 0.05, 0.5, outlet_mach=mach, **kwargs).values
    for name in from_mach:
        assert_allclose(from_pressure[name], from_mach[name], rtol=1e-12)
    analysed = zweifel.evaluate_zweifel_analysis(10.0, -65.0, 0.05, blade_count=from_mach["blade_count"],
                                                 mean_radius=0.5, inlet_total_pressure=p01,
                                                 outlet_pressure=p2, **kwargs).values
    assert_allclose(analysed["zweifel_coefficient"], from_mach["zweifel_coefficient_achieved"], rtol=1e-12)
    assert_allclose(analysed["outlet_mach"], mach, rtol=1e-12)


def test_no_turning_and_angles_beyond_90_are_failures():
    inlet = np.array([70.0, 0.0, 90.0, -95.0, 10.0, np.nan])
    outlet = np.array([70.0, 90.0, 60.0, 60.0, -89.0, 60.0])
    result = zweifel.evaluate_zweifel_sizing(inlet, outlet, 0.04, 0.35)
    failed = np.array([True, True, True, True, False, True])
    assert_array_equal(result.failed(), failed)
    assert_array_equal(result.values["blade_count"][failed], 0)
    for name in ("pitch_to_axial_chord", "pitch", "zweifel_coefficient_achieved"):
        assert np.isnan(result.values[name][failed]).all()
        assert np.isfinite(result.values[name][~failed]).all()
    reasons = {reason: mask for reason, mask in result.failures}
    assert_array_equal(reasons[zweifel.NO_TURNING_REASON], [True] + [False] * 5)
    assert_array_equal(reasons[zweifel.ANGLE_REASON], [False, True, True, True, False, True])
    # The explicit functions give NaN rather than an infinite or huge pitch.
    assert np.isnan(zweifel.pitch_to_axial_chord_for_zweifel(inlet[:4], outlet[:4], 0.8)).all()
    assert np.isnan(zweifel.zweifel_coefficient(90.0, 0.0, 1.0))

    analysis = zweifel.evaluate_zweifel_analysis(inlet, outlet, 0.04, pitch=0.05)
    assert_array_equal(analysis.failed(), [False, True, True, True, False, True])
    # A row without turning carries no load: 0, flagged by the low-loading check.
    assert_allclose(analysis.values["zweifel_coefficient"][0], 0.0, atol=0)
    assert analysis.checks["zweifel_low"].status[0] == "warn"


def test_other_impossible_inputs_are_failures():
    result = zweifel.evaluate_zweifel_sizing(0.0, 70.0, [0.04, -0.04, 0.04, 0.04], [0.35, 0.35, 0.0, 0.35],
                                             [0.8, 0.8, 0.8, 0.0])
    assert_array_equal(result.failed(), [False, True, True, True])
    assert_array_equal(result.values["blade_count"], [45, 0, 0, 0])
    comp = zweifel.evaluate_zweifel_sizing(0.0, 70.0, 0.04, 0.35, definition="compressible",
                                           inlet_total_pressure=1e5, outlet_pressure=[5e4, 1e5, 2e5, -1.0])
    assert_array_equal(comp.failed(), [False, True, True, True])
    assert np.isnan(comp.values["pitch"][1:]).all()
    mach = zweifel.evaluate_zweifel_sizing(0.0, 70.0, 0.04, 0.35, definition="compressible",
                                           outlet_mach=[0.5, 0.0, -0.5])
    assert_array_equal(mach.failed(), [False, True, True])
    counted = zweifel.evaluate_zweifel_analysis(0.0, 70.0, 0.04, blade_count=[45, 0, 2.5, -3],
                                                mean_radius=0.35)
    assert_array_equal(counted.failed(), [False, True, True, True])
    assert_array_equal(zweifel.blade_count_for_pitch(0.35, [0.0, -1.0, np.inf, 1e-300]), 0)


def test_design_checks():
    # Limits: optimum about 0.8, Zweifel (1945); 1.0-1.1 high-lift range and 0.6 floor,
    # common practice (the contract's design-check table).
    checks = zweifel.zweifel_checks([0.5, 0.65, 0.8, 1.05, 1.2])
    assert_array_equal(checks["zweifel_high"].status, ["ok", "ok", "ok", "warn", "fail"])
    assert_array_equal(checks["zweifel_low"].status, ["warn", "ok", "ok", "ok", "ok"])
    assert "Zweifel (1945)" in checks["zweifel_high"].basis
    assert checks["zweifel_low"].basis == "common practice"


def test_invalid_options_raise():
    with pytest.raises(ValueError, match="rounding"):
        zweifel.evaluate_zweifel_sizing(0.0, 70.0, 0.04, 0.35, rounding="down")
    with pytest.raises(ValueError, match="definition"):
        zweifel.evaluate_zweifel_sizing(0.0, 70.0, 0.04, 0.35, definition="exact")
    with pytest.raises(ValueError, match="outlet_mach"):
        zweifel.evaluate_zweifel_sizing(0.0, 70.0, 0.04, 0.35, definition="compressible")
    with pytest.raises(ValueError, match="outlet_mach"):
        zweifel.evaluate_zweifel_sizing(0.0, 70.0, 0.04, 0.35, definition="compressible", outlet_mach=0.5,
                                        inlet_total_pressure=1e5, outlet_pressure=8e4)
    with pytest.raises(ValueError, match="outlet_mach"):
        zweifel.evaluate_zweifel_sizing(0.0, 70.0, 0.04, 0.35, definition="compressible",
                                        outlet_pressure=8e4)
    with pytest.raises(ValueError, match="compressible"):
        zweifel.evaluate_zweifel_sizing(0.0, 70.0, 0.04, 0.35, outlet_mach=0.5)
    with pytest.raises(ValueError, match="pitch, or blade_count and mean_radius"):
        zweifel.evaluate_zweifel_analysis(0.0, 70.0, 0.04, pitch=0.05, blade_count=40, mean_radius=0.3)
    with pytest.raises(ValueError, match="pitch, or blade_count and mean_radius"):
        zweifel.evaluate_zweifel_analysis(0.0, 70.0, 0.04, blade_count=40)
    with pytest.raises(ValueError, match="rounding"):
        zweifel.blade_count_for_pitch(0.3, 0.05, "ceil")


def test_broadcasting_and_scalars():
    assert np.ndim(zweifel.zweifel_coefficient(0.0, 70.0, 1.2)) == 0
    inlet, outlet = np.array([[0.0], [10.0]]), np.array([60.0, 70.0, 75.0])
    result = zweifel.evaluate_zweifel_sizing(inlet, outlet, 0.04, 0.35)
    for values in result.values.values():
        assert values.shape == (2, 3)
    assert result.checks["zweifel_high"].status.shape == (2, 3)
    assert_allclose(result.values["pitch_to_axial_chord"][1, 2],
                    zweifel.pitch_to_axial_chord_for_zweifel(10.0, 75.0, 0.8), rtol=1e-14)


angles = st.floats(-80.0, 80.0)


@settings(max_examples=50, deadline=None)
@given(inlet=angles, outlet=angles, target=st.floats(0.3, 1.5))
def test_property_incompressible_round_trip(inlet, outlet, target):
    if abs(np.tan(np.radians(inlet)) - np.tan(np.radians(outlet))) < 1e-3:
        return
    ratio = zweifel.pitch_to_axial_chord_for_zweifel(inlet, outlet, target)
    assert_allclose(zweifel.zweifel_coefficient(inlet, outlet, ratio), target, rtol=1e-12)
    assert_allclose(force_balance_incompressible(inlet, outlet, ratio, 1.0), target, rtol=1e-10)


@settings(max_examples=50, deadline=None)
@given(inlet=angles, outlet=angles, target=st.floats(0.3, 1.5), mach=st.floats(0.01, 1.5),
       gamma=st.floats(1.1, 1.67))
def test_property_compressible_round_trip(inlet, outlet, target, mach, gamma):
    if abs(np.tan(np.radians(inlet)) - np.tan(np.radians(outlet))) < 1e-3:
        return
    ratio = zweifel.pitch_to_axial_chord_for_zweifel_compressible(inlet, outlet, target, mach, gamma)
    assert_allclose(zweifel.zweifel_coefficient_compressible(inlet, outlet, ratio, mach, gamma), target,
                    rtol=1e-12)
    p2 = 2.0e5 * (1 + 0.5 * (gamma - 1) * mach**2) ** (-gamma / (gamma - 1))
    assert_allclose(zweifel.outlet_mach_from_pressure(2.0e5, p2, gamma), mach, rtol=1e-9)
    from_pressure = zweifel.pitch_to_axial_chord_for_zweifel_compressible_from_pressure(
        inlet, outlet, target, 2.0e5, p2, gamma)
    assert_allclose(from_pressure, ratio, rtol=1e-9)
    assert_allclose(force_balance_compressible(inlet, outlet, ratio, 1.0, mach, 800.0, 2.0e5, 1100.0, gamma),
                    target, rtol=1e-9)


@settings(max_examples=50, deadline=None)
@given(inlet=angles, outlet=angles, target=st.floats(0.4, 1.2), radius=st.floats(0.05, 2.0),
       chord=st.floats(0.005, 0.2), rounding=st.sampled_from(zweifel.ROUNDINGS))
def test_property_sizing_analysis_round_trip(inlet, outlet, target, radius, chord, rounding):
    if abs(np.tan(np.radians(inlet)) - np.tan(np.radians(outlet))) < 1e-3:
        return
    sized = zweifel.evaluate_zweifel_sizing(inlet, outlet, chord, radius, target, rounding=rounding)
    assert not sized.failed().any()
    values = sized.values
    exact = 2 * np.pi * radius / (values["pitch_to_axial_chord"] * chord)
    count = values["blade_count"]
    if rounding == "up":
        assert exact <= count < exact + 1
        assert values["zweifel_coefficient_achieved"] <= target * (1 + 1e-12)
    elif rounding == "even_up":
        assert count % 2 == 0 and exact <= count < exact + 2
    else:
        assert abs(count - exact) <= 0.5 or count == 1
    back = zweifel.evaluate_zweifel_analysis(inlet, outlet, chord, blade_count=count, mean_radius=radius)
    assert_allclose(back.values["zweifel_coefficient"], values["zweifel_coefficient_achieved"], rtol=1e-12)
    unrounded = zweifel.evaluate_zweifel_analysis(inlet, outlet, chord,
                                                  pitch=values["pitch_to_axial_chord"] * chord)
    assert_allclose(unrounded.values["zweifel_coefficient"], target, rtol=1e-12)


@settings(max_examples=50, deadline=None)
@given(count=st.integers(1, 500), radius=st.floats(0.01, 5.0), rounding=st.sampled_from(zweifel.ROUNDINGS))
def test_property_blade_count_round_trip(count, radius, rounding):
    pitch = zweifel.pitch_for_blade_count(radius, count)
    expected = count + (count % 2) if rounding == "even_up" else count
    assert_array_equal(zweifel.blade_count_for_pitch(radius, pitch, rounding), expected)
