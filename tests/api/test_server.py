"""The real server, started with the README's own serve command, answering over HTTP on loopback.

The README carries, right after a line ``<!-- serve-command -->``, a ```bash block whose one
command line ends in ``<python> -m service serve`` (after any ``&&``-joined set-up steps). The
test runs that last step with this interpreter on a free loopback port and one worker, so the
documented command is the one that is tested.
"""

from __future__ import annotations

import json
import math
import os
import re
import shlex
import signal
import socket
import subprocess
import sys
import tempfile
import time
import urllib.error
import urllib.request
from pathlib import Path

import pytest

from service.__main__ import SPEC_PATH
from tests.api.examples import EXAMPLES, TRACEBACK_MARKERS

ROOT = Path(__file__).resolve().parents[2]
README = ROOT / "README.md"
MARKER = "<!-- serve-command -->"
HOST = "127.0.0.1"
START_TIMEOUT = 30.0  # seconds to wait for /healthz; a bound on the wait, not a timing assertion
REQUEST_TIMEOUT = 10.0
STOP_TIMEOUT = 30.0
BODY_LIMIT = 65536  # MEANLINE_MAX_BODY_BYTES for this server, small enough to exceed cheaply


def serve_command(readme_text: str, port: int) -> list[str]:
    """The README's serve step as an argument list, run by this interpreter on ``port``."""
    if MARKER not in readme_text:
        pytest.fail(f"README.md has no {MARKER} line followed by the serve command")
    block = re.match(r"\s*```bash\n(.*?)\n```", readme_text.split(MARKER, 1)[1], re.DOTALL)
    assert block, f"a ```bash block must follow {MARKER} directly"
    lines = [line for line in block.group(1).splitlines()
             if line.strip() and not line.lstrip().startswith("#")]
    assert len(lines) == 1, f"the serve block must hold one command line, not {lines}"
    argv = shlex.split(lines[0].split("&&")[-1])
    assert argv[1:4] == ["-m", "service", "serve"], f"not '<python> -m service serve': {argv}"
    assert re.search(r"python[0-9.]*$", argv[0]), f"the last step does not start with Python: {argv[0]}"
    return [sys.executable, *argv[1:], "--port", str(port), "--workers", "1"]


def test_serve_command_is_parsed_from_the_documented_form():
    text = ("# Meanline\n\n" + MARKER + "\n```bash\npython3 -m venv .venv && "
            ".venv/bin/pip install -q -e . && .venv/bin/python -m service serve\n```\n")
    assert serve_command(text, 8123) == [sys.executable, "-m", "service", "serve", "--port", "8123",
                                         "--workers", "1"]


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind((HOST, 0))
        return probe.getsockname()[1]


def _request(url: str, body=None, headers=None, method=None):
    """(status, headers, text) of one HTTP request; error statuses are answers, not exceptions."""
    data = json.dumps(body).encode() if body is not None else None
    request = urllib.request.Request(url, data=data, method=method, headers={
        **({"Content-Type": "application/json"} if data is not None else {}), **(headers or {})})
    try:
        with urllib.request.urlopen(request, timeout=REQUEST_TIMEOUT) as response:
            return response.status, response.headers, response.read().decode()
    except urllib.error.HTTPError as error:
        with error:
            return error.code, error.headers, error.read().decode()


@pytest.fixture(scope="module")
def server():
    """Base URL of the README's server; stopped with SIGTERM afterwards, which it must obey."""
    port = _free_port()
    command = serve_command(README.read_text(encoding="utf-8") if README.exists() else "", port)
    env = {**os.environ, "MEANLINE_HOST": HOST, "MEANLINE_MAX_BODY_BYTES": str(BODY_LIMIT),
           "MEANLINE_LOG_LEVEL": "warning"}
    env.pop("MEANLINE_PORT", None)
    env.pop("MEANLINE_WORKERS", None)
    with tempfile.TemporaryFile() as log:
        # Its own session and process group, so that stopping it reaches no other process.
        process = subprocess.Popen(command, cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT,
                                   start_new_session=True)
        base = f"http://{HOST}:{port}"
        try:
            deadline = time.monotonic() + START_TIMEOUT
            while True:
                if process.poll() is not None:
                    log.seek(0)
                    output = log.read().decode()[-3000:]
                    pytest.fail(f"the server exited with {process.returncode}:\n{output}")
                try:
                    if _request(f"{base}/healthz")[0] == 200:
                        break
                except OSError:
                    pass
                if time.monotonic() > deadline:
                    log.seek(0)
                    pytest.fail(f"no answer on {base}/healthz within {START_TIMEOUT} s:\n"
                                f"{log.read().decode()[-3000:]}")
                time.sleep(0.2)
            yield base
        finally:
            if process.poll() is None:
                process.send_signal(signal.SIGTERM)
                try:
                    process.wait(timeout=STOP_TIMEOUT)
                except subprocess.TimeoutExpired:
                    os.killpg(process.pid, signal.SIGKILL)
                    process.wait(timeout=STOP_TIMEOUT)
                    pytest.fail("the server did not stop within its timeout after SIGTERM")
        log.seek(0)
        output = log.read().decode()
        assert process.returncode == 0, f"exit status {process.returncode} after SIGTERM:\n{output[-3000:]}"
        assert "Traceback" not in output, output[-3000:]


