"""Every way a request can fail: status, problem+json body, JSON Pointers, headers.

The contract is the design brief's "Errors" section and RFC 9457 (problem details) with RFC 6901
(JSON Pointer): every error is application/problem+json with type, title, status and detail;
validation errors name each offending field by a pointer into the request body; no response
carries a stack trace, and no input causes a 500.
"""

from __future__ import annotations

import io
import json

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from service import create_app
from service.api.fields import Quantity
from tests.api.examples import (
    COLUMN_NAMES,
    EXAMPLES,
    INVALID_INPUT,
    base_case,
    calculation,
    find_mode,
    mode_case,
    ok_body,
    pointers,
    post,
    problem_body,
    resolve_pointer,
)

NAMES = list(EXAMPLES)
TRIANGLES = EXAMPLES["triangles"].good  # compressor, duty mode, with an inlet total state


def invalid(response) -> dict:
    body = problem_body(response, 422)
    assert body["type"] == INVALID_INPUT, body
    assert body["errors"], body
    for error in body["errors"]:
        assert set(error) == {"pointer", "detail"} and error["detail"]
    return body


# -- 400 -----------------------------------------------------------------------------------------


@pytest.mark.parametrize("body", [
    pytest.param(b"{bad", id="not-json"),
    pytest.param(b"", id="empty"),
    pytest.param(b'{"machine": "compressor",}', id="trailing-comma"),
    pytest.param(b"{} {}", id="two-documents"),
    pytest.param(b'{"machine": "compressor", "machine": "turbine"}', id="duplicate-keys"),
    pytest.param(b'{"cases": [{"reaction": 0.5, "reaction": 0.6}]}', id="duplicate-keys-nested"),
    pytest.param(b'{"machine": "\xff\xfe"}', id="not-utf-8"),
    pytest.param("{\"machine\": \"compressor\"}".encode("utf-16"), id="utf-16"),
    pytest.param(b"[" * 100_000 + b"]" * 100_000, id="deep-nesting"),
])
def test_malformed_body_is_400(client, body):
    problem = problem_body(post(client, "triangles", body), 400)
    assert "JSON" in problem["title"] or "JSON" in problem["detail"] or "UTF-8" in problem["detail"]


def test_duplicate_keys_are_named(client):
    body = b'{"reaction": 0.5, "blade_speed": 1, "reaction": 0.6}'
    problem = problem_body(post(client, "triangles", body), 400)
    assert "reaction" in problem["detail"]


# -- 404, 405 ----------------------------------------------------------------------------------


@pytest.mark.parametrize("path", ["/", "/v1/unknown", "/v1/triangles/extra", "/v2/triangles", "/healthz/x"])
def test_unknown_path_is_404(client, path):
    problem_body(client.post(path, json=TRIANGLES), 404)
    problem_body(client.get(path), 404)


@pytest.mark.parametrize(("method", "path", "allowed"), [
    ("patch", "/v1/triangles", "POST"),  # GET is the one-case query form (issue 16)
    ("delete", "/v1/machine-design", "GET"),
    ("put", "/v1/zweifel", "POST"),
    ("delete", "/v1/diffusion-factor", "POST"),
    ("post", "/healthz", "GET"),
    ("post", "/readyz", "GET"),
    ("put", "/v1/openapi.json", "GET"),
])
def test_wrong_method_is_405_with_allow(client, method, path, allowed):
    response = getattr(client, method)(path)
    problem_body(response, 405)
    assert allowed in {m.strip() for m in response.headers["Allow"].split(",")}


# -- 413 -----------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def small_client():
    return create_app({"MAX_BODY_BYTES": 1000}).test_client()


def _padded(size: int) -> bytes:
    """A valid one-case body of exactly ``size`` bytes."""
    text = json.dumps(TRIANGLES)
    return (text[:-1] + " " * (size - len(text)) + "}").encode()


