"""Machine design with estimated stage efficiencies: a fixed point of the loss model and the split."""

import numpy as np
import pytest
from numpy.testing import assert_allclose, assert_array_equal

from service.core import machine, machine_efficiency, split
from service.core.losses import efficiency as loss_efficiency
from service.core.losses import howell, lieblein, soderberg
from service.core.losses.stage import evaluate_stage_efficiency
from tests.core.helpers import reasons

AIR = {"cp": 1005.0, "gamma": 1.4}
PRODUCTS = {"cp": 1148.0, "gamma": 1.333}
COMPRESSOR = dict(machine="compressor", mass_flow=25.0, total_temperature=288.15, total_pressure=101325.0,
                  pressure_ratio=5.0, shaft_speed=12000.0, flow_coefficient=0.5, reaction=0.6,
                  rotor_aspect_ratio=2.5, stator_aspect_ratio=3.0, solidity=1.2, mean_radius=0.3, stages=5, **AIR)
TURBINE = dict(machine="turbine", mass_flow=25.0, total_temperature=1400.0, total_pressure=1.2e6,
               pressure_ratio=4.0, shaft_speed=12000.0, flow_coefficient=0.6, reaction=0.45,
               rotor_aspect_ratio=1.8, stator_aspect_ratio=1.4, hub_radius=0.24, stages=3, **PRODUCTS)
ITERATED = (("iterations", "row_loss_coefficient", "stage_total_to_static_efficiency"))


def estimated(base, **changes):
    return machine_efficiency.evaluate_machine_design_estimated(**{**base, **changes})


def given(base, efficiency, **changes):
    inputs = {**base, **changes}
    return machine.evaluate_machine_design(**inputs, polytropic_efficiency=None, stage_isentropic_efficiency=efficiency)


@pytest.mark.parametrize("base", [COMPRESSOR, {**COMPRESSOR, "solidity": None, "target_diffusion_factor": 0.45},
                                  TURBINE, {**TURBINE, "hub_radius": None, "mean_radius": 0.3}],
                         ids=["compressor-solidity", "compressor-diffusion", "turbine-hub", "turbine-mean"])
def test_the_answer_is_a_fixed_point(base):
    # Its own estimated efficiencies, given back as stage efficiencies with its stage count, reproduce it.
    result = estimated(base)
    assert not result.failed().any() and result.values["iterations"][0] > 1
    again = given(base, result.values["stage_isentropic_efficiency"])
    assert not again.failed().any()
    for name, value in result.values.items():
        if name in ITERATED:
            continue
        assert_allclose(again.values[name], value, rtol=1e-9, atol=1e-12, err_msg=name)
    assert_allclose(again.values["outlet_total_temperature"], result.values["outlet_total_temperature"], rtol=1e-9)


def test_the_first_pass_decides_the_stage_count_and_it_is_held():
    # A loading limit: the count found with the starting efficiency is kept.
    base = {**COMPRESSOR, "stages": None, "max_loading_coefficient": 0.4}
    result = estimated(base)
    start = machine_efficiency.DEFAULT_STARTING_EFFICIENCY
    first = machine.evaluate_machine_design(**base, polytropic_efficiency=start)
    assert result.values["stage_count"][0] == first.values["stage_count"][0] > 0
    assert result.values["iterations"][0] > 1


def _flow_by_hand(values, n):
    """Stage i's stations 1, 2, 3 are the machine's stations 2i + 1 .. 2i + 3 (from 1)."""
    flow = {}
    for j in range(3):
        columns = [2 * i + j for i in range(n)]
        flow.update({f"alpha{j + 1}": values["station_alpha"][:, columns],
                     f"beta{j + 1}": values["station_beta"][:, columns],
                     f"V{j + 1}": values["station_velocity"][:, columns],
                     f"W{j + 1}": values["station_relative_velocity"][:, columns],
                     f"T{j + 1}": values["station_static_temperature"][:, columns],
                     f"M{j + 1}": values["station_mach"][:, columns],
                     f"M_rel{j + 1}": values["station_relative_mach"][:, columns]})
    flow["work"] = values["stage_work"]
    return flow


