"""Contract fuzzing: schemathesis against the app's own OpenAPI document, in process (WSGI).

Every operation of the document is fuzzed with every built-in check of schemathesis: no server
errors; status codes, content types, headers and bodies as documented; schema-violating requests
rejected and schema-valid ones accepted (with the documented exceptions below); unsupported
methods answered 405 with ``Allow``. The app runs with an API key configured, which every
generated request carries, so the operations are fuzzed as a keyed deployment serves them.

The quick run (the normal test run, about half a minute on two cores, a fixed seed) takes the
coverage phase's schema-valid boundary cases (every bound, exclusive bounds, each input mode)
and a bounded generation phase of valid and invalid bodies. ``MEANLINE_FUZZ_FULL=1`` runs the
long version: also the coverage phase's thousands of schema-violating cases, ten times the
generated examples, a random seed, and ``ignored_auth`` (every request re-sent without the key).
"""

from __future__ import annotations

import functools
import json
import os

import jsonschema
import pytest
import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.config import SchemathesisConfig
from schemathesis.openapi.checks import RejectedPositiveData
from schemathesis.specs.openapi.checks import ignored_auth, positive_data_acceptance

from service import create_app
from service.api.machine import CALCULATION as MACHINE_DESIGN
from service.api.problems import PHYSICALLY_IMPOSSIBLE

FULL = os.environ.get("MEANLINE_FUZZ_FULL") == "1"
API_KEY = "fuzzing-key-3f9c1d7e2b5a4c60"
#: Examples per operation in the generation phase, on top of the coverage phase's own cases.
MAX_EXAMPLES = 600 if FULL else 60
MIN_REQUESTS = 2000

APP = create_app({"API_KEYS": API_KEY, "MAX_CASES": 1000})
DOCUMENT = json.loads(APP.test_client().get("/v1/openapi.json").get_data())
OPERATIONS = {f"{method.upper()} {path}" for path, item in DOCUMENT["paths"].items() for method in item}
# The generator (jsonschema-rs' canonical form) gives up on the machine design's five choices once
# two of them may be left to their defaults (the loading limit, a compressor's target diffusion
# factor: no field of the alternative required). It fuzzes a stricter copy in which those fields are
# required again, every request of which the service takes; the smallest requests, with the
# defaults, are checked against the served document in tests/api/test_defaults.py.
for _choice in DOCUMENT["components"]["schemas"]["MachineDesignCase"]["allOf"]:
    for _alternative in _choice.get("oneOf", []):
        _declared = MACHINE_DESIGN.choice(_choice["description"].split("`")[1]).alternative(_alternative["title"])
        _alternative["required"] = list(dict.fromkeys([*_declared.required, *_alternative.get("required", [])]))
# Loaded as a document and pointed at the app, as schemathesis.openapi.from_wsgi does, but without
# from_wsgi's habit of leaving out the operation that served the document.
# The whole-machine layout costs tens of milliseconds a case and its 60-odd input modes give the
# coverage phase thousands of boundary cases: the quick run fuzzes it with generated examples only.
SLOW_COVERAGE = [] if FULL else [{"include-path": "/v1/machine-design", "phases": {"coverage": {"enabled": False}}}]
SCHEMA = schemathesis.openapi.from_dict(DOCUMENT, config=SchemathesisConfig.from_dict(
    {"phases": {"coverage": {"generation": {"mode": "all" if FULL else "positive"}}}, "operations": SLOW_COVERAGE}))
SCHEMA.app = APP

_counts = {"generated": 0, "served": 0, "tolerated": {}}
_fuzzed: set[str] = set()


def _counting(wsgi_app):
    def app(environ, start_response):
        _counts["served"] += 1
        return wsgi_app(environ, start_response)

    return app


APP.wsgi_app = _counting(APP.wsgi_app)


def _body_schema(path: str) -> dict:
    # The GET form's query stands for a one-case body: it is judged by the POST body's schema.
    return DOCUMENT["paths"][path]["post"]["requestBody"]["content"]["application/json"]["schema"]


def _validator(schema: dict):
    return jsonschema.Draft202012Validator({**schema, "components": DOCUMENT["components"]})


@functools.cache
def _request_validator(path: str, method: str):
    return _validator(_body_schema(path))


@functools.cache
def _case_validator(path: str):
    """The validator of the one-case body (the first shape of the request's oneOf)."""
    shapes = DOCUMENT["components"]["schemas"][_body_schema(path)["$ref"].rsplit("/", 1)[-1]]
    return _validator(shapes["oneOf"][0])


