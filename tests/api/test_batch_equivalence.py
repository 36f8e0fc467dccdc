"""The fast batch paths answer exactly what the cases answer one by one.

The reference is the service's own single-case answer (one request per case), which goes
through none of the batch machinery: not the columns loading, the grouping of rows, the masks of
failed cases, the row text written without a dict per case, nor the answer written in pieces.
Random cases (hypothesis) in the fields' documented ranges, with per-case options mixed within a
batch, many of them physically impossible (a static temperature at or below zero, a diffusion
factor no solidity reaches, a row without turning): a case that one request answers with a 422
physically-impossible must come back in a batch as nulls, with the same reason at its index in
``errors``. The pieces are made small here, so that every batch is written in several.

Numbers are compared to 1e-12 relative: the arithmetic is the same, but numpy may evaluate a
long array and a one-element array with differently vectorised transcendental functions.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from service import create_app
from service.api import jsonwrite
from service.api.rowstext import RowsText

RTOL = 1e-12
PHYSICALLY_IMPOSSIBLE = "urn:meanline:problem:physically-impossible"


@pytest.fixture(scope="module")
def client():
    saved = (jsonwrite.STREAM_CASES, jsonwrite.PIECE_BYTES, jsonwrite.ROWS_PER_PIECE, RowsText.ROWS_PER_PIECE)
    jsonwrite.STREAM_CASES, jsonwrite.PIECE_BYTES, jsonwrite.ROWS_PER_PIECE, RowsText.ROWS_PER_PIECE = 2, 64, 3, 4
    try:
        yield create_app({"LOG_LEVEL": "warning"}).test_client()
    finally:
        jsonwrite.STREAM_CASES, jsonwrite.PIECE_BYTES, jsonwrite.ROWS_PER_PIECE, RowsText.ROWS_PER_PIECE = saved


def uniform(low, high):
    return st.floats(low, high, allow_nan=False, allow_infinity=False)


def opt(*choices):
    return st.sampled_from(choices)


# Each form is one way of giving a case (one input mode); a columns batch uses one form.
FORMS = {
    "triangles": [
        {"machine": opt("compressor", "turbine"), "flow_coefficient": uniform(0.1, 1.5),
         "loading_coefficient": uniform(0.05, 2.5), "reaction": uniform(-0.5, 1.5),
         "blade_speed": uniform(50.0, 500.0)},
        # Low total temperatures leave no positive static temperature at some station.
        {"machine": opt("compressor", "turbine"), "flow_coefficient": uniform(0.1, 1.5),
         "loading_coefficient": uniform(0.05, 2.5), "reaction": uniform(-0.5, 1.5),
         "blade_speed": uniform(50.0, 500.0), "total_temperature": uniform(5.0, 1500.0),
         "total_pressure": uniform(1e4, 4e6), "gas": opt("air", "combustion_products")},
        # Angles that do no work in the machine's sense are impossible.
        {"machine": opt("compressor"), "blade_speed": uniform(50.0, 500.0), "axial_velocity": uniform(30.0, 300.0),
         "alpha1": uniform(-70.0, 70.0), "alpha2": uniform(-70.0, 70.0)},
        {"machine": opt("turbine"), "blade_speed": uniform(50.0, 500.0), "axial_velocity": uniform(30.0, 300.0),
         "alpha2": uniform(-70.0, 70.0), "alpha3": uniform(-70.0, 70.0)},
    ],
    "zweifel": [
        {"inlet_angle": uniform(-60.0, 60.0), "outlet_angle": uniform(-80.0, 80.0), "axial_chord": uniform(0.01, 0.1),
         "mean_radius": uniform(0.05, 1.0), "zweifel_coefficient": uniform(0.3, 1.3),
         "rounding": opt("up", "nearest", "even_up")},
        {"inlet_angle": uniform(-60.0, 60.0), "outlet_angle": uniform(-80.0, 80.0), "axial_chord": uniform(0.01, 0.1),
         "blade_count": st.integers(1, 200), "mean_radius": uniform(0.05, 1.0)},
        {"inlet_angle": uniform(-60.0, 60.0), "outlet_angle": uniform(-80.0, 80.0), "blade_height": uniform(0.01, 0.2),
         "aspect_ratio": uniform(0.5, 5.0), "pitch": uniform(0.005, 0.1), "definition": opt("compressible"),
         "outlet_mach": uniform(0.05, 1.5)},
        # Equal angles: no turning, so no pitch reaches the target.
        {"inlet_angle": opt(-20.0, 35.0), "outlet_angle": opt(-20.0, 35.0), "axial_chord": uniform(0.01, 0.1),
         "mean_radius": uniform(0.05, 1.0)},
    ],
    "diffusion-factor": [
        {"row": opt("rotor", "stator"), "span_position": opt("hub", "mean", "tip"),
         "axial_velocity": uniform(50.0, 250.0), "inlet_angle": uniform(-70.0, 70.0),
         "outlet_angle": uniform(-70.0, 70.0), "solidity": uniform(0.3, 3.0)},
        # Targets at or below 1 - V2/V1 are reached by no solidity.
        {"row": opt("rotor", "stator"), "span_position": opt("hub", "mean", "tip"),
         "axial_velocity": uniform(50.0, 250.0), "inlet_angle": uniform(-70.0, 70.0),
         "outlet_angle": uniform(-70.0, 70.0), "target_diffusion_factor": uniform(0.05, 0.95),
         "chord": uniform(0.01, 0.2), "mean_radius": uniform(0.05, 1.0)},
        {"row": opt("rotor"), "axial_velocity": uniform(50.0, 250.0), "outlet_axial_velocity": uniform(50.0, 250.0),
         "inlet_angle": uniform(-70.0, 70.0), "outlet_angle": uniform(-70.0, 70.0), "inlet_radius": uniform(0.1, 0.6),
         "outlet_radius": uniform(0.1, 0.6), "shaft_speed": uniform(1000.0, 20000.0), "chord": uniform(0.01, 0.2),
         "pitch": uniform(0.005, 0.2)},
        {"row": opt("stator"), "axial_velocity": uniform(50.0, 250.0), "inlet_angle": uniform(-70.0, 70.0),
         "outlet_angle": uniform(-70.0, 70.0), "inlet_radius": uniform(0.1, 0.6), "outlet_radius": uniform(0.1, 0.6),
         "solidity": uniform(0.3, 3.0)},
    ],
}


def cases_of(form, size):
    return st.lists(st.fixed_dictionaries(form), min_size=size[0], max_size=size[1])


def rows_of(name):
    return st.lists(st.sampled_from(FORMS[name]).flatmap(st.fixed_dictionaries), min_size=1, max_size=12)


def post(client, name, payload):
    response = client.post(f"/v1/{name}", json=payload)
    return response.status_code, response.get_json()


def one_by_one(client, name, cases):
    """Each case's own answer: ("ok", body) or ("impossible", reason)."""
    answers = []
    for case in cases:
        status, body = post(client, name, case)
        if status == 200:
            answers.append(("ok", body))
        else:
            assert status == 422 and body["type"] == PHYSICALLY_IMPOSSIBLE, body
            answers.append(("impossible", body["detail"]))
    return answers


