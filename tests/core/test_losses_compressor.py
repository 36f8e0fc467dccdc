"""Lieblein's profile loss, Howell's drags and the compressor stage efficiency from the row losses."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from service.core import triangles
from service.core.losses import efficiency, howell, lieblein
from service.core.losses.stage import evaluate_stage_efficiency, with_stage_efficiency


def test_equivalent_diffusion_ratio_as_printed():
    # Lieblein (1959); NASA SP-36 ch. 6: D_eq = (cos b2 / cos b1) (1.12 + 0.61 cos^2 b1 / sigma (tan b1 - tan b2)),
    # evaluated by hand at b1 = 45, b2 = 15 deg, sigma = 1: cos 15 / cos 45 = 1.366025,
    # 0.61 * 0.5 * (1 - 0.267949) = 0.223275, D_eq = 1.366025 * 1.343275 = 1.834948.
    assert_allclose(lieblein.equivalent_diffusion_ratio(45.0, 15.0, 1.0), 1.834948, rtol=1e-6)
    # The sign convention of the service (rotor angles negative) does not change it.
    assert_allclose(lieblein.equivalent_diffusion_ratio(-45.0, -15.0, 1.0), 1.834948, rtol=1e-6)


def test_two_published_fits_of_liebleins_data_agree():
    # Dixon & Hall (2014) ch. 3, theta/c = 0.004 / (1 - 1.17 ln D_eq), and Aungier (2003) ch. 6,
    # theta/c = 0.004 (1 + 3.1 (D_eq - 1)^2 + 0.4 (D_eq - 1)^8) (both from memory) are two fits of
    # the same NACA data: they agree within 20 % from D_eq 1.1 to 2.0, where the data lie (the scatter
    # of the data about either curve is of that order).
    d = np.linspace(1.1, 2.0, 19)
    assert_allclose(lieblein.wake_momentum_thickness(d), lieblein.wake_momentum_thickness_aungier(d), rtol=0.2)
    # Both give about 0.004-0.005 of the chord for a lightly loaded blade (D_eq 1.12, no turning) and
    # about 0.02 at Lieblein's stall limit D_eq = 2 (Lieblein 1959; NASA SP-36 ch. 6, from memory).
    assert 0.004 < float(lieblein.wake_momentum_thickness(1.12)) < 0.005
    assert 0.015 < float(lieblein.wake_momentum_thickness(2.0)) < 0.025


def test_wake_loss_is_the_mixed_out_loss_of_the_wake():
    # Denton (1993), ASME J. Turbomach. 115, the mixed-out loss of a thin wake: Delta p0 / (rho V2^2 / 2)
    # = 2 theta / (s cos b2). On the inlet dynamic pressure, with V2 / V1 = cos b1 / cos b2 at constant
    # axial velocity: omega = 2 theta / (s cos b2) (cos b1 / cos b2)^2, derived here.
    theta_c, b1, b2, sigma = 0.01, 50.0, 20.0, 1.2
    c1, c2 = math.cos(math.radians(b1)), math.cos(math.radians(b2))
    expected = 2 * theta_c * sigma / c2 * (c1 / c2) ** 2
    assert_allclose(lieblein.wake_loss_coefficient(theta_c, b1, b2, sigma), expected, rtol=1e-12)


def _df(inlet, outlet, solidity):
    """Lieblein's diffusion factor at constant axial velocity, in angles only (NACA RM E53D01)."""
    a1, a2 = math.radians(inlet), math.radians(outlet)
    return 1 - math.cos(a1) / math.cos(a2) + math.cos(a1) * abs(math.tan(a1) - math.tan(a2)) / (2 * solidity)


@settings(max_examples=200, deadline=None)
@given(st.floats(35.0, 65.0), st.floats(0.6, 1.4), st.floats(2.0, 35.0), st.floats(0.2, 3.0))
def test_loss_rises_with_diffusion_factor_within_the_data(inlet, solidity, turning, step):
    # More turning at the same inlet angle and solidity raises the diffusion factor and with it the wake
    # momentum thickness (Lieblein's correlation itself), as long as the row stays within the data
    # (D <= 0.6). The loss coefficient on the inlet dynamic pressure carries a falling cos^3 of the
    # outlet angle too, which at light loading outweighs the wake's growth: it rises with D once the row
    # is loaded (D >= 0.4 over these inlet angles and solidities, found by a scan of the model).
    low, high = (lieblein.lieblein_profile_loss(inlet, inlet - t, solidity) for t in (turning, turning + step))
    d_low, d_high = _df(inlet, inlet - turning, solidity), _df(inlet, inlet - turning - step, solidity)
    if d_high > lieblein.DIFFUSION_FACTOR_RANGE[1]:
        return
    assert d_high > d_low
    assert high["momentum_thickness"] > low["momentum_thickness"]
    if d_low >= 0.4:
        assert high["loss_coefficient"] > low["loss_coefficient"]


