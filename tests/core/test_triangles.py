"""Velocity triangles of repeating stages: worked examples, identities derived here, properties."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from service.core import triangles
from service.core.triangles import evaluate_stage_from_angles, evaluate_stage_from_duty


def test_compressor_stage_example_from_the_specification():
    # Check values stated in the project's specification (issue 2), not a published case.
    result = evaluate_stage_from_duty("compressor", 0.5, 0.4, 0.5, 300.0).values
    assert_allclose(result["alpha1"], 30.96, atol=0.005)
    assert_allclose(result["alpha2"], 54.46, atol=0.005)
    assert_allclose(result["beta1"], -54.46, atol=0.005)
    assert_allclose(result["beta2"], -30.96, atol=0.005)
    assert_allclose(result["work"], 36000.0, rtol=1e-12)
    assert_allclose(result["de_haller_rotor"], 0.678, atol=5e-4)


def test_turbine_mean_line_design_example_saravanamuttoo():
    # Saravanamuttoo, Rogers, Cohen & Straznicky, "Gas Turbine Theory", ch. 7, mean-diameter
    # turbine design example (from memory): U = 340 m/s, Ca = 272 m/s (phi = 0.8), alpha3 = 10 deg
    # of swirl against rotation, cp = 1148 J/(kg K). The book arrives at alpha2 = 58.38 deg,
    # beta2 = 20.49 deg, beta3 = 54.96 deg, reaction about 0.42 and a stage temperature drop of
    # 145.5 K. The book measures alpha3 and beta3 positive against rotation, hence the signs here.
    result = evaluate_stage_from_angles("turbine", 340.0, 272.0, 58.38, -10.0, 1100.0, 4.0e5, 1148.0, 1.333)
    values = result.values
    assert_allclose(values["beta2"], 20.49, atol=0.05)
    assert_allclose(values["beta3"], -54.96, atol=0.05)
    assert_allclose(values["flow_coefficient"], 0.8, rtol=1e-12)
    assert_allclose(values["reaction"], 0.42, atol=0.005)
    # The book rounds its intermediate angles; 0.5 % covers that.
    assert_allclose(values["total_temperature_change"], 145.5, rtol=5e-3)


def _compressor_and_turbine_cases():
    phi = np.array([0.35, 0.5, 0.8, 1.1])
    psi = np.array([0.25, 0.4, 1.5, 2.2])
    reaction = np.array([0.5, 0.7, 0.4, 0.1])
    return phi, psi, reaction


@pytest.mark.parametrize("machine", triangles.MACHINES)
def test_reaction_equals_the_rotor_share_of_static_enthalpy_change(machine):
    # Derived here, independently of the module: at constant radius the rothalpy
    # h + W^2/2 is conserved through the rotor, and a repeating stage's static enthalpy change
    # equals its total enthalpy change (its exit and inlet speeds are equal).
    phi, psi, reaction = _compressor_and_turbine_cases()
    values = evaluate_stage_from_duty(machine, phi, psi, reaction, 250.0).values
    rotor_in, rotor_out = (1, 2) if machine == "compressor" else (2, 3)
    rotor_static_change = 0.5 * (values[f"W{rotor_in}"] ** 2 - values[f"W{rotor_out}"] ** 2)
    stage_static_change = values["work"] if machine == "compressor" else -values["work"]
    assert_allclose(rotor_static_change / stage_static_change, reaction, rtol=1e-10)


@pytest.mark.parametrize("machine", triangles.MACHINES)
def test_euler_work_equals_blade_speed_times_swirl_change(machine):
    # Euler's turbomachinery equation at constant radius: dh0 = U (Vtheta_out - Vtheta_in), the
    # sign chosen so that work is positive for both machines.
    phi, psi, reaction = _compressor_and_turbine_cases()
    u = 310.0
    values = evaluate_stage_from_duty(machine, phi, psi, reaction, u).values
    if machine == "compressor":
        euler = u * (values["Vtheta2"] - values["Vtheta1"])
    else:
        euler = u * (values["Vtheta2"] - values["Vtheta3"])
    assert_allclose(values["work"], euler, rtol=1e-12)
    assert_allclose(values["loading_coefficient"], psi, rtol=1e-12)


def test_relative_total_temperature_is_conserved_through_the_rotor():
    # Rothalpy at constant radius (Dixon & Hall, 7th ed., ch. 2): T0,rel is the same at the
    # rotor inlet and exit, and the absolute total temperature changes by work / cp.
    compressor = evaluate_stage_from_duty("compressor", 0.55, 0.45, 0.6, 320.0, 288.15, 101325.0).values
    assert_allclose(compressor["T0_rel1"], compressor["T0_rel2"], rtol=1e-12)
    assert_allclose(compressor["T02"] - compressor["T01"], compressor["work"] / 1005.0, rtol=1e-12)
    turbine = evaluate_stage_from_duty("turbine", 0.7, 1.8, 0.45, 380.0, 1400.0, 1.2e6, 1148.0, 1.333).values
    assert_allclose(turbine["T0_rel2"], turbine["T0_rel3"], rtol=1e-12)
    assert_allclose(turbine["T01"] - turbine["T03"], turbine["work"] / 1148.0, rtol=1e-12)


def test_fifty_percent_reaction_compressor_stage_is_symmetric():
    # A 50 % reaction stage has symmetric triangles: alpha1 = -beta2, alpha2 = -beta1
    # (Dixon & Hall, 7th ed., ch. 5, with our sign convention for relative angles).
    values = evaluate_stage_from_duty("compressor", [0.45, 0.6], [0.3, 0.45], 0.5, 280.0).values
    assert_allclose(values["alpha1"], -values["beta2"], rtol=1e-12)
    assert_allclose(values["alpha2"], -values["beta1"], rtol=1e-12)


def test_inlet_mach_numbers_follow_from_the_static_temperature():
    values = evaluate_stage_from_duty("compressor", 0.5, 0.4, 0.5, 300.0, 288.15, 101325.0).values
    t1 = 288.15 - values["V1"] ** 2 / (2 * 1005.0)
    a1 = np.sqrt(1.4 * 1005.0 * 0.4 / 1.4 * t1)
    assert_allclose(values["T1"], t1, rtol=1e-12)
    assert_allclose(values["M1"], values["V1"] / a1, rtol=1e-12)
    assert_allclose(values["M_rel1"], values["W1"] / a1, rtol=1e-12)
    assert_allclose(values["p1"], 101325.0 * (t1 / 288.15) ** 3.5, rtol=1e-12)
    assert_allclose(values["rho1"], values["p1"] / (1005.0 * 0.4 / 1.4 * t1), rtol=1e-12)


def test_angles_that_give_no_work_are_a_failure_not_a_number():
    result = evaluate_stage_from_angles("compressor", 300.0, 150.0, [40.0, 10.0], [20.0, 50.0])
    failed = result.failed()
    assert failed.tolist() == [True, False]
    assert np.isnan(result.values["alpha2"][0]) and np.isfinite(result.values["alpha2"][1])
    assert "not a compressor stage" in result.failures[0][0]


def test_a_stage_too_fast_for_its_total_temperature_fails_at_the_station_named():
    # V1^2 / (2 cp) = 15.2 K exceeds the 10 K total temperature at station 1.
    result = evaluate_stage_from_duty("compressor", 0.5, 0.4, 0.5, 300.0, 10.0, 1e5)
    reasons = [reason for reason, mask in result.failures if np.any(mask)]
    assert reasons and "station 1" in reasons[0]


def test_scalar_in_gives_scalar_out():
    values = evaluate_stage_from_duty("turbine", 0.8, 1.6, 0.5, 300.0).values
    assert np.ndim(values["alpha2"]) == 0


def test_unknown_machine_is_refused_by_name():
    with pytest.raises(ValueError, match="machine must be one of"):
        evaluate_stage_from_duty("pump", 0.5, 0.4, 0.5, 300.0)


duty = st.tuples(
    st.sampled_from(triangles.MACHINES),
    st.floats(0.2, 1.5), st.floats(0.05, 3.0), st.floats(-0.5, 1.5), st.floats(50.0, 600.0),
)


@settings(max_examples=60, deadline=None)
@given(duty)
def test_angle_form_reproduces_the_duty_coefficients(case):
    machine, phi, psi, reaction, u = case
    forward = evaluate_stage_from_duty(machine, phi, psi, reaction, u).values
    first, second = ("alpha1", "alpha2") if machine == "compressor" else ("alpha2", "alpha3")
    back = evaluate_stage_from_angles(machine, u, forward["axial_velocity"], forward[first], forward[second]).values
    assert_allclose(back["flow_coefficient"], phi, rtol=1e-9)
    assert_allclose(back["loading_coefficient"], psi, rtol=1e-9, atol=1e-9)
    assert_allclose(back["reaction"], reaction, rtol=1e-9, atol=1e-9)


@settings(max_examples=60, deadline=None)
@given(duty)
def test_triangles_close(case):
    machine, phi, psi, reaction, u = case
    values = evaluate_stage_from_duty(machine, phi, psi, reaction, u).values
    vx = phi * u
    for k in (1, 2, 3):
        assert_allclose(values[f"Vx{k}"], vx, rtol=1e-12)
        assert_allclose(values[f"V{k}"] ** 2, vx**2 + values[f"Vtheta{k}"] ** 2, rtol=1e-9)
        assert_allclose(np.tan(np.radians(values[f"alpha{k}"])) * vx, values[f"Vtheta{k}"], rtol=1e-7, atol=1e-7)
    for k in triangles.ROTOR_STATIONS[machine]:
        # W_x = V_x and W_theta = V_theta - U.
        assert_allclose(values[f"Wtheta{k}"], values[f"Vtheta{k}"] - u, rtol=1e-12, atol=1e-9)
        assert_allclose(values[f"W{k}"] ** 2, vx**2 + values[f"Wtheta{k}"] ** 2, rtol=1e-9)
        assert_allclose(np.tan(np.radians(values[f"alpha{k}"])) - np.tan(np.radians(values[f"beta{k}"])),
                        1.0 / phi, rtol=1e-7)
