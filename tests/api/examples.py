"""Example cases of every calculation, and helpers shared by the API tests.

The API tests check the shared mechanism (request shapes, validation, errors, layouts) on every
registered calculation. To cover a new endpoint, add one :class:`Example` to ``EXAMPLES``:
``good``/``bad`` a pair of cases with the same fields, the second one physically impossible;
``base`` the fields every input mode needs beyond those the schema requires (which are taken from
``good``), and ``values`` a valid value for every field that some mode requires and ``good`` does
not give. The tests build one case per input mode from these; a calculation that
does not offer the columns shape (``Calculation.columns``) is tested in one case and rows, and
must refuse columns.

The numbers are invented inputs, never check values: these tests compare the service with
itself across request shapes and with its documented contract, not with physics.
"""

from __future__ import annotations

import json
import math
import re
from dataclasses import dataclass, field

from service.api.declarations import Calculation, Form
from service.api.registry import CALCULATIONS

PROBLEM_JSON = "application/problem+json"
INVALID_INPUT = "urn:meanline:problem:invalid-input"
PHYSICALLY_IMPOSSIBLE = "urn:meanline:problem:physically-impossible"

#: Signs of a leaked stack trace or source location in a response body.
TRACEBACK_MARKERS = re.compile(r"Traceback|File \"|\.py\b|site-packages|most recent call|\bline \d+, in\b")


@dataclass(frozen=True)
class Example:
    """Inputs of one calculation for the API tests (see the module docstring)."""

    good: dict
    bad: dict
    bad_reason: str  # a fragment of the per-case error the bad case must give
    base: dict = field(default_factory=dict)  # fields every mode needs beyond the schema's required ones
    values: dict = field(default_factory=dict)  # a value of every field some mode requires, beyond good's
    variants: tuple = ()  # further valid cases with other option values
    sweep_extra: dict = field(default_factory=dict)  # fields the property test adds to every case


