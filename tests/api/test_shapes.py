"""The three request shapes of every calculation: one case, rows and columns.

The service is compared with itself across shapes (a batch must give exactly what its cases
give one by one) and with the layouts of the design brief ("Request and response shapes").
Numbers asserted outright are derived in the test from the definitions they follow.
"""

from __future__ import annotations

import json
import math
import re

import numpy as np
import orjson
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from marshmallow import Schema
from marshmallow import fields as ma_fields

from service.api.calculation import run_calculation
from service.api.common import integer_output, output, positive
from service.api.declarations import Alternative, Calculation, Choice
from service.api.fields import CaseSchema, Option, Quantity, QuantityList
from service.core.cases import CaseResults
from service.core.checks import COMMON_PRACTICE, COMPARISONS, STATUSES, RuleCheck
from tests.api.examples import (
    COLUMN_NAMES,
    EXAMPLES,
    PHYSICALLY_IMPOSSIBLE,
    all_mode_cases,
    assert_json_close,
    calculation,
    find_mode,
    mode_case,
    ok_body,
    post,
    problem_body,
    strict_json,
    valid_cases,
)

NAMES = list(EXAMPLES)
COLUMN_MODE_CASES = [item for item in all_mode_cases() if item[0] in COLUMN_NAMES]
CHECK_KEYS = {"value", "limit", "fail_limit", "comparison", "status", "basis"}


def _ids(value):
    return value if isinstance(value, str) else ""


def test_every_calculation_has_examples():
    from service.api.registry import CALCULATIONS

    assert sorted(c.name for c in CALCULATIONS) == sorted(EXAMPLES), "add the new endpoint to EXAMPLES"


# -- comparing a batch with its cases sent one by one -------------------------------------------


def _column_check_entry(check: dict, i: int) -> dict:
    """One case's check from a columns layout: value and status per case, constants shared or per case."""
    return {key: (value[i] if key in ("value", "status") or isinstance(value, list) else value)
            for key, value in check.items()}


def _null_check(value, status) -> bool:
    """A failed case's check: null value and status. A per-stage check gives [] instead, a known
    bug pinned by test_failed_case_per_stage_checks_are_null_in_rows; tolerated here so that the
    comparison of shapes still runs on the stage split."""
    return (value, status) in ((None, None), ([], []))


def assert_batch_matches_singles(client, name, cases, rows=None, columns=None):
    """Rows and columns bodies hold, case by case, what each case gives alone.

    A case that alone is physically impossible (422) must have null outputs, null check values
    and statuses, and an ``errors`` entry with its index and the same reason.
    """
    expected_errors = []
    for i, case in enumerate(cases):
        response = post(client, name, case)
        if response.status_code == 200:
            single = ok_body(response)
            if rows is not None:
                assert_json_close(rows["results"][i], single, f"/results/{i}")
            if columns is not None:
                out = columns["columns"]
                for key, value in single.items():
                    if key not in ("checks", "assumed"):
                        assert_json_close(out[key][i], value, f"/columns/{key}/{i}")
                for key in set(out) - set(single):
                    assert out[key][i] is None, f"/columns/{key}/{i} should be null: the case has no {key}"
                for check, entry in single["checks"].items():
                    assert_json_close(_column_check_entry(out["checks"][check], i), entry,
                                      f"/columns/checks/{check}/{i}")
                for check in set(out["checks"]) - set(single["checks"]):
                    assert out["checks"][check]["value"][i] is None
                    assert out["checks"][check]["status"][i] is None
        else:
            problem = problem_body(response, 422)
            assert problem["type"] == PHYSICALLY_IMPOSSIBLE, problem
            expected_errors.append({"index": i, "detail": problem["detail"]})
            if rows is not None:
                result = rows["results"][i]
                assert all(v is None for k, v in result.items() if k not in ("checks", "assumed")), result
                assert all(_null_check(c["value"], c["status"]) for c in result["checks"].values())
            if columns is not None:
                out = columns["columns"]
                assert all(out[k][i] is None for k in out if k not in ("checks", "assumed")), i
                assert all(_null_check(c["value"][i], c["status"][i]) for c in out["checks"].values())
    for body in (rows, columns):
        if body is not None:
            assert body["errors"] == expected_errors


