"""The stage-efficiency endpoint: it wraps the core, warns outside the correlations' ranges, names bad fields."""

import pytest
from numpy.testing import assert_allclose

from service.core import gas, triangles
from service.core.losses.stage import with_stage_efficiency
from tests.api.examples import INVALID_INPUT, ok_body, pointers, post, problem_body

TURBINE = {"machine": "turbine", "loss_model": "soderberg", "gas": "combustion_products", "flow_coefficient": 0.6,
           "loading_coefficient": 1.4, "reaction": 0.45, "blade_speed": 330.0, "total_temperature": 1300.0,
           "total_pressure": 8.0e5, "rotor_aspect_ratio": 2.0, "stator_aspect_ratio": 1.6, "blade_height": 0.05}
COMPRESSOR = {"machine": "compressor", "loss_model": "lieblein_howell", "blade_speed": 300.0, "axial_velocity": 160.0,
              "alpha1": 25.0, "alpha2": 50.0, "total_temperature": 300.0, "rotor_aspect_ratio": 2.5,
              "stator_aspect_ratio": 3.0, "rotor_solidity": 1.2, "stator_solidity": 1.1,
              "tip_clearance_to_height": 0.015}


def test_turbine_answer_is_the_cores(client):
    body = ok_body(post(client, "stage-efficiency", TURBINE))
    cp, gamma = gas.gas_properties("combustion_products")
    stage = triangles.evaluate_stage_from_duty("turbine", 0.6, 1.4, 0.45, 330.0, total_temperature=1300.0,
                                               total_pressure=8.0e5, cp=cp, gamma=gamma)
    core = with_stage_efficiency(stage, "turbine", "soderberg", cp, gamma, rotor_aspect_ratio=2.0,
                                 stator_aspect_ratio=1.6, blade_height=0.05)
    for name in ("total_to_total_efficiency", "total_to_static_efficiency", "rotor_loss_coefficient",
                 "stator_reynolds_number", "alpha2"):
        assert_allclose(body[name], float(core.values[name]), rtol=1e-12)
    assert body["checks"]["rotor_deflection_high"]["status"] == "ok"


def test_compressor_angles_form_gives_every_part(client):
    body = ok_body(post(client, "stage-efficiency", COMPRESSOR))
    for row in ("rotor", "stator"):
        parts = sum(body[f"{row}_{p}_loss"] for p in ("profile", "annulus", "secondary", "tip_clearance"))
        assert_allclose(body[f"{row}_loss_coefficient"], parts, rtol=1e-12)
    assert body["rotor_tip_clearance_loss"] > 0.0 == body["stator_tip_clearance_loss"]
    assert 0.0 < body["total_to_static_efficiency"] < body["total_to_total_efficiency"] < 1.0


def test_out_of_range_inputs_are_answered_with_a_warning(client):
    # Solidity 1.8 lies above the NACA 65-series cascade tests (0.5-1.5; NACA TN 3916).
    body = ok_body(post(client, "stage-efficiency", {**COMPRESSOR, "rotor_solidity": 1.8}))
    check = body["checks"]["rotor_solidity_high"]
    assert check["status"] == "warn" and check["value"] == 1.8 and check["limit"] == 1.5
    assert "NACA TN 3916" in check["basis"]
    assert isinstance(body["total_to_total_efficiency"], float)
    # In columns, each case judged on its own.
    columns = {name: value for name, value in TURBINE.items()}
    columns["thickness_to_chord"] = [0.2, 0.3]
    body = ok_body(post(client, "stage-efficiency", {"columns": columns}))
    assert body["columns"]["checks"]["thickness_to_chord_high"]["status"] == ["ok", "warn"]
    assert all(isinstance(v, float) for v in body["columns"]["total_to_total_efficiency"])


@pytest.mark.parametrize("change, pointer", [
    ({"rotor_solidity": -1.0}, "/rotor_solidity"),
    ({"loss_model": "craig_cox"}, "/loss_model"),
    ({"tip_clearance_to_height": "0.01"}, "/tip_clearance_to_height"),
    ({"rotor_aspect_ratio": None}, "/rotor_aspect_ratio"),
    ({"loss_model": "soderberg"}, "/loss_model"),  # a turbine model for a compressor
    ({"reynolds_number": 2e5}, "/reynolds_number"),  # a turbine input in a compressor case
])
def test_malformed_input_names_the_field(client, change, pointer):
    problem = problem_body(post(client, "stage-efficiency", {**COMPRESSOR, **change}), 422)
    assert problem["type"] == INVALID_INPUT
    assert pointer in pointers(problem)


def test_missing_geometry_names_the_field(client):
    case = {k: v for k, v in COMPRESSOR.items() if k != "stator_solidity"}
    problem = problem_body(post(client, "stage-efficiency", {"cases": [COMPRESSOR, case]}), 422)
    assert "/cases/1/stator_solidity" in pointers(problem)


KACKER_OKAPUU = {"machine": "turbine", "loss_model": "kacker_okapuu", "gas": "combustion_products",
                 "flow_coefficient": 0.6, "loading_coefficient": 1.5, "reaction": 0.45, "blade_speed": 300.0,
                 "total_temperature": 1300.0, "rotor_aspect_ratio": 2.5, "stator_aspect_ratio": 2.0,
                 "thickness_to_chord": 0.2, "stator_nozzle_profile_loss": 0.025, "stator_impulse_profile_loss": 0.07,
                 "rotor_nozzle_profile_loss": 0.03, "rotor_impulse_profile_loss": 0.08,
                 "trailing_edge_thickness_to_throat": 0.05, "base_pressure_coefficient": -0.15}


def test_kacker_okapuu_breakdown(client):
    body = ok_body(post(client, "stage-efficiency", {**KACKER_OKAPUU, "tip_clearance_to_height": 0.01}))
    for row in ("rotor", "stator"):
        parts = sum(body[f"{row}_{p}_loss"] for p in ("profile", "secondary", "trailing_edge", "tip_clearance"))
        assert_allclose(body[f"{row}_loss_coefficient"], parts, rtol=1e-12)
    assert body["checks"]["rotor_outlet_angle_high"]["basis"].startswith("Ainley & Mathieson")


def test_kacker_okapuu_needs_the_chart_readings(client):
    case = {k: v for k, v in KACKER_OKAPUU.items() if k != "rotor_impulse_profile_loss"}
    problem = problem_body(post(client, "stage-efficiency", case), 422)
    assert "/rotor_impulse_profile_loss" in pointers(problem)
