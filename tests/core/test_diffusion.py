"""Tests of the diffusion factor, its solidity sizing and the blade-row loading checks."""

import doctest
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose, assert_array_equal

from service.core import diffusion
from service.core.diffusion import (
    DIFFUSION_FACTOR_LIMITS,
    ROWS,
    SPAN_POSITIONS,
    blade_count_for_solidity,
    diffusion_factor,
    diffusion_factor_check,
    evaluate_diffusion_analysis,
    evaluate_diffusion_sizing,
    minimum_diffusion_factor,
    row_velocities,
    solidity_for_diffusion_factor,
    solidity_from_blade_count,
    unreachable_target_reason,
)
from tests.core.helpers import reasons


def _df_from_angles(a1_deg, a2_deg, sigma):
    """Lieblein's factor for equal inlet and outlet axial velocity, written with angles only.

    With V = Vx / cos(alpha) and Vtheta = Vx tan(alpha) the definition of Lieblein,
    Schwenk & Broderick (1953), NACA RM E53D01, becomes
    D = 1 - cos(a1)/cos(a2) + cos(a1) |tan(a1) - tan(a2)| / (2 sigma), free of Vx.
    """
    a1, a2 = math.radians(a1_deg), math.radians(a2_deg)
    return 1.0 - math.cos(a1) / math.cos(a2) + math.cos(a1) * abs(math.tan(a1) - math.tan(a2)) / (2.0 * sigma)


# --- the definition -------------------------------------------------------------------------


@pytest.mark.parametrize("a1, a2, sigma", [(45.0, 15.0, 1.2), (-55.0, -35.0, 1.5), (30.0, 0.0, 0.8),
                                           (60.0, 40.0, 2.0)])
def test_definition_against_lieblein_angle_form(a1, a2, sigma):
    # Lieblein, Schwenk & Broderick (1953), NACA RM E53D01: the definition, here in the
    # angle form derived in _df_from_angles (axial velocity cancels).
    result = evaluate_diffusion_analysis("stator", 150.0, a1, a2, solidity=sigma)
    assert_allclose(result.values["diffusion_factor"], _df_from_angles(a1, a2, sigma), rtol=1e-12)


def test_specification_example_stator():
    # Check value from the feature specification (not a published case): stator, axial
    # velocity 141.42 m/s both sides, 45 -> 15 deg, solidity 1.2: DF 0.4836, de Haller 0.732.
    result = evaluate_diffusion_analysis("stator", 141.42, 45.0, 15.0, solidity=1.2)
    assert_allclose(result.values["diffusion_factor"], 0.4836, atol=5e-5)
    assert_allclose(result.values["de_haller"], 0.732, atol=5e-4)
    assert_allclose(result.values["velocity_ratio"], 0.732, atol=5e-4)
    assert not result.failed().any()
    assert str(result.checks["diffusion_factor"].status) == "ok"
    assert str(result.checks["de_haller"].status) == "ok"


def test_independent_hand_derivation_with_changing_axial_velocity():
    # Independent derivation: triangles resolved by hand with trigonometry, then
    # D = 1 - V2/V1 + |dVtheta| / (2 sigma V1) (Lieblein, Schwenk & Broderick 1953).
    vx1, vx2, a1, a2, sigma = 160.0, 140.0, 50.0, 20.0, 1.3
    v1 = vx1 / math.cos(math.radians(a1))
    v2 = vx2 / math.cos(math.radians(a2))
    vt1 = v1 * math.sin(math.radians(a1))
    vt2 = v2 * math.sin(math.radians(a2))
    expected = 1.0 - v2 / v1 + abs(vt2 - vt1) / (2.0 * sigma * v1)
    result = evaluate_diffusion_analysis("stator", vx1, a1, a2, solidity=sigma, outlet_axial_velocity=vx2)
    assert_allclose(result.values["inlet_velocity"], v1, rtol=1e-12)
    assert_allclose(result.values["outlet_velocity"], v2, rtol=1e-12)
    assert_allclose(result.values["tangential_velocity_change"], vt2 - vt1, rtol=1e-12)
    assert_allclose(result.values["diffusion_factor"], expected, rtol=1e-12)
    assert_allclose(result.values["de_haller"], v2 / v1, rtol=1e-12)


