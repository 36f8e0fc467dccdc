"""Minimal requests: the machine design from its duty alone, every default it took echoed in ``assumed``.

The defaults themselves are common practice (service/core/machine_defaults.py, each with its
basis); what is checked here is the mechanism: a case that leaves a field out is answered exactly
as the same case that gives the assumed value, and ``assumed`` names exactly the fields left out.
"""

from __future__ import annotations

import pytest

from service.core import machine_defaults
from tests.api.examples import calculation, ok_body, post, problem_body

#: The duty of a fictional machine of ours: mass flow, inlet total state, pressure ratio, shaft
#: speed, one radius and an efficiency.
DUTIES = {
    "compressor": {"machine": "compressor", "mass_flow": 18.0, "total_temperature": 288.15,
                   "total_pressure": 101325.0, "pressure_ratio": 5.0, "shaft_speed": 13000.0,
                   "polytropic_efficiency": 0.9, "mean_radius": 0.26},
    "turbine": {"machine": "turbine", "gas": "combustion_products", "mass_flow": 18.0, "total_temperature": 1350.0,
                "total_pressure": 1.1e6, "pressure_ratio": 3.5, "shaft_speed": 13000.0,
                "polytropic_efficiency": 0.9, "mean_radius": 0.3},
}


@pytest.mark.parametrize("machine", list(DUTIES))
def test_the_duty_alone_is_a_machine_design(client, machine):
    body = ok_body(post(client, "machine-design", DUTIES[machine]))
    assert body["stage_count"] >= 1
    declared = {name for name, per_machine in machine_defaults.DEFAULTS.items() if per_machine[machine] is not None}
    # Every declared default of this machine (its sizing, its stage-count limit) and the fields' own.
    assert declared <= set(body["assumed"])
    for name in declared:
        assert body["assumed"][name] == machine_defaults.DEFAULTS[name][machine], name
    assert not set(body["assumed"]) & set(DUTIES[machine])


@pytest.mark.parametrize("machine", list(DUTIES))
def test_defaults_given_explicitly_give_the_same_answer_and_nothing_assumed_for_them(client, machine):
    minimal = ok_body(post(client, "machine-design", DUTIES[machine]))
    explicit_case = {**DUTIES[machine], **minimal["assumed"]}
    explicit = ok_body(post(client, "machine-design", explicit_case))
    assert explicit["assumed"] == {}
    assert {k: v for k, v in explicit.items() if k != "assumed"} == \
        {k: v for k, v in minimal.items() if k != "assumed"}


@pytest.mark.parametrize("machine", list(DUTIES))
def test_assumed_lists_exactly_the_fields_left_out(client, machine):
    minimal = ok_body(post(client, "machine-design", DUTIES[machine]))
    for name, value in minimal["assumed"].items():
        given = {**DUTIES[machine], name: value}
        answer = ok_body(post(client, "machine-design", given))
        assert set(answer["assumed"]) == set(minimal["assumed"]) - {name}, name


@pytest.mark.parametrize("machine", list(DUTIES))
def test_an_estimated_efficiency_echoes_the_loss_model_inputs_it_assumed(client, machine):
    """With efficiency estimated the duty needs no efficiency; the loss model, the starting
    efficiency and (compressor) the tip clearance it assumed are echoed, and giving them back changes
    nothing."""
    duty = {k: v for k, v in DUTIES[machine].items() if k != "polytropic_efficiency"}
    minimal = ok_body(post(client, "machine-design", {**duty, "efficiency": "estimated"}))
    expected = {"polytropic_efficiency": 0.9, "loss_model": {"compressor": "lieblein_howell",
                                                             "turbine": "soderberg"}[machine]}
    if machine == "compressor":
        expected["tip_clearance_to_height"] = 0.01
    assert expected.items() <= minimal["assumed"].items()
    assert "dynamic_viscosity" not in minimal["assumed"] and "thickness_to_chord" not in minimal["assumed"]
    explicit = ok_body(post(client, "machine-design", {**duty, "efficiency": "estimated", **minimal["assumed"]}))
    assert explicit["assumed"] == {}
    assert {k: v for k, v in explicit.items() if k != "assumed"} == \
        {k: v for k, v in minimal.items() if k != "assumed"}
    # With the efficiency given, none of these is assumed.
    given = ok_body(post(client, "machine-design", DUTIES[machine]))
    assert not set(expected) & set(given["assumed"])


