"""The request limits, configured by environment variables: body size and cases per request.

Both answer 413 (RFC 9110, 15.5.14) with the too-large problem. The body limit holds for a
declared Content-Length and for a chunked body (no Content-Length, the server marks the stream
as terminated), which Flask would otherwise cut at the limit and report as bad JSON (the known
pitfall in the design brief). The gunicorn time limit and the chunked body over a real socket are
checked against a running server in tests/drills/test_server_limits.py.
"""

from __future__ import annotations

import io
import json
import sys

import pytest
from werkzeug.test import EnvironBuilder, run_wsgi_app

from service import create_app
from service.api.app import LARGE_BODY_BYTES
from service.api.problems import TOO_LARGE
from service.api.registry import CALCULATIONS

TRIANGLES = {"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
             "blade_speed": 300.0}


@pytest.fixture
def environment(monkeypatch):
    for name in ("MEANLINE_MAX_BODY_BYTES", "MEANLINE_MAX_CASES", "MEANLINE_API_KEYS", "MEANLINE_API_KEYS_FILE"):
        monkeypatch.delenv(name, raising=False)
    return monkeypatch


def _padded(size: int) -> bytes:
    """A valid single case padded with spaces to exactly ``size`` bytes."""
    text = json.dumps(TRIANGLES)
    return (text[:-1] + " " * (size - len(text)) + "}").encode()


def _chunked(app, body: bytes):
    """Post body as a chunked request: no Content-Length, the stream terminated by the server."""
    environ = EnvironBuilder(path="/v1/triangles", method="POST", input_stream=io.BytesIO(body),
                             content_type="application/json",
                             headers={"Transfer-Encoding": "chunked"}).get_environ()
    environ.pop("CONTENT_LENGTH", None)
    environ["wsgi.input_terminated"] = True
    app_iter, status, headers = run_wsgi_app(app, environ, buffered=True)
    return int(status.split()[0]), b"".join(app_iter), headers


def test_body_limit_from_the_environment(environment):
    environment.setenv("MEANLINE_MAX_BODY_BYTES", "4096")
    client = create_app().test_client()
    under = client.post("/v1/triangles", data=_padded(4095), content_type="application/json")
    assert under.status_code == 200
    over = client.post("/v1/triangles", data=_padded(4097), content_type="application/json")
    assert over.status_code == 413
    assert over.mimetype == "application/problem+json"
    assert over.json["type"] == TOO_LARGE
    assert "4096" in over.json["detail"]


def test_body_limit_holds_for_a_chunked_body(environment):
    app = create_app({"MAX_BODY_BYTES": 4096})
    status, body, _ = _chunked(app, _padded(4095))
    assert status == 200, body
    status, body, headers = _chunked(app, _padded(50_000))
    assert status == 413, body
    assert json.loads(body)["type"] == TOO_LARGE
    assert headers["Content-Type"] == "application/problem+json"


def _declared(app, body: bytes, length: int):
    """Post body with a Content-Length of ``length`` (longer than the body: a client that stops)."""
    environ = EnvironBuilder(path="/v1/triangles", method="POST", input_stream=io.BytesIO(body),
                             content_type="application/json").get_environ()
    environ["CONTENT_LENGTH"] = str(length)
    app_iter, status, _ = run_wsgi_app(app, environ, buffered=True)
    return int(status.split()[0]), b"".join(app_iter)


def test_large_bodies_read_into_one_buffer_keep_the_limit_and_the_answers():
    # Bodies of at least LARGE_BODY_BYTES are read by the service itself, not by get_data.
    large = LARGE_BODY_BYTES + 12_345
    app = create_app({"MAX_BODY_BYTES": large})
    client = app.test_client()
    small = client.post("/v1/triangles", data=_padded(4000), content_type="application/json")
    at_limit = client.post("/v1/triangles", data=_padded(large), content_type="application/json")
    assert at_limit.status_code == 200
    assert at_limit.json == small.json
    over = client.post("/v1/triangles", data=_padded(large + 1), content_type="application/json")
    assert over.status_code == 413
    assert over.json["type"] == TOO_LARGE
    # A client that sends less than it declared gets the same answer for a small and a large body.
    answers = [_declared(app, _padded(size)[: size // 2], size) for size in (4000, large)]
    assert [status for status, _ in answers] == [400, 400]
    assert json.loads(answers[0][1])["detail"] == json.loads(answers[1][1])["detail"]


@pytest.mark.parametrize("calculation", CALCULATIONS, ids=lambda c: c.name)
def test_cases_limit_from_the_environment(environment, calculation):
    environment.setenv("MEANLINE_MAX_CASES", "5")
    client = create_app().test_client()
    shapes = [("rows", {"cases": [{}] * 6})]
    if calculation.columns:  # an endpoint without columns refuses them before counting (tests/api)
        shapes.append(("columns", {"columns": {"any_field": [1.0] * 6}}))
    for shape, body in shapes:
        response = client.post(calculation.path, json=body)
        assert response.status_code == 413, (shape, response.json)
        assert response.json["type"] == TOO_LARGE
        assert "at most 5" in response.json["detail"]


def test_a_batch_at_the_cases_limit_is_computed(environment):
    client = create_app({"MAX_CASES": 5}).test_client()
    assert client.post("/v1/triangles", json={"cases": [TRIANGLES] * 5}).status_code == 200
    columns = {**TRIANGLES, "flow_coefficient": [0.4, 0.45, 0.5, 0.55, 0.6]}
    assert client.post("/v1/triangles", json={"columns": columns}).status_code == 200
    columns["flow_coefficient"].append(0.65)
    assert client.post("/v1/triangles", json={"columns": columns}).status_code == 413


@pytest.mark.parametrize(("name", "value"), [("MEANLINE_MAX_BODY_BYTES", "16MB"), ("MEANLINE_MAX_CASES", "1e6")])
def test_a_malformed_limit_stops_the_start(environment, name, value):
    environment.setenv(name, value)
    with pytest.raises(ValueError, match=name):
        create_app()


def test_a_request_the_server_stops_is_answered_503_not_500(environment):
    """gunicorn stops a request over its time limit by raising SystemExit inside it (SIGABRT;
    SIGINT and SIGQUIT alike); the answer is the documented 503 problem, not a bare 500."""
    app = create_app()
    app.add_url_rule("/v1/stopped-in-the-middle", view_func=lambda: sys.exit(1), methods=["POST"])
    response = app.test_client().post("/v1/stopped-in-the-middle", json={},
                                      headers={"X-Request-ID": "stopped-1"})
    assert response.status_code == 503
    assert response.mimetype == "application/problem+json"
    assert response.json["type"] == "urn:meanline:problem:request-stopped"
    assert response.headers["X-Content-Type-Options"] == "nosniff"
    assert response.headers["Cache-Control"] == "no-store"
    # The request id reaches a stopped request's answer too (header and problem document).
    assert response.headers["X-Request-ID"] == "stopped-1"
    assert response.json["request_id"] == "stopped-1"