def test_infinite_solidity_limit_is_one_minus_velocity_ratio():
    # Lieblein, Schwenk & Broderick (1953): the turning term falls as 1/sigma, leaving 1 - V2/V1.
    flow = row_velocities(150.0, 50.0, 20.0)
    v1, v2, t1, t2 = (flow[k] for k in ("inlet_velocity", "outlet_velocity", "inlet_swirl", "outlet_swirl"))
    assert_allclose(diffusion_factor(v1, v2, t1, t2, 1e9), minimum_diffusion_factor(v1, v2), atol=1e-9)
    assert_allclose(minimum_diffusion_factor(v1, v2), 1.0 - v2 / v1, rtol=1e-15)


# --- the radius-change form ------------------------------------------------------------------


def test_radius_change_form_against_sp36_hand_calculation():
    # NASA SP-36 (Johnsen & Bullock 1965), blade-element form:
    # D = 1 - V2/V1 + |r2 Vtheta2 - r1 Vtheta1| / ((r1 + r2) sigma V1), evaluated by hand.
    v1, v2, vt1, vt2, sigma, r1, r2 = 210.0, 165.0, 120.0, 45.0, 1.1, 0.28, 0.31
    expected = 1.0 - v2 / v1 + abs(r2 * vt2 - r1 * vt1) / ((r1 + r2) * sigma * v1)
    assert_allclose(diffusion_factor(v1, v2, vt1, vt2, sigma, r1, r2), expected, rtol=1e-13)


def test_radius_change_form_reduces_to_plain_form_for_equal_radii():
    # NASA SP-36 (1965): with r1 = r2 the angular-momentum term is Lieblein's plain
    # term (Lieblein, Schwenk & Broderick 1953). The weights are exactly 1.0, so bit for bit.
    v1, v2 = np.array([210.0, 190.0, 175.3]), np.array([165.0, 150.0, 131.7])
    vt1, vt2 = np.array([120.0, -95.0, 71.3]), np.array([45.0, -20.0, -12.9])
    radius = np.array([0.28, 0.5, 0.1234567])
    plain = diffusion_factor(v1, v2, vt1, vt2, 1.1)
    assert_array_equal(diffusion_factor(v1, v2, vt1, vt2, 1.1, radius, radius), plain)
    assert_allclose(plain, 1.0 - v2 / v1 + np.abs(vt2 - vt1) / (2.2 * v1), rtol=1e-14)


def test_radius_change_form_depends_only_on_radius_ratio_and_angular_momentum():
    # NASA SP-36 form: scaling both radii leaves D unchanged; a row that keeps r Vtheta
    # constant (free vortex along a streamline) has no turning term, D = 1 - V2/V1.
    args = (200.0, 160.0, 100.0, 40.0, 1.2)
    assert_allclose(diffusion_factor(*args, 0.3, 0.33), diffusion_factor(*args, 3.0, 3.3), rtol=1e-13)
    r1, r2, vt1 = 0.30, 0.36, 90.0
    assert_allclose(diffusion_factor(200.0, 160.0, vt1, vt1 * r1 / r2, 1.2, r1, r2), 1.0 - 160.0 / 200.0,
                    rtol=1e-13)


