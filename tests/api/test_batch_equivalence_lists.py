"""Columns of whole machines answer exactly what the cases answer one by one.

As tests/api/test_batch_equivalence.py, for the calculations whose cases hold lists (the stage
split and the machine design): a columns request whose cases have different stage counts, with
per-stage inputs given as one value, as one value per case, or as a list of lists of different
lengths (mixed with numbers), and with cases that fail (a choked annulus, a list whose length is
not the stage count, a loading limit no stage count meets). Each case of the columns answer must
equal the case's own answer, each per-stage, per-station and per-row list at the case's own length
(ragged), and a case that fails alone (422) must come back as nulls with the same reason.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from service.api import memory
from tests.api.test_batch_equivalence import (  # noqa: F401 - the client fixture
    RTOL,
    client,
    column_case,
    one_by_one,
    opt,
    post,
    uniform,
)

PER_STAGE = ("flow_coefficient", "reaction")


def per_stage(low, high):
    """One number for every stage, or a list of one to four (not always the stage count: such a case fails)."""
    return st.one_of(uniform(low, high), st.lists(uniform(low, high), min_size=1, max_size=4))


DUTY = {"mass_flow": uniform(5.0, 60.0), "total_pressure": uniform(5e4, 2e6), "shaft_speed": uniform(5000.0, 20000.0),
        "polytropic_efficiency": uniform(0.8, 0.93)}

FORMS = {
    "machine-design": [
        # Stage counts given; flow coefficients up to 1.1 choke some annuli at the higher speeds.
        {"machine": opt("compressor"), **DUTY, "total_temperature": uniform(250.0, 320.0),
         "pressure_ratio": uniform(1.5, 6.0), "mean_radius": uniform(0.15, 0.45), "stages": st.integers(1, 4),
         "flow_coefficient": per_stage(0.35, 1.1), "reaction": per_stage(0.5, 0.7),
         "rotor_aspect_ratio": uniform(1.5, 3.5), "stator_aspect_ratio": uniform(1.5, 3.5),
         "target_diffusion_factor": uniform(0.35, 0.5)},
        # The fewest stages within a loading limit, with the hub radius held (the annulus solved).
        {"machine": opt("turbine"), **DUTY, "total_temperature": uniform(900.0, 1500.0),
         "pressure_ratio": uniform(1.5, 6.0), "hub_radius": uniform(0.15, 0.35), "gas": opt("combustion_products"),
         "max_loading_coefficient": uniform(1.0, 2.5), "flow_coefficient": uniform(0.4, 1.0),
         "reaction": uniform(0.3, 0.6), "rotor_aspect_ratio": uniform(1.0, 3.0),
         "stator_aspect_ratio": uniform(1.0, 3.0)},
        # The stage count from the count of weights.
        {"machine": opt("compressor"), **DUTY, "total_temperature": uniform(250.0, 320.0),
         "pressure_ratio": uniform(1.5, 5.0), "tip_radius": uniform(0.25, 0.5), "rule": opt("weights"),
         "weights": st.lists(uniform(0.5, 2.0), min_size=1, max_size=4), "flow_coefficient": uniform(0.4, 0.7),
         "reaction": uniform(0.5, 0.7), "rotor_aspect_ratio": uniform(1.5, 3.5),
         "stator_aspect_ratio": uniform(1.5, 3.5), "solidity": uniform(0.8, 1.6)},
    ],
    "stage-split": [
        {"machine": opt("compressor", "turbine"), "pressure_ratio": uniform(1.2, 8.0),
         "total_temperature": uniform(250.0, 1500.0), "total_pressure": uniform(5e4, 2e6),
         "polytropic_efficiency": uniform(0.8, 0.93), "rule": opt("weights"),
         "weights": st.lists(uniform(0.5, 2.0), min_size=1, max_size=6)},
        # Loadings this low at these blade speeds need more stages than the service allows: some fail.
        {"machine": opt("compressor", "turbine"), "pressure_ratio": uniform(1.2, 8.0),
         "total_temperature": uniform(250.0, 1500.0), "total_pressure": uniform(5e4, 2e6),
         "stage_isentropic_efficiency": uniform(0.8, 0.93), "rule": opt("equal_work", "equal_pressure_ratio"),
         "max_loading_coefficient": uniform(0.01, 2.0), "blade_speed": uniform(30.0, 400.0)},
    ],
}


def assert_same(actual, expected, where):
    """Equal JSON values; numbers to RTOL (a long array and a one-element one may round differently)."""
    if isinstance(expected, dict):
        assert isinstance(actual, dict) and actual.keys() == expected.keys(), where
        for key in expected:
            assert_same(actual[key], expected[key], f"{where}/{key}")
    elif isinstance(expected, list):
        assert isinstance(actual, list) and len(actual) == len(expected), (where, actual, expected)
        for i, (a, e) in enumerate(zip(actual, expected, strict=True)):
            assert_same(a, e, f"{where}/{i}")
    elif isinstance(expected, float) and isinstance(actual, float):
        np.testing.assert_allclose(actual, expected, rtol=RTOL, atol=0, err_msg=where)
    else:
        assert actual == expected and type(actual) is type(expected), where


def case_of(columns, i, expected):
    """Case ``i`` of a columns answer laid out as its own answer ``expected``: a batch of mixed machines
    holds the union of the outputs and checks, null for a case where they do not apply."""
    case = column_case(columns, i, expected)
    extra = set(case["checks"]) - set(expected["checks"])
    assert all(case["checks"][name]["value"] is None and case["checks"][name]["status"] is None
               for name in extra), (i, extra)
    case["checks"] = {name: check for name, check in case["checks"].items() if name not in extra}
    if "assumed" in columns:  # one value where every case took the same default, else one per case
        taken = {name: value[i] if isinstance(value, list) else value for name, value in columns["assumed"].items()}
        taken = {name: value for name, value in taken.items() if value is not None}
        if taken or "assumed" in expected:
            case["assumed"] = taken
    return case


def columns_of(cases, form, data):
    """The cases as one columns body: a field equal in every case sometimes sent once; per-stage lists
    always as one list per case (a single list there would be one number per case)."""
    columns = {}
    for field in form:
        values = [case[field] for case in cases]
        holds_lists = any(isinstance(v, list) for v in values)
        same = all(v == values[0] for v in values)
        # The pressure ratio always as a column: it sets the case count even where all else is shared.
        if (same and field != "pressure_ratio" and not (holds_lists and field in PER_STAGE)
                and data.draw(st.booleans())):
            columns[field] = values[0]
        else:
            columns[field] = values
    return columns


@pytest.mark.parametrize("name", list(FORMS))
@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_columns_of_lists_answer_each_case_as_it_is_answered_alone(client, name, data):  # noqa: F811
    form = data.draw(st.sampled_from(FORMS[name]))
    cases = data.draw(st.lists(st.fixed_dictionaries(form), min_size=1, max_size=6))
    answers = one_by_one(client, name, cases)
    status, body = post(client, name, {"columns": columns_of(cases, form, data)})
    assert status == 200, body
    errors = {error["index"]: error["detail"] for error in body["errors"]}
    assert sorted(errors) == [i for i, (kind, _) in enumerate(answers) if kind == "impossible"]
    for i, (kind, expected) in enumerate(answers):
        if kind == "ok":
            assert_same(case_of(body["columns"], i, expected), expected, f"columns case {i}")
        else:
            assert errors[i] == expected
            case = column_case(body["columns"], i)
            assert all(value is None for key, value in case.items() if key != "checks"), i
            assert all(check["value"] is None and check["status"] is None for check in case["checks"].values())


@pytest.mark.parametrize("chunk", [None, 2])
def test_a_mixed_batch_holds_different_stage_counts_ragged_lists_and_failures(client, monkeypatch, chunk):  # noqa: F811
    if chunk is not None:  # computed a few cases at a time: outcomes of different widths merged
        monkeypatch.setitem(memory.CHUNK_CASES_GIVEN, "machine-design", {"mean_radius": chunk})
    # The property test's mix, certain: three stage counts, lists of three lengths beside a number,
    # a choked case (flow coefficient 1.1 at 20,000 rev/min: V_x near 690 m/s at 0.3 m, derived in
    # tests/api/examples.py) and a list whose length is not the stage count.
    base = {"machine": "compressor", "mass_flow": 25.0, "total_temperature": 288.15, "total_pressure": 101325.0,
            "polytropic_efficiency": 0.9, "reaction": 0.6, "rotor_aspect_ratio": 2.5, "stator_aspect_ratio": 3.0,
            "mean_radius": 0.3, "target_diffusion_factor": 0.45}
    varied = [
        {"pressure_ratio": 3.0, "stages": 3, "shaft_speed": 12000.0, "flow_coefficient": [0.5, 0.55, 0.6]},
        {"pressure_ratio": 1.8, "stages": 1, "shaft_speed": 12000.0, "flow_coefficient": [0.5]},
        {"pressure_ratio": 3.0, "stages": 3, "shaft_speed": 20000.0, "flow_coefficient": 1.1},
        {"pressure_ratio": 4.0, "stages": 4, "shaft_speed": 12000.0, "flow_coefficient": 0.5},
        {"pressure_ratio": 3.0, "stages": 2, "shaft_speed": 12000.0, "flow_coefficient": [0.5, 0.5, 0.5]},
    ]
    cases = [{**base, **v} for v in varied]
    answers = one_by_one(client, "machine-design", cases)
    assert [kind for kind, _ in answers] == ["ok", "ok", "impossible", "ok", "impossible"]
    columns = {**base, **{key: [v[key] for v in varied] for key in varied[0]}}
    status, body = post(client, "machine-design", {"columns": columns})
    assert status == 200, body
    assert body["columns"]["stage_count"] == [3, 1, None, 4, None]
    # Ragged, not padded: each case's stations at its own count (2n + 1, less the compressor outlet,
    # where no rotor is and the relative angle does not apply).
    assert [None if v is None else len(v) for v in body["columns"]["station_total_pressure"]] == [7, 3, None, 9, None]
    assert [None if v is None else len(v) for v in body["columns"]["row_blade_count"]] == [6, 2, None, 8, None]
    errors = {e["index"]: e["detail"] for e in body["errors"]}
    assert errors == {2: answers[2][1], 4: answers[4][1]}
    assert "flow_coefficient has a different number of entries" in errors[4]
    for i in (0, 1, 3):
        assert_same(case_of(body["columns"], i, answers[i][1]), answers[i][1], f"case {i}")