def test_body_over_the_limit_is_413(small_client):
    problem_body(post(small_client, "triangles", _padded(1001)), 413)
    problem_body(post(small_client, "triangles", {"cases": [TRIANGLES] * 20}), 413)
    ok_body(post(small_client, "triangles", _padded(999)))


def _chunked(client, body: bytes):
    # A chunked body has no Content-Length. A WSGI server that decodes the chunks (gunicorn,
    # werkzeug's own server) says so with wsgi.input_terminated; without it werkzeug reads no body.
    return client.post("/v1/triangles", input_stream=io.BytesIO(body), content_type="application/json",
                       environ_overrides={"wsgi.input_terminated": True})


def test_chunked_body_over_the_limit_is_413_not_400(small_client):
    # Design brief, "Known pitfalls": a chunked body is cut at the limit and must not then fail
    # as malformed JSON.
    problem_body(_chunked(small_client, _padded(1001)), 413)
    problem_body(_chunked(small_client, json.dumps({"cases": [TRIANGLES] * 20}).encode()), 413)
    ok_body(_chunked(small_client, _padded(999)))


def test_body_of_exactly_the_limit_is_accepted(small_client):
    ok_body(post(small_client, "triangles", _padded(1000)))


@pytest.fixture(scope="module")
def few_client():
    return create_app({"MAX_CASES": 3}).test_client()


@pytest.mark.parametrize("name", NAMES)
def test_more_cases_than_max_cases_is_413(few_client, name):
    good = EXAMPLES[name].good
    assert "4" in problem_body(post(few_client, name, {"cases": [good] * 4}), 413)["detail"]
    body = ok_body(post(few_client, name, {"cases": [good] * 3}))
    assert len(body["results"]) == 3
    if name in COLUMN_NAMES:
        key = next(iter(good))
        problem_body(post(few_client, name, {"columns": {**good, key: [good[key]] * 4}}), 413)
        ok_body(post(few_client, name, {"columns": {**good, key: [good[key]] * 3}}))


# -- 415 -----------------------------------------------------------------------------------------


@pytest.mark.parametrize("content_type", [None, "text/plain", "application/x-www-form-urlencoded",
                                          "multipart/form-data; boundary=x", "application/xml"])
def test_wrong_content_type_is_415(client, content_type):
    response = client.post("/v1/triangles", data=json.dumps(TRIANGLES), content_type=content_type)
    assert "application/json" in problem_body(response, 415)["detail"]


def test_json_with_a_charset_parameter_is_accepted(client):
    ok_body(post(client, "triangles", TRIANGLES, content_type="application/json; charset=utf-8"))


# -- 422: the body's shape ----------------------------------------------------------------------


@pytest.mark.parametrize(("body", "pointer"), [
    ([], ""),
    ("3", ""),
    ({"cases": []}, "/cases"),
    ({"cases": {}}, "/cases"),
    ({"cases": [TRIANGLES, 3]}, "/cases/1"),
    ({"columns": []}, "/columns"),
    ({"columns": {**TRIANGLES, "flow_coefficient": []}}, "/columns/flow_coefficient"),
    ({"cases": [TRIANGLES], "extra": 1}, "/extra"),
    ({"cases": [TRIANGLES], "columns": TRIANGLES}, "/columns"),
])
def test_bad_batch_shapes_are_422_with_pointer(client, body, pointer):
    data = body if isinstance(body, str) else json.dumps(body)
    assert pointers(invalid(post(client, "triangles", data))) == [pointer]


def test_columns_of_unequal_lengths_are_422(client):
    body = {"columns": {**TRIANGLES, "flow_coefficient": [0.5, 0.6, 0.7], "reaction": [0.5, 0.6, 0.7],
                        "blade_speed": [300, 310]}}
    assert pointers(invalid(post(client, "triangles", body))) == ["/columns/blade_speed"]


# -- 422: fields -------------------------------------------------------------------------------