def test_rotor_with_radius_change_uses_the_absolute_angular_momentum_derived_from_the_torque():
    # Derivation (Euler's turbomachinery equation, e.g. Dixon & Hall 2014, ch. 1): the torque on a
    # blade row per unit mass flow is r2 Vtheta2 - r1 Vtheta1 in ABSOLUTE swirl; that is the blade
    # loading NASA SP-36's radius-change form divides by (r1 + r2) sigma V1. In a rotor's frame
    # Vtheta = Wtheta + Omega r, so r2 Wtheta2 - r1 Wtheta1 differs from it by Omega (r2^2 - r1^2),
    # the Coriolis term. Case of the physics review (issue 19): r 0.30 -> 0.33 m, Omega 1000 rad/s,
    # V_x 150 m/s, absolute Vtheta 90 -> 210 m/s, sigma 1.2; the torque form gives 0.4725.
    omega, r1, r2, vx, vt1, vt2, sigma = 1000.0, 0.30, 0.33, 150.0, 90.0, 210.0, 1.2
    wt1, wt2 = vt1 - omega * r1, vt2 - omega * r2
    w1, w2 = math.hypot(vx, wt1), math.hypot(vx, wt2)
    torque_per_mass_flow = r2 * vt2 - r1 * vt1
    expected = 1.0 - w2 / w1 + torque_per_mass_flow / ((r1 + r2) * sigma * w1)
    assert_allclose(expected, 0.4725, atol=5e-5)  # the review's figure, to its 4 digits
    rpm = omega * 60.0 / (2.0 * math.pi)
    beta1, beta2 = math.degrees(math.atan2(wt1, vx)), math.degrees(math.atan2(wt2, vx))
    result = evaluate_diffusion_analysis("rotor", vx, beta1, beta2, solidity=sigma, inlet_radius=r1,
                                         outlet_radius=r2, shaft_speed=rpm)
    assert_allclose(result.values["diffusion_factor"], expected, rtol=1e-12)
    # The relative-swirl form (the Coriolis term counted as loading) is the wrong 0.3756.
    wrong = 1.0 - w2 / w1 + abs(r2 * wt2 - r1 * wt1) / ((r1 + r2) * sigma * w1)
    assert_allclose(wrong, 0.3756, atol=5e-5)
    assert abs(float(result.values["diffusion_factor"]) - wrong) > 0.09
    # Sizing inverts it.
    sizing = evaluate_diffusion_sizing("rotor", vx, beta1, beta2, float(expected), inlet_radius=r1,
                                       outlet_radius=r2, shaft_speed=rpm)
    assert_allclose(sizing.values["solidity"], sigma, rtol=1e-12)


def test_rotor_with_equal_radii_and_shaft_speed_is_the_plain_form_bit_for_bit():
    # With r1 = r2 the blade-speed terms cancel exactly (2 Omega (r2 - r1) = 0): Lieblein's plain form.
    plain = evaluate_diffusion_analysis("rotor", 150.0, -55.0, -30.0, solidity=1.3)
    same = evaluate_diffusion_analysis("rotor", 150.0, -55.0, -30.0, solidity=1.3, inlet_radius=0.4,
                                       outlet_radius=0.4, shaft_speed=12000.0)
    assert_array_equal(same.values["diffusion_factor"], plain.values["diffusion_factor"])


def test_shaft_speed_is_refused_where_it_does_not_apply_and_required_where_it_does():
    with pytest.raises(ValueError, match="needs shaft_speed"):
        evaluate_diffusion_analysis("rotor", 150.0, -55.0, -30.0, solidity=1.3, inlet_radius=0.3,
                                    outlet_radius=0.33)
    with pytest.raises(ValueError, match="shaft_speed applies only to a rotor row"):
        evaluate_diffusion_analysis("stator", 150.0, 45.0, 15.0, solidity=1.3, inlet_radius=0.3,
                                    outlet_radius=0.33, shaft_speed=9000.0)
    with pytest.raises(ValueError, match="shaft_speed applies only to a rotor row"):
        evaluate_diffusion_sizing("rotor", 150.0, -55.0, -30.0, 0.45, shaft_speed=9000.0)


# --- signs --------------------------------------------------------------------------------------


