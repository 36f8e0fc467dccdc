"""Load drill: concurrent clients against the service under gunicorn on loopback.

Bounded in time and in count, loopback only, stops by itself. Reports requests served, errors
(a response other than the expected status, or no response), latency percentiles and the
workers' resident memory (VmRSS from /proc) after a warm-up and at the end.

The short version runs in the normal test run (tests/drills/test_drills.py). The long version:

    python -m tests.drills.load --requests 100000 --clients 4

runs gunicorn with the service's settings but without worker recycling (``--max-requests 0``),
so that the same workers serve every request and a leak would show as growth of their memory;
``--recycle`` keeps the production setting (a worker restarts after about 1,000 requests).
"""

from __future__ import annotations

import argparse
import http.client
import itertools
import json
import sys
import threading
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from tests.drills.server import Server, rss_kib

VALID_CASES = json.loads((Path(__file__).resolve().parents[1] / "corpus" / "valid_cases.json").read_text())["cases"]


@dataclass(frozen=True)
class Call:
    """One kind of request of the mix."""

    path: str
    body: bytes
    expected: int


@dataclass(frozen=True)
class Outcome:
    started: float  # time.monotonic() when the request was sent [s]
    latency: float  # until the whole response was read, or until it failed [s]
    ok: bool
    status: int | None
    error: str | None


def request_mix() -> list[Call]:
    """Single cases, a batch of 10 rows and (where the calculation takes columns) a sweep of 50 columns
    of every valid case in tests/corpus/valid_cases.json, and one invalid request each (expected 422)."""
    from service.api.registry import CALCULATIONS

    calls = []
    for calculation in CALCULATIONS:
        for case in VALID_CASES.get(calculation.name, []):
            number = next(name for name, value in case.items() if isinstance(value, float))
            sweep = [case[number] * (0.95 + 0.1 * k / 49) for k in range(50)]
            documents = [case, {"cases": [case] * 10}]
            if calculation.columns:
                # A list-valued field (per stage) in columns is one list per case.
                lists = {name: [value] * len(sweep) for name, value in case.items() if isinstance(value, list)}
                documents.append({"columns": {**case, **lists, number: sweep}})
            for document in documents:
                calls.append(Call(calculation.path, json.dumps(document).encode(), 200))
        calls.append(Call(calculation.path, b"{}", 422))
    return calls


def _send(port: int, call: Call, timeout: float) -> Outcome:
    started = time.monotonic()
    connection = http.client.HTTPConnection("127.0.0.1", port, timeout=timeout)
    try:
        connection.request("POST", call.path, body=call.body, headers={"Content-Type": "application/json"})
        response = connection.getresponse()
        response.read()
        ok = response.status == call.expected
        return Outcome(started, time.monotonic() - started, ok, response.status, None)
    except (OSError, http.client.HTTPException) as error:
        return Outcome(started, time.monotonic() - started, False, None, type(error).__name__)
    finally:
        connection.close()


def run_load(port: int, *, seconds: float, max_requests: int, clients: int = 4, mix: list[Call] | None = None,
             stop: threading.Event | None = None, timeout: float = 60.0) -> list[Outcome]:
    """Send the mix round-robin from ``clients`` threads until ``seconds`` have passed,
    ``max_requests`` were sent, or ``stop`` is set."""
    mix = mix or request_mix()
    stop = stop or threading.Event()
    counter = itertools.count()
    lock = threading.Lock()
    outcomes: list[Outcome] = []
    deadline = time.monotonic() + seconds

    def client():
        mine = []
        while not stop.is_set() and time.monotonic() < deadline:
            with lock:
                n = next(counter)
            if n >= max_requests:
                break
            mine.append(_send(port, mix[n % len(mix)], timeout))
        with lock:
            outcomes.extend(mine)

    threads = [threading.Thread(target=client, daemon=True) for _ in range(clients)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(seconds + timeout + 5)
    return sorted(outcomes, key=lambda outcome: outcome.started)


def summary(outcomes: list[Outcome]) -> dict:
    latencies = np.array([o.latency for o in outcomes if o.ok]) * 1000
    span = (max(o.started + o.latency for o in outcomes) - outcomes[0].started) if outcomes else 0.0
    percentiles = np.percentile(latencies, [50, 90, 99]) if len(latencies) else [float("nan")] * 3
    return {
        "requests": len(outcomes),
        "errors": sum(not o.ok for o in outcomes),
        "rate": len(outcomes) / span if span else 0.0,
        "p50_ms": percentiles[0], "p90_ms": percentiles[1], "p99_ms": percentiles[2],
        "max_ms": float(latencies.max()) if len(latencies) else float("nan"),
    }


def describe(figures: dict) -> str:
    return (f"{figures['requests']} requests, {figures['errors']} errors, {figures['rate']:.0f} req/s, latency "
            f"p50 {figures['p50_ms']:.1f} ms, p90 {figures['p90_ms']:.1f} ms, p99 {figures['p99_ms']:.1f} ms, "
            f"max {figures['max_ms']:.1f} ms")


def describe_rss(before: dict[int, int | None], after: dict[int, int | None]) -> str:
    parts = []
    for pid in sorted(set(before) | set(after)):
        start, end = before.get(pid), after.get(pid)
        parts.append(f"pid {pid}: {start / 1024:.1f} -> {end / 1024:.1f} MiB" if start and end else
                     f"pid {pid}: {'gone' if start else 'new'} ({(start or end) / 1024:.1f} MiB)")
    return "; ".join(parts)


def load_drill(server: Server, *, seconds: float, max_requests: int, clients: int, warm_up: int = 200) -> dict:
    """Warm up, read the workers' memory, run the load, read it again."""
    mix = request_mix()
    run_load(server.port, seconds=60, max_requests=warm_up, clients=clients, mix=mix)
    before = server.worker_rss_kib()
    outcomes = run_load(server.port, seconds=seconds, max_requests=max_requests, clients=clients, mix=mix)
    after = {pid: rss_kib(pid) for pid in set(before) | set(server.worker_pids())}
    figures = summary(outcomes)
    figures.update(rss_before=before, rss_after=after, failures=[o for o in outcomes if not o.ok][:10])
    return figures


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--requests", type=int, default=100_000, help="stop after this many requests")
    parser.add_argument("--seconds", type=float, default=1800, help="stop after this long at the latest [s]")
    parser.add_argument("--clients", type=int, default=4, help="concurrent client threads")
    parser.add_argument("--workers", type=int, default=2, help="gunicorn workers")
    parser.add_argument("--recycle", action="store_true", help="keep worker recycling (max_requests)")
    args = parser.parse_args(argv)
    command = None if args.recycle else [
        sys.executable, "-m", "gunicorn", "-c", "python:service.gunicorn_conf", "--bind", "127.0.0.1:{port}",
        "--workers", "{workers}", "--max-requests", "0"]
    with Server(workers=args.workers, command=command) as server:
        figures = load_drill(server, seconds=args.seconds, max_requests=args.requests, clients=args.clients,
                             warm_up=1000)
    print(f"load: {describe(figures)}")
    print(f"worker memory (VmRSS) after warm-up -> end: {describe_rss(figures['rss_before'], figures['rss_after'])}")
    for failure in figures["failures"]:
        print(f"  failed: {failure}")
    growth = [(after - figures["rss_before"][pid]) / 1024 for pid, after in figures["rss_after"].items()
              if after and figures["rss_before"].get(pid)]
    if growth and not args.recycle:
        print(f"largest growth of one worker: {max(growth):.1f} MiB")
    return 0 if figures["errors"] == 0 else 1


if __name__ == "__main__":
    sys.exit(main())
