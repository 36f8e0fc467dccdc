"""Slow clients behind the shipped buffering front (deploy/nginx/meanline.conf), on a real server.

More slow senders than the service has workers trickle their requests through nginx while a probe
keeps sending small valid requests through it: nginx holds the slow connections itself and hands
a worker only whole requests, so every probe is answered 200 and no worker ever sees a slow
client (the service logs no 408). A reader slower than the master's ``MEANLINE_TIMEOUT`` gets the
complete answer from nginx's buffers, and no worker is killed. The probes' latencies are printed,
not asserted (tests never assert on time).

The drill uses the shipped file as it is, but for its two addresses (a free port for nginx, the
service's port as the upstream) and, in the short version, the two client timeouts (10 s -> 2 s),
so that the trickling senders are cut within the test's time.

Short version: tests/drills/test_proxy.py. Long version:

    python -m tests.drills.proxy --senders 8 --seconds 30
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from tests.drills.server import REPO_ROOT, Server, free_port, request
from tests.drills.slow_clients import run_clients

CONFIG = Path(REPO_ROOT) / "deploy" / "nginx" / "meanline.conf"
#: The addresses written in the shipped file, replaced by the drill's.
SHIPPED_LISTEN, SHIPPED_UPSTREAM = "listen 127.0.0.1:8080;", "server 127.0.0.1:8000;"

_WRAPPER = """worker_processes 1;
pid {tmp}/nginx.pid;
error_log {tmp}/error.log warn;
events {{ worker_connections 512; }}
http {{
    access_log off;
    client_body_temp_path {tmp}/body;
    proxy_temp_path {tmp}/proxy;
    fastcgi_temp_path {tmp}/fastcgi;
    uwsgi_temp_path {tmp}/uwsgi;
    scgi_temp_path {tmp}/scgi;
{server}
}}
"""


def nginx_path() -> str | None:
    return shutil.which("nginx") or (os.path.exists("/usr/sbin/nginx") and "/usr/sbin/nginx") or None


class Proxy:
    """nginx with the shipped configuration in front of ``upstream_port``, as a context manager."""

    def __init__(self, upstream_port: int, client_timeout: int | None = None):
        self.port = free_port()
        self.tmp = tempfile.mkdtemp(prefix="meanline-proxy-")
        os.chmod(self.tmp, 0o777)  # nginx's worker (nobody, when started as root) writes its buffers here
        server = CONFIG.read_text()
        for shipped in (SHIPPED_LISTEN, SHIPPED_UPSTREAM):
            if shipped not in server:
                raise RuntimeError(f"{CONFIG} no longer has {shipped!r}")
        server = server.replace(SHIPPED_LISTEN, f"listen 127.0.0.1:{self.port};")
        server = server.replace(SHIPPED_UPSTREAM, f"server 127.0.0.1:{upstream_port};")
        if client_timeout is not None:
            for name in ("client_header_timeout", "client_body_timeout"):
                server = server.replace(f"{name} 10s;", f"{name} {client_timeout}s;")
        self.conf = Path(self.tmp) / "nginx.conf"
        self.conf.write_text(_WRAPPER.format(tmp=self.tmp, server=server))
        self.process: subprocess.Popen | None = None

    def __enter__(self) -> Proxy:
        binary = nginx_path()
        check = subprocess.run([binary, "-t", "-p", self.tmp, "-c", str(self.conf)], capture_output=True, text=True)
        if check.returncode != 0:
            raise RuntimeError(f"nginx refuses the configuration:\n{check.stderr}")
        self.process = subprocess.Popen([binary, "-p", self.tmp, "-c", str(self.conf), "-g", "daemon off;"],
                                        stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        deadline = time.monotonic() + 20
        while time.monotonic() < deadline:
            try:
                if request(self.port, "GET", "/readyz", timeout=5)[0] == 200:
                    return self
            except OSError:
                time.sleep(0.1)
        self.__exit__()
        raise RuntimeError("nginx did not answer within 20 s")

    def __exit__(self, *exc_info) -> None:
        if self.process is not None and self.process.poll() is None:
            self.process.terminate()
            try:
                self.process.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.process.kill()
        shutil.rmtree(self.tmp, ignore_errors=True)


def proxy_drill(senders: int = 6, seconds: float = 3.0, client_timeout: int | None = 2, master_timeout: int = 2,
                reader_cases: int = 60_000, reader_rate: int = 8 << 20) -> dict:
    environment = {"MEANLINE_TIMEOUT": str(master_timeout)}
    with Server(workers=2, environment=environment) as server, Proxy(server.port, client_timeout) as proxy:
        figures = run_clients(server, proxy.port, senders, 0.5, seconds, 0.0, reader_cases, reader_rate)
    log = figures.pop("log")
    return {**figures, "service_408s": receive_timeouts(log), "master_timeout": master_timeout}


def receive_timeouts(log: str) -> int:
    """The requests a worker gave up waiting for: 408s from the app (body) or the worker (headers)."""
    return log.count('"status":408') + log.count("not received within MEANLINE_RECEIVE_TIMEOUT")


def describe(figures: dict) -> list[str]:
    reader = figures["reader"]
    return [f"{len(figures['senders'])} slow senders through nginx (a byte every 0.5 s): the service logged "
            f"{figures['service_408s']} receive timeouts (it never saw them)",
            f"probe meanwhile: {figures['probes']} requests, {figures['probe_failures']} failed, latency p50 "
            f"{figures['probe_p50'] * 1e3:.0f} ms, max {figures['probe_max'] * 1e3:.0f} ms",
            f"slow reader through nginx: {reader['status']}, {reader['bytes'] / 1e6:.1f} MB in "
            f"{reader['seconds']:.1f} s (master timeout {figures['master_timeout']} s), complete: "
            f"{reader['complete']}; WORKER TIMEOUT lines: {figures['worker_timeouts']}, workers replaced: "
            f"{figures['workers_replaced']}"]


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--senders", type=int, default=8)
    parser.add_argument("--seconds", type=float, default=30)
    args = parser.parse_args(argv)
    figures = proxy_drill(args.senders, args.seconds, client_timeout=None, master_timeout=5,
                          reader_cases=200_000, reader_rate=4 << 20)
    for line in describe(figures):
        print(line)
    return 0


if __name__ == "__main__":
    sys.exit(main())