def test_rotor_relative_angles_and_mirror_image_give_the_same_factor():
    # A compressor rotor in relative angles (negative against rotation) and its mirror image:
    # Lieblein's definition uses |Delta Vtheta|, so both have the angle-form value.
    rotor = evaluate_diffusion_analysis("rotor", 150.0, -60.0, -30.0, solidity=1.4)
    mirror = evaluate_diffusion_analysis("rotor", 150.0, 60.0, 30.0, solidity=1.4)
    assert_allclose(rotor.values["diffusion_factor"], mirror.values["diffusion_factor"], rtol=1e-14)
    assert_allclose(rotor.values["diffusion_factor"], _df_from_angles(60.0, 30.0, 1.4), rtol=1e-12)
    # The signed change: the rotor takes out negative relative swirl, Vtheta rises.
    assert rotor.values["tangential_velocity_change"] > 0
    assert_allclose(rotor.values["tangential_velocity_change"],
                    -mirror.values["tangential_velocity_change"], rtol=1e-14)


def test_flow_crossing_axial_counts_the_full_turning():
    # +20 deg -> -10 deg turns 30 deg through axial: |dVtheta| = Vx (tan 20 + tan 10), by hand.
    vx, sigma = 150.0, 1.0
    v1 = vx / math.cos(math.radians(20.0))
    v2 = vx / math.cos(math.radians(10.0))
    turning = vx * (math.tan(math.radians(20.0)) + math.tan(math.radians(10.0)))
    result = evaluate_diffusion_analysis("stator", vx, 20.0, -10.0, solidity=sigma)
    assert_allclose(result.values["tangential_velocity_change"], -turning, rtol=1e-12)
    assert_allclose(result.values["diffusion_factor"], 1.0 - v2 / v1 + turning / (2.0 * sigma * v1),
                    rtol=1e-12)


def test_accelerating_row_is_computed_not_failed():
    # 0 -> 40 deg at constant axial velocity speeds the flow up (V2/V1 = 1/cos 40 > 1): the
    # factor is still Lieblein's formula, here negative, and no case fails.
    sigma = 3.0
    result = evaluate_diffusion_analysis("stator", 100.0, 0.0, 40.0, solidity=sigma)
    expected = _df_from_angles(0.0, 40.0, sigma)
    assert expected < 0
    assert_allclose(result.values["diffusion_factor"], expected, rtol=1e-12)
    assert not result.failed().any()
    assert str(result.checks["de_haller"].status) == "ok"


# --- solidity from chord and pitch or blade count ----------------------------------------------


def test_solidity_routes_agree():
    # sigma = c / s with s = 2 pi r_m / N (definition of solidity at the mean radius).
    chord, radius, count = 0.05, 0.3, 40
    pitch = 2.0 * math.pi * radius / count
    by_solidity = evaluate_diffusion_analysis("rotor", 150.0, -55.0, -35.0, solidity=chord / pitch)
    by_pitch = evaluate_diffusion_analysis("rotor", 150.0, -55.0, -35.0, chord=chord, pitch=pitch)
    by_count = evaluate_diffusion_analysis("rotor", 150.0, -55.0, -35.0, chord=chord, blade_count=count,
                                           mean_radius=radius)
    for other in (by_pitch, by_count):
        assert_allclose(other.values["diffusion_factor"], by_solidity.values["diffusion_factor"], rtol=1e-13)
        assert_allclose(other.values["solidity"], chord / pitch, rtol=1e-13)
    assert_allclose(solidity_from_blade_count(chord, radius, count), chord / pitch, rtol=1e-14)


def test_blade_count_rounds_up_but_not_for_round_off():
    # N = ceil(2 pi r sigma / c); a solidity made from 37 blades gives 37 back, not 38.
    chord, radius = 0.04, 0.25
    exact = solidity_from_blade_count(chord, radius, 37)
    assert_allclose(blade_count_for_solidity(chord, radius, exact), 37.0, rtol=0, atol=0)
    assert_allclose(blade_count_for_solidity(chord, radius, exact * 1.001), 38.0, rtol=0, atol=0)
    assert_allclose(blade_count_for_solidity(chord, radius, exact * 0.999), 37.0, rtol=0, atol=0)


# --- sizing -----------------------------------------------------------------------------------


