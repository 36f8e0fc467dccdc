"""Extreme inputs: each case found in review (issue 13 item 2; issue 19, "Also found") as a regression test.

Each answer is either right to 1e-9 relative or refused with a reason. The reference is the same
published formula evaluated in 50-digit decimal arithmetic from the exact values of the double
inputs (:mod:`tests.precise`), so it does not share the service's floating-point formulation:

- Lieblein's diffusion factor and solidity: Lieblein, Schwenk & Broderick (1953), NACA RM E53D01;
- static state, speed of sound: NACA Report 1135 (1953), eqs. 43-44 and a = sqrt(gamma R T);
- Zweifel's coefficient and its compressible factor: Zweifel (1945), Brown Boveri Review 32;
  NACA Report 1135, eq. 44;
- stage split: Saravanamuttoo et al. (2017), "Gas Turbine Theory", sec. 2.3; Dixon & Hall (2014),
  sec. 2.6.
"""

from __future__ import annotations

from decimal import Decimal, localcontext

import numpy as np
import pytest

from service.core import diffusion, split, triangles, zweifel
from service.core.angles import cos_tan
from tests.core.helpers import reasons
from tests.precise import PI, D, compressibility_factor, cos_deg, machin_pi, power, rel, sin_deg, tan_deg

RTOL = 1e-9


def test_the_reference_pi_is_machins():
    assert abs(machin_pi() - PI) < Decimal("1e-55")


def _df_reference(vx1, vx2, a1, a2, sigma):
    """NACA RM E53D01: DF = 1 - V2/V1 + |Vtheta2 - Vtheta1| / (2 sigma V1), V = Vx / cos a, Vtheta = Vx tan a."""
    with localcontext() as ctx:
        ctx.prec = 60
        v1, v2 = D(vx1) / cos_deg(a1), D(vx2) / cos_deg(a2)
        turning = abs(D(vx2) * tan_deg(a2) - D(vx1) * tan_deg(a1))
        return 1 - v2 / v1 + turning / (2 * D(sigma) * v1)


# -- issue 13 item 2: the diffusion factor does not depend on the velocity scale ---------------------


@pytest.mark.parametrize("vx", [150.0, 1e308, 1e-300, 2.9e8, 1e-3])
def test_diffusion_factor_at_any_velocity_scale(vx):
    # Issue 13: at 1e308 m/s the service answered 0.268 where 150 m/s gives 0.484.
    result = diffusion.evaluate_diffusion_analysis("stator", vx, 45.0, 15.0, solidity=1.2)
    assert not result.failed()
    assert rel(result.values["diffusion_factor"], _df_reference(vx, vx, 45.0, 15.0, 1.2)) < RTOL


@pytest.mark.parametrize("vx", [150.0, 1e308])
def test_diffusion_sizing_at_any_velocity_scale(vx):
    # Issue 19: the sizing overflowed at V_x 1e308 (solidity 0, 1 blade instead of 54).
    result = diffusion.evaluate_diffusion_sizing("stator", vx, 45.0, 15.0, 0.45, chord=0.05, mean_radius=0.3)
    assert not result.failed()
    with localcontext() as ctx:
        ctx.prec = 60
        ratio = cos_deg(45.0) / cos_deg(15.0)
        sigma = abs(tan_deg(15.0) - tan_deg(45.0)) * cos_deg(45.0) / (2 * (D(0.45) - 1 + ratio))
        count = int((2 * PI * D(0.3) * sigma / D(0.05)).to_integral_value(rounding="ROUND_CEILING"))
    assert rel(result.values["solidity"], sigma) < RTOL
    assert int(result.values["blade_count"]) == count == 54


# -- issue 19: M1 = 0 for T0 >= 1e306 K ---------------------------------------------------------------


@pytest.mark.parametrize("t0", [300.0, 1e305, 1e306, 1e308])
def test_mach_number_at_huge_total_temperatures(t0):
    cp, gamma = 1005.0, 1.4
    tri = triangles.stage_triangles("compressor", 320.0, 176.0, 64.0, 198.4)
    states = triangles.stage_states("compressor", tri, t0, None, cp, gamma)
    with localcontext() as ctx:
        ctx.prec = 60
        v1 = (D(176.0) ** 2 + D(64.0) ** 2).sqrt()
        t1 = D(t0) - v1 * v1 / (2 * D(cp))
        r = D(cp) * (D(gamma) - 1) / D(gamma)
        mach = v1 / (D(gamma) * r * t1).sqrt()
    assert float(states["M1"]) > 0
    assert rel(states["M1"], mach) < RTOL


# -- issue 19: compressible Zweifel at outlet Mach 1e45, 1e-160 and 1e-170 -------------------------