def test_howell_drags_as_printed():
    # Saravanamuttoo et al. (2017) Gas Turbine Theory, 7th ed., ch. 5: C_Da = 0.020 s/h and
    # C_Ds = 0.018 C_L^2. At s/h = 1/3 (an aspect ratio of 3 at unit pitch-chord) C_Da = 0.00667;
    # at C_L = 1, C_Ds = 0.018.
    assert_allclose(howell.annulus_drag(1 / 3), 0.020 / 3, rtol=1e-12)
    assert_allclose(howell.secondary_drag(1.0), 0.018, rtol=1e-12)


def test_lift_coefficient_from_the_momentum_balance():
    # Dixon & Hall (2014) ch. 3: the tangential force per unit span on a blade, rho s Vx (Vtheta1 - Vtheta2),
    # over the dynamic pressure of the vector-mean velocity Vm = Vx / cos(a_m) and the chord gives
    # C_L cos(a_m) (neglecting drag): derived here from forces rather than from the closed form.
    a1, a2, sigma, vx = 52.0, 25.0, 1.1, 1.0
    force = (1 / sigma) * vx * vx * (math.tan(math.radians(a1)) - math.tan(math.radians(a2)))
    am = math.atan(0.5 * (math.tan(math.radians(a1)) + math.tan(math.radians(a2))))
    lift = force / (0.5 * (vx / math.cos(am)) ** 2) / math.cos(am)
    assert_allclose(howell.lift_coefficient(a1, a2, sigma), lift, rtol=1e-12)


def test_loss_from_drag_gives_howells_diffuser_efficiency():
    # Howell (1945); Dixon & Hall (2014) ch. 3: the diffuser efficiency of a compressor cascade,
    # (ideal - lost pressure rise) / ideal, is 1 - 2 C_D / (C_L sin 2 a_m). The ideal rise over the
    # inlet dynamic pressure is 1 - (cos a1 / cos a2)^2 (incompressible, constant Vx): derived here.
    a1, a2, sigma, cd = 48.0, 20.0, 1.0, 0.03
    lift = howell.lift_coefficient(a1, a2, sigma)
    omega = howell.loss_from_drag(cd, a1, a2, sigma)
    ideal = 1 - (math.cos(math.radians(a1)) / math.cos(math.radians(a2))) ** 2
    assert_allclose(1 - omega / ideal, howell.diffuser_efficiency(cd, lift, a1, a2), rtol=1e-12)
    assert_allclose(howell.drag_from_loss(omega, a1, a2, sigma), cd, rtol=1e-12)


def _compressor(phi, psi, reaction, u, rotor_solidity=1.0, stator_solidity=1.0, clearance=None, t01=288.15):
    cp, gamma = 1005.0, 1.4
    stage = triangles.evaluate_stage_from_duty("compressor", phi, psi, reaction, u, total_temperature=t01,
                                               cp=cp, gamma=gamma)
    return with_stage_efficiency(stage, "compressor", "lieblein_howell", cp, gamma, rotor_aspect_ratio=3.0,
                                 stator_aspect_ratio=3.0, rotor_solidity=rotor_solidity,
                                 stator_solidity=stator_solidity, tip_clearance_to_height=clearance)


def test_fifty_percent_reaction_stage_efficiency_is_the_diffuser_efficiency():
    # Howell (1945); Dixon & Hall (2014) ch. 5 (from memory): at 50 % reaction and low speed the rows are
    # mirror images (W1 = V2, W2 = V3), each does half the stage's static rise, and the stage's
    # total-to-total efficiency equals the rows' diffuser efficiency 1 - 2 C_D / (C_L sin 2 a_m). At
    # 40 m/s blade speed compressibility changes it by less than 1e-3.
    result = _compressor(0.5, 0.4, 0.5, 40.0)
    v = result.values
    drag = howell.drag_from_loss(v["rotor_loss_coefficient"], v["beta1"], v["beta2"], 1.0)
    expected = howell.diffuser_efficiency(drag, v["rotor_lift_coefficient"], v["beta1"], v["beta2"])
    assert_allclose(v["rotor_loss_coefficient"], v["stator_loss_coefficient"], rtol=1e-12)
    assert_allclose(v["total_to_total_efficiency"], expected, atol=1e-3)


