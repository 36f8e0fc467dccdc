"""The machine-design endpoint: it agrees with the other endpoints, takes rows, reports failures, draws SVG."""

import xml.etree.ElementTree as ElementTree

import pytest
from numpy.testing import assert_allclose

from service import create_app

SVG_NS = "{http://www.w3.org/2000/svg}"

COMPRESSOR = {"machine": "compressor", "mass_flow": 25.0, "total_temperature": 288.15, "total_pressure": 101325.0,
              "pressure_ratio": 5.0, "shaft_speed": 12000.0, "polytropic_efficiency": 0.9, "mean_radius": 0.3,
              "stages": 5, "flow_coefficient": 0.5, "reaction": 0.6, "rotor_aspect_ratio": 2.5,
              "stator_aspect_ratio": 3.0, "target_diffusion_factor": 0.45}
TURBINE = {"machine": "turbine", "gas": "combustion_products", "mass_flow": 25.0, "total_temperature": 1400.0,
           "total_pressure": 1.2e6, "pressure_ratio": 4.0, "shaft_speed": 12000.0, "polytropic_efficiency": 0.9,
           "hub_radius": 0.24, "stages": 3, "flow_coefficient": [0.6, 0.65, 0.7], "reaction": 0.45,
           "rotor_aspect_ratio": 1.8, "stator_aspect_ratio": 1.4}


@pytest.fixture(scope="module")
def client():
    return create_app().test_client()


def _post(client, path, body, status=200):
    response = client.post(path, json=body)
    assert response.status_code == status, response.get_data(as_text=True)
    return response.get_json()


def test_each_stage_has_the_triangles_endpoints_angles(client):
    result = _post(client, "/v1/machine-design", TURBINE)
    for i in range(result["stage_count"]):
        stage = _post(client, "/v1/triangles", {
            "machine": "turbine", "flow_coefficient": result["stage_flow_coefficient"][i],
            "loading_coefficient": result["stage_loading_coefficient"][i],
            "reaction": result["stage_kinematic_reaction"][i], "blade_speed": result["stage_blade_speed"][i]})
        # The duty is set at the rotor exit (the design station), where the triangles endpoint's hold; with the
        # hub held the rotor inlet has a radius, and a blade speed, of its own, and Euler's work closes with it.
        assert_allclose(result["station_beta"][2 * i + 2], stage["beta3"], rtol=1e-12)
        assert_allclose(result["station_alpha"][2 * i + 2], stage["alpha3"], rtol=1e-12)
        assert_allclose(result["stage_work"][i], stage["work"], rtol=1e-12)
        u, swirl = result["station_blade_speed"], result["station_tangential_velocity"]
        euler = u[2 * i + 1] * swirl[2 * i + 1] - u[2 * i + 2] * swirl[2 * i + 2]
        assert_allclose(euler, result["stage_work"][i], rtol=1e-9)
    # No rotor before the first nozzle: no relative quantities at the turbine inlet (null, not a failure).
    assert result["station_beta"][0] is None and result["station_relative_mach"][0] is None


def test_turbine_rows_have_the_zweifel_endpoints_blade_counts(client):
    result = _post(client, "/v1/machine-design", TURBINE)
    for j in range(2 * result["stage_count"]):
        sized = _post(client, "/v1/zweifel", {
            "inlet_angle": result["row_inlet_angle"][j], "outlet_angle": result["row_outlet_angle"][j],
            "axial_chord": result["row_axial_chord"][j], "mean_radius": result["row_mean_radius"][j]})
        assert sized["blade_count"] == result["row_blade_count"][j]
        assert_allclose(sized["zweifel_coefficient_achieved"], result["row_zweifel_coefficient"][j], rtol=1e-12)


def test_compressor_rows_have_the_diffusion_factor_endpoints_blade_counts(client):
    result = _post(client, "/v1/machine-design", COMPRESSOR)
    for j in range(2 * result["stage_count"]):
        sized = _post(client, "/v1/diffusion-factor", {
            "row": "rotor" if j % 2 == 0 else "stator", "axial_velocity": result["station_axial_velocity"][j],
            "outlet_axial_velocity": result["station_axial_velocity"][j + 1],
            "inlet_angle": result["row_inlet_angle"][j], "outlet_angle": result["row_outlet_angle"][j],
            "target_diffusion_factor": 0.45, "chord": result["row_chord"][j],
            "mean_radius": result["row_mean_radius"][j]})
        assert sized["blade_count"] == result["row_blade_count"][j]
        assert_allclose(sized["diffusion_factor_achieved"], result["row_diffusion_factor"][j], rtol=1e-12)
        assert_allclose(sized["de_haller"], result["row_de_haller"][j], rtol=1e-12)


