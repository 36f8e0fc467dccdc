"""Soderberg's turbine row loss and the turbine stage efficiency from the row losses."""

import doctest
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from service.core import gas, triangles
from service.core.losses import soderberg
from service.core.losses.efficiency import sutherland_viscosity, turbine_stage_efficiencies
from service.core.losses.soderberg import (
    hydraulic_diameter,
    soderberg_aspect_ratio_loss,
    soderberg_loss,
    soderberg_nominal_loss,
    soderberg_reynolds_loss,
)
from service.core.losses.stage import evaluate_stage_efficiency, with_stage_efficiency


def test_doctests():
    assert doctest.testmod(soderberg).failed == 0


def test_nominal_loss_as_printed():
    # Dixon & Hall (2014) 7th ed., ch. 4: zeta* = 0.04 (1 + 1.5 (eps/100)^2); at no deflection
    # 0.04, at 100 deg 0.04 * 2.5 = 0.10, at the chart's end (120 deg) 0.04 * 3.16 = 0.1264
    # (the equation evaluated by hand; the equation quoted from memory).
    assert_allclose(soderberg_nominal_loss([0.0, 100.0, 120.0]), [0.04, 0.10, 0.1264], rtol=1e-12)


def test_aspect_ratio_correction_vanishes_at_the_reference_for_nozzles_only():
    # Dixon & Hall (2014) 7th ed., ch. 4 (from memory): nozzle factor 0.993 + 0.021 b/H, rotor
    # 0.975 + 0.075 b/H. At H/b = 3 the nozzle factor is 0.993 + 0.007 = 1.000 exactly, the
    # rotor's 0.975 + 0.025 = 1.000 too: both corrections leave the nominal loss at H/b = 3.
    nominal = soderberg_nominal_loss(80.0)
    assert_allclose(soderberg_aspect_ratio_loss("stator", nominal, 3.0), nominal, rtol=1e-12)
    assert_allclose(soderberg_aspect_ratio_loss("rotor", nominal, 3.0), nominal, rtol=1e-12)
    # A short blade (H/b = 1) loses more: (1 + z)(0.993 + 0.021) - 1 for the nozzle.
    assert_allclose(soderberg_aspect_ratio_loss("stator", nominal, 1.0), (1 + nominal) * 1.014 - 1, rtol=1e-12)
    assert_allclose(soderberg_aspect_ratio_loss("rotor", nominal, 1.0), (1 + nominal) * 1.050 - 1, rtol=1e-12)
    with pytest.raises(ValueError, match="row must be one of"):
        soderberg_aspect_ratio_loss("nozzle", nominal, 1.0)


def test_reynolds_correction():
    # Dixon & Hall (2014) 7th ed., ch. 4: zeta_2 = (1e5 / Re)^(1/4) zeta_1; at Re = 1.6e6 the
    # factor is (1/16)^(1/4) = 0.5 exactly.
    assert_allclose(soderberg_reynolds_loss(0.08, [1e5, 1.6e6]), [0.08, 0.04], rtol=1e-12)


def test_hydraulic_diameter_of_a_square_duct():
    # D_h = 4 A / P: a passage exit of width s cos(a2) = H has D_h = H (definition of the hydraulic
    # diameter; Dixon & Hall ch. 4 write it 2 s H cos a2 / (s cos a2 + H)).
    assert_allclose(hydraulic_diameter(0.1 / math.cos(math.radians(60.0)), 0.1, 60.0), 0.1, rtol=1e-12)


@settings(max_examples=200, deadline=None)
@given(st.floats(0.0, 119.0), st.floats(0.1, 1.0), st.floats(0.5, 6.0), st.floats(3e4, 3e6))
def test_loss_rises_with_deflection_within_the_chart(deflection, step, aspect_ratio, reynolds):
    # Soderberg's chart (Dixon & Hall ch. 4): loss rises monotonically with deflection up to 120 deg.
    low = soderberg_loss("rotor", 0.0, -deflection, aspect_ratio, reynolds)["loss_coefficient"]
    high = soderberg_loss("rotor", 0.0, -(deflection + step), aspect_ratio, reynolds)["loss_coefficient"]
    assert high > low


def test_sutherland_viscosity_against_coolprop():
    # CoolProp's air (Lemmon & Jacobsen 2004 viscosity model) at 1 bar: Sutherland's law is within
    # 2 % from 250 K to 600 K and within 5 % at 1000 K (it enters Soderberg's loss to the power 1/4).
    from CoolProp.CoolProp import PropsSI

    t = np.array([250.0, 300.0, 600.0])
    reference = np.array([PropsSI("V", "T", ti, "P", 1e5, "Air") for ti in t])
    assert_allclose(sutherland_viscosity(t), reference, rtol=0.02)
    assert_allclose(sutherland_viscosity(1000.0), PropsSI("V", "T", 1000.0, "P", 1e5, "Air"), rtol=0.05)