def test_sizing_then_analysis_gives_back_the_target():
    # Every sizing is the inverse of its analysis (DESIGN quality bar), plain and SP-36 forms.
    targets = np.array([0.40, 0.45, 0.58])  # above 1 - cos 58 / cos 32 = 0.375
    for radii in ({}, {"inlet_radius": 0.30, "outlet_radius": 0.33, "shaft_speed": 9000.0}):
        sizing = evaluate_diffusion_sizing("rotor", 150.0, -58.0, -32.0, targets, **radii)
        analysis = evaluate_diffusion_analysis("rotor", 150.0, -58.0, -32.0,
                                               solidity=sizing.values["solidity"], **radii)
        assert_allclose(analysis.values["diffusion_factor"], targets, rtol=1e-12)


def test_sizing_of_specification_example_returns_its_solidity():
    # Specification check value (not published): the stator of 45 -> 15 deg at DF 0.4836
    # needs solidity 1.2 (inverse of the analysis), within the 4-digit rounding of 0.4836.
    result = evaluate_diffusion_sizing("stator", 141.42, 45.0, 15.0, 0.4836)
    assert_allclose(result.values["solidity"], 1.2, rtol=2e-4)
    assert_allclose(result.values["minimum_diffusion_factor"], 1.0 - math.cos(math.radians(45.0))
                    / math.cos(math.radians(15.0)), rtol=1e-6)


def test_rounded_blade_count_never_exceeds_the_target():
    # Rounding the count up raises the solidity, so the achieved factor is at or below the
    # target (Lieblein's D falls with solidity); one blade fewer would exceed it.
    targets = np.linspace(0.30, 0.60, 31)
    chord, radius = 0.045, 0.28
    result = evaluate_diffusion_sizing("stator", 140.0, 48.0, 18.0, targets, chord=chord, mean_radius=radius)
    achieved = result.values["diffusion_factor_achieved"]
    assert np.all(achieved <= targets + 1e-12)
    count = result.values["blade_count"]
    assert_array_equal(count, np.round(count))
    assert_allclose(result.values["pitch"], 2.0 * math.pi * radius / count, rtol=1e-14)
    flow = row_velocities(140.0, 48.0, 18.0)
    fewer = diffusion_factor(flow["inlet_velocity"], flow["outlet_velocity"], flow["inlet_swirl"],
                             flow["outlet_swirl"], solidity_from_blade_count(chord, radius, count - 1))
    assert np.all(fewer > targets)
    assert_allclose(result.checks["diffusion_factor"].value, achieved, rtol=0, atol=0)


def test_unreachable_target_fails_with_the_smallest_reachable_factor():
    # 1 - cos 45 / cos 15 = 0.2679 (Lieblein's D at infinite solidity): 0.25 is unreachable.
    result = evaluate_diffusion_sizing("stator", 141.42, 45.0, 15.0, [0.25, 0.4, 0.2679])
    failed = result.failed()
    assert_array_equal(failed, [True, False, True])
    assert np.isnan(result.values["solidity"][0])
    assert np.isfinite(result.values["solidity"][1])
    unreachable = ("no solidity reaches the target diffusion factor: the smallest reachable diffusion "
                   "factor is 0.268 (1 - V2/V1, approached as the solidity grows without bound)")
    assert reasons(result) == [unreachable, None, unreachable]


def test_unreachable_targets_with_different_minima_give_one_reason_each():
    # Two rows with different 1 - V2/V1 (angle form: 1 - cos a1 / cos a2), both asked for 0.1.
    result = evaluate_diffusion_sizing("stator", 150.0, [45.0, 50.0, 50.0], [15.0, 20.0, 20.0], 0.1)
    per_case = reasons(result)
    expected_45 = 1.0 - math.cos(math.radians(45.0)) / math.cos(math.radians(15.0))
    expected_50 = 1.0 - math.cos(math.radians(50.0)) / math.cos(math.radians(20.0))
    assert len(set(per_case)) == 2
    assert f"is {expected_45:.3f} (1 - V2/V1" in per_case[0]
    assert per_case[1] == per_case[2]
    assert f"is {expected_50:.3f} (1 - V2/V1" in per_case[1]