def test_the_split_is_the_stage_split_endpoints(client):
    result = _post(client, "/v1/machine-design", COMPRESSOR)
    alone = _post(client, "/v1/stage-split", {
        "machine": "compressor", "pressure_ratio": 5.0, "total_temperature": 288.15, "total_pressure": 101325.0,
        "polytropic_efficiency": 0.9, "stages": 5, "mass_flow": 25.0,
        "blade_speed": result["stage_blade_speed"][0]})
    for name in ("stage_pressure_ratio", "stage_work", "stage_loading_coefficient", "outlet_total_temperature",
                 "isentropic_efficiency", "power"):
        assert_allclose(result[name], alone[name], rtol=1e-12)


def test_rows_mix_machines_and_list_lengths_and_report_per_case_failures(client):
    body = _post(client, "/v1/machine-design", {"cases": [
        COMPRESSOR,
        TURBINE,
        {**TURBINE, "flow_coefficient": 0.6, "stages": 2},
        {**COMPRESSOR, "mean_radius": 0.05},
        {**TURBINE, "stages": 2},
    ]})
    counts = [r["stage_count"] for r in body["results"]]
    assert counts == [5, 3, 2, None, None]
    assert len(body["results"][0]["station_alpha"]) == 11 and len(body["results"][2]["row_blade_count"]) == 4
    assert body["errors"] == [
        {"index": 3, "detail": "station 1: the hub radius is at or below zero (the annulus needs more area than "
                               "the held mean radius allows)"},
        {"index": 4, "detail": "flow_coefficient has a different number of entries than the machine has stages (2)"},
    ]
    assert body["results"][3]["station_alpha"] is None
    checks = body["results"][0]["checks"]
    assert len(checks["rotor_diffusion_factor"]["value"]) == 5
    assert len(checks["stage_loading_coefficient"]["status"]) == 5
    assert len(body["results"][1]["checks"]["stator_zweifel_high"]["value"]) == 3


def test_a_single_impossible_case_is_a_422_naming_the_station(client):
    problem = _post(client, "/v1/machine-design", {**COMPRESSOR, "flow_coefficient": 1.1, "shaft_speed": 20000.0}, 422)
    assert problem["detail"] == "station 1: the axial Mach number reaches 1 (choked annulus)"


def test_invalid_input_names_every_field(client):
    problem = _post(client, "/v1/machine-design", {**TURBINE, "outlet_swirl": 5.0, "mean_radius": 0.3,
                                                    "reaction": [0.5, "x"]}, 422)
    pointers = {e["pointer"] for e in problem["errors"]}
    assert {"/reaction/1", "/outlet_swirl"} <= pointers
    assert pointers & {"/mean_radius", "/hub_radius"}  # two radii held: one of them does not apply
    problem = _post(client, "/v1/machine-design", {"columns": {"machine": ["compressor"]}}, 422)
    pointers = {e["pointer"] for e in problem["errors"]}
    assert {"/columns/mass_flow", "/columns/shaft_speed", "/columns/pressure_ratio"} <= pointers


def _svg(client, path, body):
    response = client.post(path, json=body, headers={"Accept": "image/svg+xml"})
    assert response.status_code == 200, response.get_data(as_text=True)
    assert response.mimetype == "image/svg+xml"
    return ElementTree.fromstring(response.data)


def _ids(root, prefix):
    return sorted(e.get("id") for e in root.iter() if (e.get("id") or "").startswith(prefix))


