"""The limits on a real server: ``python -m service serve`` (gunicorn) on loopback.

- A chunked body (Transfer-Encoding: chunked, no Content-Length) over MEANLINE_MAX_BODY_BYTES is
  refused with the too-large problem, not cut at the limit and reported as bad JSON (the pitfall
  in the design brief); one under the limit is computed.
- MEANLINE_TIMEOUT is the per-request time limit: a request that takes longer is stopped
  (gunicorn's WORKER TIMEOUT) and answered 503 with a problem, not gunicorn's bare HTML 500; its
  worker exits and the master replaces it, and the next requests are served. The slow request is
  made slow on purpose (tests/drills/slow_app.py), so the test does not depend on the machine's
  speed.
"""

from __future__ import annotations

import http.client
import json
import sys
import time

import pytest

from service.api.problems import TOO_LARGE
from tests.drills.server import Server, request

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")

CASE = {"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
        "blade_speed": 300.0}
LIMIT = 64 * 1024


def _chunked_post(port: int, body: bytes, chunk: int = 8192):
    connection = http.client.HTTPConnection("127.0.0.1", port, timeout=30)
    try:
        parts = (body[i:i + chunk] for i in range(0, len(body), chunk))
        connection.request("POST", "/v1/triangles", body=parts, encode_chunked=True,
                           headers={"Content-Type": "application/json", "Transfer-Encoding": "chunked"})
        response = connection.getresponse()
        return response.status, response.getheader("Content-Type"), response.read()
    finally:
        connection.close()


def _padded(size: int) -> bytes:
    text = json.dumps(CASE)
    return (text[:-1] + " " * (size - len(text)) + "}").encode()


def test_a_chunked_body_over_the_limit_is_413_on_gunicorn(report_figure):
    with Server(workers=1, environment={"MEANLINE_MAX_BODY_BYTES": str(LIMIT)}) as server:
        status, content_type, body = _chunked_post(server.port, _padded(LIMIT - 1))
        assert status == 200, body[:300]
        status, content_type, body = _chunked_post(server.port, _padded(3 * LIMIT))
        assert status == 413, body[:300]
        assert content_type == "application/problem+json"
        assert json.loads(body)["type"] == TOO_LARGE
        # The worker is fine afterwards.
        assert server.post("/v1/triangles", CASE)[0] == 200
    report_figure("limits on gunicorn", f"chunked body of {3 * LIMIT} bytes over a {LIMIT}-byte limit: {status}")


def test_a_request_over_the_time_limit_loses_its_worker_not_the_service(report_figure):
    command = [sys.executable, "-m", "gunicorn", "-c", "python:service.gunicorn_conf", "--bind", "127.0.0.1:{port}",
               "--workers", "{workers}", "tests.drills.slow_app:app"]
    with Server(workers=2, environment={"MEANLINE_TIMEOUT": "1"}, command=command) as server:
        before = set(server.worker_pids())
        assert server.post("/v1/triangles", CASE, headers={"X-Drill-Delay": "0.2"})[0] == 200  # under the limit
        started = time.monotonic()
        status, body = server.post("/v1/triangles", CASE, headers={"X-Drill-Delay": "10"}, timeout=30)
        cut_after = time.monotonic() - started
        assert status == 503, body[:300]
        assert json.loads(body)["type"] == "urn:meanline:problem:request-stopped"
        # The master replaces the worker it killed; the service answers on.
        deadline = time.monotonic() + 30
        while len(set(server.worker_pids()) - before) < 1 or len(server.worker_pids()) < 2:
            assert time.monotonic() < deadline, server.log_text()
            time.sleep(0.05)
        statuses = [server.post("/v1/triangles", CASE)[0] for _ in range(10)]
        assert statuses == [200] * 10
        assert request(server.port, "GET", "/readyz")[0] == 200
        assert "WORKER TIMEOUT" in server.log_text()
    report_figure("limits on gunicorn", f"a 10 s request under MEANLINE_TIMEOUT=1 was stopped after {cut_after:.1f} s "
                                        f"with {status} (worker replaced); the next 10 requests: "
                                        f"{statuses.count(200)} x 200")
