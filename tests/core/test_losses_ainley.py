"""The Ainley-Mathieson family of turbine row losses (Dunham-Came and Kacker-Okapuu revisions)."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from service.core.losses import ainley


def test_blend_reduces_to_the_two_charts():
    # Ainley & Mathieson (1951); Dixon (1998) 4th ed., eq. (3.46): a nozzle blade (inlet angle 0) has the
    # nozzle chart's loss whatever its thickness; an impulse blade (inlet angle = -outlet angle in the
    # service's signs) the impulse chart's, scaled by (t/c / 0.2)^1.
    for revision in ainley.PROFILE_REVISIONS:
        assert_allclose(ainley.profile_loss_blend(0.03, 0.08, 0.0, -70.0, 0.15, revision), 0.03, rtol=1e-12)
        assert_allclose(ainley.profile_loss_blend(0.03, 0.08, 70.0, -70.0, 0.25, revision), 0.08 * 1.25, rtol=1e-12)
    # Half-way (r = 0.5) at t/c 0.2: 0.03 + 0.25 * 0.05 = 0.0425 (eq. 3.46 by hand).
    assert_allclose(ainley.profile_loss_blend(0.03, 0.08, 35.0, -70.0, 0.2, "ainley_mathieson"), 0.0425, rtol=1e-12)
    with pytest.raises(ValueError, match="revision must be one of"):
        ainley.profile_loss_blend(0.03, 0.08, 35.0, -70.0, 0.2, "craig_cox")


def test_kacker_okapuu_blend_keeps_the_sign():
    # Kacker & Okapuu (1982): for an inlet flow from the outlet's side (r < 0) AM's r^2 raises the loss
    # towards the impulse value; |r| r lowers it below the nozzle value. At r = -0.5, t/c 0.2:
    # AM 0.03 + 0.25 * 0.05 = 0.0425, KO 0.03 - 0.25 * 0.05 = 0.0175 (by hand).
    assert_allclose(ainley.profile_loss_blend(0.03, 0.08, -35.0, -70.0, 0.2, "ainley_mathieson"), 0.0425, rtol=1e-12)
    assert_allclose(ainley.profile_loss_blend(0.03, 0.08, -35.0, -70.0, 0.2, "kacker_okapuu"), 0.0175, rtol=1e-12)


def test_compressibility_factor():
    # Kacker & Okapuu (1982), from memory: K_p = 1 below M2 0.2; at M1 0.3, M2 0.8:
    # K1 = 1 - 1.25 * 0.6 = 0.25, K2 = (0.3/0.8)^2 = 0.140625, K_p = 1 - 0.140625 * 0.75 = 0.894531 (by hand).
    assert_allclose(ainley.compressibility_factor(0.1, 0.15), 1.0, rtol=1e-12)
    assert_allclose(ainley.compressibility_factor(0.3, 0.8), 0.89453125, rtol=1e-12)
    assert_allclose(ainley.kacker_okapuu_profile_loss(0.06, 0.1, 0.15), 0.914 * 2 / 3 * 0.06, rtol=1e-12)


def test_aspect_ratio_function_is_continuous():
    # Kacker & Okapuu's two branches meet at h/c = 2: (1 - 0.25 sqrt 0) / 2 = 1 / 2.
    assert_allclose(ainley.aspect_ratio_function([2.0 - 1e-12, 2.0, 2.0 + 1e-12]), 0.5, rtol=1e-6)


def test_kacker_okapuu_secondary_is_dunham_came_times_1_2_at_low_speed():
    # Kacker & Okapuu (1982): Y_s = 1.2 K_s Y_s,DC with f(h/c) = c/h above h/c = 2; at low speed K_p = 1,
    # so K_s = 1 and the ratio is 1.2 exactly.
    dc = ainley.dunham_came_secondary_loss(0.0, -70.0, 3.0)
    ko = ainley.kacker_okapuu_secondary_loss(0.0, -70.0, 3.0, 0.3, 0.1, 0.15)
    assert_allclose(ko / dc, 1.2, rtol=1e-12)


def test_dunham_came_secondary_by_hand():
    # Dunham & Came (1970), from memory: nozzle 0 -> 60 deg, h/c = 2: tan am = -0.866025, am = -40.8934 deg,
    # C_L/(s/c) = 2 * 1.732051 * cos(am) = 2.618615, Z = 2.618615^2 * 0.25 / cos^3(am) = 3.968627,
    # Y_s = 0.0334 / 2 * (0.5 / 1) * 3.968627 = 0.033138 (by hand).
    am = math.atan(-0.5 * math.tan(math.radians(60.0)))
    z = (2 * math.tan(math.radians(60.0)) * math.cos(am)) ** 2 * 0.25 / math.cos(am) ** 3
    assert_allclose(z, 3.968627, rtol=1e-6)
    assert_allclose(ainley.dunham_came_secondary_loss(0.0, -60.0, 2.0), 0.033138, rtol=1e-5)


@settings(max_examples=100, deadline=None)
@given(st.floats(0.001, 0.05), st.floats(1.1, 3.0))
def test_tip_clearance_scales_with_the_clearance_to_the_power_0_78(clearance, factor):
    # Dunham & Came (1970): Y_k proportional to (k/c)^0.78.
    one = ainley.dunham_came_tip_clearance_loss(clearance, 2.5, 20.0, -65.0)
    more = ainley.dunham_came_tip_clearance_loss(clearance * factor, 2.5, 20.0, -65.0)
    assert_allclose(more / one, factor**0.78, rtol=1e-10)


def test_kacker_okapuu_unshrouded_decrement_by_hand():
    # Kacker & Okapuu (1982), from memory: 1 % clearance, 60 deg outlet, r_tip / r_mean 1.1:
    # 0.93 * 0.01 / 0.5 * 1.1 = 0.02046 of the efficiency (by hand).
    assert_allclose(ainley.kacker_okapuu_tip_clearance_efficiency(0.01, -60.0, 1.1), 0.02046, rtol=1e-12)


def test_denton_trailing_edge_loss():
    # Denton (1993): with no base-pressure depression and no boundary layer the loss is the blockage term
    # (t/w)^2; a base pressure of -0.15 adds 0.15 t/w. At t/w = 0.1: 0.01 and 0.025 (by hand).
    assert_allclose(ainley.denton_trailing_edge_loss(0.1, 0.0), 0.01, rtol=1e-12)
    assert_allclose(ainley.denton_trailing_edge_loss(0.1, -0.15), 0.025, rtol=1e-12)
    # A thin wake alone mixes out to 2 theta / w, the same as Lieblein's wake loss (service.core.losses.lieblein).
    assert_allclose(ainley.denton_trailing_edge_loss(0.0, 0.0, 0.01), 0.02, rtol=1e-12)


def _ko_stage(**changes):
    from service.core import gas, triangles
    from service.core.losses.stage import with_stage_efficiency

    cp, gamma = gas.gas_properties("combustion_products")
    stage = triangles.evaluate_stage_from_duty("turbine", 0.6, 1.5, 0.45, 300.0, total_temperature=1300.0,
                                               cp=cp, gamma=gamma)
    charts = {"stator_nozzle_profile_loss": 0.025, "stator_impulse_profile_loss": 0.07,
              "rotor_nozzle_profile_loss": 0.03, "rotor_impulse_profile_loss": 0.08}
    geometry = dict(rotor_aspect_ratio=2.5, stator_aspect_ratio=2.0, thickness_to_chord=0.2,
                    profile_chart_losses=charts, trailing_edge_thickness_to_throat=0.05,
                    base_pressure_coefficient=-0.15, **changes)
    return stage, with_stage_efficiency(stage, "turbine", "kacker_okapuu", cp, gamma, **geometry)


def test_kacker_okapuu_stage_sums_its_parts_and_converts_y_exactly():
    # The row's Y is the sum of its four parts (Kacker & Okapuu 1982); its entropy rise is R ln(p0_in/p0_out)
    # with p0_in/p0_out = 1 + Y (1 - p/p0) at the exit Mach number (definition of Y, derived in
    # tests/core/test_losses_compressor.py).
    stage, result = _ko_stage(tip_clearance_to_height=0.01)
    v = result.values
    parts = sum(v[f"rotor_{p}_loss"] for p in ("profile", "secondary", "trailing_edge", "tip_clearance"))
    assert_allclose(v["rotor_loss_coefficient"], parts, rtol=1e-12)
    gamma, cp = 1.333, 1148.0
    m = float(stage.values["M_rel3"])
    ratio = 1 + float(v["rotor_loss_coefficient"]) * (1 - (1 + (gamma - 1) / 2 * m * m) ** (-gamma / (gamma - 1)))
    assert_allclose(v["rotor_entropy_rise"], cp * (gamma - 1) / gamma * math.log(ratio), rtol=1e-10)
    assert float(v["stator_tip_clearance_loss"]) == 0.0


def test_kacker_okapuu_clearance_costs_about_two_points_per_percent():
    # A rule of thumb for unshrouded turbine rotors (common practice; also the size of Kacker & Okapuu's
    # 0.93 k / (h cos a2) decrement): about 1.5-3 points of efficiency per 1 % of clearance to height.
    _, clean = _ko_stage()
    _, leaky = _ko_stage(tip_clearance_to_height=0.01)
    drop = float(clean.values["total_to_total_efficiency"] - leaky.values["total_to_total_efficiency"])
    assert 0.01 < drop < 0.035


def test_kacker_okapuu_thickness_outside_the_charts_warns():
    stage, result = _ko_stage()
    assert str(result.checks["thickness_to_chord_high"].status) == "ok"
    from service.core import gas
    from service.core.losses.stage import with_stage_efficiency

    cp, gamma = gas.gas_properties("combustion_products")
    charts = {f"{r}_{k}_profile_loss": 0.03 for r in ("stator", "rotor") for k in ("nozzle", "impulse")}
    thick = with_stage_efficiency(stage, "turbine", "kacker_okapuu", cp, gamma, rotor_aspect_ratio=2.5,
                                  stator_aspect_ratio=2.0, thickness_to_chord=0.3, profile_chart_losses=charts,
                                  trailing_edge_thickness_to_throat=0.05, base_pressure_coefficient=-0.15)
    assert str(thick.checks["thickness_to_chord_high"].status) == "warn"
    assert "R&M 2974" in thick.checks["thickness_to_chord_high"].basis
    assert np.isfinite(thick.values["total_to_total_efficiency"])
