"""A real server for the drills: ``python -m service serve`` on a free loopback port.

Everything here is bounded: the start waits at most ``START_SECONDS`` for the service to be
ready, the stop sends SIGTERM and waits at most ``STOP_SECONDS`` before SIGKILL. Process facts
come from /proc (Linux): the master's workers are the processes whose parent it is, and their
resident memory is VmRSS in /proc/<pid>/status.
"""

from __future__ import annotations

import http.client
import json
import os
import signal
import socket
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parents[2]
START_SECONDS = 60
STOP_SECONDS = 60


def free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def children(pid: int) -> list[int]:
    """Processes whose parent is ``pid``."""
    found = []
    for entry in Path("/proc").iterdir():
        if not entry.name.isdigit():
            continue
        try:
            stat = (entry / "stat").read_text()
        except OSError:  # gone meanwhile
            continue
        # The command name (field 2) may hold spaces; the parent pid is the second field after it.
        if int(stat[stat.rindex(")") + 2:].split()[1]) == pid:
            found.append(int(entry.name))
    return sorted(found)


def rss_kib(pid: int) -> int | None:
    """Resident set size of a process [KiB], or None if it is gone."""
    try:
        for line in Path(f"/proc/{pid}/status").read_text().splitlines():
            if line.startswith("VmRSS:"):
                return int(line.split()[1])
    except OSError:
        return None
    return None


def request(port: int, method: str, path: str, body: bytes | None = None, headers=None, timeout: float = 60.0):
    """One request on a fresh connection: (status, body bytes)."""
    connection = http.client.HTTPConnection("127.0.0.1", port, timeout=timeout)
    try:
        connection.request(method, path, body=body, headers=headers or {})
        response = connection.getresponse()
        return response.status, response.read()
    finally:
        connection.close()


class Server:
    """``python -m service serve`` (or another command) on loopback, as a context manager.

    Parameters
    ----------
    workers : int
        Gunicorn worker processes.
    environment : dict, optional
        Extra environment variables (``MEANLINE_*`` of the caller are not inherited).
    command : list of str, optional
        Replaces ``python -m service serve --port P --workers W``; ``{port}`` is filled in.
    """

    def __init__(self, workers: int = 2, environment: dict | None = None, command: list[str] | None = None):
        self.port = free_port()
        self.workers = workers
        self.environment = {key: value for key, value in os.environ.items()
                            if not key.startswith("MEANLINE_") and key != "PROMETHEUS_MULTIPROC_DIR"}
        self.environment.update(environment or {})
        self.command = [part.format(port=self.port, workers=workers) for part in command] if command else [
            sys.executable, "-m", "service", "serve", "--port", str(self.port), "--workers", str(workers)]
        self.log = tempfile.NamedTemporaryFile(prefix="meanline-drill-", suffix=".log", delete=False)
        self.process: subprocess.Popen | None = None

    # -- life cycle ---------------------------------------------------------------------------------

    def start(self) -> Server:
        self.process = subprocess.Popen(self.command, cwd=REPO_ROOT, env=self.environment,
                                        stdout=self.log, stderr=subprocess.STDOUT)
        deadline = time.monotonic() + START_SECONDS
        while time.monotonic() < deadline:
            if self.process.poll() is not None:
                raise RuntimeError(f"the server exited at start:\n{self.log_text()}")
            try:
                if request(self.port, "GET", "/readyz", timeout=5)[0] == 200 and \
                        len(self.worker_pids()) == self.workers:
                    return self
            except OSError:
                pass
            time.sleep(0.1)
        self.stop()
        raise RuntimeError(f"the server was not ready within {START_SECONDS} s:\n{self.log_text()}")

    def stop(self) -> int | None:
        """SIGTERM, then SIGKILL after STOP_SECONDS; the master's exit code."""
        if self.process is None or self.process.poll() is not None:
            return None if self.process is None else self.process.returncode
        self.process.send_signal(signal.SIGTERM)
        try:
            return self.process.wait(timeout=STOP_SECONDS)
        except subprocess.TimeoutExpired:
            self.process.kill()
            return self.process.wait(timeout=STOP_SECONDS)

    def __enter__(self) -> Server:
        return self.start()

    def __exit__(self, *exc_info) -> None:
        self.stop()
        self.log.close()
        Path(self.log.name).unlink(missing_ok=True)

    # -- facts ----------------------------------------------------------------------------------------

    @property
    def pid(self) -> int:
        return self.process.pid

    def worker_pids(self) -> list[int]:
        return children(self.pid)

    def worker_rss_kib(self) -> dict[int, int | None]:
        return {pid: rss_kib(pid) for pid in self.worker_pids()}

    def log_text(self) -> str:
        self.log.flush()
        return Path(self.log.name).read_text(errors="replace")

    def post(self, path: str, document, headers=None, timeout: float = 60.0):
        body = json.dumps(document).encode()
        return request(self.port, "POST", path, body, {"Content-Type": "application/json", **(headers or {})},
                       timeout)