def test_compressor_stage_efficiencies_are_the_loss_models_on_its_own_stages():
    # Independent route: the stage triangles taken from the converged machine's stations by hand, the
    # stage-efficiency method applied to them with the rows' given solidity.
    result = estimated(COMPRESSOR, tip_clearance_to_height=0.02)
    v, n = result.values, 5
    direct = evaluate_stage_efficiency("compressor", "lieblein_howell", _flow_by_hand(v, n), 1005.0, 1.4, 2.5, 3.0,
                                       rotor_solidity=1.2, stator_solidity=1.2, tip_clearance_to_height=0.02)
    assert_allclose(direct.values["total_to_total_efficiency"], v["stage_isentropic_efficiency"], atol=1e-8)
    assert_allclose(direct.values["rotor_loss_coefficient"], v["row_loss_coefficient"][:, 0::2], rtol=1e-8)
    assert_allclose(direct.values["stator_loss_coefficient"], v["row_loss_coefficient"][:, 1::2], rtol=1e-8)


def test_turbine_stage_efficiencies_are_the_loss_models_on_its_own_stages():
    # Soderberg's Reynolds number rho V D_h / mu at each row's exit, the pitch of Zweifel's 0.8 (the
    # incompressible definition, Dixon & Hall (2014) ch. 3: s / c_x = Z / (2 cos^2 a2 |tan a1 - tan a2|)).
    mu = 4.5e-5
    result = estimated(TURBINE, dynamic_viscosity=mu)
    v, n = result.values, 3
    reynolds = {}
    for row, column, frame in (("stator", 0, ""), ("rotor", 1, "relative_")):
        rows = [2 * i + column for i in range(n)]
        exits = [r + 1 for r in rows]
        a1, a2 = np.radians(v["row_inlet_angle"][:, rows]), np.radians(v["row_outlet_angle"][:, rows])
        pitch = 0.8 / (2.0 * np.cos(a2) ** 2 * np.abs(np.tan(a1) - np.tan(a2))) * v["row_axial_chord"][:, rows]
        height = v["row_blade_height"][:, rows]
        throat = pitch * np.cos(a2)
        d_h = 2.0 * throat * height / (throat + height)
        reynolds[row] = v["station_density"][:, exits] * v[f"station_{frame}velocity"][:, exits] * d_h / mu
    direct = evaluate_stage_efficiency("turbine", "soderberg", _flow_by_hand(v, n), 1148.0, 1.333, 1.8, 1.4,
                                       reynolds_number=reynolds)
    assert_allclose(direct.values["total_to_total_efficiency"], v["stage_isentropic_efficiency"], atol=1e-8)
    assert_allclose(direct.values["stator_loss_coefficient"], v["row_loss_coefficient"][:, 0::2], rtol=1e-8)


def test_zero_loss_gives_efficiency_one_and_the_isentropic_outlet(monkeypatch):
    def lossless_soderberg(row, inlet, outlet, aspect_ratio, reynolds):
        zero = np.zeros(np.broadcast_shapes(np.shape(inlet), np.shape(outlet)))
        return {"deflection": np.abs(np.subtract(inlet, outlet)), "nominal_loss": zero, "aspect_ratio_loss": zero,
                "loss_coefficient": zero}

    profile = lieblein.lieblein_profile_loss
    monkeypatch.setattr(soderberg, "soderberg_loss", lossless_soderberg)
    monkeypatch.setattr(lieblein, "lieblein_profile_loss",
                        lambda *a: {**profile(*a), "loss_coefficient": 0.0 * profile(*a)["loss_coefficient"]})
    monkeypatch.setattr(howell, "loss_from_drag", lambda drag, *a: 0.0 * np.asarray(drag, dtype=float))
    for base, sign in ((COMPRESSOR, 1.0), (TURBINE, -1.0)):
        result = estimated(base)
        assert not result.failed().any()
        assert_allclose(result.values["stage_isentropic_efficiency"], 1.0, rtol=1e-12)
        assert_allclose(result.values["isentropic_efficiency"], 1.0, rtol=1e-9)
        assert_allclose(result.values["polytropic_efficiency"], 1.0, rtol=1e-9)
        k = (base["gamma"] - 1.0) / base["gamma"]
        # Isentropic: T0_out / T0_in = Pi^(+-k) (perfect gas).
        assert_allclose(result.values["outlet_total_temperature"],
                        base["total_temperature"] * base["pressure_ratio"] ** (sign * k), rtol=1e-9)
        assert_allclose(result.values["row_loss_coefficient"], 0.0, atol=0.0)