def rows_of(cases):
    return {"cases": cases}


def columns_of(cases):
    """Cases with the same fields as columns; a field equal in every case is sent once, as a scalar."""
    names = list(cases[0])
    assert all(list(c) == names for c in cases)
    columns = {}
    for name in names:
        values = [c[name] for c in cases]
        columns[name] = values[0] if all(v == values[0] for v in values) and len(cases) > 1 else values
    return {"columns": columns}


# -- one case --------------------------------------------------------------------------------------


@pytest.mark.parametrize(("name", "mode", "case"), all_mode_cases(), ids=_ids)
def test_one_case_gives_one_object_of_finite_numbers(client, name, mode, case):
    body = ok_body(post(client, name, case))
    outputs = calculation(name).outputs().fields
    assert not {"results", "columns", "errors"} & set(body)
    assert set(body) - {"checks", "assumed"} <= set(outputs)
    assert ("assumed" in body) == bool(calculation(name).defaults)
    # A missing value is always explained by an error; a computed case has none missing. Only a list
    # documented with entries that may not apply (x-null-entries) has nulls, never all of them.
    for key, value in body.items():
        if key not in ("checks", "assumed"):
            per_stage = outputs[key].metadata.get("x-per-stage", False)
            assert isinstance(value, list) == per_stage and (not per_stage or value), key
            numbers = value if per_stage else [value]
            if outputs[key].metadata.get("x-null-entries", False):
                assert any(number is not None for number in numbers), key
                numbers = [number for number in numbers if number is not None]
            for number in numbers:
                assert type(number) in (int, float) and math.isfinite(number), key
    assert isinstance(body["checks"], dict)


# -- rows ----------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", NAMES)
def test_rows_give_results_in_request_order_equal_to_single_cases(client, name):
    # Every mode and option of the calculation in one batch, in reverse so that the order of the
    # results cannot follow the order of the internal groups.
    cases = valid_cases(name)[::-1]
    body = ok_body(post(client, name, rows_of(cases)))
    assert set(body) == {"results", "errors"}
    assert len(body["results"]) == len(cases)
    assert_batch_matches_singles(client, name, cases, rows=body)
    assert body["errors"] == []


@pytest.mark.parametrize("name", NAMES)
def test_rows_answer_alike_whatever_the_order_of_their_keys(client, name):
    # Rows are read as columns at once when all name their fields in one order: the same case with
    # its keys in another order, and one case repeated (every column one value), answer as alone.
    good = EXAMPLES[name].good
    turned = dict(reversed(list(good.items())))
    for cases in ([good, turned, good], [turned, turned, turned], [good] * 3):
        body = ok_body(post(client, name, rows_of(cases)))
        assert body["errors"] == []
        assert_batch_matches_singles(client, name, cases, rows=body)


def test_rows_mix_machines_and_modes_with_each_case_on_its_own_stations(client):
    calc = calculation("triangles")
    duty = mode_case(calc, find_mode(calc, "duty", "rows=none"))
    cases = [
        mode_case(calc, find_mode(calc, "turbine_angles", "rows=none")),
        {**duty, "machine": "turbine"},
        duty,
        mode_case(calc, find_mode(calc, "compressor_angles", "rows=none")),
        EXAMPLES["triangles"].good,
        mode_case(calc, find_mode(calc, "turbine_angles", "zweifel_chord")),
        mode_case(calc, find_mode(calc, "duty", "solidities")),
    ]
    body = ok_body(post(client, "triangles", rows_of(cases)))
    assert_batch_matches_singles(client, "triangles", cases, rows=body)
    # The rotor's stations (design brief, "Conventions"): compressor 1-2, turbine 2-3.
    for case, result in zip(cases, body["results"], strict=True):
        rotor = ("beta1", "beta2") if case["machine"] == "compressor" else ("beta2", "beta3")
        assert {k for k in result if k.startswith("beta")} == set(rotor)
    # Only the case with an inlet total state carries temperatures and Mach numbers.
    assert [("T1" in r) for r in body["results"]] == [False] * 4 + [True, False, False]
    # Only the cases with row geometry carry the rows' judgements.
    assert [("rotor_blade_count" in r, "rotor_diffusion_factor" in r) for r in body["results"]] == (
        [(False, False)] * 5 + [(True, False), (False, True)])