def assert_same(actual, expected, where):
    if isinstance(expected, dict):
        assert isinstance(actual, dict) and actual.keys() == expected.keys(), where
        for key in expected:
            assert_same(actual[key], expected[key], f"{where}/{key}")
    elif isinstance(expected, float) and isinstance(actual, float):
        np.testing.assert_allclose(actual, expected, rtol=RTOL, atol=0, err_msg=where)
    else:
        assert actual == expected and type(actual) is type(expected), where


def assert_failed(result, reason, errors, i, where):
    assert errors.get(i) == reason, where
    for key, value in result.items():
        if key == "assumed":
            continue  # what the case took as given, failed or not
        if key == "checks":
            for check in value.values():
                assert check["value"] is None and check["status"] is None, where
        else:
            assert value is None, f"{where}/{key}"


def column_case(columns, i, outputs=None):
    """Case ``i`` of a columns answer, laid out as one case's answer: the outputs it has (a batch
    of mixed options has the union of the outputs, null where they do not apply)."""
    case = {key: values[i] for key, values in columns.items() if key not in ("checks", "assumed")}
    if outputs is not None:
        assert all(value is None for key, value in case.items() if key not in outputs), case
        case = {key: value for key, value in case.items() if key in outputs}
    case["checks"] = {
        name: {key: (values[i] if key in ("value", "status") or isinstance(values, list) else values)
               for key, values in check.items()}
        for name, check in columns["checks"].items()
    }
    return case