def test_a_batch_of_unreachable_targets_keeps_one_failure_entry_and_each_case_its_own_minimum():
    # 1 - V2/V1 = 1 - cos a1 / cos a2 at constant axial velocity (derived here); a target of 0.01
    # is below every one of these minima, so every case fails, each with its own smallest factor.
    inlet = np.linspace(40.0, 60.0, 201)
    outlet = np.full_like(inlet, 10.0)
    result = evaluate_diffusion_sizing("stator", 150.0, inlet, outlet, 0.01, chord=0.05, mean_radius=0.3)
    assert result.failed().all()
    entries = [reason for reason, mask in result.failures if np.any(mask)]
    assert len(entries) == 1  # not one full-length mask per distinct minimum
    expected = [unreachable_target_reason(round(1.0 - math.cos(math.radians(a1)) / math.cos(math.radians(10.0)), 3))
                for a1 in inlet]
    assert reasons(result) == expected
    assert len(set(expected)) > 100


def test_row_without_turning_cannot_be_sized():
    # Equal angles at equal axial velocity: no change of Vtheta, D = 1 - V2/V1 = 0 at every solidity.
    result = evaluate_diffusion_sizing("stator", 150.0, 30.0, 30.0, 0.3)
    assert result.failed()
    (reason,) = reasons(result)
    assert reason.startswith("the row does not turn the flow")
    assert "is 0.000 (1 - V2/V1)" in reason
    assert np.isnan(result.values["solidity"])


def test_invalid_inputs_fail_per_case():
    result = evaluate_diffusion_analysis("stator", [150.0, -10.0, 150.0, 150.0], [45.0, 45.0, 90.0, 45.0],
                                         15.0, solidity=[1.2, 1.2, 1.2, 0.0])
    assert_array_equal(result.failed(), [False, True, True, True])
    assert np.all(np.isnan(result.values["diffusion_factor"][1:]))
    # Lieblein's definition in angle form for the one valid case.
    assert_allclose(result.values["diffusion_factor"][0], _df_from_angles(45.0, 15.0, 1.2), rtol=1e-12)
    assert len({reason for reason, mask in result.failures if mask.any()}) == 3


# --- checks -------------------------------------------------------------------------------------


@pytest.mark.parametrize("row, span, value, status", [
    # Rotor tip: warn above 0.45, fail above 0.6 (DESIGN.md; Lieblein et al. 1953, NASA SP-36).
    ("rotor", "tip", 0.40, "ok"), ("rotor", "tip", 0.50, "warn"), ("rotor", "tip", 0.65, "fail"),
    # Rotor hub and mean, stators: loss knee about 0.6 (NASA SP-36 loss correlations, from memory).
    ("rotor", "mean", 0.55, "ok"), ("rotor", "hub", 0.65, "fail"),
    ("stator", "mean", 0.55, "ok"), ("stator", "tip", 0.55, "ok"), ("stator", "hub", 0.62, "fail"),
])
def test_diffusion_factor_limits(row, span, value, status):
    assert str(diffusion_factor_check(value, row, span).status) == status


def test_every_row_and_span_has_a_limit_with_a_basis():
    for row in ROWS:
        for span in SPAN_POSITIONS:
            warn, fail, basis = DIFFUSION_FACTOR_LIMITS[(row, span)]
            assert warn <= fail == 0.6
            assert "NACA RM E53D01" in basis