@pytest.mark.parametrize("mach", [1e45, 1e-160, 1e-170, 0.5, 1e-8, 3.0, 1e10])
def test_compressibility_factor_over_the_whole_mach_range(mach):
    # Issue 19: 0 at M 1e45, off by 7e-4 at 1e-160, "overflow" at 1e-170.
    factor = zweifel.compressibility_factor(mach, 1.4)
    assert rel(factor, compressibility_factor(mach, 1.4)) < RTOL


def test_compressible_zweifel_coefficient_at_tiny_and_huge_mach():
    for mach in (1e45, 1e-160, 1e-170):
        result = zweifel.evaluate_zweifel_analysis(0.0, 70.0, 0.04, pitch=0.05, definition="compressible",
                                                   outlet_mach=mach)
        assert not result.failed()
        with localcontext() as ctx:
            ctx.prec = 60
            incompressible = 2 * D(0.05) / D(0.04) * cos_deg(70.0) ** 2 * abs(tan_deg(0.0) - tan_deg(70.0))
        expected = incompressible * compressibility_factor(mach, 1.4)
        assert rel(result.values["zweifel_coefficient"], expected) < RTOL


def test_a_compressibility_factor_below_the_float_range_is_refused_as_such():
    # At M = 1e200 the factor is about 1e-1000: no double holds it. The reason says what happened
    # (not "overflow").
    result = zweifel.evaluate_zweifel_analysis(0.0, 70.0, 0.04, pitch=0.05, definition="compressible",
                                               outlet_mach=1e200)
    assert result.failed()
    assert "below the smallest normal floating-point number" in reasons(result)[0]


# -- issue 19: the outlet Mach number from nearly equal pressures ---------------------------------


@pytest.mark.parametrize("closeness", [1e-15, 1e-12, 1e-6, 0.3])
def test_outlet_mach_from_nearly_equal_pressures(closeness):
    # Issue 19: p2 = p01 (1 - 1e-15) lost 4.4 % through log(p01 / p2).
    p01 = 1e5
    p2 = p01 * (1 - closeness)
    with localcontext() as ctx:
        ctx.prec = 60
        k = (D(1.4) - 1) / D(1.4)
        mach = (2 / (D(1.4) - 1) * (power(D(p01) / D(p2), k) - 1)).sqrt()
    assert rel(zweifel.outlet_mach_from_pressure(p01, p2, 1.4), mach) < RTOL


def test_outlet_mach_from_pressures_far_apart():
    with localcontext() as ctx:
        ctx.prec = 60
        k = (D(1.4) - 1) / D(1.4)
        mach = (2 / (D(1.4) - 1) * (power(D(1e300) / D(1e-300), k) - 1)).sqrt()
    assert rel(zweifel.outlet_mach_from_pressure(1e300, 1e-300, 1.4), mach) < RTOL


# -- issue 19: a pressure ratio of 1 + 1e-14 ------------------------------------------------------


def _split(**kwargs):
    base = {"machine": "compressor", "rule": "equal_work", "pressure_ratio": 1 + 1e-14, "total_temperature": 300.0,
            "total_pressure": 1e5, "stages": 1}
    return split.evaluate_stage_split(**{**base, **kwargs})


@pytest.mark.parametrize("machine", ["compressor", "turbine"])
@pytest.mark.parametrize("rule", ["equal_work", "equal_pressure_ratio"])
@pytest.mark.parametrize("stages", [1, 3])
def test_stage_isentropic_efficiency_near_a_pressure_ratio_of_one(machine, rule, stages):
    # Issue 19: 1 + 1e-14 with a stage efficiency of 0.9 reported 0.800 (cancellation in tau - 1).
    # With a stage isentropic efficiency given, every stage's reported efficiency is that one.
    result = _split(machine=machine, rule=rule, stages=stages, stage_isentropic_efficiency=0.9)
    assert not result.failed()
    np.testing.assert_allclose(result.values["stage_isentropic_efficiency"][0], 0.9, rtol=RTOL)
    # The whole machine: reheat/preheat effects are O(Pi - 1), so the overall efficiency is 0.9 to 1e-13.
    np.testing.assert_allclose(result.values["isentropic_efficiency"], 0.9, rtol=RTOL)