@pytest.mark.parametrize(("case", "rows"), [(COMPRESSOR, 10), (TURBINE, 6)])
def test_the_flowpath_drawing_is_svg_with_every_row(client, case, rows):
    root = _svg(client, "/v1/machine-design", case)
    assert root.tag == f"{SVG_NS}svg"
    ids = _ids(root, "row-")
    assert [i for i in ids if i.count("-") == 1] == sorted(f"row-{j}" for j in range(1, rows + 1))
    text = " ".join(t.text or "" for t in root.iter(f"{SVG_NS}text"))
    assert "axial position x [m]" in text and "radius r [m]" in text
    # Issue 15: the rows whose hub or tip checks warn or fail are marked, each with its worst status.
    answer = _post(client, "/v1/machine-design", case)
    expected = set()
    rotor_first = case["machine"] == "compressor"
    for name, kind in (("rotor_diffusion_factor_tip", "rotor"), ("stator_diffusion_factor_hub", "stator"),
                       ("rotor_de_haller_hub", "rotor"), ("stator_de_haller_hub", "stator"),
                       ("stage_reaction_hub", "rotor"), ("stage_rotor_tip_relative_mach", "rotor")):
        for i, status in enumerate(answer["checks"].get(name, {}).get("status") or []):
            if status in ("warn", "fail"):
                expected.add(2 * i + (1 if (kind == "rotor") != rotor_first else 0) + 1)
    assert {int(i.split("-")[1]) for i in ids if i.count("-") == 2} == expected


def test_the_flowpath_drawing_marks_a_failing_hub():
    # A low mean reaction on long blades: the free-vortex hub reaction is negative (fails) in some stage.
    client = create_app().test_client()
    case = {**COMPRESSOR, "reaction": 0.3, "mass_flow": 60.0}
    answer = _post(client, "/v1/machine-design", case)
    assert "fail" in answer["checks"]["stage_reaction_hub"]["status"]
    assert any(i.endswith("-fail") for i in _ids(_svg(client, "/v1/machine-design", case), "row-"))


@pytest.mark.parametrize(("machine", "stations"), [("compressor", (1, 2)), ("turbine", (2, 3))])
def test_the_triangles_drawing_has_both_rotor_triangles(client, machine, stations):
    root = _svg(client, "/v1/triangles", {"machine": machine, "flow_coefficient": 0.6, "loading_coefficient": 0.4,
                                          "reaction": 0.5, "blade_speed": 300.0})
    assert _ids(root, "vector-") == sorted(f"vector-{v}{k}" for v in "VWU" for k in stations)
    text = " ".join(t.text or "" for t in root.iter(f"{SVG_NS}text"))
    assert "tangential velocity [m/s]" in text and "axial velocity [m/s]" in text


def test_a_drawing_is_for_one_case_and_json_stays_the_default(client):
    response = client.post("/v1/machine-design", json={"cases": [COMPRESSOR]}, headers={"Accept": "image/svg+xml"})
    assert response.status_code == 406
    assert response.mimetype == "application/problem+json"
    response = client.post("/v1/machine-design", json=COMPRESSOR, headers={"Accept": "*/*"})
    assert response.status_code == 200 and response.mimetype == "application/json"
    response = client.post("/v1/zweifel", json={"inlet_angle": 0, "outlet_angle": 70, "axial_chord": 0.04,
                                                "mean_radius": 0.35}, headers={"Accept": "image/svg+xml"})
    assert response.mimetype == "application/json"
    problem = client.post("/v1/machine-design", json={**COMPRESSOR, "stages": 0},
                          headers={"Accept": "image/svg+xml"})
    assert problem.status_code == 422 and problem.get_json()["errors"][0]["pointer"] == "/stages"


