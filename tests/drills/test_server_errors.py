"""Requests that gunicorn refuses itself, and bodies whose framing breaks while the app reads them,
on a real server (``python -m service serve``): every answer is a problem document, never HTML
and never a 500.

- A chunk size that is not hexadecimal used to escape ``read_json`` as gunicorn's InvalidChunkSize
  (a 500); it is a 400 now.
- A request line over ``limit_request_line`` (414), too many header fields or one too long (431)
  and a malformed request line (400) are answered by gunicorn before the app runs; the worker's
  error writer is replaced so that they come as ``application/problem+json`` too.
- A ``Content-Encoding`` the service does not decode gets 415.
"""

from __future__ import annotations

import json
import socket
import sys

import pytest

from service.api.problems import MALFORMED
from tests.drills.keys import describe, key_count_drill
from tests.drills.server import Server

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")

CASE = b'{"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5, ' \
       b'"blade_speed": 300.0}'


def _raw(port: int, data: bytes) -> tuple[int, dict, bytes]:
    """Send raw bytes, read the whole answer (the server closes the connection): status, headers, body."""
    with socket.create_connection(("127.0.0.1", port), timeout=30) as connection:
        connection.sendall(data)
        received = b""
        while True:
            try:
                chunk = connection.recv(65536)
            except ConnectionResetError:
                break
            if not chunk:
                break
            received += chunk
    head, _, body = received.partition(b"\r\n\r\n")
    lines = head.decode("latin-1").split("\r\n")
    headers = {name.strip().lower(): value.strip() for name, _, value in (line.partition(":") for line in lines[1:])}
    return int(lines[0].split()[1]), headers, body


def _post(path: str, body: bytes, extra: str = "") -> bytes:
    return (f"POST {path} HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\n{extra}"
            f"Content-Length: {len(body)}\r\nConnection: close\r\n\r\n").encode() + body


REQUESTS = {
    "malformed chunk size": (b"POST /v1/triangles HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\n"
                             b"Transfer-Encoding: chunked\r\nConnection: close\r\n\r\nzz\r\n" + CASE + b"\r\n0\r\n\r\n",
                             400),
    "chunk without its CRLF": (b"POST /v1/triangles HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\n"
                               b"Transfer-Encoding: chunked\r\nConnection: close\r\n\r\n5\r\n{\"a\":XX0\r\n\r\n", 400),
    "request line too long": (b"GET /" + b"a" * 5000 + b" HTTP/1.1\r\nHost: x\r\n\r\n", 414),
    "too many header fields": (b"GET /healthz HTTP/1.1\r\n" + b"".join(b"X-H%d: 1\r\n" % i for i in range(60))
                               + b"\r\n", 431),
    "header field too long": (b"GET /healthz HTTP/1.1\r\nX-Big: " + b"a" * 9000 + b"\r\n\r\n", 431),
    "malformed request line": (b"GARBAGE\r\n\r\n", 400),
    "compressed body": (_post("/v1/triangles", CASE, "Content-Encoding: gzip\r\n"), 415),
}


def test_hostile_framing_and_server_errors_are_problem_documents(report_figure):
    with Server(workers=1) as server:
        answers = {name: _raw(server.port, data) for name, (data, _) in REQUESTS.items()}
        # The worker survives all of them.
        status, headers, body = _raw(server.port, _post("/v1/triangles", CASE))
        assert status == 200, body[:300]
    for name, (status, headers, body) in answers.items():
        expected = REQUESTS[name][1]
        assert status == expected, (name, status, body[:300])
        assert headers.get("content-type") == "application/problem+json", (name, headers)
        problem = json.loads(body)
        assert problem["status"] == expected, name
        assert problem["request_id"] == headers["x-request-id"], name
        assert headers.get("x-content-type-options") == "nosniff", name
        assert b"<html" not in body.lower(), name
    assert json.loads(answers["malformed chunk size"][2])["type"] == MALFORMED
    report_figure("server errors on gunicorn",
                  ", ".join(f"{name}: {status}" for name, (status, _, _) in answers.items()) + " (all problem+json)")


def test_a_body_of_forty_thousand_keys_is_refused_and_the_worker_answers_on(report_figure):
    # The time is printed, not asserted (tests never assert on wall time); the long version is
    # python -m tests.drills.keys.
    with Server(workers=1) as server:
        figures = key_count_drill(server, 40_000, shapes=("row", "object"), repeat=1)
        assert server.post("/v1/triangles", json.loads(CASE))[0] == 200
    for figure in figures:
        assert figure["status"] == 422, figure
        assert figure["errors"] == 40_000, figure
        report_figure("key-count drill (short)", describe(figure))
