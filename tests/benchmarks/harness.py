"""Servers on loopback, a load generator, one-request timing and worker memory for the benchmark."""

from __future__ import annotations

import multiprocessing
import os
import signal
import socket
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
HOST = "127.0.0.1"


def free_port() -> int:
    with socket.socket() as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


def post_request(path: str, body: bytes) -> bytes:
    """The raw HTTP/1.1 request bytes, so that the clients spend no time building them."""
    head = (f"POST {path} HTTP/1.1\r\nHost: {HOST}\r\nContent-Type: application/json\r\n"
            f"Content-Length: {len(body)}\r\nConnection: close\r\n\r\n")
    return head.encode() + body


def exchange(port: int, request: bytes, keep: bool = False) -> tuple[int, bytes | int]:
    """Send one request and read the response to the end (sync workers close the connection).

    Returns the status and the whole response (``keep``) or its size in bytes.
    """
    with socket.create_connection((HOST, port)) as sock:
        sock.sendall(request)
        first = sock.recv(1 << 16)
        parts = [first] if keep else None
        size = len(first)
        while True:
            chunk = sock.recv(1 << 20)
            if not chunk:
                break
            size += len(chunk)
            if keep:
                parts.append(chunk)
    status = int(first[9:12]) if first.startswith(b"HTTP/1.") else 0
    return status, (b"".join(parts) if keep else size)


class Server:
    """A gunicorn server started as a subprocess on a loopback port, stopped by SIGTERM."""

    def __init__(self, name: str, command: list[str], port: int, env: dict[str, str]):
        self.name, self.command, self.port, self.env = name, command, port, env
        self.process: subprocess.Popen | None = None
        self.log = tempfile.TemporaryFile()

    def start(self, workers: int, timeout: float = 90.0) -> None:
        self.process = subprocess.Popen(self.command, cwd=ROOT, env=self.env, stdout=subprocess.DEVNULL,
                                        stderr=self.log, start_new_session=True)
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            if self.process.poll() is not None:
                raise RuntimeError(f"{self.name} exited at start:\n{self.log_text()}")
            if len(self.workers()) == workers and self._healthy():
                return
            time.sleep(0.2)
        raise RuntimeError(f"{self.name} did not answer within {timeout} s:\n{self.log_text()}")

    def _healthy(self) -> bool:
        try:
            request = f"GET /healthz HTTP/1.1\r\nHost: {HOST}\r\nConnection: close\r\n\r\n".encode()
            return exchange(self.port, request)[0] == 200
        except OSError:
            return False

    def workers(self) -> list[int]:
        """Process ids of the gunicorn workers (the master's children)."""
        if self.process is None:
            return []
        try:
            text = Path(f"/proc/{self.process.pid}/task/{self.process.pid}/children").read_text()
            return [int(pid) for pid in text.split()]
        except OSError:
            return []

    def log_text(self) -> str:
        self.log.seek(0)
        return self.log.read().decode(errors="replace")[-4000:]

    def stop(self) -> None:
        if self.process is None or self.process.poll() is not None:
            return
        self.process.send_signal(signal.SIGTERM)
        try:
            self.process.wait(timeout=30)
        except subprocess.TimeoutExpired:
            self.process.kill()
            self.process.wait()


#: Settings of the caller's environment that would change what is measured: metrics files shared
#: between processes, and API keys (the echo app checks none).
IGNORED_ENVIRONMENT = ("PROMETHEUS_MULTIPROC_DIR", "MEANLINE_API_KEYS", "MEANLINE_API_KEYS_FILE")


def server_environment(**extra: str) -> dict[str, str]:
    env = {**os.environ, "PYTHONPATH": str(ROOT), "MEANLINE_LOG_LEVEL": "warning", **extra}
    for name in IGNORED_ENVIRONMENT:
        env.pop(name, None)
    return env


def service_server(port: int, workers: int, max_body_bytes: int) -> Server:
    """``python -m service serve``: the production command and settings."""
    command = [sys.executable, "-m", "service", "serve", "--workers", str(workers), "--port", str(port)]
    return Server("service", command, port, server_environment(MEANLINE_MAX_BODY_BYTES=str(max_body_bytes)))


def echo_server(port: int, workers: int) -> Server:
    """The echo app under the same gunicorn settings module as the service."""
    command = [sys.executable, "-m", "gunicorn", "-c", "python:service.gunicorn_conf", "--workers", str(workers),
               "--bind", f"{HOST}:{port}", "tests.benchmarks.echo:app"]
    return Server("echo", command, port, server_environment())


# -- throughput ----------------------------------------------------------------------------------


def _client(port: int, request: bytes, start: float, stop: float, results) -> None:
    done = failed = 0
    while time.monotonic() < start:
        time.sleep(0.001)
    while True:
        try:
            status, _ = exchange(port, request)
        except OSError:
            status = 0
        now = time.monotonic()
        if now > stop:
            break
        if status == 200:
            done += 1
        else:
            failed += 1
    results.put((done, failed))


def throughput(port: int, request: bytes, clients: int, seconds: float) -> tuple[float, int]:
    """Requests answered with 200 per second by ``clients`` concurrent connections, and failures."""
    context = multiprocessing.get_context("fork")
    results = context.Queue()
    start = time.monotonic() + 0.3
    processes = [context.Process(target=_client, args=(port, request, start, start + seconds, results))
                 for _ in range(clients)]
    for process in processes:
        process.start()
    counts = [results.get(timeout=seconds + 60) for _ in processes]
    for process in processes:
        process.join()
    return sum(done for done, _ in counts) / seconds, sum(failed for _, failed in counts)


# -- memory --------------------------------------------------------------------------------------


def _status_kb(pid: int, key: str) -> int | None:
    try:
        for line in Path(f"/proc/{pid}/status").read_text().splitlines():
            if line.startswith(key):
                return int(line.split()[1])
    except OSError:  # the worker has exited (gunicorn's max_requests recycling)
        return None
    return None


class PeakMemory:
    """The largest resident set of the workers while a request runs, in bytes.

    The kernel's own peak (VmHWM, reset before the request through /proc/<pid>/clear_refs)
    catches every page, but a worker that gunicorn recycles right after the request takes it
    along; so a thread also samples VmRSS every millisecond, and the larger of the two counts.
    """

    def __init__(self, pids: list[int]):
        self.pids = pids
        self.sampled = self.before = 0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._sample, daemon=True)

    def _sample(self) -> None:
        while not self._stop.wait(0.001):
            for pid in self.pids:
                self.sampled = max(self.sampled, (_status_kb(pid, "VmRSS:") or 0) * 1024)

    def __enter__(self) -> PeakMemory:
        self.before = max((_status_kb(pid, "VmRSS:") or 0) * 1024 for pid in self.pids)
        for pid in self.pids:
            try:
                Path(f"/proc/{pid}/clear_refs").write_text("5")
            except OSError:
                pass
        self._thread.start()
        return self

    def __exit__(self, *exc) -> None:
        self._stop.set()
        self._thread.join()

    @property
    def peak(self) -> int:
        marks = [_status_kb(pid, "VmHWM:") for pid in self.pids]
        return max([self.sampled, *((m or 0) * 1024 for m in marks)])