@pytest.mark.parametrize("name", NAMES)
def test_one_impossible_case_in_rows_fails_alone(client, name):
    example = EXAMPLES[name]
    cases = [example.good, example.bad, example.good, example.good]
    body = ok_body(post(client, name, rows_of(cases)))
    assert [e["index"] for e in body["errors"]] == [1]
    assert example.bad_reason in body["errors"][0]["detail"]
    assert body["results"][0] == body["results"][2] == body["results"][3]
    assert_batch_matches_singles(client, name, cases, rows=body)


@pytest.mark.parametrize("name", NAMES)
def test_the_impossible_case_alone_is_a_422_problem(client, name):
    example = EXAMPLES[name]
    problem = problem_body(post(client, name, example.bad), 422)
    assert problem["type"] == PHYSICALLY_IMPOSSIBLE
    assert example.bad_reason in problem["detail"]


def test_static_temperature_below_zero_is_named_with_its_index(client):
    # Design brief: a batch case with static temperature at or below zero gets null outputs and
    # an errors entry naming its index.
    example = EXAMPLES["triangles"]
    body = ok_body(post(client, "triangles", rows_of([example.good] * 3 + [example.bad])))
    assert body["errors"] == [{"index": 3, "detail": body["errors"][0]["detail"]}]
    assert "static temperature at station 1" in body["errors"][0]["detail"]
    failed = body["results"][3]
    assert failed["T1"] is None and failed["alpha1"] is None and failed["work"] is None
    assert set(failed) == set(body["results"][0])


# -- columns -----------------------------------------------------------------------------------


def _varied(field, value, k: int):
    """A k-th distinct valid value near ``value`` for a numeric field."""
    if field.integer:
        return value + k
    return value * (1.0 + 0.05 * k)


def two_good_cases(name):
    """The good example and a neighbour of it, with the same fields."""
    good = EXAMPLES[name].good
    schema_fields = calculation(name).schema().fields
    last = [f for f in good if isinstance(schema_fields[f], Quantity)][-1]
    return [good, {**good, last: _varied(schema_fields[last], good[last], 1)}]


@pytest.mark.parametrize(("name", "mode", "case"), COLUMN_MODE_CASES, ids=_ids)
def test_columns_broadcast_scalars_and_equal_rows(client, name, mode, case):
    calc = calculation(name)
    schema_fields = calc.schema().fields
    numeric = [f for f in case if isinstance(schema_fields[f], Quantity)]
    varied = numeric[-1]
    cases = [{**case, varied: _varied(schema_fields[varied], case[varied], k)} for k in range(3)]
    columns = {**case, varied: [c[varied] for c in cases]}  # everything else a scalar
    body = ok_body(post(client, name, {"columns": columns}))
    assert set(body) == {"columns", "errors"}
    assert all(len(v) == 3 for k, v in body["columns"].items() if k not in ("checks", "assumed"))
    rows = ok_body(post(client, name, rows_of(cases)))
    assert_batch_matches_singles(client, name, cases, rows=rows, columns=body)


@pytest.mark.parametrize("name", COLUMN_NAMES)
def test_columns_of_scalars_only_are_one_case(client, name):
    case = EXAMPLES[name].good
    body = ok_body(post(client, name, {"columns": case}))
    assert all(len(v) == 1 for k, v in body["columns"].items() if k not in ("checks", "assumed"))
    assert_batch_matches_singles(client, name, [case], columns=body)