def _exact_turbine(T01, p01, cp, gamma, V2, V3, work, ds_stator, ds_rotor):
    """Exact perfect-gas states of a turbine stage with given entropy rises; efficiencies from
    their definitions (Dixon & Hall ch. 4: eta_tt = (h01 - h03) / (h01 - h03ss), eta_ts with h3ss)."""
    R = cp * (gamma - 1) / gamma
    k = gamma / (gamma - 1)
    T2 = T01 - V2**2 / (2 * cp)
    T03 = T01 - work / cp
    T3 = T03 - V3**2 / (2 * cp)
    # s - s01 = cp ln(T / T01) - R ln(p / p01) at every state.
    p3 = p01 * (T3 / T01) ** k * math.exp(-(ds_stator + ds_rotor) / R)
    p03 = p3 * (T03 / T3) ** k
    T3ss = T01 * (p3 / p01) ** (1 / k)
    T03ss = T01 * (p03 / p01) ** (1 / k)
    return T2, T3, work / (cp * (T01 - T03ss)), work / (cp * (T01 - T3ss))


@pytest.mark.parametrize("ds_stator, ds_rotor", [(0.0, 0.0), (5.0, 8.0), (20.0, 25.0)])
def test_stage_efficiency_relation_derived_again(ds_stator, ds_rotor):
    # The relation of Dixon & Hall (2014) ch. 4, eta_tt = 1 / (1 + (zeta_R W3^2/2 + zeta_N V2^2/2 T3/T2) / dW),
    # against the exact states of a perfect gas with the same entropy rises: exact for no loss, and
    # otherwise off by a small fraction of the loss (h03 - h03ss taken as h3 - h3ss, T ds integrated
    # at the exit temperature): within 3 % of 1 - eta here.
    cp, gamma = 1148.0, 1.333
    T01, p01, V2, V3, work = 1400.0, 1.2e6, 520.0, 230.0, 2.2e5
    T2, T3, tt_exact, ts_exact = _exact_turbine(T01, p01, cp, gamma, V2, V3, work, ds_stator, ds_rotor)
    # Each row's enthalpy loss at its exit static temperature, h - h_s = cp T (1 - exp(-ds/cp)).
    stator = cp * T2 * (1 - math.exp(-ds_stator / cp))
    rotor = cp * T3 * (1 - math.exp(-ds_rotor / cp))
    tt, ts = turbine_stage_efficiencies(stator, rotor, T2, T3, work, V3)
    if ds_stator == 0.0:
        assert_allclose([tt, ts], [tt_exact, ts_exact], rtol=1e-12)
    else:
        assert abs(tt - tt_exact) < 0.03 * (1 - tt_exact)
        assert abs(ts - ts_exact) < 0.03 * (1 - ts_exact)


def _soderberg_stage(phi, psi, reaction, aspect_ratio=3.0, reynolds=1e5, u=300.0):
    cp, gamma = gas.gas_properties("combustion_products")
    stage = triangles.evaluate_stage_from_duty("turbine", phi, psi, reaction, u, total_temperature=1400.0,
                                               cp=cp, gamma=gamma)
    return with_stage_efficiency(stage, "turbine", "soderberg", cp, gamma, rotor_aspect_ratio=aspect_ratio,
                                 stator_aspect_ratio=aspect_ratio, reynolds_number=reynolds)


def test_normal_stage_incompressible_shortcut():
    # Dixon & Hall (2014) ch. 4: a 50 % reaction normal stage at low speed has zeta_N = zeta_R and
    # W3 = V2, so eta_tt = 1 / (1 + zeta V2^2 / dW) with V2^2 = (phi^2 + 1) U^2 at psi 1 (Vtheta2 = U,
    # derived from the duty relations). At phi 0.5: alpha2 = atan 2, deflection 63.43 deg,
    # zeta* = 0.04 (1 + 1.5 0.6343^2) = 0.064140, eta_tt = 1 / (1 + 0.064140 * 1.25) = 0.92574.
    result = _soderberg_stage(0.5, 1.0, 0.5, u=50.0)
    assert_allclose(result.values["stator_deflection"], math.degrees(math.atan(2.0)), rtol=1e-12)
    assert_allclose(result.values["total_to_total_efficiency"], 1 / (1 + 0.064140 * 1.25), rtol=2e-4)


def test_soderberg_efficiency_near_smiths_chart():
    # Smith (1965), J. R. Aero. Soc. 69, "A simple correlation of turbine efficiency": measured
    # total-to-total efficiencies of about 92-94 % near phi 0.6, psi 1 (chart corrected to zero tip
    # leakage; from memory). Soderberg's correlation is known to follow that chart to a point or two
    # (Dixon & Hall ch. 4); a loose plausibility band, not a precise check.
    result = _soderberg_stage(0.6, 1.0, 0.5, aspect_ratio=3.0, reynolds=1e5)
    assert 0.90 < float(result.values["total_to_total_efficiency"]) < 0.95