def test_checks_follow_span_position_and_de_haller():
    # Angle form: 60 -> 40 deg at sigma 1.5 gives D = 0.496 (rotor tip warns, mean is ok);
    # V2/V1 = cos 60 / cos 40 = 0.653 is below de Haller's 0.72 (de Haller 1953) but above
    # the 0.5 floor (common practice).
    tip = evaluate_diffusion_analysis("rotor", 150.0, -60.0, -40.0, solidity=1.5, span_position="tip")
    mean = evaluate_diffusion_analysis("rotor", 150.0, -60.0, -40.0, solidity=1.5)
    assert_allclose(tip.values["diffusion_factor"], _df_from_angles(60.0, 40.0, 1.5), rtol=1e-12)
    assert_allclose(tip.values["diffusion_factor"], 0.496, atol=1e-3)
    assert str(tip.checks["diffusion_factor"].status) == "warn"
    assert str(mean.checks["diffusion_factor"].status) == "ok"
    assert str(tip.checks["de_haller"].status) == "warn"
    assert str(tip.checks["velocity_ratio"].status) == "ok"
    steep = evaluate_diffusion_analysis("rotor", 150.0, -65.0, -20.0, solidity=1.0)
    assert str(steep.checks["velocity_ratio"].status) == "fail"  # cos 65 / cos 20 = 0.45 < 0.5


# --- options and vectorisation ---------------------------------------------------------------------


def test_invalid_options_raise():
    with pytest.raises(ValueError, match="row must be one of"):
        evaluate_diffusion_analysis("fan", 150.0, 45.0, 15.0, solidity=1.2)
    with pytest.raises(ValueError, match="span_position must be one of"):
        evaluate_diffusion_sizing("rotor", 150.0, 45.0, 15.0, 0.4, span_position="root")
    with pytest.raises(ValueError, match="give the solidity as one of"):
        evaluate_diffusion_analysis("rotor", 150.0, 45.0, 15.0, chord=0.05)
    with pytest.raises(ValueError, match="give the solidity as one of"):
        evaluate_diffusion_analysis("rotor", 150.0, 45.0, 15.0, solidity=1.0, pitch=0.05)
    with pytest.raises(ValueError, match="inlet_radius and outlet_radius must be given together"):
        diffusion_factor(200.0, 150.0, 100.0, 30.0, 1.0, inlet_radius=0.3)
    with pytest.raises(ValueError, match="chord and mean_radius must be given together"):
        evaluate_diffusion_sizing("rotor", 150.0, 45.0, 15.0, 0.4, chord=0.05)


def test_scalars_and_arrays_broadcast():
    scalar = evaluate_diffusion_analysis("stator", 141.42, 45.0, 15.0, solidity=1.2)
    assert np.shape(scalar.values["diffusion_factor"]) == ()
    sweep = evaluate_diffusion_analysis("stator", 141.42, 45.0, 15.0, solidity=[0.8, 1.2, 1.6])
    assert np.shape(sweep.values["inlet_velocity"]) == (3,)
    assert_allclose(sweep.values["diffusion_factor"][1], scalar.values["diffusion_factor"], rtol=1e-15)
    assert_allclose(sweep.values["diffusion_factor"],
                    [_df_from_angles(45.0, 15.0, s) for s in (0.8, 1.2, 1.6)], rtol=1e-12)


def test_docstring_examples():
    failures, tried = doctest.testmod(diffusion)
    assert tried > 0
    assert failures == 0


# --- properties ----------------------------------------------------------------------------------

angles = st.floats(min_value=-70.0, max_value=70.0)
speeds = st.floats(min_value=50.0, max_value=300.0)


@settings(max_examples=50, deadline=None)
@given(vx=speeds, vx2=speeds, a1=angles, a2=angles, sigma=st.floats(min_value=0.3, max_value=3.0),
       r2_over_r1=st.floats(min_value=0.8, max_value=1.25))
def test_property_sizing_inverts_analysis(vx, vx2, a1, a2, sigma, r2_over_r1):
    # Every sizing is the inverse of its analysis (DESIGN quality bar).
    flow = row_velocities(vx, a1, a2, vx2)
    args = (flow["inlet_velocity"], flow["outlet_velocity"], flow["inlet_swirl"], flow["outlet_swirl"])
    radii = (0.3, 0.3 * r2_over_r1)
    turning = abs(radii[1] * flow["outlet_swirl"] - radii[0] * flow["inlet_swirl"]) / sum(radii)
    if turning < 1e-3 * flow["inlet_velocity"]:
        return  # too little turning for the solidity to be well conditioned
    target = diffusion_factor(*args, sigma, *radii)
    assert_allclose(solidity_for_diffusion_factor(*args, target, *radii), sigma, rtol=1e-8)