def _column_cases(columns) -> list:
    """The cases a generated columns object stands for: a list as long as the longest is one entry
    per case, any other value every case's."""
    if not isinstance(columns, dict):
        return [columns]
    count = max((len(v) for v in columns.values() if isinstance(v, list)), default=1)
    return [{name: value[i] if isinstance(value, list) and len(value) == count else value
             for name, value in columns.items()} for i in range(count)]


def _tolerate(reason: str) -> None:
    _counts["tolerated"][reason] = _counts["tolerated"].get(reason, 0) + 1


def positive_data_acceptance_as_documented(ctx, response, case):
    """schemathesis' positive_data_acceptance, except for three documented 422s.

    1. A single case whose inputs are schema-valid but physically impossible (static temperature
       at or below zero, a target no solidity reaches): 422, as the document's 422 says. No JSON
       Schema can express the physics.
    2. Columns whose lists differ in length: JSON Schema cannot say "all lists of one length".
    3. Bodies the generator took for valid that a full JSON Schema 2020-12 validator rejects:
       the generator ignores ``dependentRequired`` (total_temperature needs total_pressure).
    4. The GET form's query, whose parameters are listed one by one: a query whose fields make no
       input mode (the one-case body it stands for violates the body's schema), or whose one
       ``output`` is not computed in the case's mode.
    5. A CSV body: the document can only say "a string", so the generated text is no table of cases.
    6. Columns whose cases are not valid cases: the document says once that the columns take the
       case's fields, each one value or a list of values of that field (ColumnValue); JSON Schema
       cannot map a field's schema over a list, so the case each column entry makes is judged by
       the case schema here.
    Any other rejection of schema-valid data fails the test.
    """
    try:
        return positive_data_acceptance(ctx, response, case)
    except RejectedPositiveData:
        problem = json.loads(response.content)
        details = [error["detail"] for error in problem.get("errors", [])]
        if case.operation.method.upper() == "GET" and response.status_code == 422 and (
                not _request_validator(case.operation.path, "get").is_valid(_query_body(case))):
            _tolerate("GET query that makes no input mode")
        elif case.operation.method.upper() == "GET" and details and all(
                "is not computed for this case" in d for d in details):
            _tolerate("GET output not computed in the case's mode")
        elif (case.media_type or "").startswith("text/csv"):
            _tolerate("generated CSV text")
        elif response.status_code == 422 and problem["type"] == PHYSICALLY_IMPOSSIBLE:
            _tolerate("physically impossible single case")
        elif details and all(d.startswith("All lists must have the same length") for d in details):
            _tolerate("columns of different lengths")
        elif isinstance(case.body, dict) and "columns" in case.body and not all(
                _case_validator(case.operation.path).is_valid(c) for c in _column_cases(case.body["columns"])):
            _tolerate("columns whose cases are not valid cases")
        elif not _request_validator(case.operation.path, case.operation.method.lower()).is_valid(case.body):
            _tolerate("generated body violates dependentRequired")
        else:
            raise
        return None


def _query_body(case) -> dict:
    """The one-case body that a generated GET query stands for."""
    return {name: value for name, value in (case.query or {}).items() if name != "output"}


# ignored_auth re-sends every request without the key (two more requests each); the quick run
# leaves it to tests/reliability/test_access.py, which checks every operation with and without.
EXCLUDED = [positive_data_acceptance] + ([] if FULL else [ignored_auth])


@SCHEMA.parametrize()
@settings(max_examples=MAX_EXAMPLES, deadline=None, derandomize=not FULL, database=None,
          suppress_health_check=list(HealthCheck))
def test_operation_keeps_its_contract(case):
    _counts["generated"] += 1
    _fuzzed.add(f"{case.operation.method.upper()} {case.operation.path}")
    case.call_and_validate(headers={"X-API-Key": API_KEY}, excluded_checks=EXCLUDED,
                           additional_checks=[positive_data_acceptance_as_documented])


def test_every_operation_was_fuzzed_with_enough_requests(report_figure):
    if _counts["generated"] == 0:
        pytest.skip("runs after test_operation_keeps_its_contract, in the same session")
    report_figure(
        "contract fuzzing" + (" (full)" if FULL else ""),
        f"{_counts['generated']} generated requests ({_counts['served']} served, with the checks' own) over "
        f"{len(_fuzzed)} operations; documented 422s tolerated: {_counts['tolerated'] or 'none'}",
    )
    assert _fuzzed == OPERATIONS
    assert _counts["generated"] >= MIN_REQUESTS