def test_the_json_path_does_not_import_matplotlib():
    # matplotlib is imported inside the drawing functions only; checked in a fresh interpreter.
    import subprocess
    import sys

    code = ("import sys; from service import create_app; c = create_app().test_client(); "
            f"r = c.post('/v1/machine-design', json={COMPRESSOR!r}); assert r.status_code == 200; "
            "print('matplotlib' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip().splitlines()[-1] == "False"  # after the request's log line


ESTIMATED = {**COMPRESSOR, "efficiency": "estimated"}
del ESTIMATED["polytropic_efficiency"]


def test_estimated_efficiency_is_the_cores_answer(client):
    from service.core import machine_efficiency

    answer = _post(client, "/v1/machine-design", {**ESTIMATED, "tip_clearance_to_height": 0.02})
    core = machine_efficiency.evaluate_machine_design_estimated(
        "compressor", 25.0, 288.15, 101325.0, 5.0, 12000.0, 0.5, 0.6, 2.5, 3.0, tip_clearance_to_height=0.02,
        mean_radius=0.3, stages=5, target_diffusion_factor=0.45, cp=1005.0, gamma=1.4)
    assert answer["iterations"] == core.values["iterations"][0] > 1
    for name in ("stage_isentropic_efficiency", "row_loss_coefficient", "station_total_pressure",
                 "outlet_total_temperature", "polytropic_efficiency", "isentropic_efficiency"):
        assert_allclose(answer[name], core.values[name][0], rtol=1e-12, err_msg=name)
    assert len(answer["stage_isentropic_efficiency"]) == 5 and len(answer["row_loss_coefficient"]) == 10
    # The estimate is not the starting value: the overall polytropic efficiency is computed, not echoed.
    assert answer["polytropic_efficiency"] != 0.9
    # The given mode answers as before, without the estimated outputs.
    given = _post(client, "/v1/machine-design", COMPRESSOR)
    assert "iterations" not in given and given["polytropic_efficiency"] == 0.9


def test_estimated_rows_are_the_single_answers(client):
    cases = [ESTIMATED, {**TURBINE, "efficiency": "estimated", "thickness_to_chord": 0.2}, COMPRESSOR,
             {**ESTIMATED, "loss_model": "soderberg"}, {**ESTIMATED, "stages": 3, "pressure_ratio": 2.5}]
    body = _post(client, "/v1/machine-design", {"cases": cases})
    for i, case in enumerate(cases):
        response = client.post("/v1/machine-design", json=case)
        if response.status_code == 200:
            alone = response.get_json()
            assert body["results"][i] == alone
        else:
            assert response.status_code == 422
            assert {"index": i, "detail": response.get_json()["detail"]} in body["errors"]
    assert body["errors"] == [{"index": 3, "detail": "loss_model 'soderberg' is for a turbine, not a compressor"}]


def test_correlation_ranges_are_answered_with_a_warn_check(client):
    # Lieblein's correlation rests on cascades of solidity 0.5-1.5 (NASA SP-36 ch. 6): 1.8 is answered, flagged.
    case = {**ESTIMATED, "solidity": 1.8}
    del case["target_diffusion_factor"]
    answer = _post(client, "/v1/machine-design", case)
    check = answer["checks"]["loss_rotor_solidity_high"]
    assert check["status"] == ["warn"] * 5 and check["value"] == [1.8] * 5 and "Lieblein" in check["basis"]
    assert 0.8 < answer["polytropic_efficiency"] < 1.0


@pytest.mark.parametrize(("body", "pointer"), [
    ({**ESTIMATED, "efficiency": "given"}, "/polytropic_efficiency"),
    ({**COMPRESSOR, "tip_clearance_to_height": 0.01}, "/tip_clearance_to_height"),
    ({**COMPRESSOR, "loss_model": "lieblein_howell"}, "/loss_model"),
    ({**ESTIMATED, "loss_model": "kacker_okapuu"}, "/loss_model"),
    ({**ESTIMATED, "tip_clearance_to_height": 1.5}, "/tip_clearance_to_height"),
    ({**ESTIMATED, "efficiency": "guessed"}, "/efficiency"),
    ({**TURBINE, "efficiency": "estimated", "thickness_to_chord": 0.0}, "/thickness_to_chord"),
])
def test_malformed_estimated_inputs_name_the_field(client, body, pointer):
    problem = _post(client, "/v1/machine-design", body, 422)
    assert pointer in {e["pointer"] for e in problem["errors"]}


def test_a_single_case_with_the_other_machines_loss_model_or_its_fields_is_a_422_saying_so(client):
    problem = _post(client, "/v1/machine-design", {**ESTIMATED, "loss_model": "soderberg"}, 422)
    assert problem["detail"] == "loss_model 'soderberg' is for a turbine, not a compressor"
    problem = _post(client, "/v1/machine-design", {**ESTIMATED, "dynamic_viscosity": 1.8e-5}, 422)
    assert problem["detail"].startswith("dynamic_viscosity does not apply to a compressor")
    problem = _post(client, "/v1/machine-design", {**TURBINE, "efficiency": "estimated",
                                                   "tip_clearance_to_height": 0.01}, 422)
    assert problem["detail"].startswith("tip_clearance_to_height does not apply to a turbine")