@settings(max_examples=100, deadline=None)
@given(st.floats(0.3, 1.2), st.floats(0.6, 2.5), st.floats(0.0, 0.8))
def test_zero_loss_gives_efficiency_one(phi, psi, reaction):
    # With no row loss both relations give eta_tt = 1 (definition: h03ss = h03).
    cp, gamma = 1148.0, 1.333
    stage = triangles.evaluate_stage_from_duty("turbine", phi, psi, reaction, 300.0, total_temperature=1400.0,
                                               cp=cp, gamma=gamma)
    tt, _ = turbine_stage_efficiencies(0.0, 0.0, stage.values["T2"], stage.values["T3"], stage.values["work"],
                                       stage.values["V3"])
    assert_allclose(tt, 1.0, rtol=1e-15)


def test_reynolds_number_from_the_state():
    # rho2 c2 D_h / mu worked by hand from the same states (ideal gas, Sutherland's law, the pitch of
    # Zweifel's 0.8 from 2 (s/b) cos^2 a2 |tan a1 - tan a2| = 0.8).
    cp, gamma = 1005.0, 1.4
    stage = triangles.evaluate_stage_from_duty("turbine", 0.6, 1.5, 0.5, 300.0, total_temperature=1200.0,
                                               total_pressure=5e5, cp=cp, gamma=gamma)
    v = stage.values
    result = evaluate_stage_efficiency("turbine", "soderberg", v, cp, gamma, 2.0, 1.5, blade_height=0.04)
    a1, a2 = math.radians(float(v["alpha1"])), math.radians(float(v["alpha2"]))
    s = 0.8 / (2 * math.cos(a2) ** 2 * abs(math.tan(a1) - math.tan(a2))) * (0.04 / 1.5)
    throat = s * math.cos(a2)
    d_h = 2 * throat * 0.04 / (throat + 0.04)
    rho2 = float(v["rho1"]) * (float(v["T2"]) / float(v["T1"])) ** 2.5
    mu = 1.716e-5 * (float(v["T2"]) / 273.15) ** 1.5 * (273.15 + 110.4) / (float(v["T2"]) + 110.4)
    assert_allclose(result.values["stator_reynolds_number"], rho2 * float(v["V2"]) * d_h / mu, rtol=1e-10)


def test_out_of_range_deflection_is_answered_with_a_warning():
    # A rotor turning 130 deg lies beyond Soderberg's chart (0-120 deg): the number still comes, the
    # check warns.
    result = _soderberg_stage(0.4, 3.0, 0.0)
    deflection = float(result.values["rotor_deflection"])
    assert deflection > 120.0
    assert np.isfinite(result.values["total_to_total_efficiency"])
    assert str(result.checks["rotor_deflection_high"].status) == "warn"
    assert "Dixon & Hall" in result.checks["rotor_deflection_high"].basis


def test_cases_by_stages():
    # Arrays of shape (cases, stages), as a machine design passes them, give the same numbers as one
    # call per element.
    cp, gamma = 1148.0, 1.333
    phi = np.array([[0.5, 0.6, 0.7], [0.8, 0.9, 1.0]])
    stage = triangles.evaluate_stage_from_duty("turbine", phi, 1.4, 0.45, 320.0, total_temperature=1300.0,
                                               total_pressure=8e5, cp=cp, gamma=gamma)
    ar = np.array([[1.5, 2.0, 2.5], [3.0, 3.5, 4.0]])
    whole = evaluate_stage_efficiency("turbine", "soderberg", stage.values, cp, gamma, ar, ar, blade_height=0.05)
    assert whole.values["total_to_total_efficiency"].shape == (2, 3)
    for i in range(2):
        for j in range(3):
            one = evaluate_stage_efficiency("turbine", "soderberg", {k: np.asarray(a)[i, j] if np.ndim(a) == 2 else a
                                                                     for k, a in stage.values.items()},
                                            cp, gamma, ar[i, j], ar[i, j], blade_height=0.05)
            assert_allclose(whole.values["total_to_total_efficiency"][i, j],
                            one.values["total_to_total_efficiency"], rtol=1e-13)


def test_unknown_options_raise():
    stage = triangles.evaluate_stage_from_duty("turbine", 0.6, 1.4, 0.45, 320.0, total_temperature=1300.0)
    with pytest.raises(ValueError, match="loss_model must be one of"):
        evaluate_stage_efficiency("turbine", "smith", stage.values, 1148.0, 1.333, 2.0, 2.0, reynolds_number=2e5)
    with pytest.raises(ValueError, match="is for a compressor"):
        evaluate_stage_efficiency("turbine", "lieblein_howell", stage.values, 1148.0, 1.333, 2.0, 2.0)