def _shapes(case: dict, name: str, value):
    """The case with ``name`` set to ``value`` in each shape, with the pointer expected there."""
    bad = {**case, name: value}
    return [
        (bad, f"/{name}"),
        ({"cases": [case, case, case, bad]}, f"/cases/3/{name}"),
        ({"columns": {**case, name: [case[name], case[name], value]}}, f"/columns/{name}/2"),
    ]


@pytest.mark.parametrize("value", [
    pytest.param("0.5", id="string"),
    pytest.param(True, id="boolean"),
    pytest.param(None, id="null"),
    pytest.param({"value": 0.5}, id="object"),
    pytest.param([0.5], id="list-in-one-case"),
])
def test_wrong_type_is_422_at_the_field(client, value):
    shapes = _shapes(TRIANGLES, "flow_coefficient", value)
    if isinstance(value, list):
        shapes = shapes[:2]  # a list is a column in columns
    for body, pointer in shapes:
        assert pointers(invalid(post(client, "triangles", body))) == [pointer], body


def test_null_as_a_scalar_column_is_422(client):
    body = {"columns": {**TRIANGLES, "flow_coefficient": None}}
    assert pointers(invalid(post(client, "triangles", body))) == ["/columns/flow_coefficient"]


def _raw_shapes(case: dict, name: str, literal: str):
    """As :func:`_shapes`, with ``literal`` written verbatim into the JSON text."""
    return [(json.dumps(body).replace('"@@"', literal), pointer)
            for body, pointer in _shapes(case, name, "@@")]


@pytest.mark.parametrize("literal", ["NaN", "Infinity", "-Infinity", "1e400", "-1e400"])
def test_non_finite_numbers_are_422(client, literal):
    for raw, pointer in _raw_shapes(TRIANGLES, "flow_coefficient", literal):
        problem = invalid(post(client, "triangles", raw))
        assert pointers(problem) == [pointer], raw
        assert "finite" in problem["errors"][0]["detail"]


@pytest.mark.parametrize("shape", [0, 1, 2], ids=["single", "rows", "columns"])
def test_huge_integer_literal_is_422_not_500(client, shape):
    raw, pointer = _raw_shapes(TRIANGLES, "flow_coefficient", "1" + "0" * 400)[shape]
    assert pointers(invalid(post(client, "triangles", raw))) == [pointer]


@pytest.mark.parametrize(("name", "value"), [
    ("flow_coefficient", 0), ("flow_coefficient", -0.1),
    ("loading_coefficient", 0), ("blade_speed", -300),
    ("total_temperature", 0), ("total_temperature", -10),
    ("total_pressure", 0), ("total_pressure", -1e5),
    ("gamma", 1.0), ("gamma", 0.5), ("cp", 0),
    ("reaction", 3.5), ("reaction", -2.5),
])
def test_out_of_range_values_are_422_at_the_field(client, name, value):
    case = {**TRIANGLES, "gamma": 1.4, "cp": 1005.0}
    for body, pointer in _shapes(case, name, value):
        problem = invalid(post(client, "triangles", body))
        assert pointers(problem) == [pointer], body
        assert "Must be" in problem["errors"][0]["detail"]


@pytest.mark.parametrize("angle", [90, -90, 90.0001, 120, -1000])
def test_angles_at_or_beyond_90_degrees_are_422(client, angle):
    calc = calculation("triangles")
    case = mode_case(calc, find_mode(calc, "compressor_angles", "rows=none"))
    for field in ("alpha1", "alpha2"):
        for body, pointer in _shapes(case, field, angle):
            assert pointers(invalid(post(client, "triangles", body))) == [pointer], body
    for name in ("zweifel", "diffusion-factor"):
        for body, pointer in _shapes(EXAMPLES[name].good, "outlet_angle", angle):
            assert pointers(invalid(post(client, name, body))) == [pointer], body


@pytest.mark.parametrize("name", NAMES)
def test_unknown_field_is_422_in_every_shape(client, name):
    good = EXAMPLES[name].good
    assert pointers(invalid(post(client, name, {**good, "colour": "red"}))) == ["/colour"]
    body = {"cases": [good, {**good, "colour": "red"}]}
    assert pointers(invalid(post(client, name, body))) == ["/cases/1/colour"]
    body = {"columns": {**good, "colour": [1, 2]}}
    expected = "/columns/colour" if name in COLUMN_NAMES else "/columns"
    assert pointers(invalid(post(client, name, body))) == [expected]


