"""The GET form: the same case, validation and answer as the one-case JSON body; text/plain for one
output; HEAD and OPTIONS; API keys in the query only where allowed; URL lengths of the usual cases."""

from __future__ import annotations

import logging
import urllib.parse

import pytest

from service import create_app
from tests.api.examples import EXAMPLES, INVALID_INPUT, strict_json, valid_cases

#: The longest URL that the common spreadsheet programs' WEBSERVICE takes, about (DESIGN.md).
SPREADSHEET_URL_LIMIT = 2000
HOST = "http://meanline.example.org:8080"


def query_of(case: dict, output: str | None = None, repeated: bool = False) -> str:
    """The query string of a one-case body: lists comma-separated, or as repeated parameters."""
    pairs = []
    for name, value in case.items():
        if isinstance(value, list):
            pairs += [(name, str(v)) for v in value] if repeated else [(name, ",".join(map(str, value)))]
        else:
            pairs.append((name, str(value)))
    if output is not None:
        pairs.append(("output", output))
    return urllib.parse.urlencode(pairs, quote_via=urllib.parse.quote)


def _json(response):
    return strict_json(response.get_data(as_text=True))


@pytest.mark.parametrize("name", list(EXAMPLES))
def test_the_get_form_answers_as_the_one_case_body(client, name):
    for case in valid_cases(name):
        posted = client.post(f"/v1/{name}", json=case)
        for repeated in (False, True):
            got = client.get(f"/v1/{name}?{query_of(case, repeated=repeated)}")
            assert got.status_code == posted.status_code == 200, got.get_data(as_text=True)
            assert got.mimetype == "application/json"
            assert _json(got) == _json(posted)


@pytest.mark.parametrize("name", list(EXAMPLES))
def test_one_output_is_text_holding_that_value(client, name):
    case = EXAMPLES[name].good
    full = _json(client.post(f"/v1/{name}", json=case))
    for output, value in full.items():
        if output in ("checks", "assumed"):
            continue
        response = client.get(f"/v1/{name}?{query_of(case, output)}")
        assert response.status_code == 200 and response.mimetype == "text/plain", output
        text = response.get_data(as_text=True)
        if isinstance(value, list):
            assert [float(v) if v else None for v in text.split(",")] == value, output
        elif value is None:
            assert text == ""
        else:
            assert float(text) == value and text == repr(value), output
    for check, entry in full["checks"].items():
        for part in ("status", "value"):
            response = client.get(f"/v1/{name}?{query_of(case, f'checks.{check}.{part}')}")
            text = response.get_data(as_text=True)
            expected = entry[part]
            if isinstance(expected, list):
                expected = ",".join(map(str, expected))
            assert text == (repr(expected) if isinstance(expected, float) else str(expected)), (check, part)


@pytest.mark.parametrize(("edit", "parameters"), [
    ({"flow_coefficient": "-0.5"}, ["flow_coefficient"]),
    ({"flow_coefficient": "abc"}, ["flow_coefficient"]),
    ({"flow_coefficient": "nan"}, ["flow_coefficient"]),
    ({"machine": "pump"}, ["machine"]),
    ({"no_such_field": "1"}, ["no_such_field"]),
    ({"blade_speed": None}, ["blade_speed"]),
    ({"blade_speed": "30 kg"}, ["blade_speed"]),
])
def test_problems_are_the_bodys_with_the_parameter_named(client, edit, parameters):
    case = dict(EXAMPLES["triangles"].good)
    body = dict(case)
    for name, value in edit.items():
        if value is None:
            case.pop(name)
            body.pop(name)
        else:
            case[name] = value
            body[name] = -0.5 if value == "-0.5" else value
    got = client.get(f"/v1/triangles?{query_of(case)}")
    posted = client.post("/v1/triangles", json=body)
    problem = _json(got)
    assert got.status_code == 422 and problem["type"] == INVALID_INPUT, problem
    assert [e["parameter"] for e in problem["errors"]] == parameters
    if edit.get("flow_coefficient") not in ("abc", "nan"):  # a number-like text in JSON is a string
        assert [(e["pointer"], e["detail"]) for e in problem["errors"]] == [
            (e["pointer"], e["detail"]) for e in _json(posted)["errors"]]