def _exact_compressor(T01, p01, cp, gamma, V2, V3, work, ds_rotor, ds_stator):
    """Exact perfect-gas compressor stage: efficiencies from their definitions."""
    R = cp * (gamma - 1) / gamma
    k = gamma / (gamma - 1)
    T03 = T01 + work / cp
    T2 = T03 - V2**2 / (2 * cp)
    T3 = T03 - V3**2 / (2 * cp)
    p3 = p01 * (T3 / T01) ** k * math.exp(-(ds_rotor + ds_stator) / R)
    p03 = p3 * (T03 / T3) ** k
    return T2, T3, (T01 * (p03 / p01) ** (1 / k) - T01) / (T03 - T01), (T01 * (p3 / p01) ** (1 / k) - T01) / (
        T03 - T01)


@pytest.mark.parametrize("ds_rotor, ds_stator", [(0.0, 0.0), (4.0, 3.0), (12.0, 9.0)])
def test_compressor_efficiency_relation_derived_again(ds_rotor, ds_stator):
    # The compressor analogue of Dixon & Hall's turbine relation (module docstring of
    # service.core.losses.efficiency): eta_tt = 1 - (dh_S + T3/T2 dh_R) / dW, against exact perfect-gas
    # states with the same entropy rises; exact without loss. Otherwise its one approximation,
    # h03 - h03ss = h3 - h3ss, misses the factor T03 / T3 = 1 + V3^2 / (2 cp T3) on the loss (derived
    # from the two isentropes between p3 and p03): the error stays below that fraction (plus 1 %) of 1 - eta.
    cp, gamma = 1005.0, 1.4
    T01, p01, V2, V3, work = 300.0, 1.0e5, 260.0, 180.0, 3.6e4
    T2, T3, tt_exact, ts_exact = _exact_compressor(T01, p01, cp, gamma, V2, V3, work, ds_rotor, ds_stator)
    rotor = efficiency.enthalpy_loss(ds_rotor, T2, cp)
    stator = efficiency.enthalpy_loss(ds_stator, T3, cp)
    tt, ts = efficiency.compressor_stage_efficiencies(rotor, stator, T2, T3, work, V3)
    if ds_rotor == 0.0:
        assert_allclose([tt, ts], [tt_exact, ts_exact], rtol=1e-12)
    else:
        bound = 0.01 + V3**2 / (2 * cp * T3)
        assert abs(tt - tt_exact) < bound * (1 - tt_exact)
        assert abs(ts - ts_exact) < 0.01 * (1 - ts_exact)


def test_pressure_loss_coefficients_convert_exactly():
    # Perfect gas, adiabatic row: p0_in / p0_out from omega = (p01 - p02) / (p01 - p1) and from
    # Y = (p01 - p02) / (p02 - p2), each with the isentropic p / p0 of the Mach number (NACA Report 1135,
    # eq. 45); derived here with the pressures themselves.
    gamma, mach = 1.4, 0.7
    p0_in, p0_out = 2.0e5, 1.9e5
    p_in = p0_in * (1 + 0.2 * mach**2) ** -3.5
    omega = (p0_in - p0_out) / (p0_in - p_in)
    assert_allclose(efficiency.pressure_ratio_from_inlet_loss(omega, mach, gamma), p0_in / p0_out, rtol=1e-12)
    p_out = p0_out * (1 + 0.2 * mach**2) ** -3.5
    y = (p0_in - p0_out) / (p0_out - p_out)
    assert_allclose(efficiency.pressure_ratio_from_exit_loss(y, mach, gamma), p0_in / p0_out, rtol=1e-12)


def test_enthalpy_loss_coefficient_tends_to_y_at_low_mach():
    # At low Mach number the enthalpy loss coefficient zeta = dh / (V2^2 / 2) and Ainley's Y coincide
    # (Dixon & Hall ch. 3: zeta = Y to first order in M^2). Derived here: at M2 = 0.05 they agree to 0.2 %.
    cp, gamma, t2, mach, y = 1005.0, 1.4, 300.0, 0.05, 0.06
    ratio = efficiency.pressure_ratio_from_exit_loss(y, mach, gamma)
    dh = efficiency.enthalpy_loss(efficiency.entropy_rise(ratio, cp, gamma), t2, cp)
    v2 = mach * math.sqrt(gamma * cp * (gamma - 1) / gamma * t2)
    assert_allclose(dh / (0.5 * v2**2), y, rtol=2e-3)
    assert_allclose(efficiency.entropy_from_enthalpy_loss(dh, t2, cp), efficiency.entropy_rise(ratio, cp, gamma),
                    rtol=1e-12)