def assert_batch_is_one_by_one(answers, results, errors, shape):
    errors = {error["index"]: error["detail"] for error in errors}
    assert sorted(errors) == [i for i, (kind, _) in enumerate(answers) if kind == "impossible"]
    for i, (kind, expected) in enumerate(answers):
        if kind == "ok":
            assert_same(results[i], expected, f"{shape} case {i}")
        else:
            assert_failed(results[i], expected, errors, i, f"{shape} case {i}")


CALCULATIONS = list(FORMS)


@pytest.mark.parametrize("name", CALCULATIONS)
@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_rows_answer_each_case_as_it_is_answered_alone(client, name, data):
    cases = data.draw(rows_of(name))
    answers = one_by_one(client, name, cases)
    status, body = post(client, name, {"cases": cases})
    assert status == 200, body
    assert len(body["results"]) == len(cases)
    assert_batch_is_one_by_one(answers, body["results"], body["errors"], "rows")


@pytest.mark.parametrize("name", CALCULATIONS)
@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_columns_answer_each_case_as_it_is_answered_alone(client, name, data):
    form = data.draw(st.sampled_from(FORMS[name]))
    cases = data.draw(cases_of(form, (1, 12)))
    answers = one_by_one(client, name, cases)
    # A field with one value in every case may be sent once, as a scalar that broadcasts.
    columns = {}
    for field in form:
        values = [case[field] for case in cases]
        columns[field] = values[0] if len(set(values)) == 1 and data.draw(st.booleans()) else values
    status, body = post(client, name, {"columns": columns})
    assert status == 200, body
    results = [column_case(body["columns"], i, answer[1] if answer[0] == "ok" else None)
               for i, answer in enumerate(answers)]
    assert_batch_is_one_by_one(answers, results, body["errors"], "columns")


def test_some_drawn_cases_are_impossible_and_some_are_not(client):
    # The property tests above are only as good as their mix: each family of forms gives both.
    for name, form, case in [
        ("triangles", 1, {"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4,
                          "reaction": 0.5, "blade_speed": 300.0, "total_temperature": 5.0, "total_pressure": 1e5,
                          "gas": "air"}),
        ("zweifel", 3, {"inlet_angle": 35.0, "outlet_angle": 35.0, "axial_chord": 0.04, "mean_radius": 0.3}),
        ("diffusion-factor", 1, {"row": "rotor", "span_position": "mean", "axial_velocity": 150.0,
                                 "inlet_angle": -55.0, "outlet_angle": -35.0, "target_diffusion_factor": 0.1,
                                 "chord": 0.05, "mean_radius": 0.3}),
    ]:
        assert set(case) == set(FORMS[name][form])
        status, body = post(client, name, case)
        assert status == 422 and body["type"] == PHYSICALLY_IMPOSSIBLE, (name, body)
        ok = {**case, **({"total_temperature": 288.15} if name == "triangles" else
                         {"outlet_angle": -65.0} if name == "zweifel" else {"target_diffusion_factor": 0.45})}
        status, body = post(client, name, ok)
        assert status == 200 and all(v is None or math.isfinite(v) for v in body.values()
                                     if not isinstance(v, dict)), (name, body)