def test_a_field_given_twice_and_an_unknown_output_name_their_parameter(client):
    query = query_of(EXAMPLES["triangles"].good)
    problem = _json(client.get(f"/v1/triangles?{query}&reaction=0.6"))
    assert [(e["parameter"], e["pointer"]) for e in problem["errors"]] == [("reaction", "/reaction")]
    problem = _json(client.get(f"/v1/triangles?{query}&output=alpha1,nope"))
    assert [(e["parameter"], e["pointer"]) for e in problem["errors"]] == [("output", "/outputs/1")]
    # Several outputs: the JSON answer, restricted.
    answer = _json(client.get(f"/v1/triangles?{query}&output=alpha1&output=checks.de_haller_rotor.status"))
    assert set(answer) == {"alpha1", "checks"} and set(answer["checks"]) == {"de_haller_rotor"}


def test_head_and_options_answer_as_spreadsheets_ask_first(client):
    url = f"/v1/triangles?{query_of(EXAMPLES['triangles'].good, 'alpha1')}"
    got, head = client.get(url), client.head(url)
    assert head.status_code == 200 and head.get_data() == b""
    assert head.headers["Content-Type"] == got.headers["Content-Type"]
    assert head.headers["Content-Length"] == got.headers["Content-Length"]
    options = client.options(url)
    assert options.status_code == 200
    assert {"GET", "HEAD", "POST", "OPTIONS"} <= {m.strip() for m in options.headers["Allow"].split(",")}


def test_an_api_key_in_the_query_only_where_the_operator_allows_it(caplog, capsys):
    secret = "query-key-5d1e8a7c"
    url = f"/v1/triangles?{query_of(EXAMPLES['triangles'].good, 'alpha1')}"
    with caplog.at_level(logging.DEBUG):
        off = create_app({"API_KEYS": secret}).test_client()
        problem = _json(off.get(f"{url}&api_key={secret}"))
        assert problem["status"] == 400 and [e["parameter"] for e in problem["errors"]] == ["api_key"]
        assert off.get(url, headers={"X-API-Key": secret}).status_code == 200
        # Without any keys configured, a key in the query is still refused: it should not travel in URLs.
        assert create_app({"API_KEYS": None}).test_client().get(f"{url}&api_key=x").status_code == 400

        on = create_app({"API_KEYS": secret, "API_KEYS_IN_QUERY": True}).test_client()
        assert on.get(f"{url}&api_key={secret}").status_code == 200
        assert on.get(f"{url}&api_key=wrong-key").status_code == 403
        assert on.get(url).status_code == 401
    logged = caplog.text + "".join(capsys.readouterr())
    assert "/v1/triangles" in logged and secret not in logged


USUAL_CASES = {
    "triangles, duty, one output": ("triangles", EXAMPLES["triangles"].good, "alpha1"),
    "triangles, unit strings": ("triangles", {
        "machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
        "blade_speed": "984.25 ft/s", "total_temperature": "518.67 degR", "total_pressure": "14.696 psi"},
        "checks.de_haller_rotor.status"),
    "zweifel sizing": ("zweifel", EXAMPLES["zweifel"].good, "blade_count"),
    "stage split with weights": ("stage-split", EXAMPLES["stage-split"].variants[1], "stage_pressure_ratio"),
    "machine design": ("machine-design", EXAMPLES["machine-design"].good, "stage_count"),
    "machine design, turbine, per-stage list": ("machine-design", EXAMPLES["machine-design"].variants[0],
                                                 "stage_pressure_ratio"),
}


def test_urls_of_the_usual_cases_fit_a_spreadsheet_cell(client, report_figure):
    lengths = {}
    for label, (name, case, output) in USUAL_CASES.items():
        url = f"{HOST}/v1/{name}?{query_of(case, output)}"
        assert client.get(url.removeprefix(HOST)).status_code == 200, label
        lengths[label] = len(url)
    report_figure("GET URL lengths", ", ".join(f"{label}: {n}" for label, n in lengths.items())
                  + f" characters (with the {len(HOST)}-character host {HOST})")
    assert max(lengths.values()) < SPREADSHEET_URL_LIMIT