EXAMPLES = {
    "triangles": Example(
        base={"machine": "compressor"},
        values={"flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5, "blade_speed": 300.0,
                "axial_velocity": 150.0, "alpha1": 30.0, "alpha2": 55.0, "alpha3": -10.0,
                "axial_chord": 0.04, "blade_height": 0.06, "aspect_ratio": 1.5, "mean_radius": 0.42,
                "rotor_solidity": 1.3, "stator_solidity": 1.1, "chord": 0.05, "rotor_blade_count": 40,
                "stator_blade_count": 50, "hub_radius": 0.36, "tip_radius": 0.48, "hub_to_tip_ratio": 0.75},
        # At phi 0.5, psi 0.4, R 0.5 and U 300 m/s, V1 = 150 / cos(atan 0.6) = 174.9 m/s, so
        # V1^2 / (2 cp) = 15.2 K with cp 1005 J/(kg K): a total temperature of 10 K leaves a
        # negative static temperature at station 1 (derived here from T = T0 - V^2 / (2 cp)).
        good={"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
              "blade_speed": 300, "total_temperature": 288.15, "total_pressure": 101325},
        bad={"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
             "blade_speed": 300, "total_temperature": 10, "total_pressure": 101325},
        bad_reason="static temperature",
        variants=(
            {"machine": "turbine", "flow_coefficient": 0.6, "loading_coefficient": 1.5, "reaction": 0.4,
             "blade_speed": 340.0, "gas": "combustion_products", "total_temperature": 1100.0,
             "total_pressure": 4.0e5},
            {"machine": "compressor", "flow_coefficient": 0.55, "loading_coefficient": 0.35, "reaction": 0.6,
             "blade_speed": 250, "cp": 1004.5, "gamma": 1.4, "total_temperature": 300, "total_pressure": 1e5},
        ),
        sweep_extra={"total_temperature": 288.15, "total_pressure": 101325.0},
    ),
    "zweifel": Example(
        base={"inlet_angle": 0.0, "outlet_angle": -60.0},
        values={"mean_radius": 0.3, "blade_count": 60, "pitch": 0.025, "axial_chord": 0.03,
                "blade_height": 0.06, "aspect_ratio": 2.0, "outlet_mach": 0.8, "total_pressure": 2.0e5,
                "outlet_pressure": 1.2e5},
        # Equal inlet and outlet angles: no turning, no tangential load (Zweifel's definition).
        good={"inlet_angle": 0.0, "outlet_angle": -60.0, "axial_chord": 0.03, "mean_radius": 0.3},
        bad={"inlet_angle": -60.0, "outlet_angle": -60.0, "axial_chord": 0.03, "mean_radius": 0.3},
        bad_reason="does not turn",
        variants=(
            {"inlet_angle": 20.0, "outlet_angle": -65.0, "axial_chord": 0.04, "mean_radius": 0.45,
             "zweifel_coefficient": 1.0, "rounding": "even_up"},
            {"inlet_angle": 10.0, "outlet_angle": -70.0, "pitch": 0.03, "axial_chord": 0.035,
             "definition": "compressible", "outlet_mach": 0.9, "gas": "combustion_products"},
        ),
    ),
    "diffusion-factor": Example(
        base={"axial_velocity": 150.0, "inlet_angle": 50.0, "outlet_angle": 20.0},
        values={"solidity": 1.2, "chord": 0.05, "pitch": 0.04, "blade_count": 40, "mean_radius": 0.3,
                "target_diffusion_factor": 0.45, "inlet_radius": 0.3, "outlet_radius": 0.31,
                "shaft_speed": 9000.0},
        # 1 - V2/V1 = 1 - cos 50 / cos 20 = 0.316 (derived here, constant axial velocity): no
        # solidity reaches a diffusion factor below it (Lieblein's definition).
        good={"axial_velocity": 150.0, "inlet_angle": 50.0, "outlet_angle": 20.0,
              "target_diffusion_factor": 0.45},
        bad={"axial_velocity": 150.0, "inlet_angle": 50.0, "outlet_angle": 20.0,
             "target_diffusion_factor": 0.2},
        bad_reason="no solidity",
        variants=(
            {"row": "stator", "span_position": "tip", "axial_velocity": 160.0, "outlet_axial_velocity": 150.0,
             "inlet_angle": 45.0, "outlet_angle": 10.0, "inlet_radius": 0.3, "outlet_radius": 0.31,
             "chord": 0.05, "pitch": 0.04},
        ),
    ),
    "stage-split": Example(
        base={"machine": "compressor", "pressure_ratio": 4.0, "total_temperature": 288.15,
              "total_pressure": 101325.0},
        values={"polytropic_efficiency": 0.9, "stage_isentropic_efficiency": 0.88, "stages": 3,
                "max_loading_coefficient": 0.6, "blade_speed": 350.0, "max_stage_pressure_ratio": 2.0,
                "weights": [1.0, 1.2, 1.0]},
        # 160 kJ/kg of work at 30 m/s blade speed is a loading coefficient of about 180 in all;
        # at 0.01 per stage no count up to the service's limit of stages holds it.
        good={"machine": "compressor", "pressure_ratio": 4.0, "total_temperature": 288.15,
              "total_pressure": 101325.0, "polytropic_efficiency": 0.9, "max_loading_coefficient": 0.5,
              "blade_speed": 350.0},
        bad={"machine": "compressor", "pressure_ratio": 4.0, "total_temperature": 288.15,
             "total_pressure": 101325.0, "polytropic_efficiency": 0.9, "max_loading_coefficient": 0.01,
             "blade_speed": 30.0},
        bad_reason="no stage count",
        variants=(
            {"machine": "turbine", "pressure_ratio": 3.0, "total_temperature": 1400.0,
             "total_pressure": 1.5e6, "gas": "combustion_products", "stage_isentropic_efficiency": 0.9,
             "stages": 2, "rule": "equal_pressure_ratio", "mass_flow": 20.0},
            {"machine": "compressor", "pressure_ratio": 2.5, "total_temperature": 300.0,
             "total_pressure": 1e5, "polytropic_efficiency": 0.88, "rule": "weights", "weights": [2, 1]},
        ),
    ),
    "machine-design": Example(
        base={"machine": "compressor", "mass_flow": 25.0, "total_temperature": 288.15, "total_pressure": 101325.0,
              "pressure_ratio": 3.0, "shaft_speed": 12000.0, "polytropic_efficiency": 0.9,
              "flow_coefficient": 0.5, "reaction": 0.6, "rotor_aspect_ratio": 2.5, "stator_aspect_ratio": 3.0},
        values={"mean_radius": 0.3, "hub_radius": 0.25, "tip_radius": 0.42, "stages": 3,
                "max_loading_coefficient": 0.6, "max_stage_pressure_ratio": 2.0, "weights": [1.0, 1.1, 1.0],
                "target_diffusion_factor": 0.45, "solidity": 1.2, "polytropic_efficiency": 0.9},
        # A flow coefficient of 1.1 at 20,000 rev/min puts the axial velocity near 690 m/s at the
        # 0.3 m mean radius (V_x = phi * 2 pi r N / 60, derived here), far above the speed of
        # sound at 288 K: the annulus chokes at station 1.
        good={"machine": "compressor", "mass_flow": 25.0, "total_temperature": 288.15,
              "total_pressure": 101325.0, "pressure_ratio": 3.0, "shaft_speed": 12000.0,
              "polytropic_efficiency": 0.9, "flow_coefficient": 0.5, "reaction": 0.6, "rotor_aspect_ratio": 2.5,
              "stator_aspect_ratio": 3.0, "mean_radius": 0.3, "stages": 3, "target_diffusion_factor": 0.45},
        bad={"machine": "compressor", "mass_flow": 25.0, "total_temperature": 288.15,
             "total_pressure": 101325.0, "pressure_ratio": 3.0, "shaft_speed": 20000.0,
             "polytropic_efficiency": 0.9, "flow_coefficient": 1.1, "reaction": 0.6, "rotor_aspect_ratio": 2.5,
             "stator_aspect_ratio": 3.0, "mean_radius": 0.3, "stages": 3, "target_diffusion_factor": 0.45},
        bad_reason="choked",
        variants=(
            {"machine": "turbine", "gas": "combustion_products", "mass_flow": 25.0, "total_temperature": 1400.0,
             "total_pressure": 1.2e6, "pressure_ratio": 4.0, "shaft_speed": 12000.0,
             "polytropic_efficiency": 0.9, "hub_radius": 0.24, "stages": 3, "flow_coefficient": [0.6, 0.65, 0.7],
             "reaction": 0.45, "rotor_aspect_ratio": 1.8, "stator_aspect_ratio": 1.4},
        ),
    ),
    "stage-efficiency": Example(
        base={"machine": "compressor", "loss_model": "lieblein_howell", "total_temperature": 288.15,
              "rotor_aspect_ratio": 2.0, "stator_aspect_ratio": 2.5},
        values={"flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5, "blade_speed": 300.0,
                "axial_velocity": 150.0, "alpha1": 30.0, "alpha2": 55.0, "alpha3": -10.0,
                "rotor_solidity": 1.2, "stator_solidity": 1.1, "reynolds_number": 2.0e5,
                "total_pressure": 101325.0, "blade_height": 0.05, "thickness_to_chord": 0.2,
                "stator_nozzle_profile_loss": 0.025, "stator_impulse_profile_loss": 0.07,
                "rotor_nozzle_profile_loss": 0.03, "rotor_impulse_profile_loss": 0.08,
                "trailing_edge_thickness_to_throat": 0.05, "base_pressure_coefficient": -0.15},
        # As for the triangles: a total temperature of 10 K leaves a negative static temperature at
        # station 1 at these duty coefficients (V1^2 / (2 cp) = 15.2 K, derived there).
        good={"machine": "compressor", "loss_model": "lieblein_howell", "flow_coefficient": 0.5,
              "loading_coefficient": 0.4, "reaction": 0.5, "blade_speed": 300, "total_temperature": 288.15,
              "rotor_aspect_ratio": 2.0, "stator_aspect_ratio": 2.5, "rotor_solidity": 1.2, "stator_solidity": 1.1},
        bad={"machine": "compressor", "loss_model": "lieblein_howell", "flow_coefficient": 0.5,
             "loading_coefficient": 0.4, "reaction": 0.5, "blade_speed": 300, "total_temperature": 10,
             "rotor_aspect_ratio": 2.0, "stator_aspect_ratio": 2.5, "rotor_solidity": 1.2, "stator_solidity": 1.1},
        bad_reason="static temperature",
        variants=(
            {"machine": "turbine", "loss_model": "soderberg", "flow_coefficient": 0.6, "loading_coefficient": 1.5,
             "reaction": 0.4, "blade_speed": 340.0, "gas": "combustion_products", "total_temperature": 1100.0,
             "total_pressure": 4.0e5, "rotor_aspect_ratio": 2.0, "stator_aspect_ratio": 1.6, "blade_height": 0.05,
             "thickness_to_chord": 0.2},
            {"machine": "compressor", "loss_model": "lieblein_howell", "flow_coefficient": 0.55,
             "loading_coefficient": 0.35, "reaction": 0.6, "blade_speed": 250, "total_temperature": 300,
             "total_pressure": 1e5, "rotor_aspect_ratio": 2.2, "stator_aspect_ratio": 2.8, "rotor_solidity": 1.3,
             "stator_solidity": 1.0, "tip_clearance_to_height": 0.01},
            {"machine": "turbine", "loss_model": "kacker_okapuu", "blade_speed": 330.0, "axial_velocity": 200.0,
             "alpha2": 68.0, "alpha3": -5.0, "gas": "combustion_products", "total_temperature": 1300.0,
             "rotor_aspect_ratio": 2.2, "stator_aspect_ratio": 1.7, "thickness_to_chord": 0.18,
             "stator_nozzle_profile_loss": 0.028, "stator_impulse_profile_loss": 0.075,
             "rotor_nozzle_profile_loss": 0.03, "rotor_impulse_profile_loss": 0.085,
             "trailing_edge_thickness_to_throat": 0.04, "base_pressure_coefficient": -0.12,
             "tip_clearance_to_height": 0.008},
        ),
    ),
}