@pytest.mark.parametrize("name", COLUMN_NAMES)
def test_one_impossible_case_in_columns_fails_alone(client, name):
    example = EXAMPLES[name]
    cases = [example.good, example.good, example.bad]
    body = ok_body(post(client, name, columns_of(cases)))
    assert [e["index"] for e in body["errors"]] == [2]
    assert example.bad_reason in body["errors"][0]["detail"]
    assert_batch_matches_singles(client, name, cases, columns=body)


@pytest.mark.parametrize("name", [n for n in NAMES if n not in COLUMN_NAMES])
def test_columns_are_refused_where_not_offered(client, name):
    body = problem_body(post(client, name, {"columns": EXAMPLES[name].good}), 422)
    assert [e["pointer"] for e in body["errors"]] == ["/columns"]


def test_columns_mix_machines(client):
    cases = [{"machine": m, "flow_coefficient": 0.5, "loading_coefficient": 1.2, "reaction": 0.5,
              "blade_speed": 300} for m in ("compressor", "turbine", "compressor")]
    body = ok_body(post(client, "triangles", columns_of(cases)))
    assert body["errors"] == []
    # Each machine's relative angles exist only at its rotor's stations; the other is null.
    assert [v is None for v in body["columns"]["beta1"]] == [False, True, False]
    assert [v is None for v in body["columns"]["beta3"]] == [True, False, True]
    assert_batch_matches_singles(client, "triangles", cases, columns=body)


# -- property: every shape gives what the cases give one by one ----------------------------------


def _values(field, value, allowed):
    """Values of one field for the property test: near the example, failing cases included."""
    if isinstance(field, Option):
        return st.sampled_from(allowed)
    if isinstance(field, QuantityList):
        if not isinstance(value, list):  # a per-stage field given one value for every stage
            return _values(field.item, value, None)
        return st.tuples(*(_values(field.item, v, None) for v in value)).map(list)
    low, high = field.minimum, field.maximum
    if low is not None and high is not None:
        margin = 0.03 * (high - low)
        values = st.floats(low + margin, high - margin)
    elif low is not None:
        # A factor of 0.1 to 10 on the example reaches impossible cases (a cold inlet, an
        # unreachable target, an outlet pressure above the inlet's) as well as sound ones.
        # The margin above the lower bound is scaled, so a pressure ratio stays above 1.
        values = st.floats(math.log(0.1), math.log(10.0)).map(lambda f: low + (value - low) * math.exp(f))
    else:
        values = st.floats(-2.0, 2.0).map(lambda f: value + f * abs(value))
    if field.integer:
        values = values.map(lambda v: max(int(round(v)), int(low if low is not None else v)))
    return values


@st.composite
def batches(draw, name):
    """(cases, columns body) of one mode, each field varied per case or one value for all."""
    calc = calculation(name)
    example = EXAMPLES[name]
    schema_fields = calc.schema().fields
    starts = [(mode_case(calc, m) | {k: v for k, v in example.sweep_extra.items()
                                      if k in calc.allowed_fields(m)}, m) for m in calc.forms]
    start, mode = draw(st.sampled_from(starts))
    size = draw(st.integers(1, 5))
    shared, varied = {}, {}
    for key, value in start.items():
        field = schema_fields[key]
        allowed = mode.when.get(key, getattr(field, "choices", None))
        values = _values(field, value, allowed)
        # A list field (weights) is shared: in a column of lists, every case's list must match.
        if draw(st.booleans()) or isinstance(field, QuantityList):
            shared[key] = draw(values)
        else:
            varied[key] = draw(st.lists(values, min_size=size, max_size=size))
    if not varied:
        size = 1  # scalars only: one case
    cases = [{k: varied[k][i] if k in varied else shared[k] for k in start} for i in range(size)]
    columns = {k: varied[k] if k in varied else shared[k] for k in start}
    return cases, {"columns": columns}