def test_unknown_field_pointer_is_escaped(client):
    # RFC 6901: "~" is written "~0" and "/" is written "~1".
    assert pointers(invalid(post(client, "triangles", {**TRIANGLES, "a/b~c": 1}))) == ["/a~1b~0c"]


def test_unknown_field_is_named_in_every_case_that_has_it(client):
    bad = {**TRIANGLES, "colour": "red"}
    body = {"cases": [TRIANGLES, bad, TRIANGLES, bad]}
    assert pointers(invalid(post(client, "triangles", body))) == ["/cases/1/colour", "/cases/3/colour"]




def _nearest_modes(calc, case: dict) -> tuple[list, int]:
    """The forms that apply to the case's options with the fewest missing (and not defaulted) plus
    surplus fields."""
    fields = calc.schema().fields
    options = {name: case.get(name, fields[name].load_default) for name in calc.option_fields}
    scores = {}
    defaulted = {name for name in calc.defaults if calc.default(name, options)}
    for mode in calc.forms:
        if mode.applies(options):
            missing = set(mode.required) - set(case) - defaulted
            surplus = (set(case) & calc.choice_fields) - calc.allowed_fields(mode)
            scores[mode.name] = len(missing) + len(surplus)
    if not scores:  # a required option is missing: no mode can be judged
        return [], 1
    best = min(scores.values())
    return [name for name, score in scores.items() if score == best], best


def _field_removals():
    """(calculation, mode, field, case) for every field of every mode case; the fields every mode
    needs, only in the first mode."""
    items = []
    for name in NAMES:
        calc = calculation(name)
        for mode in calc.forms:
            case = mode_case(calc, mode)
            for field in case:
                if field in base_case(calc) and mode is not calc.forms[0]:
                    continue
                items.append(pytest.param(name, mode.name, field, case, id=f"{name}-{mode.name}-{field}"))
    return items


@pytest.mark.parametrize(("name", "mode", "field", "case"), _field_removals())
def test_missing_field_is_422_at_the_field(client, name, mode, field, case):
    """Without one of its fields a case is a case of another mode (200) or a 422 that names the field.

    Where its own mode stays the only nearest one, the pointer is exactly the missing field.
    Where another mode is as near (a pitch dropped from a pitch analysis leaves a case that
    sizing would take with a mean radius), the 422 may name that mode's missing field instead;
    it names no field that is neither in the request nor required by a nearest mode.
    """
    calc = calculation(name)
    schema_fields = calc.schema().fields
    others = {k: v for k, v in case.items() if k != field}
    nearest, score = _nearest_modes(calc, others)
    shapes = [(others, ""), ({"cases": [case, case, others]}, "/cases/2")]
    if name in COLUMN_NAMES:
        shapes.append(({"columns": others}, "/columns"))
    for body, prefix in shapes:
        response = post(client, name, body)
        if score == 0 and not schema_fields[field].required:
            ok_body(response)  # a valid case of another mode, or of this one by an option's default
            continue
        found = pointers(invalid(response))
        if schema_fields[field].required:
            assert f"{prefix}/{field}" in found, body
        elif nearest == [mode]:
            assert found == [f"{prefix}/{field}"], body
        else:
            named = set(case) | {f for m in calc.forms if m.name in nearest for f in m.required}
            assert set(found) <= {f"{prefix}/{k}" for k in named}, found


def test_missing_machine_is_the_only_error_named(client):
    calc = calculation("triangles")
    case = mode_case(calc, find_mode(calc, "compressor_angles", "rows=none"))
    del case["machine"]
    assert pointers(invalid(post(client, "triangles", case))) == ["/machine"]