def calculation(name: str) -> Calculation:
    return next(c for c in CALCULATIONS if c.name == name)


#: Calculations that take the columns request shape.
COLUMN_NAMES = [c.name for c in CALCULATIONS if c.columns]


def find_mode(calc: Calculation, *parts: str) -> Form:
    """The first mode made of all the named parts, e.g. ``find_mode(calc, "CompressorAngles")``."""
    return next(m for m in calc.forms if all(m.includes(part) for part in parts))


def base_case(calc: Calculation) -> dict:
    """The fields every mode needs: each field the schema requires, from the good case, and the base."""
    example = EXAMPLES[calc.name]
    required = {name: example.good[name] for name, f in calc._case_schema.fields.items()
                if f.required and name in example.good}
    return {**required, **example.base}


def field_values(calc: Calculation) -> dict:
    """A valid value of every field the example gives: the good case's, overridden by base and values."""
    example = EXAMPLES[calc.name]
    return {**example.good, **example.base, **example.values}


def mode_case(calc: Calculation, mode: Form) -> dict:
    """A valid case of one input mode: the base fields, the mode's fields and its options."""
    case = base_case(calc)
    values = field_values(calc)
    case.update({name: values[name] for name in mode.required})
    for option, allowed in mode.when.items():
        case[option] = allowed[0]
    return case


