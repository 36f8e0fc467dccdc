"""The spanwise rules of thumb: each one can pass, warn and (where it has a fail band) fail."""

import numpy as np
import pytest

from service.core import span, span_checks
from service.core.checks import COMMON_PRACTICE
from service.core.triangles import evaluate_stage_from_duty


def _statuses(check):
    return check.status.tolist()


def test_rotor_tip_relative_mach_bands():
    # Common practice: subsonic tip ok, transonic tip warns, beyond fan experience fails.
    check = span_checks.rotor_tip_relative_mach_check([0.9, 1.2, 1.8])
    assert _statuses(check) == ["ok", "warn", "fail"]
    assert check.basis.startswith(COMMON_PRACTICE)


def test_hub_reaction_fails_below_zero():
    assert _statuses(span_checks.hub_reaction_check([-0.05, 0.0, 0.2])) == ["fail", "ok", "ok"]


def test_hub_to_tip_ratio_band():
    checks = span_checks.hub_to_tip_ratio_checks([0.3, 0.6, 0.95])
    assert _statuses(checks["hub_to_tip_ratio_low"]) == ["warn", "ok", "ok"]
    assert _statuses(checks["hub_to_tip_ratio_high"]) == ["ok", "ok", "warn"]
    first_stage = span_checks.hub_to_tip_ratio_checks(0.3, band=(0.25, 0.7))
    assert _statuses(first_stage["hub_to_tip_ratio_low"]) == "ok"


def test_axial_mach_and_turbine_exit_checks():
    assert _statuses(span_checks.axial_mach_check([0.5, 0.75])) == ["ok", "warn"]
    # Swirl is judged by its magnitude: against rotation as much as with it.
    assert _statuses(span_checks.turbine_exit_swirl_check([-25.0, 10.0, 25.0])) == ["warn", "ok", "warn"]
    assert _statuses(span_checks.turbine_exit_mach_check([0.4, 0.6])) == ["ok", "warn"]


def test_a_free_vortex_turbine_with_a_low_hub_fails_its_hub_reaction():
    # Free vortex: R_h = 1 - (1 - R_m) (r_m / r_h)^2 (derived in tests/core/test_span.py); at
    # R_m = 0.3 and r_h / r_m = 0.75 that is 1 - 0.7 / 0.5625 = -0.244, a negative hub reaction.
    stage = evaluate_stage_from_duty("turbine", 0.8, 1.5, 0.3, 350.0, 1300.0, 8e5, 1148.0, 1.333)
    result = span.with_span(stage, "turbine", 0.3, 0.5, total_temperature=1300.0, total_pressure=8e5,
                            cp=1148.0, gamma=1.333)
    np.testing.assert_allclose(result.checks["reaction_hub"].value, 1 - 0.7 / 0.75**2, rtol=1e-12)
    assert _statuses(result.checks["reaction_hub"]) == "fail"
    assert {"exit_swirl", "exit_mach", "rotor_tip_relative_mach", "axial_mach"} <= set(result.checks)


@pytest.mark.parametrize("end", span.SPAN_ENDS)
def test_diffusion_factors_are_judged_by_the_limits_of_their_span_position(end):
    stage = evaluate_stage_from_duty("compressor", 0.5, 0.4, 0.5, 300.0)
    result = span.with_span(stage, "compressor", 0.3, 0.5, rotor_solidity=1.2, stator_solidity=1.0)
    check = result.checks[f"rotor_diffusion_factor_{end}"]
    # service/core/diffusion.py DIFFUSION_FACTOR_LIMITS: rotor tip warns above 0.45, hub fails above 0.6.
    assert check.limit == (0.45 if end == "tip" else 0.6)
    np.testing.assert_array_equal(check.value, result.values[f"rotor_diffusion_factor_{end}"])