@pytest.mark.parametrize("machine", ["compressor", "turbine"])
def test_polytropic_split_near_a_pressure_ratio_of_one(machine):
    pr, eta_p, gamma = 1 + 1e-14, 0.9, 1.4
    result = _split(machine=machine, pressure_ratio=pr, polytropic_efficiency=eta_p, stages=1)
    with localcontext() as ctx:
        ctx.prec = 60
        k = (D(gamma) - 1) / D(gamma)
        if machine == "compressor":  # Saravanamuttoo sec. 2.3: eta = (PR^k - 1) / (PR^(k/eta_p) - 1)
            tau = power(D(pr), k / D(eta_p))
            eta = (power(D(pr), k) - 1) / (tau - 1)
        else:  # eta = (1 - tau) / (1 - PR^-k), tau = PR^(-k eta_p)
            tau = power(D(pr), -k * D(eta_p))
            eta = (1 - tau) / (1 - power(D(pr), -k))
        change = D(300.0) * abs(tau - 1)
    assert rel(result.values["stage_isentropic_efficiency"][0, 0], eta) < RTOL
    assert rel(result.values["total_temperature_change"][0], change) < RTOL
    assert rel(result.values["work"][0], D(1005.0) * change) < RTOL


# -- issue 19: angles within 1e-12 deg of 90 ------------------------------------------------------


@pytest.mark.parametrize("angle", [90 - 1e-12, -(90 - 1e-12), 89.99999999999999, 90 - 1e-6, 45.0, 1e-300])
def test_cosine_and_tangent_keep_the_complement(angle):
    cos, tan = cos_tan(angle)
    assert rel(cos, cos_deg(angle)) < 1e-15
    assert rel(tan, tan_deg(angle)) < 1e-15


def test_triangles_from_angles_within_1e_12_deg_of_90():
    a1, a2 = 90 - 2e-12, 90 - 1e-12
    result = triangles.evaluate_stage_from_angles("compressor", 300.0, 150.0, a1, a2)
    assert not result.failed()
    with localcontext() as ctx:
        ctx.prec = 60
        loading = D(150.0) / D(300.0) * (tan_deg(a2) - tan_deg(a1))  # Dixon & Hall: psi = phi (tan a2 - tan a1)
    assert rel(result.values["loading_coefficient"], loading) < RTOL
    assert rel(result.values["work"], loading * D(300.0) ** 2) < RTOL


def test_zweifel_coefficient_within_1e_12_deg_of_90():
    result = zweifel.evaluate_zweifel_analysis(0.0, 90 - 1e-12, 0.04, pitch=0.05)
    with localcontext() as ctx:
        ctx.prec = 60
        expected = 2 * D(0.05) / D(0.04) * cos_deg(90 - 1e-12) ** 2 * abs(tan_deg(0.0) - tan_deg(90 - 1e-12))
    assert rel(result.values["zweifel_coefficient"], expected) < RTOL


def test_diffusion_factor_within_1e_12_deg_of_90():
    result = diffusion.evaluate_diffusion_analysis("stator", 150.0, 90 - 1e-12, 15.0, solidity=1.2)
    assert rel(result.values["diffusion_factor"], _df_reference(150.0, 150.0, 90 - 1e-12, 15.0, 1.2)) < RTOL


def test_loading_of_two_nearly_equal_angles():
    # psi = phi (tan a2 - tan a1): from the sine of the difference, not the difference of tangents.
    a1, a2 = 60.0, 60.0 + 1e-9
    with localcontext() as ctx:
        ctx.prec = 60
        loading = D(0.5) * (tan_deg(a2) - tan_deg(a1))
    assert rel(triangles.loading_from_angles("compressor", 0.5, a1, a2), loading) < RTOL


def test_tiny_loading_from_the_duty_is_kept():
    # Vtheta2 - Vtheta1 = U psi cancels to 0 against U (1 - R) for psi = 1e-20: the loading and the
    # work come from the duty itself.
    result = triangles.evaluate_stage_from_duty("compressor", 0.5, 1e-20, 0.5, 300.0)
    assert not result.failed()
    assert rel(result.values["loading_coefficient"], D(1e-20)) < RTOL
    assert rel(result.values["work"], D(1e-20) * D(300.0) ** 2) < RTOL


def test_sin_reference_agrees_with_the_half_angle():
    # A check of the reference itself: sin 30 deg = 1/2 exactly.
    assert abs(sin_deg(30) - Decimal("0.5")) < Decimal("1e-50")


def test_blade_counts_and_pitches_at_huge_radii():
    # 2 pi r overflows at r = 1e308 although r / s = 1e8 blades and r / N are numbers.
    assert int(zweifel.blade_count_for_pitch(1e308, 1e300)) == int(np.ceil(2 * np.pi * 1e8 * (1 - 1e-12)))
    assert rel(zweifel.pitch_for_blade_count(1e308, 4), D(1e308) / 4 * 2 * PI) < RTOL
    sized = diffusion.evaluate_diffusion_sizing("stator", 150.0, 45.0, 15.0, 0.45, chord=1e306, mean_radius=1e308)
    assert not sized.failed()
    assert rel(sized.values["pitch"], D(1e308) / D(float(sized.values["blade_count"])) * 2 * PI) < RTOL