@pytest.mark.parametrize("name", NAMES)
@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_columns_and_rows_equal_cases_one_by_one(client, name, data):
    cases, columns = data.draw(batches(name))
    body = ok_body(post(client, name, columns)) if name in COLUMN_NAMES else None
    rows = ok_body(post(client, name, rows_of(cases)))
    assert_batch_matches_singles(client, name, cases, rows=rows, columns=body)


@pytest.mark.parametrize("name", NAMES)
def test_batches_with_failing_cases_equal_cases_one_by_one(client, name):
    # A deterministic companion of the property test, with failures certain to be present.
    example = EXAMPLES[name]
    cases = [example.bad, example.good, example.bad, example.good]
    rows = ok_body(post(client, name, rows_of(cases)))
    columns = ok_body(post(client, name, columns_of(cases))) if name in COLUMN_NAMES else None
    assert [e["index"] for e in rows["errors"]] == [0, 2]
    assert_batch_matches_singles(client, name, cases, rows=rows, columns=columns)


# -- number formatting ------------------------------------------------------------------------


def _output_kinds(name):
    outputs = calculation(name).outputs().fields
    return ({k for k, f in outputs.items() if isinstance(f, ma_fields.Integer)},
            {k for k, f in outputs.items() if not isinstance(f, ma_fields.Integer)})


def _assert_kinds(values: dict, integers: set, floats: set):
    for key, value in values.items():
        if key in ("checks", "assumed") or value is None:
            continue
        if isinstance(value, list):  # a per-stage output
            for item in value:
                _assert_kinds({key: item}, integers, floats)
            continue
        if key in integers:
            assert type(value) is int, (key, value)
        else:
            assert key in floats and type(value) is float, (key, value)


@pytest.mark.parametrize("name", NAMES)
def test_documented_integers_are_written_as_integers_and_numbers_as_floats(client, name):
    integers, floats = _output_kinds(name)
    cases = valid_cases(name)
    for case in cases:
        _assert_kinds(ok_body(post(client, name, case)), integers, floats)
    for result in ok_body(post(client, name, rows_of(cases)))["results"]:
        _assert_kinds(result, integers, floats)
    example = EXAMPLES[name]
    if name in COLUMN_NAMES:
        columns = ok_body(post(client, name, columns_of([example.good, example.bad])))["columns"]
        for key, values in columns.items():
            if key not in ("checks", "assumed"):
                for value in values:
                    _assert_kinds({key: value}, integers, floats)


def test_blade_count_is_written_without_a_decimal_point_in_every_shape(client):
    example = EXAMPLES["zweifel"]
    single = post(client, "zweifel", example.good).get_data(as_text=True)
    assert re.search(r'"blade_count":\d+[,}]', single), single
    rows = post(client, "zweifel", rows_of([example.good, example.bad])).get_data(as_text=True)
    assert re.search(r'"blade_count":\d+[,}].*"blade_count":null[,}]', rows), rows
    columns = post(client, "zweifel", columns_of([example.good, example.bad])).get_data(as_text=True)
    assert re.search(r'"blade_count":\[\d+,null\]', columns), columns


def test_integer_and_float_inputs_give_the_same_answer(client):
    as_floats = {k: float(v) if isinstance(v, int) else v for k, v in EXAMPLES["triangles"].good.items()}
    as_integers = {**as_floats, "blade_speed": 300, "total_pressure": 101325}
    assert_json_close(ok_body(post(client, "triangles", as_integers)),
                      ok_body(post(client, "triangles", as_floats)), rtol=0.0)
    # A whole-valued float is a valid blade count and counts the same as the integer.
    zweifel = calculation("zweifel")
    case = mode_case(zweifel, find_mode(zweifel, "purpose=blade_count", "chord=axial_chord", "incompressible"))
    assert_json_close(ok_body(post(client, "zweifel", {**case, "blade_count": 60.0})),
                      ok_body(post(client, "zweifel", {**case, "blade_count": 60})), rtol=0.0)


