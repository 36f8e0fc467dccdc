"""A real ``python -m service serve`` on a free loopback port, for tests that need one.

Bounded: at most ``START_POLLS`` polls of ``POLL_INTERVAL`` seconds for readiness, then SIGTERM
and at most ``STOP_TIMEOUT`` seconds for the server to stop (then SIGKILL).
"""

from __future__ import annotations

import contextlib
import json
import os
import pathlib
import signal
import socket
import subprocess
import sys
import time
import urllib.error
import urllib.request
from dataclasses import dataclass

REPO_ROOT = pathlib.Path(__file__).resolve().parents[1]
START_POLLS = 120
POLL_INTERVAL = 0.25  # [s]
STOP_TIMEOUT = 30  # [s]


@dataclass
class LiveServer:
    url: str
    stdout: pathlib.Path
    stderr: pathlib.Path
    process: subprocess.Popen

    def get(self, path: str, headers: dict | None = None):
        request = urllib.request.Request(self.url + path, headers=headers or {})
        with urllib.request.urlopen(request, timeout=30) as response:
            return response.status, dict(response.headers), response.read()

    def post(self, path: str, body: dict, headers: dict | None = None):
        request = urllib.request.Request(self.url + path, data=json.dumps(body).encode(), method="POST",
                                         headers={"Content-Type": "application/json", **(headers or {})})
        try:
            with urllib.request.urlopen(request, timeout=30) as response:
                return response.status, dict(response.headers), json.loads(response.read())
        except urllib.error.HTTPError as error:
            return error.code, dict(error.headers), json.loads(error.read())


def free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


@contextlib.contextmanager
def live_server(directory: pathlib.Path, workers: int = 1, environment: dict | None = None):
    """Run the service with ``workers`` workers; its standard output and error go to files in
    ``directory``. Variables of the service (``MEANLINE_*``, ``PROMETHEUS_MULTIPROC_DIR``) come
    only from ``environment``."""
    port = free_port()
    env = {key: value for key, value in os.environ.items()
           if not key.startswith("MEANLINE_") and key != "PROMETHEUS_MULTIPROC_DIR"}
    # The service of this checkout (a worktree too), whatever else is installed in the environment.
    env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(REPO_ROOT), env.get("PYTHONPATH")]))
    env.update(environment or {})
    stdout, stderr = directory / "server.stdout", directory / "server.stderr"
    with open(stdout, "wb") as out, open(stderr, "wb") as err:
        process = subprocess.Popen(
            [sys.executable, "-m", "service", "serve", "--port", str(port), "--workers", str(workers)],
            cwd=REPO_ROOT, env=env, stdout=out, stderr=err)
    server = LiveServer(f"http://127.0.0.1:{port}", stdout, stderr, process)
    try:
        for _ in range(START_POLLS):
            if process.poll() is not None:
                raise AssertionError(f"the server exited with {process.returncode}:\n{stderr.read_text()}")
            try:
                if server.get("/readyz")[0] == 200:
                    break
            except (urllib.error.URLError, ConnectionError):
                time.sleep(POLL_INTERVAL)
        else:
            raise AssertionError(f"the server was not ready in time:\n{stderr.read_text()}")
        yield server
    finally:
        process.send_signal(signal.SIGTERM)
        try:
            process.wait(timeout=STOP_TIMEOUT)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(timeout=STOP_TIMEOUT)


def decode_body(response: bytes) -> bytes:
    """The body of a raw HTTP/1.1 response, undoing chunked transfer encoding."""
    head, _, body = response.partition(b"\r\n\r\n")
    if b"transfer-encoding: chunked" not in head.lower():
        return body
    out, position = [], 0
    while True:
        end = body.index(b"\r\n", position)
        length = int(body[position:end].split(b";")[0], 16)
        if length == 0:
            return b"".join(out)
        out.append(body[end + 2:end + 2 + length])
        position = end + 2 + length + 2