@settings(max_examples=100, deadline=None)
@given(st.floats(0.35, 0.8), st.floats(0.2, 0.5), st.floats(0.3, 0.8))
def test_zero_loss_gives_efficiency_one(phi, psi, reaction):
    stage = triangles.evaluate_stage_from_duty("compressor", phi, psi, reaction, 250.0, total_temperature=288.15)
    tt, _ = efficiency.compressor_stage_efficiencies(0.0, 0.0, stage.values["T2"], stage.values["T3"],
                                                     stage.values["work"], stage.values["V3"])
    assert_allclose(tt, 1.0, rtol=1e-15)


def test_tip_clearance_lowers_the_efficiency():
    # Vavra's clearance drag 0.29 (k/h) C_L^1.5 (from memory) on the rotor only.
    clean = _compressor(0.5, 0.4, 0.5, 250.0)
    leaky = _compressor(0.5, 0.4, 0.5, 250.0, clearance=0.02)
    v = leaky.values
    drag = 0.29 * 0.02 * float(v["rotor_lift_coefficient"]) ** 1.5
    assert_allclose(v["rotor_tip_clearance_loss"], howell.loss_from_drag(drag, v["beta1"], v["beta2"], 1.0),
                    rtol=1e-12)
    assert float(v["stator_tip_clearance_loss"]) == 0.0
    assert float(v["total_to_total_efficiency"]) < float(clean.values["total_to_total_efficiency"])


def test_out_of_range_inputs_warn_and_still_answer():
    # Solidity 2.2 and a stator inlet angle of 29.7 deg lie outside the NACA 65-series cascade tests
    # (Herrig, Emery & Erwin 1957, NACA TN 3916: solidity 0.5-1.5, inlet angle 30-70 deg).
    result = _compressor(0.7, 0.3, 0.75, 250.0, rotor_solidity=2.2)
    v, checks = result.values, result.checks
    assert np.isfinite(v["total_to_total_efficiency"])
    assert str(checks["rotor_solidity_high"].status) == "warn"
    assert "NACA TN 3916" in checks["rotor_solidity_high"].basis
    assert abs(float(v["beta1"])) < 70.0 and abs(float(v["alpha2"])) < 30.0
    assert str(checks["stator_inlet_angle_low"].status) == "warn"
    assert str(checks["rotor_solidity_low"].status) == "ok"


def test_stall_beyond_the_correlation_is_a_failure():
    # D_eq beyond exp(1/1.17) = 2.35 is past stall, where Lieblein's fit has no meaning: a per-case failure.
    result = _compressor(0.35, 0.7, 0.5, 250.0, rotor_solidity=0.3, stator_solidity=0.3)
    assert float(result.values["rotor_equivalent_diffusion_ratio"]) != float("nan")
    assert result.failed().all()
    assert any("outside its correlation" in reason for reason, _ in result.failures)


def test_compressor_cases_by_stages():
    phi = np.array([[0.45, 0.5], [0.55, 0.6], [0.65, 0.7]])
    stage = triangles.evaluate_stage_from_duty("compressor", phi, 0.4, 0.6, 300.0, total_temperature=300.0)
    whole = evaluate_stage_efficiency("compressor", "lieblein_howell", stage.values, 1005.0, 1.4, 2.5, 3.0,
                                      rotor_solidity=1.2, stator_solidity=np.array([1.0, 1.1]))
    assert whole.values["total_to_total_efficiency"].shape == (3, 2)
    one = evaluate_stage_efficiency("compressor", "lieblein_howell",
                                    {k: np.asarray(a)[2, 1] for k, a in stage.values.items()}, 1005.0, 1.4, 2.5, 3.0,
                                    rotor_solidity=1.2, stator_solidity=1.1)
    assert_allclose(whole.values["total_to_total_efficiency"][2, 1], one.values["total_to_total_efficiency"],
                    rtol=1e-13)
    assert whole.checks["stator_solidity_low"].value.shape == (3, 2)


def test_stages_padded_with_nan_are_not_failures():
    # A machine's stages past its last are NaN-padded: they give NaN losses and no failure of their own.
    stage = triangles.evaluate_stage_from_duty("compressor", np.array([[0.5, np.nan]]), 0.4, 0.6, 300.0,
                                               total_temperature=300.0)
    values = {k: np.where(np.isnan(stage.values["work"]), np.nan, v) for k, v in stage.values.items()}
    result = evaluate_stage_efficiency("compressor", "lieblein_howell", values, 1005.0, 1.4, 2.5, 3.0,
                                       rotor_solidity=1.2, stator_solidity=1.1)
    assert np.isfinite(result.values["total_to_total_efficiency"][0, 0])
    assert np.isnan(result.values["total_to_total_efficiency"][0, 1])
    assert not any(np.asarray(mask).any() for _, mask in result.failures)