def test_a_choice_given_replaces_its_default_alternative(client):
    case = {**DUTIES["compressor"], "stages": 5, "solidity": 1.1}
    body = ok_body(post(client, "machine-design", case))
    assert body["stage_count"] == 5
    assert "max_loading_coefficient" not in body["assumed"] and "target_diffusion_factor" not in body["assumed"]
    # The blade count is rounded up, so each row's solidity is the one given or a little above it.
    assert all(1.1 <= s < 1.1 * 1.02 for s in body["row_solidity"])


def test_a_default_that_does_not_apply_is_not_assumed(client):
    # A turbine is sized by a Zweifel target, a compressor by a diffusion factor: neither takes the other's.
    turbine = ok_body(post(client, "machine-design", DUTIES["turbine"]))
    compressor = ok_body(post(client, "machine-design", DUTIES["compressor"]))
    assert "target_diffusion_factor" not in turbine["assumed"] and "zweifel_coefficient" in turbine["assumed"]
    assert "zweifel_coefficient" not in compressor["assumed"] and "target_diffusion_factor" in compressor["assumed"]


def test_rows_echo_each_case_s_own_defaults(client):
    cases = [DUTIES["compressor"], {**DUTIES["compressor"], "reaction": 0.6}, DUTIES["turbine"]]
    body = ok_body(post(client, "machine-design", {"cases": cases}))
    for case, result in zip(cases, body["results"], strict=True):
        assert result == ok_body(post(client, "machine-design", case))
    assert "reaction" not in body["results"][1]["assumed"]


def test_the_smallest_request_without_a_radius_names_the_choice(client):
    case = {k: v for k, v in DUTIES["compressor"].items() if k != "mean_radius"}
    problem = problem_body(post(client, "machine-design", case), 422)
    assert {e["pointer"] for e in problem["errors"]} == {"/mean_radius"}


def test_the_document_states_each_default():
    calc = calculation("machine-design")
    fields = calc.schema().fields
    for name in ("flow_coefficient", "reaction", "rotor_aspect_ratio", "stator_aspect_ratio",
                 "target_diffusion_factor", "max_loading_coefficient"):
        description = fields[name].metadata["description"]
        assert "Default where left out" in description and "common practice" in description, name
    # Every declared default's value is in its field's description (the one place the document gives it).
    for name, defaults in calc.defaults.items():
        for default in defaults:
            value = f"{default.value:g}" if isinstance(default.value, float) else str(default.value)
            assert value in fields[name].metadata["description"], (name, value)


@pytest.fixture(scope="module")
def case_validator():
    """The documented one-case request schema, as the document tests read it."""
    import json

    from service.__main__ import SPEC_PATH
    from tests.api.test_openapi import ROOT, _validator

    return _validator(json.loads((ROOT / SPEC_PATH).read_text(encoding="utf-8")), "MachineDesignCase")


@pytest.mark.parametrize("machine", list(DUTIES))
def test_the_document_takes_the_duty_alone(client, case_validator, machine):
    """The document and the service agree on the smallest request and on the choices around it."""
    duty = DUTIES[machine]
    assert case_validator.is_valid(duty)
    bodies = [
        duty,
        {**duty, "max_loading_coefficient": 0.45},
        {**duty, "stages": 4},
        {**duty, "max_stage_pressure_ratio": 1.4},
        {**duty, "rule": "weights", "weights": [1.0, 1.2, 1.0]},  # the count of weights is the stage count
        {**duty, "rule": "weights", "weights": [1.0, 1.2, 1.0], "stages": 3},
        {**duty, "stages": 3, "max_stage_pressure_ratio": 1.5},  # two ways of finding the stage count
        {**duty, "stages": 3, "max_loading_coefficient": 0.45},
        {**duty, "rule": "weights"},  # weights without their list
    ]
    if machine == "compressor":
        bodies += [{**duty, "solidity": 1.2}, {**duty, "target_diffusion_factor": 0.4},
                   {**duty, "solidity": 1.2, "target_diffusion_factor": 0.4}, {**duty, "zweifel_coefficient": 0.8}]
    else:
        bodies += [{**duty, "zweifel_coefficient": 0.9}, {**duty, "target_diffusion_factor": 0.4}]
    for body in bodies:
        status = post(client, "machine-design", body).status_code
        # 422 only for the document's refusals here (none of these bodies is physically impossible).
        assert case_validator.is_valid(body) == (status == 200), (body, status)
