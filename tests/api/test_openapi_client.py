"""A Python client generated from the committed OpenAPI document works as generated.

openapi-python-client (the test extra) generates a client package from ``openapi/openapi.json``
into a temporary folder; the test imports it and calls every calculation endpoint, the POST body
and the GET query, with one valid case (``tests/api/examples.py``), through the generated client
against the app in process (httpx's WSGI transport). The parsed answer must be the one-case
result model and equal, output by output, the app's own JSON answer to the same case.

The generator's warnings are read: only the media types it does not model (CSV, SVG) may be
left out; a schema it cannot parse, a response it drops, or a missing endpoint module fails.
"""

from __future__ import annotations

import importlib
import json
import re
import subprocess
import sys
import typing
from pathlib import Path

import httpx
import openapi_python_client  # noqa: F401  (run below as a program; imported so that its absence fails here)
import pytest

from service.__main__ import SPEC_PATH
from service.api.registry import CALCULATIONS
from tests.api.examples import EXAMPLES, ok_body, post

ROOT = Path(__file__).resolve().parents[2]
PACKAGE = "meanline_generated_client"
#: What the generator may leave out: media types it does not model (JSON is what it models).
TOLERATED = re.compile(r"Unsupported content type (text/csv|image/svg\+xml|text/plain)")


@pytest.fixture(scope="module")
def generated(tmp_path_factory):
    """The generated package, imported; and the generator's warnings."""
    folder = tmp_path_factory.mktemp("client")
    config = folder / "config.json"
    # No post hooks: the generator would otherwise run ruff on its output, which is not ours to need.
    config.write_text(json.dumps({"post_hooks": []}), encoding="utf-8")
    result = subprocess.run(
        [sys.executable, "-m", "openapi_python_client", "generate", "--path", str(ROOT / SPEC_PATH),
         "--output-path", str(folder / PACKAGE), "--meta", "none", "--config", str(config)],
        capture_output=True, text=True, timeout=300, cwd=folder)
    output = result.stdout + result.stderr
    assert result.returncode == 0, output
    sys.path.insert(0, str(folder))
    try:
        package = importlib.import_module(PACKAGE)
        yield package, output
    finally:
        sys.path.remove(str(folder))
        for name in [m for m in sys.modules if m == PACKAGE or m.startswith(PACKAGE + ".")]:
            del sys.modules[name]


@pytest.fixture(scope="module")
def api_client(generated, app):
    package, _ = generated
    return package.Client(base_url="http://meanline.test",
                          httpx_args={"transport": httpx.WSGITransport(app=app)}, raise_on_unexpected_status=True)


def _operation_module(package, calculation, query: bool):
    tag = calculation.name.replace("-", "_")
    return importlib.import_module(f"{package.__name__}.api.{tag}.{tag}{'_query' if query else ''}")


def _prefix(calculation) -> str:
    return "".join(part.capitalize() for part in calculation.name.replace("-", "_").split("_"))


def test_the_generator_parses_every_schema_and_response(generated):
    package, output = generated
    warnings = re.findall(r"WARNING parsing (\S+ \S+)[^\n]*\n\s*\n([^\n]+)", output)
    assert len(warnings) == output.count("WARNING"), output  # every warning read
    untolerated = [w for w in warnings if not TOLERATED.search(w[1])]
    assert not untolerated, untolerated
    for sign in ("Unable to parse", "Cannot parse response", "Could not find reference", "Invalid property"):
        assert sign not in output, output
    for calculation in CALCULATIONS:
        for query in (False, True):
            module = _operation_module(package, calculation, query)
            assert callable(module.sync_detailed), (calculation.name, query)
        models = importlib.import_module(f"{package.__name__}.models")
        for shape in ("Result", "RowsRequest", "RowsResponse") + (
                ("ColumnsRequest", "ColumnsResponse", "ResultColumns") if calculation.columns else ()):
            assert hasattr(models, _prefix(calculation) + shape), (calculation.name, shape)


def _request_model(module, case: dict):
    """The generated model of the body (one of the one-case input modes, rows or columns) that
    holds it exactly."""
    hints = typing.get_type_hints(module.sync_detailed)
    fitting = []
    for model in typing.get_args(hints["body"]):
        try:
            body = model.from_dict(case)
        except (TypeError, ValueError, KeyError, AttributeError):
            continue
        if body.to_dict() == case:
            fitting.append(body)
    assert fitting, f"no generated request model holds {case}"
    return fitting[0]


def _query_arguments(module, case: dict) -> dict:
    """The case as the generated GET function's arguments: the case model, which the client writes as
    one query parameter per field."""
    model = typing.get_type_hints(module.sync_detailed)["case"]
    built = model.from_dict(case)
    assert built.to_dict() == case
    return {"case": built}


@pytest.mark.parametrize("name", [c.name for c in CALCULATIONS])
@pytest.mark.parametrize("form", ["post", "get"])
def test_every_endpoint_answers_through_the_generated_client(generated, api_client, client, name, form):
    package, _ = generated
    calculation = next(c for c in CALCULATIONS if c.name == name)
    case = EXAMPLES[name].good
    expected = ok_body(post(client, name, case))
    module = _operation_module(package, calculation, form == "get")
    if form == "post":
        response = module.sync_detailed(client=api_client, body=_request_model(module, case))
    else:
        response = module.sync_detailed(client=api_client, **_query_arguments(module, case))
    assert response.status_code == 200, response.content
    parsed = response.parsed
    assert type(parsed).__name__ == _prefix(calculation) + "Result"
    # The model's attributes are Python names (Vx1 is vx_1); to_dict writes them under the
    # document's names again, from what was parsed.
    answer = parsed.to_dict()
    outputs = [n for n in calculation.outputs().fields if n in expected]
    assert outputs, "the answer holds outputs"
    for output in outputs:
        assert answer[output] == expected[output], output
    assert answer == expected


@pytest.mark.parametrize("name", [c.name for c in CALCULATIONS])
def test_rows_and_columns_through_the_generated_client(generated, api_client, client, name):
    """Rows and columns built as a caller builds them: from the generated models of each case's
    input mode. (The generated ``from_dict`` of a oneOf of input modes takes the first mode whose
    required fields are present and drops the fields that mode does not have, so a whole body is
    not read back through it.)"""
    package, _ = generated
    models = importlib.import_module(f"{package.__name__}.models")
    calculation = next(c for c in CALCULATIONS if c.name == name)
    example = EXAMPLES[name]
    module = _operation_module(package, calculation, False)
    cases = [_request_model(module, example.good), _request_model(module, example.bad)]
    prefix = _prefix(calculation)
    bodies = [getattr(models, prefix + "RowsRequest")(cases=cases)]
    if calculation.columns:
        columns = {k: [example.good[k], example.bad[k]] if example.good[k] != example.bad[k] else example.good[k]
                   for k in example.good}
        # The columns of the same input mode as the one case.
        mode = getattr(models, type(cases[0]).__name__.replace(prefix + "Case", prefix + "Columns", 1))
        assert mode.from_dict(columns).to_dict() == columns
        bodies.append(getattr(models, prefix + "ColumnsRequest")(columns=mode.from_dict(columns)))
    for body in bodies:
        expected = ok_body(post(client, name, body.to_dict()))
        assert [e["index"] for e in expected["errors"]] == [1]  # the bad case failed alone
        response = module.sync_detailed(client=api_client, body=body)
        assert response.status_code == 200, response.content
        shape = "RowsResponse" if "cases" in body.to_dict() else "ColumnsResponse"
        assert type(response.parsed).__name__ == prefix + shape
        assert response.parsed.to_dict() == expected