def test_fields_given_together_are_named_where_one_is_missing(client):
    alone = {k: v for k, v in EXAMPLES["diffusion-factor"].good.items()} | {"row": "stator", "inlet_radius": 0.3}
    body = {"cases": [EXAMPLES["diffusion-factor"].good, alone, alone]}
    assert pointers(invalid(post(client, "diffusion-factor", body))) == ["/cases/1/outlet_radius",
                                                                          "/cases/2/outlet_radius"]


def test_a_rotor_row_with_radii_needs_the_shaft_speed(client):
    # Issue 19 item 1: a rotor's radius-change form needs the blade speed (the absolute angular momentum).
    rotor = {k: v for k, v in EXAMPLES["diffusion-factor"].good.items()} | {"inlet_radius": 0.3,
                                                                              "outlet_radius": 0.33}
    assert pointers(invalid(post(client, "diffusion-factor", rotor))) == ["/shaft_speed"]
    stator = rotor | {"row": "stator", "shaft_speed": 9000.0}
    assert pointers(invalid(post(client, "diffusion-factor", stator))) == ["/shaft_speed"]


def test_a_field_that_needs_another_is_named_where_that_one_is_missing(client):
    # Triangles: the total pressure needs the total temperature; the temperature alone gives the
    # static temperatures and Mach numbers, without the static pressure and density at station 1.
    no_temperature = {k: v for k, v in TRIANGLES.items() if k != "total_temperature"}
    body = {"cases": [TRIANGLES, no_temperature, TRIANGLES, no_temperature]}
    assert pointers(invalid(post(client, "triangles", body))) == ["/cases/1/total_temperature",
                                                                   "/cases/3/total_temperature"]
    no_pressure = {k: v for k, v in TRIANGLES.items() if k != "total_pressure"}
    result = ok_body(post(client, "triangles", no_pressure))
    assert "M1" in result and "T02" in result and "p1" not in result and "rho1" not in result


def test_field_of_another_mode_is_422(client):
    assert pointers(invalid(post(client, "triangles", {**TRIANGLES, "alpha1": 10.0}))) == ["/alpha1"]
    body = {"machine": "turbine", "blade_speed": 300, "axial_velocity": 150, "alpha1": 10, "alpha2": 30}
    problem = invalid(post(client, "triangles", body))
    assert pointers(problem) == ["/alpha1", "/alpha3"]


def test_unknown_option_is_422(client):
    assert pointers(invalid(post(client, "triangles", {**TRIANGLES, "machine": "pump"}))) == ["/machine"]
    body = {"columns": {**TRIANGLES, "machine": ["compressor", "pump"]}}
    assert pointers(invalid(post(client, "triangles", body))) == ["/columns/machine/1"]


def test_every_offending_field_is_named_at_once(client):
    body = {"cases": [
        TRIANGLES,
        {**TRIANGLES, "flow_coefficient": -1},
        {**TRIANGLES, "machine": "pump"},
        {**TRIANGLES, "reaction": "half"},
    ]}
    assert pointers(invalid(post(client, "triangles", body))) == [
        "/cases/1/flow_coefficient", "/cases/2/machine", "/cases/3/reaction"]
    columns = {"columns": {**TRIANGLES, "flow_coefficient": [0.5, -1, 0.5], "reaction": [0.5, 0.5, None],
                           "gamma": 0.9}}
    assert pointers(invalid(post(client, "triangles", columns))) == [
        "/columns/flow_coefficient/1", "/columns/gamma", "/columns/reaction/2"]


@pytest.mark.parametrize("name", NAMES)
def test_pointers_name_the_offending_value_in_the_request(client, name):
    # Each pointer to a value that was sent resolves, in the request, to that value.
    good = EXAMPLES[name].good
    schema_fields = calculation(name).schema().fields
    numeric = [f for f in good if isinstance(schema_fields[f], Quantity)]
    # Out of range (every number has a lower bound above -5e3) and not a number; one field of a
    # calculation with a single number in its good case is only made text.
    bad = {**good, numeric[0]: -5.0e3, numeric[-1]: "text"}
    body = {"cases": [good, bad, good]}
    problem = invalid(post(client, name, body))
    assert pointers(problem) == sorted(f"/cases/1/{f}" for f in {numeric[0], numeric[-1]})
    sent = {resolve_pointer(body, p) for p in pointers(problem)}
    assert sent == ({-5.0e3, "text"} if len(set(numeric)) > 1 else {"text"})


