"""``POST /v1/triangles`` with the annulus: hub and tip values beside the unchanged mean line.

These tests check the wrapping (fields, modes, shapes, errors), not the physics again
(tests/core/test_span.py does that).
"""

from xml.etree import ElementTree

import pytest
from numpy.testing import assert_allclose

from service.core import span
from tests.api.examples import PHYSICALLY_IMPOSSIBLE, ok_body, pointers, post, problem_body

STAGE = {"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
         "blade_speed": 300.0, "total_temperature": 288.15, "total_pressure": 101325.0}
TURBINE = {"machine": "turbine", "flow_coefficient": 0.9, "loading_coefficient": 1.0, "reaction": 0.5,
           "blade_speed": 340.0, "gas": "combustion_products", "total_temperature": 1200.0, "total_pressure": 6e5}


@pytest.mark.parametrize("stage", [STAGE, TURBINE])
@pytest.mark.parametrize("vortex", span.NAMED_VORTEX_LAWS)
def test_mean_values_equal_the_answer_without_the_annulus(client, stage, vortex):
    mean = ok_body(post(client, "triangles", stage))
    both = ok_body(post(client, "triangles", {**stage, "hub_radius": 0.4, "tip_radius": 0.5, "vortex": vortex}))
    for name, value in mean.items():
        if name not in ("checks", "assumed"):
            assert both[name] == value, name
    assert set(mean["checks"]) < set(both["checks"])
    rotor_in, rotor_out = (1, 2) if stage["machine"] == "compressor" else (2, 3)
    for name in ("alpha1_hub", f"beta{rotor_in}_tip", f"M_rel{rotor_in}_tip", f"M_rel{rotor_out}_hub", "M3_tip",
                 "reaction_hub", "reaction_tip", "de_haller_rotor_hub", "de_haller_stator_tip", "hub_to_tip_ratio"):
        assert isinstance(both[name], float), name


def test_the_annulus_may_be_given_as_mean_radius_and_hub_to_tip_ratio(client):
    by_radii = ok_body(post(client, "triangles", {**STAGE, "hub_radius": 0.3, "tip_radius": 0.5}))
    by_ratio = ok_body(post(client, "triangles", {**STAGE, "mean_radius": 0.4, "hub_to_tip_ratio": 0.6}))
    for name in ("reaction_hub", "beta1_tip", "M_rel1_tip", "tip_radius"):
        assert_allclose(by_ratio[name], by_radii[name], rtol=1e-12)


def test_blade_counts_take_the_mean_radius_of_the_annulus(client):
    rows = {"chord": 0.05, "rotor_blade_count": 40, "stator_blade_count": 50}
    by_mean = ok_body(post(client, "triangles", {**STAGE, **rows, "mean_radius": 0.4}))
    by_radii = ok_body(post(client, "triangles", {**STAGE, **rows, "hub_radius": 0.3, "tip_radius": 0.5}))
    assert by_radii["rotor_solidity"] == by_mean["rotor_solidity"]
    assert by_radii["rotor_diffusion_factor"] == by_mean["rotor_diffusion_factor"]
    assert "rotor_diffusion_factor_tip" in by_radii["checks"]
    assert "stator_diffusion_factor_hub" in by_radii["checks"]


def test_turbine_checks_include_the_exit_swirl_and_mach_number(client):
    body = ok_body(post(client, "triangles", {**TURBINE, "hub_radius": 0.3, "tip_radius": 0.42}))
    for name in ("exit_swirl", "exit_mach", "reaction_hub", "rotor_tip_relative_mach", "axial_mach"):
        check = body["checks"][name]
        assert check["status"] in ("ok", "warn", "fail") and check["basis"], name


def test_hub_at_or_above_tip_is_422_for_one_case_and_a_per_case_error_in_a_batch(client):
    bad = {**STAGE, "hub_radius": 0.5, "tip_radius": 0.5}
    problem = problem_body(post(client, "triangles", bad), 422)
    assert problem["type"] == PHYSICALLY_IMPOSSIBLE
    assert "hub radius is at or above the tip radius" in problem["detail"]
    body = ok_body(post(client, "triangles", {"cases": [{**STAGE, "hub_radius": 0.3, "tip_radius": 0.5}, bad]}))
    assert body["results"][1]["alpha1"] is None and body["results"][0]["alpha1"] is not None
    assert body["errors"] == [{"index": 1, "detail": problem["detail"]}]


def test_a_vortex_law_that_drives_a_static_temperature_below_zero_names_the_radius(client):
    # Free vortex with a hub at a quarter of the mean radius quadruples the hub swirl (see
    # tests/core/test_span.py for the numbers).
    stage = {**STAGE, "loading_coefficient": 0.8, "reaction": 0.3, "total_temperature": 315.0,
             "total_pressure": 1e5}
    bad = {**stage, "hub_radius": 0.1, "tip_radius": 0.7}
    problem = problem_body(post(client, "triangles", bad), 422)
    assert problem["detail"].startswith("static temperature at station 2 at the hub")
    body = ok_body(post(client, "triangles", {"columns": {**{k: [v, v] for k, v in stage.items()},
                                                          "hub_radius": [0.35, 0.1], "tip_radius": 0.7}}))
    assert body["errors"] == [{"index": 1, "detail": problem["detail"]}]
    assert body["columns"]["reaction_hub"][1] is None and body["columns"]["reaction_hub"][0] is not None


def test_no_axial_velocity_from_equilibrium_names_the_station_and_radius(client):
    problem = problem_body(post(client, "triangles", {**STAGE, "mean_radius": 0.4, "hub_to_tip_ratio": 0.5,
                                                      "vortex": "constant_reaction"}), 422)
    assert "at the tip" in problem["detail"] and "radial equilibrium" in problem["detail"]


def test_vortex_without_an_annulus_and_a_mixed_annulus_are_refused(client):
    assert pointers(problem_body(post(client, "triangles", {**STAGE, "vortex": "forced"}), 422)) == ["/vortex"]
    mixed = problem_body(post(client, "triangles", {**STAGE, "hub_radius": 0.3, "tip_radius": 0.5,
                                                    "hub_to_tip_ratio": 0.6}), 422)
    assert "/hub_to_tip_ratio" in pointers(mixed)
    assert pointers(problem_body(post(client, "triangles", {**STAGE, "mean_radius": 0.4, "hub_to_tip_ratio": 1.0}),
                                 422)) == ["/hub_to_tip_ratio"]
    unknown = problem_body(post(client, "triangles", {**STAGE, "hub_radius": 0.3, "tip_radius": 0.5,
                                                      "vortex": "tornado"}), 422)
    assert pointers(unknown) == ["/vortex"]


@pytest.mark.parametrize(("stage", "stations"), [(STAGE, (1, 2)), (TURBINE, (2, 3))])
def test_the_triangles_drawing_adds_the_hub_and_tip_triangles(client, stage, stations):
    response = client.post("/v1/triangles", json={**stage, "hub_radius": 0.4, "tip_radius": 0.5},
                           headers={"Accept": "image/svg+xml"})
    assert response.status_code == 200 and response.mimetype == "image/svg+xml"
    ids = sorted(e.get("id") for e in ElementTree.fromstring(response.data).iter()
                 if (e.get("id") or "").startswith("vector-"))
    mean = [f"vector-{v}{k}" for v in "VWU" for k in stations]
    ends = [f"vector-{v}{k}-{end}" for v in "VW" for k in stations for end in span.SPAN_ENDS]
    assert ids == sorted(mean + ends)
