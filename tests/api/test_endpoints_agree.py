"""Endpoints that compute the same quantity give the same answer (issues 3, 4 and 5)."""

import pytest
from numpy.testing import assert_allclose

from service import create_app


@pytest.fixture(scope="module")
def client():
    return create_app().test_client()


def _post(client, path, body):
    response = client.post(path, json=body)
    assert response.status_code == 200, response.get_data(as_text=True)
    return response.get_json()


def test_compressor_rotor_from_triangles_gives_the_same_diffusion_factor(client):
    stage = _post(client, "/v1/triangles", {
        "machine": "compressor", "flow_coefficient": 0.55, "loading_coefficient": 0.38, "reaction": 0.6,
        "blade_speed": 320.0, "rotor_solidity": 1.3, "stator_solidity": 1.1})
    rotor = _post(client, "/v1/diffusion-factor", {
        "row": "rotor", "axial_velocity": stage["axial_velocity"], "inlet_angle": stage["beta1"],
        "outlet_angle": stage["beta2"], "solidity": 1.3})
    stator = _post(client, "/v1/diffusion-factor", {
        "row": "stator", "axial_velocity": stage["axial_velocity"], "inlet_angle": stage["alpha2"],
        "outlet_angle": stage["alpha3"], "solidity": 1.1})
    assert_allclose(rotor["diffusion_factor"], stage["rotor_diffusion_factor"], rtol=1e-12)
    assert_allclose(stator["diffusion_factor"], stage["stator_diffusion_factor"], rtol=1e-12)
    assert_allclose(rotor["de_haller"], stage["de_haller_rotor"], rtol=1e-12)


def test_turbine_rows_from_triangles_give_the_same_zweifel_counts(client):
    stage = _post(client, "/v1/triangles", {
        "machine": "turbine", "flow_coefficient": 0.7, "loading_coefficient": 1.8, "reaction": 0.45,
        "blade_speed": 350.0, "blade_height": 0.06, "aspect_ratio": 1.5, "mean_radius": 0.42})
    for row, inlet, outlet in (("stator", "alpha1", "alpha2"), ("rotor", "beta2", "beta3")):
        sized = _post(client, "/v1/zweifel", {
            "inlet_angle": stage[inlet], "outlet_angle": stage[outlet], "axial_chord": 0.04, "mean_radius": 0.42})
        assert sized["blade_count"] == stage[f"{row}_blade_count"]
        assert_allclose(sized["zweifel_coefficient_achieved"], stage[f"{row}_zweifel_coefficient_achieved"],
                        rtol=1e-12)


def test_stage_split_example_from_the_specification(client):
    # Check values stated in the project's specification (issue 5), not a published case.
    result = _post(client, "/v1/stage-split", {
        "machine": "compressor", "pressure_ratio": 8, "stages": 5, "rule": "equal_pressure_ratio",
        "polytropic_efficiency": 0.90, "gamma": 1.4, "total_temperature": 288.15, "total_pressure": 101325})
    assert result["stage_count"] == 5
    assert_allclose(result["stage_pressure_ratio"], [1.5157] * 5, atol=5e-5)
    assert_allclose(result["outlet_total_temperature"], 557.6, atol=0.05)
    assert_allclose(result["isentropic_efficiency"], 0.868, atol=5e-4)


def test_stage_split_rows_may_mix_weight_counts_and_report_per_case_failures(client):
    base = {"machine": "turbine", "pressure_ratio": 4.0, "rule": "weights", "stage_isentropic_efficiency": 0.9,
            "total_temperature": 1400.0, "total_pressure": 1.6e6, "gas": "combustion_products"}
    body = _post(client, "/v1/stage-split", {"cases": [
        {**base, "weights": [1, 2, 1]},
        {**base, "weights": [1, 1]},
        {**base, "weights": [1, 2], "stages": 3},
    ]})
    assert [r["stage_count"] for r in body["results"]] == [3, 2, None]
    assert body["errors"] == [{"index": 2, "detail": "the number of weights does not match stages"}]
    assert body["results"][2]["stage_pressure_ratio"] is None


def test_stage_split_columns_of_weight_lists_of_different_lengths_answer_as_the_rows(client):
    base = {"machine": "turbine", "pressure_ratio": 4.0, "rule": "weights", "stage_isentropic_efficiency": 0.9,
            "total_temperature": 1400.0, "total_pressure": 1.6e6, "gas": "combustion_products"}
    weights = [[1, 2, 1], [1, 1], [1, 2], [1]]
    stages = [3, 2, 3, 1]
    rows = _post(client, "/v1/stage-split", {"cases": [{**base, "weights": w, "stages": n}
                                                        for w, n in zip(weights, stages, strict=True)]})
    columns = _post(client, "/v1/stage-split", {"columns": {**base, "weights": weights, "stages": stages}})
    mismatch = {"index": 2, "detail": "the number of weights does not match stages"}
    assert columns["errors"] == rows["errors"] == [mismatch]
    assert columns["columns"]["stage_count"] == [3, 2, None, 1]
    for name, values in columns["columns"].items():
        if name != "checks":
            assert values == [r[name] for r in rows["results"]], name  # ragged lists, as the rows give them


def test_stage_split_columns_with_a_list_where_numbers_are_lists_are_refused_with_a_pointer(client):
    response = client.post("/v1/stage-split", json={"columns": {
        "machine": "compressor", "pressure_ratio": [2.0, 3.0], "total_temperature": 288.15, "total_pressure": 1e5,
        "polytropic_efficiency": 0.9, "rule": "weights", "weights": [[1, 2], [1, -1, 1]]}})
    assert response.status_code == 422
    assert [e["pointer"] for e in response.get_json()["errors"]] == ["/columns/weights/1/1"]