def test_null_optional_field_is_treated_alike_in_every_shape(client):
    case = {**TRIANGLES, "cp": None}
    single = post(client, "triangles", case).status_code
    rows = post(client, "triangles", {"cases": [case]}).status_code
    columns = post(client, "triangles", {"columns": case}).status_code
    assert single == rows == columns


# -- no traceback, no 500, headers ---------------------------------------------------------------


# Any JSON value. Integers stay within what a float holds: larger ones are the known bug above.
JSON_VALUES = st.recursive(
    st.none() | st.booleans() | st.integers(-(2**63), 2**63) | st.floats() | st.text(max_size=5),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=5), inner, max_size=3),
    max_leaves=6,
)


@pytest.mark.parametrize("name", NAMES)
@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_any_json_in_any_field_is_answered_without_a_500(client, name, data):
    good = EXAMPLES[name].good
    fields = data.draw(st.lists(st.sampled_from(sorted(good)), min_size=1, max_size=3, unique=True))
    values = {field: data.draw(JSON_VALUES) for field in fields}
    shapes = ["single", "rows", "columns"] if name in COLUMN_NAMES else ["single", "rows"]
    shape = data.draw(st.sampled_from(shapes))
    case = {**good, **values}
    body = {"single": case, "rows": {"cases": [good, case]}, "columns": {"columns": case}}[shape]
    response = post(client, name, body)
    assert response.status_code in (200, 422), response.get_data(as_text=True)
    if response.status_code == 422:
        problem = problem_body(response, 422)
        for pointer in pointers(problem):
            # Every pointer leads into the request, or names a field that is missing there.
            parent = pointer.rpartition("/")[0]
            try:
                resolve_pointer(body, pointer)
            except (KeyError, IndexError):
                assert isinstance(resolve_pointer(body, parent), dict), pointer


def _assorted_requests(client):
    small = create_app({"MAX_BODY_BYTES": 1000}).test_client()
    return [
        client.get("/healthz"),
        client.get("/readyz"),
        client.get("/v1/openapi.json"),
        post(client, "triangles", TRIANGLES),
        post(client, "triangles", {"cases": [TRIANGLES]}),
        post(client, "triangles", EXAMPLES["triangles"].bad),
        post(client, "triangles", b"{"),
        post(client, "triangles", {**TRIANGLES, "x": 1}),
        post(client, "triangles", TRIANGLES, content_type="text/plain"),
        post(small, "triangles", {"cases": [TRIANGLES] * 20}),
        client.get("/nowhere"),
        client.patch("/v1/triangles"),
        client.options("/v1/triangles"),
    ]


def test_every_response_carries_nosniff_and_errors_are_not_cached(client):
    responses = _assorted_requests(client)
    assert {r.status_code for r in responses} >= {200, 400, 404, 405, 413, 415, 422}
    for response in responses:
        assert response.headers.get("X-Content-Type-Options") == "nosniff", response
        if response.status_code >= 400:
            problem_body(response, response.status_code)  # problem+json, no traceback, no-store


@pytest.mark.parametrize("name, field", [("machine-design", "flow_coefficient"), ("machine-design", "reaction"),
                                         ("machine-design", "weights"), ("stage-split", "weights")])