def test_health_and_readiness(server):
    for path, expected in (("/healthz", "ok"), ("/readyz", "ready")):
        status, headers, text = _request(server + path)
        assert status == 200 and json.loads(text) == {"status": expected}
        assert headers["X-Content-Type-Options"] == "nosniff"


def test_triangles_case_over_http(server):
    case = {"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
            "blade_speed": 300}
    status, headers, text = _request(server + "/v1/triangles", case)
    assert status == 200 and headers.get_content_type() == "application/json", text
    body = json.loads(text)
    # Derived here from the definitions (design brief, "Physics reference"): for a compressor,
    # Vtheta1 = U (1 - R - psi/2) = 90 m/s and Vx = phi U = 150 m/s, so tan(alpha1) = 0.6; the
    # specific work is psi U^2 = 36 000 J/kg.
    assert math.isclose(body["alpha1"], math.degrees(math.atan(0.6)), rel_tol=1e-12)
    assert math.isclose(body["work"], 0.4 * 300.0**2, rel_tol=1e-12)
    assert body["checks"]["de_haller_rotor"]["status"] in ("ok", "warn", "fail")


def test_batch_with_an_impossible_case_over_http(server):
    example = EXAMPLES["triangles"]
    status, _, text = _request(server + "/v1/triangles", {"cases": [example.good, example.bad]})
    assert status == 200, text
    body = json.loads(text)
    assert [e["index"] for e in body["errors"]] == [1]
    assert body["results"][1]["T1"] is None and body["results"][0]["T1"] > 0


def test_errors_over_http_are_problems(server):
    for url, body, expected in ((server + "/v1/nowhere", None, 404),
                                (server + "/healthz", {}, 405),
                                (server + "/v1/triangles", {"machine": "pump"}, 422)):
        status, headers, text = _request(url, body)
        assert status == expected, text
        assert headers.get_content_type() == "application/problem+json"
        assert json.loads(text)["status"] == expected
        assert not TRACEBACK_MARKERS.search(text)


def test_openapi_document_over_http(server):
    status, _, text = _request(server + "/v1/openapi.json")
    assert status == 200
    assert json.loads(text) == json.loads((ROOT / SPEC_PATH).read_text(encoding="utf-8"))


def _chunked_post(server: str, payload: bytes):
    """(status, content type, body) of a POST sent with chunked transfer encoding.

    A server may answer 413 and close before the client has sent the rest, so a send that fails
    after the headers is not an error: the answer is read all the same.
    """
    host, port = server.removeprefix("http://").split(":")
    with socket.create_connection((host, int(port)), timeout=REQUEST_TIMEOUT) as connection:
        connection.sendall(f"POST /v1/triangles HTTP/1.1\r\nHost: {host}:{port}\r\n"
                           "Content-Type: application/json\r\nTransfer-Encoding: chunked\r\n"
                           "Connection: close\r\n\r\n".encode())
        try:
            for i in range(0, len(payload), 8192):
                chunk = payload[i:i + 8192]
                connection.sendall(f"{len(chunk):x}\r\n".encode() + chunk + b"\r\n")
            connection.sendall(b"0\r\n\r\n")
        except (BrokenPipeError, ConnectionResetError):
            pass
        answer = b""
        try:
            while data := connection.recv(65536):
                answer += data
        except ConnectionResetError:
            pass
    head, _, body = answer.partition(b"\r\n\r\n")
    lines = head.decode("latin-1").split("\r\n")
    headers = dict(line.split(": ", 1) for line in lines[1:] if ": " in line)
    content_type = next((v for k, v in headers.items() if k.lower() == "content-type"), "")
    assert "chunked" not in str(headers).lower(), "this reader expects a response with a Content-Length"
    return int(lines[0].split()[1]), content_type, body.decode()


def test_chunked_body_over_the_limit_is_413_over_http(server):
    # Design brief, "Known pitfalls": without a Content-Length the body is cut at the limit; it
    # must be refused as too large, not as malformed JSON.
    case = EXAMPLES["triangles"].good
    small = json.dumps({"cases": [case] * 3}).encode()
    status, _, text = _chunked_post(server, small)
    assert status == 200 and len(json.loads(text)["results"]) == 3, text
    large = json.dumps({"cases": [case] * 700}).encode()
    assert len(large) > BODY_LIMIT
    status, content_type, text = _chunked_post(server, large)
    assert status == 413, text
    assert content_type.startswith("application/problem+json")