@settings(max_examples=50, deadline=None)
@given(vx=speeds, a1=angles, a2=angles, sigma=st.floats(min_value=0.3, max_value=3.0),
       factor=st.floats(min_value=1.01, max_value=3.0))
def test_property_diffusion_factor_falls_with_solidity(vx, a1, a2, sigma, factor):
    # Lieblein's turning term is proportional to 1/sigma and non-negative.
    flow = row_velocities(vx, a1, a2)
    args = (flow["inlet_velocity"], flow["outlet_velocity"], flow["inlet_swirl"], flow["outlet_swirl"])
    low, high = diffusion_factor(*args, sigma), diffusion_factor(*args, sigma * factor)
    assert high <= low
    if abs(flow["outlet_swirl"] - flow["inlet_swirl"]) > 1e-6 * flow["inlet_velocity"]:
        assert high < low
    assert high >= minimum_diffusion_factor(flow["inlet_velocity"], flow["outlet_velocity"]) - 1e-12


@settings(max_examples=50, deadline=None)
@given(a1=st.floats(min_value=20.0, max_value=65.0), turning=st.floats(min_value=5.0, max_value=40.0),
       sign=st.sampled_from([1.0, -1.0]), excess=st.floats(min_value=0.02, max_value=0.4),
       chord=st.floats(min_value=0.01, max_value=0.2), radius=st.floats(min_value=0.1, max_value=1.0))
def test_property_sizing_round_trip_through_evaluate(a1, turning, sign, excess, chord, radius):
    # Sizing then analysis gives back the target at the exact solidity, and the integer
    # blade count's factor never exceeds the target (DESIGN quality bar; signs mirrored).
    inlet, outlet = sign * a1, sign * (a1 - turning)
    smallest = 1.0 - math.cos(math.radians(inlet)) / math.cos(math.radians(outlet))
    target = smallest + excess
    sizing = evaluate_diffusion_sizing("rotor", 150.0, inlet, outlet, target, chord=chord, mean_radius=radius)
    assert not sizing.failed()
    exact = evaluate_diffusion_analysis("rotor", 150.0, inlet, outlet, solidity=sizing.values["solidity"])
    assert_allclose(exact.values["diffusion_factor"], target, rtol=1e-10, atol=1e-12)
    counted = evaluate_diffusion_analysis("rotor", 150.0, inlet, outlet, chord=chord,
                                          blade_count=sizing.values["blade_count"], mean_radius=radius)
    assert_allclose(counted.values["diffusion_factor"], sizing.values["diffusion_factor_achieved"],
                    rtol=1e-12)
    assert sizing.values["diffusion_factor_achieved"] <= target + 1e-12


def test_sizing_flags_a_solidity_outside_the_band_of_the_cascade_data():
    # A stator turning 10 deg reaches DF 0.45 with very few blades, one turning 50 deg to axial
    # needs very many; the band 0.5 to 2.0 is common practice.
    result = evaluate_diffusion_sizing("stator", 150.0, [40.0, 30.0, 50.0], [30.0, 0.0, 0.0], 0.45,
                                       chord=0.05, mean_radius=0.3)
    solidity = result.values["solidity"]
    assert solidity[0] < 0.5 and 0.5 <= solidity[1] <= 2.0 and solidity[2] > 2.0
    assert result.checks["solidity_low"].status.tolist() == ["warn", "ok", "ok"]
    assert result.checks["solidity_high"].status.tolist() == ["ok", "ok", "warn"]
    assert_allclose(result.checks["solidity_low"].value, solidity, rtol=0, atol=0)