def test_an_empty_list_for_a_per_stage_field_is_refused_in_rows_as_in_one_case(client, name, field):
    # Regressions: rows with "weights": [] reached the core as a list of no stages (a 500), and
    # machine-design rows took an empty flow_coefficient list that one case refuses.
    calc = calculation(name)
    good = EXAMPLES[name].good
    if field == "weights":
        good = mode_case(calc, find_mode(calc, "work_split=weights"))
    single = problem_body(post(client, name, {**good, field: []}), 422)
    assert f"/{field}" in pointers(single), single
    rows = problem_body(post(client, name, {"cases": [good, {**good, field: []}]}), 422)
    assert pointers(rows) == [f"/cases/1/{field}"], rows
    assert rows["errors"][0]["detail"] == next(e["detail"] for e in single["errors"] if e["pointer"] == f"/{field}")
    alone = problem_body(post(client, name, {"cases": [{**good, field: []}]}), 422)
    assert pointers(alone) == [f"/cases/0/{field}"], alone


# -- bodies with very many keys (issue: validation time grew with the square of the key count) ----

def _unknown_keys(count: int, prefix: str = "k") -> dict:
    return {f"{prefix}{i}": 1 for i in range(count)}


@pytest.mark.parametrize("shape", ["single", "row", "columns", "top level"])
def test_thousands_of_unknown_keys_are_counted_and_a_response_s_worth_named(client, shape):
    from service.api.problems import MAX_LISTED_ERRORS

    count = 5_000
    extra = _unknown_keys(count)
    body = {"single": {**TRIANGLES, **extra}, "row": {"cases": [{**TRIANGLES, **extra}]},
            "columns": {"columns": {**TRIANGLES, **extra}}, "top level": {"cases": [TRIANGLES], **extra}}[shape]
    problem = invalid(post(client, "triangles", body))
    assert len(problem["errors"]) == MAX_LISTED_ERRORS
    assert len(problem["errors"]) + problem["errors_not_listed"] == count
    assert problem["detail"].startswith(f"{count} input value(s)")
    assert all(e["pointer"].rsplit("/", 1)[-1].startswith("k") for e in problem["errors"]), problem["errors"][:3]


def test_unknown_keys_spread_over_many_rows_are_all_counted(client):
    rows = [{**TRIANGLES, **_unknown_keys(30, prefix=f"r{j}_")} for j in range(100)]
    rows[2]["flow_coefficient"] = -1.0  # a known field out of range is named beside them
    problem = invalid(post(client, "triangles", {"cases": rows}))
    assert len(problem["errors"]) + problem["errors_not_listed"] == 100 * 30 + 1
    assert "/cases/2/flow_coefficient" in pointers(problem)


def test_the_work_of_refusing_unknown_keys_does_not_grow_with_their_number(client, monkeypatch):
    # Linear in the body, measured by operations rather than time: the pointers built and the
    # errors sorted stay at a response's worth whether a row holds 2,000 or 20,000 unknown keys
    # (before, each key cost a marshmallow message, a pointer, a sort key and a list search).
    from service.api import loading, problems, shapes

    counts = {}

    def counting(name, function):
        def counted(*args, **kwargs):
            counts[name] = counts.get(name, 0) + 1
            return function(*args, **kwargs)
        return counted

    pointers = counting("pointers", loading.join_pointer)
    for module in (loading, shapes):
        monkeypatch.setattr(module, "join_pointer", pointers)
    monkeypatch.setattr(problems, "_pointer_sort_key", counting("sort keys", problems._pointer_sort_key))
    seen = []
    for count in (2_000, 20_000):
        counts.clear()
        for body in ({"cases": [{**TRIANGLES, **_unknown_keys(count)}]}, {**TRIANGLES, **_unknown_keys(count)}):
            assert post(client, "triangles", body).status_code == 422
        seen.append(dict(counts))
    assert seen[0] == seen[1], seen
    assert seen[1]["sort keys"] <= 2 * (problems.MAX_LISTED_ERRORS + 1), seen


def test_a_key_given_twice_among_thousands_is_a_400(client):
    text = '{"cases": [{' + ",".join(f'"k{i}": 1' for i in range(20_000)) + ', "k7": 2}]}'
    problem = problem_body(post(client, "triangles", text.encode()), 400)
    assert "k7" in problem["detail"]