@pytest.mark.parametrize("name", NAMES)
def test_no_body_holds_nan_or_infinity(client, name):
    example = EXAMPLES[name]
    bodies = [example.good, rows_of([example.good, example.bad])]
    if name in COLUMN_NAMES:
        bodies.append(columns_of([example.bad, example.good]))
    for body in bodies:
        text = post(client, name, body).get_data(as_text=True)
        assert not re.search(r"NaN|Infinity", text), text
        json.loads(text)


# -- checks ------------------------------------------------------------------------------------


def _assert_check(check: dict):
    assert set(check) == CHECK_KEYS, check
    assert check["comparison"] in COMPARISONS
    assert isinstance(check["basis"], str) and check["basis"]
    assert isinstance(check["limit"], float)
    assert check["fail_limit"] is None or isinstance(check["fail_limit"], float)
    values = check["value"] if isinstance(check["value"], list) else [check["value"]]
    statuses = check["status"] if isinstance(check["status"], list) else [check["status"]]
    assert len(values) == len(statuses)
    for value, status in zip(values, statuses, strict=True):
        assert status in STATUSES
        # The status follows from the value, the limit and the comparison (design brief, "Design
        # checks"): beyond the limit is warn or fail, beyond fail_limit is fail, else ok.
        sign = 1.0 if check["comparison"] == "at_least" else -1.0
        beyond = sign * (value - check["limit"]) < 0
        assert (status != "ok") == beyond, check
        if check["fail_limit"] is not None and sign * (value - check["fail_limit"]) < 0:
            assert status == "fail", check


@pytest.mark.parametrize("name", NAMES)
def test_every_result_carries_its_checks(client, name):
    """Every check a result carries is well formed. A calculation need not judge any rule of thumb;
    one whose good example is judged carries checks in every valid case but at most one (a rule may
    not apply: no blade speed, no loading)."""
    judged = 0
    for case in valid_cases(name):
        body = ok_body(post(client, name, case))
        judged += bool(body["checks"])
        for check in body["checks"].values():
            _assert_check(check)
    if ok_body(post(client, name, EXAMPLES[name].good))["checks"]:
        assert judged >= len(valid_cases(name)) - 1
    if name not in COLUMN_NAMES:
        return
    columns = ok_body(post(client, name, columns_of(two_good_cases(name))))["columns"]
    for check in columns["checks"].values():
        assert set(check) == CHECK_KEYS
        for i in range(2):
            _assert_check(_column_check_entry(check, i))


def test_de_haller_check_judges_the_rotor_velocity_ratio(client):
    body = ok_body(post(client, "triangles", EXAMPLES["triangles"].good))
    check = body["checks"]["de_haller_rotor"]
    # De Haller number of a compressor rotor: W2 / W1 (design brief, "Design checks").
    assert math.isclose(check["value"], body["W2"] / body["W1"], rel_tol=1e-12)
    assert check["limit"] == 0.72 and check["comparison"] == "at_least"  # de Haller (1953), as in the brief
    assert "de Haller" in check["basis"]


# -- per-stage outputs, on a stand-in calculation --------------------------------------------------
# No endpoint has per-stage (list) outputs yet; the stage split will. A stand-in calculation runs
# them through the same mechanism: stage k of a case of n stages and length L is k L; a case
# longer than 100 fails. Its check is judged per stage.