def test_a_case_that_does_not_converge_fails_saying_so():
    result = estimated(TURBINE, max_iterations=1)
    assert reasons(result) == ["the estimated efficiency did not converge in 1 iteration"]
    assert result.values["stage_count"][0] == 0 and np.isnan(result.values["outlet_total_temperature"][0])
    converged = estimated(TURBINE)
    assert 1 < converged.values["iterations"][0] < machine_efficiency.MAX_ITERATIONS
    # A looser tolerance stops sooner.
    assert estimated(TURBINE, tolerance=1e-4).values["iterations"][0] < converged.values["iterations"][0]


def test_typical_machines_fall_in_the_published_bands():
    # Multistage axial compressors of conventional design reach polytropic efficiencies of about 0.88-0.92
    # (Saravanamuttoo et al. (2017), Gas Turbine Theory, 7th ed., ch. 2-5; from memory): a loose band.
    result = estimated({**COMPRESSOR, "solidity": None, "target_diffusion_factor": 0.45})
    assert 0.85 < result.values["polytropic_efficiency"][0] < 0.95
    # Turbine stages at flow coefficient 0.6 and loading about 1-2 sit near 0.90-0.94 total-to-total on Smith's
    # (1965) chart (from memory): a loose band.
    result = estimated(TURBINE)
    assert np.all((result.values["stage_isentropic_efficiency"] > 0.86)
                  & (result.values["stage_isentropic_efficiency"] < 0.96))
    loading = result.values["stage_loading_coefficient"]
    assert np.all((loading > 0.8) & (loading < 2.5))


def test_correlation_ranges_are_warn_checks_per_stage():
    # Lieblein's cascade data: solidities 0.5-1.5 (NASA SP-36 ch. 6); Soderberg's chart: t/c 0.15-0.25.
    result = estimated(COMPRESSOR, solidity=1.8)
    check = result.checks["loss_rotor_solidity_high"]
    assert check.value.shape == (1, 5) and np.all(check.status == "warn")
    assert_allclose(check.value, 1.8)
    assert not result.failed().any()
    result = estimated(TURBINE, thickness_to_chord=0.1)
    assert np.all(result.checks["loss_thickness_to_chord_low"].status == "warn")
    assert np.all(result.checks["loss_rotor_deflection_high"].status == "ok")


def test_batch_equals_one_by_one():
    cases = [dict(pressure_ratio=5.0, shaft_speed=12000.0, stages=5), dict(pressure_ratio=3.0, shaft_speed=11000.0,
                                                                           stages=3),
             dict(pressure_ratio=6.0, shaft_speed=12000.0, stages=6)]
    batch = estimated(COMPRESSOR, **{name: np.array([c[name] for c in cases]) for name in cases[0]})
    for i, case in enumerate(cases):
        alone = estimated(COMPRESSOR, **case)
        assert batch.values["iterations"][i] == alone.values["iterations"][0]
        for name, value in alone.values.items():
            n = value.shape[1] if value.ndim == 2 else None
            assert_array_equal(batch.values[name][i, :n] if n else batch.values[name][i], value[0], err_msg=name)
        for name, check in alone.checks.items():
            value = np.asarray(check.value)
            batch_value = np.asarray(batch.checks[name].value)[i]
            assert_array_equal(batch_value[:value.shape[1]] if value.ndim == 2 else batch_value, value[0], err_msg=name)


def test_wrong_or_unavailable_loss_models():
    result = estimated(TURBINE, loss_model="lieblein_howell")
    assert reasons(result) == ["loss_model 'lieblein_howell' is for a compressor, not a turbine"]
    with pytest.raises(ValueError, match="loss_model"):
        estimated(TURBINE, loss_model="kacker_okapuu")
    # A field of the other machine's model is refused, not ignored.
    assert reasons(estimated(TURBINE, tip_clearance_to_height=0.01))[0].startswith(
        "tip_clearance_to_height does not apply to a turbine")
    assert reasons(estimated(COMPRESSOR, thickness_to_chord=0.2))[0].startswith(
        "thickness_to_chord does not apply to a compressor")