def all_mode_cases():
    """(calculation name, mode name, case) for every mode of every calculation with an example (one
    without is named by tests/api/test_shapes.py::test_every_calculation_has_examples)."""
    return [(calc.name, mode.name, mode_case(calc, mode)) for calc in CALCULATIONS if calc.name in EXAMPLES
            for mode in calc.forms]


def valid_cases(name: str) -> list[dict]:
    """Every mode case of a calculation, its variants and the good case of the impossible pair."""
    calc = calculation(name)
    example = EXAMPLES[name]
    return [mode_case(calc, mode) for mode in calc.forms] + list(example.variants) + [example.good]


def strict_json(text: str):
    """Parse JSON refusing NaN and infinities, which JSON does not have."""
    def refuse(token):
        raise AssertionError(f"non-JSON number {token} in the response")
    return json.loads(text, parse_constant=refuse)


def post(client, name: str, body, **kwargs):
    """POST a JSON body (or raw text/bytes) to a calculation."""
    data = body if isinstance(body, str | bytes) else json.dumps(body, allow_nan=True)
    kwargs.setdefault("content_type", "application/json")
    return client.post(f"/v1/{name}", data=data, **kwargs)


def ok_body(response):
    assert response.status_code == 200, response.get_data(as_text=True)
    assert response.mimetype == "application/json"
    return strict_json(response.get_data(as_text=True))