@pytest.mark.parametrize(("a1", "a2"), [(90 - 3e-12, 90 - 1e-12), (89.99999999999997, 89.99999999999999),
                                        (10.0, 89.99999999999999)])
def test_stage_diffusion_factors_with_angles_a_few_ulps_short_of_90(a1, a2):
    # The stage's rows are judged from its velocities, not from its angles rounded to degrees.
    from service.core import stage

    result = stage.with_diffusion_rows(triangles.evaluate_stage_from_angles("compressor", 300.0, 150.0, a1, a2),
                                       1.2, 1.1)
    with localcontext() as ctx:
        ctx.prec = 60
        vx, u = D(150.0), D(300.0)
        swirl = {1: vx * tan_deg(a1), 2: vx * tan_deg(a2), 3: vx * tan_deg(a1)}  # repeating stage: alpha3 = alpha1

        def df(t_in, t_out, sigma):  # NACA RM E53D01 in the row's frame
            v_in, v_out = (vx * vx + t_in * t_in).sqrt(), (vx * vx + t_out * t_out).sqrt()
            return 1 - v_out / v_in + abs(t_out - t_in) / (2 * D(sigma) * v_in)

        expected = {"rotor": df(swirl[1] - u, swirl[2] - u, 1.2), "stator": df(swirl[2], swirl[3], 1.1)}
    for row, value in expected.items():
        assert rel(result.values[f"{row}_diffusion_factor"], value) < RTOL, row


@pytest.mark.parametrize(("a2", "a3", "radius"), [(90 - 1e-12, -30.0, 1e-3),
                                                  (89.99999999999997, 89.99999999999999 - 1e-13, 1e6),
                                                  (70.0, -(90 - 3e-12), 1e-3)])
def test_stage_zweifel_rows_with_angles_a_few_ulps_short_of_90(a2, a3, radius):
    # The radius keeps both rows' counts below 2**53 (a row turning from near 90 deg carries a huge load).
    from service.core import stage

    result = stage.with_zweifel_rows(triangles.evaluate_stage_from_angles("turbine", 300.0, 150.0, a2, a3),
                                     0.04, radius)
    assert not result.failed()
    with localcontext() as ctx:
        ctx.prec = 60
        vx, u = D(150.0), D(300.0)
        swirl = {1: vx * tan_deg(a3), 2: vx * tan_deg(a2), 3: vx * tan_deg(a3)}  # repeating stage: alpha1 = alpha3

        def loading(t_in, t_out):  # Zweifel (1945): 2 cos^2(a_out) |tan a_in - tan a_out| = 2 Vx |dVtheta| / V_out^2
            return 2 * vx * abs(t_in - t_out) / (vx * vx + t_out * t_out)

        expected = {"stator": loading(swirl[1], swirl[2]), "rotor": loading(swirl[2] - u, swirl[3] - u)}
    for row, value in expected.items():
        count = int(result.values[f"{row}_blade_count"])
        achieved = value * 2 * PI * D(radius) / count / D(0.04)  # Zw = loading s / cx with s = 2 pi r / N
        assert rel(result.values[f"{row}_zweifel_coefficient_achieved"], achieved) < RTOL, row


def test_zweifel_sizing_of_a_lightly_loaded_row_with_a_long_chord():
    # s / cx = 0.8 / loading is near 1e300 and the chord 1e200 m: the pitch s overflows, the count does
    # not (2 pi r / s is tiny: one blade). Zweifel (1945): Zw = 2 (s/cx) cos^2 a2 |tan a1 - tan a2|.
    result = zweifel.evaluate_zweifel_sizing(0.0, 1e-299, 1e200, 1e202)
    assert not result.failed()
    assert int(result.values["blade_count"]) == 1
    with localcontext() as ctx:
        ctx.prec = 60
        loading = 2 * cos_deg(1e-299) ** 2 * abs(tan_deg(1e-299))
        achieved = loading * 2 * PI * D(1e202) / D(1e200)
    assert rel(result.values["zweifel_coefficient_achieved"], achieved) < RTOL


def test_the_duty_is_reported_as_given():
    # A reaction of 1e-300 came back as 1 - (Vtheta1 + Vtheta2) / 2U, rounded to 0 or 1e-16.
    result = triangles.evaluate_stage_from_duty("compressor", 0.5, 0.4, 1e-300, 300.0)
    assert float(result.values["reaction"]) == 1e-300
    assert float(result.values["loading_coefficient"]) == 0.4