def _stand_in():
    class StandInInput(CaseSchema):
        stages = Quantity("Number of stages. [-]", "-", minimum=1, integer=True)
        length = positive("A length. [m]", "m")

    outputs = Schema.from_dict({"stage_count": integer_output("Stages. [-]"),
                                "per_stage": output("k L per stage. [m]", "m")}, name="StandInOutput")

    def compute(options, inputs):
        stages, length = inputs["stages"], inputs["length"]
        failed = length > 100.0
        per_stage = np.full((len(stages), int(stages.max())), np.nan)
        for i, n in enumerate(stages):
            per_stage[i, :n] = length[i] * np.arange(1, n + 1)
        # As the core does: a failed case holds NaN in every output.
        per_stage[failed] = np.nan
        count = np.where(failed, np.nan, stages.astype(float))
        check = RuleCheck(value=per_stage, limit=2.5, comparison="at_most", basis=COMMON_PRACTICE)
        return CaseResults(values={"stage_count": count, "per_stage": per_stage},
                           failures=[("longer than 100", failed)], checks={"per_stage": check})

    return Calculation("stand-in", "", "", StandInInput, outputs,
                       (Choice("only", "stages and length",
                               (Alternative("only", "stages and length", required=("stages", "length")),)),),
                       compute)


def _run(payload):
    # Serialised as the app serialises (service.api.app._json).
    body, _ = run_calculation(_stand_in(), payload, 100)
    return strict_json(orjson.dumps(body, option=orjson.OPT_SERIALIZE_NUMPY).decode())


STAND_IN_CASES = [{"stages": 2, "length": 1.5}, {"stages": 3, "length": 1.0}, {"stages": 1, "length": 200.0}]


def test_per_stage_outputs_are_lists_of_each_cases_own_length():
    rows = _run({"cases": STAND_IN_CASES})
    # k L for k = 1..n, derived from the stand-in's definition.
    assert rows["results"][0]["per_stage"] == [1.5, 3.0]
    assert rows["results"][1]["per_stage"] == [1.0, 2.0, 3.0]
    assert rows["results"][1]["stage_count"] == 3 and type(rows["results"][1]["stage_count"]) is int
    assert rows["results"][0]["checks"]["per_stage"]["status"] == ["ok", "warn"]
    columns = _run({"columns": {"stages": [2, 3, 1], "length": [1.5, 1.0, 200.0]}})["columns"]
    assert columns["per_stage"][:2] == [[1.5, 3.0], [1.0, 2.0, 3.0]]
    assert columns["stage_count"] == [2, 3, None]
    assert columns["per_stage"][2] is None
    for i, case in enumerate(STAND_IN_CASES[:2]):
        assert_json_close(_run(case), rows["results"][i])


def test_failed_case_per_stage_outputs_are_null():
    failed = _run({"cases": STAND_IN_CASES})["results"][2]
    assert failed["stage_count"] is None and failed["per_stage"] is None
    columns = _run({"columns": {"stages": [2, 3, 1], "length": [1.5, 1.0, 200.0]}})["columns"]
    assert columns["per_stage"][2] is None


def test_failed_stage_split_per_stage_outputs_are_null(client):
    example = EXAMPLES["stage-split"]
    body = ok_body(post(client, "stage-split", rows_of([example.good, example.bad])))
    outputs = calculation("stage-split").outputs().fields
    per_stage = [k for k, f in outputs.items() if f.metadata.get("x-per-stage")]
    assert per_stage
    assert all(isinstance(body["results"][0][k], list) for k in per_stage)
    assert all(body["results"][1][k] is None for k in per_stage)




def test_failed_case_per_stage_checks_are_null_in_rows():
    check = _run({"cases": STAND_IN_CASES})["results"][2]["checks"]["per_stage"]
    assert check["value"] is None and check["status"] is None


def test_failed_case_per_stage_checks_are_null_in_columns():
    columns = _run({"columns": {"stages": [2, 3, 1], "length": [1.5, 1.0, 200.0]}})["columns"]
    check = columns["checks"]["per_stage"]
    assert check["value"][2] is None and check["status"][2] is None


def test_failed_stage_split_per_stage_checks_are_null(client):
    example = EXAMPLES["stage-split"]
    failed = ok_body(post(client, "stage-split", rows_of([example.good, example.bad])))["results"][1]
    assert failed["checks"]
    for check in failed["checks"].values():
        assert check["value"] is None and check["status"] is None