def problem_body(response, status: int) -> dict:
    """The problem document of an error response, with every property RFC 9457 and the brief ask."""
    text = response.get_data(as_text=True)
    assert response.status_code == status, text
    assert response.mimetype == PROBLEM_JSON, response.headers.get("Content-Type")
    assert not TRACEBACK_MARKERS.search(text), text
    body = strict_json(text)
    assert isinstance(body.get("type"), str) and body["type"]
    assert isinstance(body.get("title"), str) and body["title"]
    assert body.get("status") == status
    assert isinstance(body.get("detail"), str) and body["detail"]
    assert response.headers.get("Cache-Control") == "no-store"
    assert response.headers.get("X-Content-Type-Options") == "nosniff"
    return body


def pointers(body: dict) -> list[str]:
    return [error["pointer"] for error in body.get("errors", [])]


def resolve_pointer(document, pointer: str):
    """The value a JSON Pointer (RFC 6901) names in a document; KeyError/IndexError if none."""
    if pointer == "":
        return document
    assert pointer.startswith("/"), pointer
    value = document
    for token in pointer[1:].split("/"):
        token = token.replace("~1", "/").replace("~0", "~")
        value = value[int(token)] if isinstance(value, list) else value[token]
    return value


def assert_json_close(actual, expected, path="", rtol=1e-12):
    """Equal JSON documents, numbers to ``rtol``; integers and floats must not be mixed up."""
    if isinstance(expected, dict):
        assert isinstance(actual, dict), f"{path}: {actual!r} is not an object"
        assert set(actual) == set(expected), f"{path}: keys differ: {set(actual) ^ set(expected)}"
        for key in expected:
            assert_json_close(actual[key], expected[key], f"{path}/{key}", rtol)
    elif isinstance(expected, list):
        assert isinstance(actual, list), f"{path}: {actual!r} is not a list"
        assert len(actual) == len(expected), f"{path}: {actual!r} != {expected!r}"
        for i, (a, e) in enumerate(zip(actual, expected, strict=True)):
            assert_json_close(a, e, f"{path}/{i}", rtol)
    elif isinstance(expected, bool) or expected is None or isinstance(expected, str):
        assert actual == expected, f"{path}: {actual!r} != {expected!r}"
    else:
        assert type(actual) is type(expected), f"{path}: {actual!r} and {expected!r} differ in type"
        assert math.isclose(actual, expected, rel_tol=rtol, abs_tol=1e-300), (
            f"{path}: {actual!r} != {expected!r}")
