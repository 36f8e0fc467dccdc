"""A stage's rows judged from its own triangles equal the row methods called by hand."""

import numpy as np
from numpy.testing import assert_allclose

from service.core import stage, zweifel
from service.core.triangles import evaluate_stage_from_duty


def test_compressor_rows_use_relative_flow_in_the_rotor_and_absolute_in_the_stator():
    result = evaluate_stage_from_duty("compressor", 0.5, 0.4, 0.5, 300.0)
    judged = stage.with_diffusion_rows(result, 1.2, 1.1).values
    v = result.values
    # Lieblein's definition written out here: DF = 1 - V2/V1 + |dVtheta| / (2 sigma V1).
    rotor = 1 - v["W2"] / v["W1"] + abs(v["Wtheta2"] - v["Wtheta1"]) / (2 * 1.2 * v["W1"])
    stator = 1 - v["V3"] / v["V2"] + abs(v["Vtheta3"] - v["Vtheta2"]) / (2 * 1.1 * v["V2"])
    assert_allclose(judged["rotor_diffusion_factor"], rotor, rtol=1e-12)
    assert_allclose(judged["stator_diffusion_factor"], stator, rtol=1e-12)


def test_turbine_rows_are_sized_like_separate_zweifel_rows():
    result = evaluate_stage_from_duty("turbine", [0.6, 0.9], [1.5, 2.0], [0.5, 0.3], 320.0)
    judged = stage.with_zweifel_rows(result, 0.03, 0.4, 0.85).values
    v = result.values
    stator = zweifel.evaluate_zweifel_sizing(v["alpha1"], v["alpha2"], 0.03, 0.4, zweifel_coefficient=0.85)
    rotor = zweifel.evaluate_zweifel_sizing(v["beta2"], v["beta3"], 0.03, 0.4, zweifel_coefficient=0.85)
    assert_allclose(judged["stator_blade_count"], stator.values["blade_count"])
    assert_allclose(judged["rotor_blade_count"], rotor.values["blade_count"])
    assert np.all(judged["rotor_zweifel_coefficient_achieved"] <= 0.85 + 1e-12)


def test_a_row_that_cannot_be_judged_fails_the_case_with_the_row_named():
    # Zero stator solidity is outside the diffusion factor's domain.
    result = stage.with_diffusion_rows(evaluate_stage_from_duty("compressor", [0.5, 0.5], 0.4, 0.5, 300.0),
                                       1.2, np.array([1.0, 0.0]))
    assert result.failed().tolist() == [False, True]
    reasons = [reason for reason, mask in result.failures if np.any(mask)]
    assert reasons[0].startswith("stator: ")
    assert np.isnan(result.values["alpha1"][1]) and np.isfinite(result.values["alpha1"][0])