def test_a_failed_first_pass_keeps_its_reason_beside_good_cases():
    result = estimated(COMPRESSOR, mean_radius=np.array([0.3, 0.05]))
    out = reasons(result)
    assert out[0] is None and "hub radius is at or below zero" in out[1]
    assert result.values["iterations"][1] == 0 and result.values["iterations"][0] > 1


@pytest.mark.parametrize("machine_name", ["compressor", "turbine"])
@pytest.mark.parametrize("rule", ["equal_work", "weights", "equal_pressure_ratio"])
def test_split_takes_one_efficiency_per_stage(machine_name, rule):
    # Each stage comes out with the isentropic efficiency it was given (the bracketed root holds with
    # mixed efficiencies), and one value broadcast is the per-case split bit for bit.
    weights = np.array([[3.0, 2.0, 2.0, 1.0]]) if rule == "weights" else None
    common = dict(machine=machine_name, rule=rule, pressure_ratio=4.0, total_temperature=300.0, total_pressure=1e5,
                  stages=4, weights=weights)
    etas = np.array([[0.80, 0.95, 0.70, 1.0]])
    mixed = split.evaluate_stage_split(**common, stage_isentropic_efficiency=etas)
    assert_allclose(mixed.values["stage_isentropic_efficiency"], etas, rtol=1e-9)
    assert_allclose(np.prod(mixed.values["stage_pressure_ratio"]), 4.0, rtol=1e-12)
    scalar = split.evaluate_stage_split(**common, stage_isentropic_efficiency=0.87)
    broadcast = split.evaluate_stage_split(**common, stage_isentropic_efficiency=np.full((1, 4), 0.87))
    for name, value in scalar.values.items():
        assert_array_equal(broadcast.values[name], value, err_msg=name)


def test_split_refuses_a_per_stage_efficiency_of_the_wrong_length():
    result = split.evaluate_stage_split("compressor", "equal_work", 4.0, 300.0, 1e5, stages=[4, 3],
                                        stage_isentropic_efficiency=[[0.9, 0.9, 0.9, 0.9], [0.9, 0.9, 0.9, 0.9]])
    assert reasons(result) == [None, "stage_isentropic_efficiency must have one entry per stage (NaN only "
                                     "padding the end)"]
    with pytest.raises(ValueError, match="stages"):
        split.evaluate_stage_split("compressor", "equal_work", 4.0, 300.0, 1e5, max_stage_pressure_ratio=1.3,
                                   stage_isentropic_efficiency=[[0.9, 0.9]])


def test_sutherland_is_the_default_viscosity():
    # Sutherland's law for air (White (2006) Table 1-2, from memory) at the rows' exit temperatures: the
    # answer equals the one given those viscosities... through a constant check at the reference point.
    assert_allclose(loss_efficiency.sutherland_viscosity(273.15), 1.716e-5, rtol=1e-12)
    default = estimated(TURBINE)
    given_mu = estimated(TURBINE, dynamic_viscosity=1e-4)
    # A larger viscosity, a lower Reynolds number: more loss (Soderberg's (1e5 / Re)^(1/4) factor).
    assert np.all(given_mu.values["stage_isentropic_efficiency"] < default.values["stage_isentropic_efficiency"])


def test_losses_beyond_the_correlation_fail_the_case_naming_the_stage():
    # Solidity 0.3 at this loading: Lieblein's equivalent diffusion ratio beyond his wake-thickness curve
    # (Lieblein 1959, NASA SP-36 ch. 6: stall near D_eq 2; the curve has no value past about 2.35); the first
    # pass's own losses fail, before any iteration, beside a good case.
    result = estimated(COMPRESSOR, solidity=np.array([0.3, 1.2]), stages=4)
    out = reasons(result)
    assert out[0].startswith("stage 1: the ") and "outside its correlation" in out[0] and out[1] is None
    assert list(result.values["iterations"] > 0) == [False, True]
