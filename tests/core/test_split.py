"""Tests of the stage split: polytropic and isentropic relations, rules, stage counts, checks."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose, assert_array_equal
from scipy.optimize import brentq

from service.core import split
from service.core.checks import COMMON_PRACTICE
from service.core.triangles import evaluate_stage_from_duty
from tests.core.helpers import reasons

AIR = {"cp": 1005.0, "gamma": 1.4}
PRODUCTS = {"cp": 1148.0, "gamma": 1.333}


def evaluate(machine="compressor", rule="equal_work", pressure_ratio=8.0, total_temperature=288.15,
             total_pressure=101325.0, gas=None, **kwargs):
    gas = AIR if gas is None else gas
    return split.evaluate_stage_split(machine, rule, pressure_ratio, total_temperature, total_pressure,
                                      **gas, **kwargs)


def stage_values(result, name, case=0):
    """The per-stage values of one case, trimmed to its stage count (as the API layer will)."""
    return result.values[name][case, : result.values["stage_count"][case]]



# --- The polytropic and isentropic relations ---------------------------------------------


@pytest.mark.parametrize("machine", ["compressor", "turbine"])
@pytest.mark.parametrize("efficiency", [0.85, 0.90])
@pytest.mark.parametrize("pressure_ratio", [1.5, 4.0, 20.0])
def test_polytropic_relation_is_the_limit_of_many_small_stages(machine, efficiency, pressure_ratio):
    # Saravanamuttoo et al. (2017), sec. 2.3: the polytropic efficiency is the isentropic
    # efficiency of an infinitesimal stage. Derived here independently: N equal stages of
    # isentropic efficiency eta, N -> infinity, must give tau = Pi^(k/eta) (compressor) or
    # Pi^(-k eta) (turbine). The chain's error is O(1/N).
    k = 0.4 / 1.4
    stages = 10**6
    small = np.expm1(k * np.log(pressure_ratio) / stages)  # Pi_stage^k - 1
    if machine == "compressor":
        chain = np.exp(stages * np.log1p(small / efficiency))
    else:
        chain = np.exp(stages * np.log1p(efficiency * np.expm1(-np.log1p(small))))
    closed = split.total_temperature_ratio_polytropic(machine, pressure_ratio, efficiency, 1.4)
    assert_allclose(closed, chain, rtol=1e-5)


def test_dixon_hall_compressor_efficiency_example():
    # Dixon & Hall (2014), ch. 2 worked example (from memory): an air compressor of total
    # pressure ratio 8, inlet 300 K, outlet 586.4 K, gamma 1.4: total-to-total efficiency
    # 0.85 and polytropic efficiency 0.886 (three figures).
    tau = 586.4 / 300.0
    assert_allclose(split.isentropic_efficiency("compressor", 8.0, tau, 1.4), 0.85, atol=1e-3)
    assert_allclose(split.polytropic_efficiency("compressor", 8.0, tau, 1.4), 0.886, atol=1e-3)
    # ... and the polytropic relation run forwards returns the book's outlet temperature.
    eta_p = split.polytropic_efficiency("compressor", 8.0, tau, 1.4)
    result = evaluate(pressure_ratio=8.0, total_temperature=300.0, polytropic_efficiency=eta_p, stages=6)
    assert_allclose(result.values["outlet_total_temperature"], 586.4, rtol=1e-12)
    assert_allclose(result.values["isentropic_efficiency"], 0.85, atol=1e-3)


@pytest.mark.parametrize("machine", ["compressor", "turbine"])
@pytest.mark.parametrize("eta_p", [0.85, 0.90])
def test_isentropic_efficiency_against_pressure_ratio_for_fixed_polytropic_efficiency(machine, eta_p):
    # Saravanamuttoo et al. (2017), sec. 2.3, the figure of isentropic efficiency against
    # pressure ratio for eta_inf = 0.85 and 0.90 (its shape from memory): every curve starts
    # at eta_inf at a pressure ratio of one; the compressor's falls and the turbine's rises
    # as the ratio grows.
    ratios = np.array([1.0 + 1e-7, 2.0, 5.0, 10.0, 20.0, 40.0])
    tau = split.total_temperature_ratio_polytropic(machine, ratios, eta_p, 1.4)
    eta = split.isentropic_efficiency(machine, ratios, tau, 1.4)
    assert_allclose(eta[0], eta_p, rtol=1e-6)
    steps = np.diff(eta)
    assert np.all(steps < 0) if machine == "compressor" else np.all(steps > 0)


@pytest.mark.parametrize("machine", ["compressor", "turbine"])
def test_relations_invert_each_other(machine):
    # Derivation: the polytropic and isentropic relations are each other's inverse for one
    # stage (Dixon & Hall (2014), sec. 2.6).
    ratios = np.array([1.2, 2.0, 6.0, 30.0])
    for eta in (0.7, 0.9, 1.0):
        tau = split.total_temperature_ratio_isentropic(machine, ratios, eta, 1.333)
        assert_allclose(split.isentropic_efficiency(machine, ratios, tau, 1.333), eta, rtol=1e-12)
        eta_p = split.polytropic_efficiency(machine, ratios, tau, 1.333)
        back = split.total_temperature_ratio_polytropic(machine, ratios, eta_p, 1.333)
        assert_allclose(back, tau, rtol=1e-12)


def test_isentropic_stages_compound_to_the_isentropic_machine():
    # With stage efficiency one every stage is isentropic, and any chain of isentropic
    # stages gives T0_out/T0_in = Pi^k whatever the split (Saravanamuttoo et al., sec. 2.3).
    for machine, exponent in (("compressor", 0.4 / 1.4), ("turbine", -0.4 / 1.4)):
        for rule in ("equal_work", "equal_pressure_ratio"):
            result = evaluate(machine, rule, pressure_ratio=12.0, total_temperature=900.0,
                              stage_isentropic_efficiency=1.0, stages=7)
            assert_allclose(result.values["outlet_total_temperature"], 900.0 * 12.0**exponent, rtol=1e-10)
            assert_allclose(result.values["isentropic_efficiency"], 1.0, rtol=1e-9)


# --- The issue's example -------------------------------------------------------------------


def test_issue_example_equal_pressure_ratio_compressor():
    # Check values from the specification of the stage-split issue (not a published case):
    # compressor, pressure ratio 8, five stages, equal pressure ratio, polytropic efficiency
    # 0.90, gamma 1.4, inlet 288.15 K: each stage 1.5157, outlet 557.6 K, overall isentropic
    # efficiency 0.868 (values rounded as given).
    result = evaluate("compressor", "equal_pressure_ratio", pressure_ratio=8.0, total_temperature=288.15,
                      polytropic_efficiency=0.90, stages=5)
    assert result.values["stage_count"][0] == 5
    assert_allclose(stage_values(result, "stage_pressure_ratio"), 1.5157, atol=5e-5)
    assert_allclose(result.values["outlet_total_temperature"], 557.6, atol=0.05)
    assert_allclose(result.values["isentropic_efficiency"], 0.868, atol=5e-4)
    assert_allclose(result.values["polytropic_efficiency"], 0.90, rtol=0)
    assert_allclose(result.values["outlet_total_pressure"], 8.0 * 101325.0, rtol=1e-14)


# --- The known consequences: preheat and reheat ----------------------------------------------


def test_compressor_overall_efficiency_below_stage_and_polytropic_turbine_above():
    # Saravanamuttoo et al. (2017), sec. 2.3; Dixon & Hall (2014), sec. 2.6 (reheat factor):
    # for the same small-stage efficiency a multistage compressor's overall isentropic
    # efficiency is below it (preheat), a turbine's above it (reheat).
    for rule in ("equal_work", "equal_pressure_ratio"):
        comp = evaluate("compressor", rule, pressure_ratio=10.0, polytropic_efficiency=0.9, stages=8)
        turb = evaluate("turbine", rule, pressure_ratio=10.0, total_temperature=1400.0, gas=PRODUCTS,
                        polytropic_efficiency=0.9, stages=4)
        comp_stage, turb_stage = stage_values(comp, "stage_isentropic_efficiency"), stage_values(
            turb, "stage_isentropic_efficiency")
        assert np.all(comp.values["isentropic_efficiency"][0] < comp_stage)
        assert np.all(comp_stage < 0.9)
        assert np.all(turb.values["isentropic_efficiency"][0] > turb_stage)
        assert np.all(turb_stage > 0.9)

        # The same with a given stage isentropic efficiency; the equivalent polytropic
        # efficiency lies beyond the stage value (above it for a compressor, below for a
        # turbine), since each stage's own polytropic efficiency does.
        comp = evaluate("compressor", rule, pressure_ratio=10.0, stage_isentropic_efficiency=0.88, stages=8)
        turb = evaluate("turbine", rule, pressure_ratio=10.0, total_temperature=1400.0, gas=PRODUCTS,
                        stage_isentropic_efficiency=0.88, stages=4)
        assert comp.values["isentropic_efficiency"][0] < 0.88 < comp.values["polytropic_efficiency"][0]
        assert turb.values["isentropic_efficiency"][0] > 0.88 > turb.values["polytropic_efficiency"][0]
        assert_allclose(stage_values(comp, "stage_isentropic_efficiency"), 0.88, rtol=1e-10)


def test_equivalent_polytropic_efficiency_reproduces_the_outlet_temperature():
    # The reported polytropic efficiency with a stage isentropic efficiency is the single
    # value that, through the polytropic relation (Saravanamuttoo et al., sec. 2.3), gives
    # the same outlet total temperature at the overall pressure ratio.
    for machine in ("compressor", "turbine"):
        result = evaluate(machine, "equal_work", pressure_ratio=6.0, total_temperature=700.0,
                          stage_isentropic_efficiency=0.86, stages=5)
        eta_p = result.values["polytropic_efficiency"]
        tau = split.total_temperature_ratio_polytropic(machine, 6.0, eta_p, 1.4)
        assert_allclose(700.0 * tau, result.values["outlet_total_temperature"], rtol=1e-12)


# --- Rules and invariants --------------------------------------------------------------------


@pytest.mark.parametrize("machine", ["compressor", "turbine"])
@pytest.mark.parametrize("efficiency", [{"polytropic_efficiency": 0.9}, {"stage_isentropic_efficiency": 0.9}])
def test_stage_ratios_multiply_and_works_add(machine, efficiency):
    # Derivation: stage total pressure ratios multiply to the overall one, and the first law
    # adds the stage works to the machine's (Dixon & Hall (2014), ch. 2).
    weights = np.array([0.6, 1.0, 1.2, 1.0, 0.7])
    for rule, extra in (("equal_work", {}), ("equal_pressure_ratio", {}), ("weights", {"weights": weights})):
        result = evaluate(machine, rule, pressure_ratio=7.0, total_temperature=600.0, stages=5,
                          mass_flow=20.0, **efficiency, **extra)
        assert_allclose(np.prod(stage_values(result, "stage_pressure_ratio")), 7.0, rtol=1e-11)
        assert_allclose(np.sum(stage_values(result, "stage_work")), result.values["work"][0], rtol=1e-11)
        assert_allclose(result.values["work"], 1005.0 * result.values["total_temperature_change"], rtol=1e-14)
        assert_allclose(result.values["power"], 20.0 * result.values["work"], rtol=1e-14)
        inlet = stage_values(result, "stage_inlet_total_temperature")
        outlet = stage_values(result, "stage_outlet_total_temperature")
        assert_allclose(inlet[1:], outlet[:-1], rtol=1e-14)
        change = stage_values(result, "stage_total_temperature_change")
        assert_allclose(np.abs(outlet - inlet), change, rtol=1e-10)


@pytest.mark.parametrize("machine", ["compressor", "turbine"])
def test_polytropic_outlet_temperature_does_not_depend_on_the_rule(machine):
    # Saravanamuttoo et al. (2017), sec. 2.3: with a polytropic efficiency the stage
    # temperature ratios multiply to Pi^(k/eta_p) (or Pi^(-k eta_p)) whatever the split.
    k = 0.333 / 1.333
    exponent = k / 0.88 if machine == "compressor" else -k * 0.88
    expected = 1200.0 * 9.0**exponent
    outlets = []
    for rule, extra in (("equal_work", {}), ("equal_pressure_ratio", {}),
                        ("weights", {"weights": [0.5, 1.0, 1.5, 1.0, 1.0, 0.5]})):
        result = evaluate(machine, rule, pressure_ratio=9.0, total_temperature=1200.0, gas=PRODUCTS,
                          polytropic_efficiency=0.88, stages=6, **extra)
        outlets.append(result.values["outlet_total_temperature"][0])
    assert_allclose(outlets, expected, rtol=1e-12)


@pytest.mark.parametrize("machine", ["compressor", "turbine"])
def test_stage_isentropic_outlet_temperature_depends_on_the_rule(machine):
    # Dixon & Hall (2014), sec. 2.6: with a fixed stage isentropic efficiency the preheat
    # (reheat) depends on how the work is shared, so the rules give different outlets. The
    # equal-ratio outlet is derived here in closed form: four identical stages.
    k = 0.333 / 1.333
    stage_pr = 9.0**0.25
    if machine == "compressor":
        stage_tau = 1.0 + (stage_pr**k - 1.0) / 0.85
    else:
        stage_tau = 1.0 - 0.85 * (1.0 - stage_pr**-k)
    outlets = [evaluate(machine, rule, pressure_ratio=9.0, total_temperature=1200.0, gas=PRODUCTS,
                        stage_isentropic_efficiency=0.85, stages=4).values["outlet_total_temperature"][0]
               for rule in ("equal_work", "equal_pressure_ratio")]
    assert_allclose(outlets[1], 1200.0 * stage_tau**4, rtol=1e-13)
    # The difference is small (tenths of a kelvin) but far above the solver's tolerance.
    assert abs(outlets[0] - outlets[1]) > 0.02


@pytest.mark.parametrize("efficiency", [{"polytropic_efficiency": 0.9}, {"stage_isentropic_efficiency": 0.9}])
def test_equal_work_stage_ratio_falls_in_a_compressor_and_rises_in_a_turbine(efficiency):
    # Saravanamuttoo et al. (2017), ch. 5: the same temperature rise on a hotter inlet is a
    # smaller pressure ratio, so equal-work compressor stages fall in pressure ratio front to
    # rear; in a turbine the same drop on a cooler inlet is a larger expansion ratio.
    comp = evaluate("compressor", "equal_work", pressure_ratio=15.0, stages=10, **efficiency)
    turb = evaluate("turbine", "equal_work", pressure_ratio=15.0, total_temperature=1500.0, gas=PRODUCTS,
                    stages=5, **efficiency)
    assert np.all(np.diff(stage_values(comp, "stage_pressure_ratio")) < 0)
    assert np.all(np.diff(stage_values(turb, "stage_pressure_ratio")) > 0)
    for result in (comp, turb):
        changes = stage_values(result, "stage_total_temperature_change")
        assert_allclose(changes, changes.mean(), rtol=1e-10)


def test_weights_set_the_work_shares():
    # Derivation: rule weights gives stage work proportional to the normalised weights.
    weights = np.array([[2.0, 4.0, 4.0, 4.0, 2.0], [1.0, 1.0, 2.0, np.nan, np.nan]])
    result = evaluate("compressor", "weights", pressure_ratio=[6.0, 3.0], stage_isentropic_efficiency=0.9,
                      stages=[5, 3], weights=weights)
    for case, row in enumerate(weights):
        row = row[~np.isnan(row)]
        assert_allclose(stage_values(result, "stage_work", case),
                        result.values["work"][case] * row / row.sum(), rtol=1e-10)


def test_mixed_stage_counts_match_separate_calls_and_pad_with_nan():
    # Derivation: cases are independent; the batch pads shorter cases with NaN.
    result = evaluate("turbine", "equal_work", pressure_ratio=[3.0, 12.0, 5.0], total_temperature=1300.0,
                      stage_isentropic_efficiency=[0.9, 0.88, 0.92], stages=[2, 6, 1], blade_speed=400.0)
    assert result.values["stage_pressure_ratio"].shape == (3, 6)
    assert result.values["stage_count"].dtype == np.int64
    for case, (ratio, eta, count) in enumerate(((3.0, 0.9, 2), (12.0, 0.88, 6), (5.0, 0.92, 1))):
        alone = evaluate("turbine", "equal_work", pressure_ratio=ratio, total_temperature=1300.0,
                         stage_isentropic_efficiency=eta, stages=count, blade_speed=400.0)
        for name in ("stage_pressure_ratio", "stage_outlet_total_pressure", "stage_loading_coefficient"):
            assert_allclose(stage_values(result, name, case), stage_values(alone, name), rtol=1e-10)
            assert np.all(np.isnan(result.values[name][case, count:]))


def test_explicit_split_functions_agree_with_evaluate():
    # Derivation: evaluate_stage_split is built on the explicit functions.
    ratios = split.stage_pressure_ratios_polytropic("compressor", "equal_work", [4.0, 9.0], [3, 5], 0.9, 1.4)
    assert ratios.shape == (2, 5)
    assert np.all(np.isnan(ratios[0, 3:]))
    assert_allclose(np.nanprod(ratios, axis=1), [4.0, 9.0], rtol=1e-12)
    isentropic = split.stage_pressure_ratios_isentropic("turbine", "weights", 4.0, 3, 0.9, 1.4,
                                                        weights=[[1.0, 2.0, 1.0]])
    result = evaluate("turbine", "weights", pressure_ratio=4.0, total_temperature=1000.0,
                      stage_isentropic_efficiency=0.9, stages=3, weights=[1.0, 2.0, 1.0])
    assert_allclose(isentropic[0], stage_values(result, "stage_pressure_ratio"), rtol=1e-12)


def test_solver_meets_its_stated_tolerance():
    # Derivation: the root solve's residual is ln(product of stage ratios) - ln(overall);
    # SOLVER_RTOL on the total temperature change keeps it far below 1e-10.
    ratios = split.stage_pressure_ratios_isentropic("compressor", "equal_work", np.array([1.5, 8.0, 40.0]),
                                                    20, np.array([0.6, 0.85, 0.95]), 1.4)
    assert_allclose(np.prod(ratios, axis=1), [1.5, 8.0, 40.0], rtol=1e-10)


def test_equal_work_isentropic_matches_a_scalar_solve_written_out():
    # Derivation done here independently with scipy.optimize.brentq: two compressor stages of
    # isentropic efficiency 0.87 and equal temperature rise dT, inlet 288.15 K, overall 6:
    # stage i has Pi_i = (1 + 0.87 dT / T_i)^(1/k), T_1 = 288.15, T_2 = 288.15 + dT.
    k = 0.4 / 1.4

    def product(rise):
        first = (1 + 0.87 * rise / 288.15) ** (1 / k)
        second = (1 + 0.87 * rise / (288.15 + rise)) ** (1 / k)
        return first * second - 6.0

    rise = brentq(product, 1.0, 400.0, xtol=1e-12)
    expected = [(1 + 0.87 * rise / 288.15) ** (1 / k), (1 + 0.87 * rise / (288.15 + rise)) ** (1 / k)]
    result = evaluate(pressure_ratio=6.0, stage_isentropic_efficiency=0.87, stages=2)
    assert_allclose(stage_values(result, "stage_pressure_ratio"), expected, rtol=1e-10)
    assert_allclose(result.values["total_temperature_change"], 2 * rise, rtol=1e-10)


def test_results_are_one_dimensional_over_cases():
    # The lead's API layer relies on CaseResults.size and failed() being per case.
    result = evaluate(pressure_ratio=[4.0, 0.5, 9.0], polytropic_efficiency=0.9, stages=[2, 3, 7])
    assert result.size == 3
    assert_array_equal(result.failed(), [False, True, False])
    assert result.values["stage_pressure_ratio"].shape == (3, 7)
    assert result.values["outlet_total_temperature"].shape == (3,)
    single = evaluate(pressure_ratio=4.0, polytropic_efficiency=0.9, stages=2)
    assert single.size == 1 and single.values["stage_work"].shape == (1, 2)


# --- Solved stage counts ----------------------------------------------------------------------


COUNT_CASES = [
    ("compressor", "equal_work", {"polytropic_efficiency": 0.9}, AIR, 288.15),
    ("compressor", "equal_pressure_ratio", {"stage_isentropic_efficiency": 0.88}, AIR, 288.15),
    ("compressor", "equal_work", {"stage_isentropic_efficiency": 0.88}, AIR, 288.15),
    ("turbine", "equal_work", {"stage_isentropic_efficiency": 0.9}, PRODUCTS, 1500.0),
    ("turbine", "equal_pressure_ratio", {"polytropic_efficiency": 0.9}, PRODUCTS, 1500.0),
]


@pytest.mark.parametrize(("machine", "rule", "efficiency", "gas", "inlet"), COUNT_CASES)
def test_loading_limit_gives_the_fewest_stages(machine, rule, efficiency, gas, inlet):
    # Derivation: the solved count meets the limit and one stage fewer breaks it.
    limit = 0.4 if machine == "compressor" else 2.0
    speeds = np.array([250.0, 320.0, 400.0])
    result = evaluate(machine, rule, pressure_ratio=[5.0, 12.0, 3.0], total_temperature=inlet, gas=gas,
                      blade_speed=speeds, max_loading_coefficient=limit, **efficiency)
    count = result.values["stage_count"]
    assert np.all(count >= 1) and not result.failed().any()
    for case in range(3):
        assert np.max(stage_values(result, "stage_loading_coefficient", case)) <= limit * (1 + 1e-9)
        if count[case] > 1:
            fewer = evaluate(machine, rule, pressure_ratio=[5.0, 12.0, 3.0][case], total_temperature=inlet,
                             gas=gas, blade_speed=speeds[case], stages=count[case] - 1, **efficiency)
            assert np.max(stage_values(fewer, "stage_loading_coefficient")) > limit


def test_loading_limit_count_in_closed_form_for_polytropic_equal_work():
    # Derivation: with a polytropic efficiency the total temperature rise is fixed, so equal
    # work needs N = ceil(cp dT0 / (psi_max U^2)) stages.
    ratios = np.array([2.0, 5.0, 10.0, 20.0])
    result = evaluate("compressor", "equal_work", pressure_ratio=ratios, polytropic_efficiency=0.9,
                      blade_speed=300.0, max_loading_coefficient=0.35)
    rise = 288.15 * (ratios ** (0.4 / 1.4 / 0.9) - 1.0)
    assert_array_equal(result.values["stage_count"], np.ceil(1005.0 * rise / (0.35 * 300.0**2)))


@pytest.mark.parametrize(("machine", "rule", "efficiency", "gas", "inlet"), COUNT_CASES)
def test_stage_pressure_ratio_limit_gives_the_fewest_stages(machine, rule, efficiency, gas, inlet):
    # Derivation: the solved count meets the limit and one stage fewer breaks it.
    limit = 1.3 if machine == "compressor" else 1.9
    ratios = [5.0, 12.0, 1.25]
    result = evaluate(machine, rule, pressure_ratio=ratios, total_temperature=inlet, gas=gas,
                      max_stage_pressure_ratio=limit, **efficiency)
    count = result.values["stage_count"]
    for case in range(3):
        assert np.max(stage_values(result, "stage_pressure_ratio", case)) <= limit * (1 + 1e-9)
        if count[case] > 1:
            fewer = evaluate(machine, rule, pressure_ratio=ratios[case], total_temperature=inlet, gas=gas,
                             stages=count[case] - 1, **efficiency)
            assert np.max(stage_values(fewer, "stage_pressure_ratio")) > limit
    assert count[2] == 1


def test_stage_pressure_ratio_limit_exactly_met():
    # Derivation: equal stage ratios need N = ceil(ln Pi / ln Pi_max); a limit met exactly
    # (1.2^5 shared over five stages) is met, not missed by rounding.
    result = evaluate("compressor", "equal_pressure_ratio", pressure_ratio=[1.2**5, 1.2**5 * 1.001],
                      polytropic_efficiency=0.9, max_stage_pressure_ratio=1.2)
    assert_array_equal(result.values["stage_count"], [5, 6])


def test_weights_with_a_solved_count_use_the_weights_count():
    # Derivation: the weights fix the count; it is returned where it meets the limit.
    result = evaluate("compressor", "weights", pressure_ratio=[3.0, 30.0], polytropic_efficiency=0.9,
                      max_stage_pressure_ratio=1.5, weights=[1.0, 1.2, 1.2, 1.0])
    assert_array_equal(result.values["stage_count"], [4, 0])
    assert reasons(result)[0] is None
    assert "weighted stages" in reasons(result)[1]


def test_stage_count_functions_directly():
    # Derivation: equal pressure ratios need ceil(ln Pi / ln Pi_max) stages; a loading limit
    # below the single-stage need for every count up to the maximum gives 0.
    counts = split.stage_count_for_stage_pressure_ratio("turbine", "equal_pressure_ratio", "polytropic",
                                                        [2.0, 10.0, 100.0], 0.9, 1.333, 2.0)
    assert_array_equal(counts, [1, 4, 7])
    assert counts.dtype == np.int64
    counts = split.stage_count_for_loading("compressor", "equal_work", "stage_isentropic", [4.0, 4.0], 0.9,
                                           288.15, 1005.0, 1.4, 300.0, [0.4, 1e-4], max_stages=10)
    rise = 288.15 * (4.0 ** (0.4 / 1.4) - 1.0) / 0.9  # at least this, with preheat
    assert counts[0] >= np.ceil(1005.0 * rise / (0.4 * 300.0**2))
    assert counts[1] == 0


# --- Property tests ---------------------------------------------------------------------------


@st.composite
def split_cases(draw):
    machine = draw(st.sampled_from(split.MACHINES))
    rule = draw(st.sampled_from(split.SPLIT_RULES))
    model = draw(st.sampled_from(split.EFFICIENCY_MODELS))
    stages = draw(st.integers(1, 15))
    weights = None
    if rule == "weights":
        weights = draw(st.lists(st.floats(0.2, 5.0), min_size=stages, max_size=stages))
    return {
        "machine": machine, "rule": rule, "model": model, "stages": stages, "weights": weights,
        "pressure_ratio": draw(st.floats(1.05, 40.0)), "efficiency": draw(st.floats(0.5, 1.0)),
        "gamma": draw(st.floats(1.1, 1.67)), "total_temperature": draw(st.floats(200.0, 2000.0)),
    }


def _run(case, **count):
    name = "polytropic_efficiency" if case["model"] == "polytropic" else "stage_isentropic_efficiency"
    efficiency = {name: case["efficiency"]}
    return split.evaluate_stage_split(
        case["machine"], case["rule"], case["pressure_ratio"], case["total_temperature"], 1e5, 1100.0,
        case["gamma"], weights=case["weights"], **efficiency, **count)


@settings(max_examples=50, deadline=None)
@given(split_cases())
def test_split_invariants(case):
    # Derivations: ratios multiply, works add, each stage's efficiency is the given one
    # (stage model) or the polytropic relation's (Saravanamuttoo et al., sec. 2.3), and the
    # rule sets the work shares.
    result = _run(case, stages=case["stages"])
    assert not result.failed().any()
    ratio = stage_values(result, "stage_pressure_ratio")
    work = stage_values(result, "stage_work")
    assert np.all(ratio > 1.0)
    assert_allclose(np.prod(ratio), case["pressure_ratio"], rtol=1e-9)
    assert_allclose(work.sum(), result.values["work"][0], rtol=1e-9)
    eta = stage_values(result, "stage_isentropic_efficiency")
    overall_tau = result.values["outlet_total_temperature"][0] / case["total_temperature"]
    if case["model"] == "stage_isentropic":
        assert_allclose(eta, case["efficiency"], rtol=1e-8)
    else:
        expected = split.total_temperature_ratio_polytropic(case["machine"], case["pressure_ratio"],
                                                            case["efficiency"], case["gamma"])
        assert_allclose(overall_tau, expected, rtol=1e-10)
        assert_allclose(result.values["polytropic_efficiency"], case["efficiency"], rtol=0)
    eta_p = split.polytropic_efficiency(case["machine"], case["pressure_ratio"], overall_tau, case["gamma"])
    assert_allclose(eta_p, result.values["polytropic_efficiency"][0], rtol=1e-8)
    if case["rule"] == "equal_work":
        assert_allclose(work, work.mean(), rtol=1e-8)
    elif case["rule"] == "weights":
        weights = np.asarray(case["weights"])
        assert_allclose(work, work.sum() * weights / weights.sum(), rtol=1e-8)
    else:
        assert_allclose(ratio, case["pressure_ratio"] ** (1.0 / case["stages"]), rtol=1e-12)
    if case["machine"] == "compressor":
        assert result.values["isentropic_efficiency"][0] <= np.min(eta) * (1 + 1e-9)
    else:
        assert result.values["isentropic_efficiency"][0] >= np.max(eta) * (1 - 1e-9)


@settings(max_examples=50, deadline=None)
@given(split_cases(), st.floats(1.1, 2.5), st.floats(150.0, 500.0), st.floats(0.2, 3.0))
def test_solved_counts_are_the_fewest(case, max_ratio, blade_speed, max_loading):
    # Derivation: a solved count meets its limit and, unless it is the weights' own count,
    # one fewer does not.
    for limit_name, limit, measure in (
        ("max_stage_pressure_ratio", max_ratio, "stage_pressure_ratio"),
        ("max_loading_coefficient", max_loading, "stage_loading_coefficient"),
    ):
        result = _run(case, blade_speed=blade_speed, **{limit_name: limit})
        count = result.values["stage_count"][0]
        if count == 0:
            assert result.failed()[0]
            continue
        assert np.max(stage_values(result, measure)) <= limit * (1 + 1e-9)
        if case["rule"] != "weights" and count > 1:
            fewer = _run(case, blade_speed=blade_speed, stages=count - 1)
            assert np.max(stage_values(fewer, measure)) > limit


# --- Failures: masks and reasons ----------------------------------------------------------------


def test_weights_that_do_not_match_the_stage_count_fail_that_case_only():
    result = evaluate("compressor", "weights", pressure_ratio=4.0, polytropic_efficiency=0.9, stages=[3, 4],
                      weights=[1.0, 2.0, 1.0])
    assert_array_equal(result.failed(), [False, True])
    assert reasons(result)[1] == "the number of weights does not match stages"
    assert np.all(np.isnan(result.values["stage_pressure_ratio"][1]))
    assert np.isnan(result.values["outlet_total_temperature"][1])
    assert_array_equal(result.values["stage_count"], [3, 0])
    assert_allclose(np.prod(stage_values(result, "stage_pressure_ratio")), 4.0, rtol=1e-12)


def test_unreachable_limit_fails_with_a_reason():
    result = evaluate("compressor", "equal_work", pressure_ratio=[4.0, 40.0], polytropic_efficiency=0.9,
                      blade_speed=150.0, max_loading_coefficient=0.3)
    assert_array_equal(result.failed(), [False, True])
    assert reasons(result)[1] == ("no stage count up to 50 keeps every stage's loading coefficient within "
                                  "max_loading_coefficient")
    assert result.values["stage_count"][1] == 0
    assert np.all(np.isnan(result.values["stage_work"][1]))


@pytest.mark.parametrize(("changes", "reason"), [
    ({"pressure_ratio": 0.8}, "pressure_ratio must be a finite number above 1"),
    ({"pressure_ratio": np.inf}, "pressure_ratio must be a finite number above 1"),
    ({"polytropic_efficiency": 1.2}, "polytropic_efficiency must be in (0, 1]"),
    ({"total_temperature": -5.0}, "total_temperature must be positive"),
    ({"gamma": 1.0}, "gamma must be above 1"),
    ({"stages": 2.5}, "stages must be a whole number from 1 to 50"),
    ({"stages": 51}, "stages must be a whole number from 1 to 50"),
    ({"weights": [1.0, -1.0, 1.0]}, "weights must be positive numbers (NaN may only pad the end of a row)"),
    ({"weights": [1.0, np.nan, 1.0]}, "weights must be positive numbers (NaN may only pad the end of a row)"),
])
def test_inputs_out_of_range_fail_with_a_reason(changes, reason):
    # Two cases: the first valid, the second with one input out of range.
    inputs = {"pressure_ratio": 4.0, "total_temperature": 300.0, "total_pressure": 1e5, "cp": 1005.0,
              "gamma": 1.4, "polytropic_efficiency": 0.9, "stages": 3, "weights": [1.0, 1.0, 1.0]}
    rows = {name: np.array([value, changes.get(name, value)], dtype=float) for name, value in inputs.items()}
    result = split.evaluate_stage_split("compressor", "weights", **rows)
    assert reasons(result) == [None, reason]
    assert result.values["stage_count"][1] == 0
    for name, value in result.values.items():
        if name != "stage_count":
            assert np.all(np.isnan(value[1])), name
    assert_allclose(result.values["outlet_total_pressure"][0], 4e5, rtol=1e-14)


def test_turbine_outlet_temperature_at_zero_is_a_failure():
    # A perfect-gas turbine's outlet is T0_in Pi^(-k eta_p) > 0 for any finite input; only
    # absurd inputs underflow it to zero, and then the case fails instead of reporting 0 K.
    result = evaluate("turbine", "equal_pressure_ratio", pressure_ratio=[4.0, 1e308],
                      total_temperature=[1000.0, 1e-20], gas={"cp": 1005.0, "gamma": 1e6},
                      polytropic_efficiency=1.0, stages=1)
    assert reasons(result) == [None, "the turbine outlet total temperature is at or below zero"]


@pytest.mark.parametrize(("kwargs", "match"), [
    ({"machine": "pump"}, "machine must be one of"),
    ({"rule": "equal_loading"}, "rule must be one of"),
    ({"stage_isentropic_efficiency": 0.9}, "give exactly one of .*polytropic_efficiency"),
    ({"polytropic_efficiency": None}, "give exactly one of .*polytropic_efficiency"),
    ({"stages": None}, "give exactly one of .*stages"),
    ({"max_stage_pressure_ratio": 1.3}, "give exactly one of .*stages"),
    ({"stages": None, "max_loading_coefficient": 0.4}, "max_loading_coefficient needs blade_speed"),
    ({"weights": [1.0, 2.0, 3.0]}, "weights must be given with rule 'weights'"),
    ({"rule": "weights"}, "weights must be given with rule 'weights'"),
    ({"rule": "weights", "weights": np.ones((2, 3, 1))}, "weights must be a"),
    ({"pressure_ratio": np.full((2, 2), 4.0)}, "1-D arrays over cases"),
])
def test_invalid_options_raise(kwargs, match):
    inputs = {"machine": "compressor", "rule": "equal_work", "pressure_ratio": 4.0,
              "total_temperature": 300.0, "total_pressure": 1e5, "polytropic_efficiency": 0.9, "stages": 3}
    inputs.update(kwargs)
    with pytest.raises(ValueError, match=match):
        split.evaluate_stage_split(**inputs)


# --- Design checks ------------------------------------------------------------------------------


def test_compressor_stage_pressure_ratio_check():
    # Common practice: core compressor stages about 1.15-1.4 (warn above 1.4).
    result = evaluate("compressor", "equal_pressure_ratio", pressure_ratio=[4.0, 1.3**4],
                      polytropic_efficiency=0.9, stages=[2, 4], blade_speed=350.0)
    check = result.checks["stage_pressure_ratio"]
    assert check.basis == COMMON_PRACTICE and check.limit == 1.4
    assert check.status.shape == (2, 4)
    assert_array_equal(check.status[0, :2], ["warn", "warn"])
    assert_array_equal(check.status[0, 2:], ["ok", "ok"])  # NaN padding
    assert_array_equal(check.status[1], ["ok"] * 4)


def test_loading_checks_by_machine():
    # Common practice: compressor psi = dh0/U^2 above 0.5 warns; turbine above 2.5 (the
    # usual region of Smith's (1965) chart).
    comp = evaluate("compressor", "equal_work", pressure_ratio=[2.0, 2.0], polytropic_efficiency=0.9,
                    stages=[1, 3], blade_speed=300.0)
    psi = comp.values["stage_loading_coefficient"][:, 0]
    assert_allclose(psi, 1005.0 * 288.15 * (2.0 ** (0.4 / 1.4 / 0.9) - 1.0) / 300.0**2 / np.array([1, 3]), rtol=1e-12)
    assert_array_equal(comp.checks["stage_loading_coefficient"].status[:, 0], ["warn", "ok"])
    turb = evaluate("turbine", "equal_work", pressure_ratio=4.0, total_temperature=1400.0, gas=PRODUCTS,
                    polytropic_efficiency=0.9, stages=[1, 2], blade_speed=350.0)
    assert set(turb.checks) == {"stage_loading_coefficient"}
    assert turb.checks["stage_loading_coefficient"].limit == 2.5
    assert_array_equal(turb.checks["stage_loading_coefficient"].status[:, 0], ["warn", "ok"])
    no_speed = evaluate("compressor", "equal_work", polytropic_efficiency=0.9, stages=3)
    assert set(no_speed.checks) == {"stage_pressure_ratio"}
    assert "stage_loading_coefficient" not in no_speed.values


def test_compressor_loading_limit_matches_de_haller_at_high_flow_coefficient():
    # de Haller (1953): W2/W1 >= 0.72. For a repeating 50 % reaction stage the triangles
    # (Dixon & Hall (2014), ch. 5; service.core.triangles) put psi = 0.5 on that limit at
    # phi of about 0.69, the basis stated for the loading check's 0.5.
    phi = np.sqrt((0.25**2 - 0.72**2 * 0.75**2) / (0.72**2 - 1.0))
    assert_allclose(phi, 0.69, atol=5e-3)
    psi = split.LOADING_COEFFICIENT_LIMITS["compressor"]
    stage = evaluate_stage_from_duty("compressor", phi, psi, 0.5, 300.0)
    assert_allclose(stage.values["de_haller_rotor"], 0.72, rtol=1e-12)
