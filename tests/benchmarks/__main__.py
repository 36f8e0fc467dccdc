"""``python -m tests.benchmarks``: measure the service against its framework and numpy limits.

For every calculation that takes columns it prints, each as the median of several
repetitions with the spread (lowest .. highest) of the repetitions:

- single-case throughput over the throughput of a Flask endpoint that only parses and echoes
  the same JSON, both under gunicorn with the service's settings (the framework limit);
- the end-to-end time of a 100,000-case columns batch over HTTP over the in-process time of
  the same work without HTTP or validation (the numpy limit, see workloads.py);
- the same batch sent as rows over the columns time;
- the in-process time of 1,000,000 cases over 100,000 cases (cost growth, 10 is linear);
- the worker's peak resident memory during the 100,000-case columns batch over the request
  body size;
- with ``--memory``, the worker's peak memory per case of every calculation and request shape
  (tests/benchmarks/memory.py), the figures behind ``service/api/memory.py``.

For the whole-machine design (workloads.MACHINE_WORKLOADS, cases of different stage counts), in
batches of 10,000 machines:

- the end-to-end time of the columns batch over HTTP over the in-process time of the same core
  work (one core call on the whole batch, without HTTP, validation or the service's layout);
- the designs per second of one worker (the batch is one request, which one worker answers);
- the worker's peak resident memory during the batch above its memory before it, per case.

Each repetition pairs the two measurements of a ratio back to back, so that a slow moment of
a shared machine affects both. Exit status 1 if a median misses its target, 2 on an error.
"""

from __future__ import annotations

import argparse
import gc
import os
import platform
import signal
import statistics
import sys
import time
from dataclasses import dataclass, field

import numpy as np
import orjson
from werkzeug.test import EnvironBuilder

from tests.benchmarks import harness
from tests.benchmarks.workloads import MACHINE_WORKLOADS, WORKLOADS, Workload, failed_cases
from tests.live_server import decode_body

BATCH = 100_000
LARGE_BATCH = 1_000_000
MACHINE_BATCH = 10_000


@dataclass
class Figure:
    label: str
    target: float | None  # None: a figure measured and printed, without a target
    at_least: bool
    ratios: list[float] = field(default_factory=list)
    detail: str = ""
    digits: int = 2

    @property
    def median(self) -> float:
        return statistics.median(self.ratios)

    @property
    def met(self) -> bool:
        if self.target is None:
            return True
        return self.median >= self.target if self.at_least else self.median <= self.target

    def line(self) -> str:
        d = self.digits
        spread = f"({min(self.ratios):.{d}f} .. {max(self.ratios):.{d}f})"
        if self.target is None:
            return f"  {self.label:<44} {self.median:6.{d}f}  {spread:<16} {'(measured)':<24} {self.detail}"
        sign = ">=" if self.at_least else "<="
        verdict = "ok" if self.met else "MISSED"
        return (f"  {self.label:<44} {self.median:6.{d}f}  {spread:<16} target {sign} {self.target:<4}  "
                f"{verdict:<6} {self.detail}")


def _mb(size: float) -> str:
    return f"{size / 1e6:.1f} MB"


def in_process(app, path: str, body: bytes) -> float:
    """Seconds for the app to answer one request in this process, WSGI call to last byte."""
    environ = EnvironBuilder(path=path, method="POST", data=body, content_type="application/json").get_environ()
    status = []
    gc.collect()
    start = time.perf_counter()
    answer = app(environ, lambda s, headers, exc_info=None: status.append(s))
    try:
        for _ in answer:
            pass
    finally:
        getattr(answer, "close", lambda: None)()
    elapsed = time.perf_counter() - start
    if not status[0].startswith("200"):
        raise RuntimeError(f"{path}: in-process answer {status[0]}")
    return elapsed


def timed(function, *args) -> float:
    gc.collect()
    start = time.perf_counter()
    function(*args)
    return time.perf_counter() - start


def verify_columns(workload: Workload, port: int, body: bytes) -> dict:
    """Once, untimed: the service's columns answer matches the in-process baseline."""
    status, response = harness.exchange(port, harness.post_request(workload.path, body), keep=True)
    if status != 200:
        raise RuntimeError(f"{workload.path} columns: HTTP {status}: {response[:500]!r}")
    answer = orjson.loads(decode_body(response))
    expected = orjson.loads(workload.baseline(body))
    if [e["index"] for e in answer["errors"]] != failed_cases(expected):
        raise RuntimeError(f"{workload.path}: the failed cases differ from the baseline's")
    for name, values in expected["columns"].items():
        if name != "checks":
            got = np.asarray(answer["columns"][name], dtype=float)
            np.testing.assert_array_equal(got, np.asarray(values, dtype=float), err_msg=name)
    return answer


def verify_rows(workload: Workload, port: int, rows: bytes, answer: dict) -> None:
    """Once, untimed: the service's rows answer holds the same numbers as its columns answer."""
    status, response = harness.exchange(port, harness.post_request(workload.path, rows), keep=True)
    results = orjson.loads(decode_body(response))["results"] if status == 200 else None
    if results is None or len(results) != BATCH:
        raise RuntimeError(f"{workload.path} rows: HTTP {status}")
    name = next(iter(answer["columns"]))
    if [r[name] for r in results] != answer["columns"][name]:
        raise RuntimeError(f"{workload.path}: rows and columns answers differ in {name}")


def measure(workload: Workload, args, service, echo, app) -> list[Figure]:
    single_body = orjson.dumps(workload.single)
    single = Figure("single case / echo (throughput)", 0.5, True)
    columns = Figure(f"columns {BATCH:,} over HTTP / in process", 2.0, False)
    rows = Figure(f"rows {BATCH:,} / columns {BATCH:,} (HTTP)", 3.0, False)
    growth = Figure(f"in process {LARGE_BATCH:,} / {BATCH:,} cases", 12.0, False)
    memory = Figure("worker peak RSS / request body", 15.0, False)

    body = workload.columns_body(BATCH)
    rows_body = workload.rows_body(BATCH)
    # Freshly started workers, and the columns batches first: the memory figure is not what an
    # earlier rows batch or calculation left behind in a worker.
    service.stop()
    service.start(args.workers)
    answer = verify_columns(workload, service.port, body)

    batch_request = harness.post_request(workload.path, body)
    http_times, base_times, peaks, idle = [], [], [], []
    for _ in range(args.repeat):
        with harness.PeakMemory(service.workers()) as memory_use:
            start = time.perf_counter()
            status, size = harness.exchange(service.port, batch_request)
            http_times.append(time.perf_counter() - start)
        if status != 200:
            raise RuntimeError(f"{workload.path}: HTTP {status}")
        peaks.append(memory_use.peak)
        idle.append(memory_use.before)
        base_times.append(timed(workload.baseline, body))
        columns.ratios.append(http_times[-1] / base_times[-1])
        memory.ratios.append(peaks[-1] / len(body))
    columns.detail = (f"[{statistics.median(http_times):.3f} s vs {statistics.median(base_times):.3f} s; "
                      f"body {_mb(len(body))}, answer {_mb(size)}]")
    memory.detail = f"[{_mb(statistics.median(peaks))}; {_mb(statistics.median(idle))} before the request]"

    verify_rows(workload, service.port, rows_body, answer)
    rows_request = harness.post_request(workload.path, rows_body)
    rows_times = []
    for _ in range(args.repeat):
        start = time.perf_counter()
        status, _ = harness.exchange(service.port, batch_request)
        columns_time = time.perf_counter() - start
        start = time.perf_counter()
        status, _ = harness.exchange(service.port, rows_request)
        rows_times.append(time.perf_counter() - start)
        if status != 200:
            raise RuntimeError(f"{workload.path} rows: HTTP {status}")
        rows.ratios.append(rows_times[-1] / columns_time)
    rows.detail = f"[{statistics.median(rows_times):.3f} s; body {_mb(len(rows_body))}]"

    request = harness.post_request(workload.path, single_body)
    echo_request = harness.post_request("/echo", single_body)
    rates, recycled = [], 0
    for repetition in range(args.repeat):
        before = set(service.workers())
        pair = [(echo, echo_request), (service, request)]
        measured = {}
        for server, payload in pair if repetition % 2 == 0 else reversed(pair):
            rate, failed = harness.throughput(server.port, payload, args.clients, args.seconds)
            if failed:
                raise RuntimeError(f"{server.name}: {failed} requests failed during the throughput run")
            measured[server.name] = rate
        recycled += len(before - set(service.workers()))
        single.ratios.append(measured["service"] / measured["echo"])
        rates.append(measured)
    single.detail = (f"[{statistics.median(r['service'] for r in rates):.0f} vs "
                     f"{statistics.median(r['echo'] for r in rates):.0f} req/s; "
                     f"{recycled} worker restart(s)]")

    large = workload.columns_body(LARGE_BATCH)
    small_times, large_times = [], []
    for _ in range(args.large_repeat):
        small_times.append(in_process(app, workload.path, body))
        large_times.append(in_process(app, workload.path, large))
        growth.ratios.append(large_times[-1] / small_times[-1])
    growth.detail = f"[{statistics.median(large_times):.2f} s vs {statistics.median(small_times):.3f} s]"
    return [single, columns, rows, growth, memory]


def _padded(values: list, width: int) -> np.ndarray:
    """A ragged answer (a list per case, null for a failed case) as a NaN-padded block."""
    block = np.full((len(values), width), np.nan)
    for i, row in enumerate(values):
        if row:
            block[i, : len(row)] = np.asarray(row, dtype=float)
    return block


def verify_machines(workload: Workload, port: int, body: bytes) -> None:
    """Once, untimed: the service's columns answer of whole machines matches the in-process
    baseline's: the same failed cases, and every output of every other case, each per-stage,
    per-station and per-row list at the case's own length (the baseline's NaN padding cut)."""
    status, response = harness.exchange(port, harness.post_request(workload.path, body), keep=True)
    if status != 200:
        raise RuntimeError(f"{workload.path} columns: HTTP {status}: {response[:500]!r}")
    answer = orjson.loads(decode_body(response))
    expected = orjson.loads(workload.baseline(body))
    failed = failed_cases(expected)
    if [e["index"] for e in answer["errors"]] != failed:
        raise RuntimeError(f"{workload.path}: the failed cases differ from the baseline's")
    counts = np.asarray(expected["columns"]["stage_count"])
    if len(np.unique(counts[counts > 0])) < 2:
        raise RuntimeError(f"{workload.path}: the batch holds one stage count only")
    ok = np.ones(len(counts), dtype=bool)
    ok[failed] = False
    for name, values in expected["columns"].items():
        if name == "checks":
            continue
        want = np.asarray(values, dtype=float)
        got = answer["columns"][name]
        if want.ndim == 2:
            lengths = np.array([len(row) if row else 0 for row in got])
            finite = np.isfinite(want)
            last = np.where(finite.any(axis=1), want.shape[1] - np.argmax(finite[:, ::-1], axis=1), 0)
            if not np.array_equal(lengths[ok], last[ok]):
                raise RuntimeError(f"{workload.path}: {name}: the lists are not each case's own length")
            got = _padded(got, want.shape[1])
        else:
            got = np.asarray(got, dtype=float)
        np.testing.assert_array_equal(got[ok], want[ok], err_msg=name)


def measure_machines(workload: Workload, args, service) -> list[Figure]:
    """The whole-machine figures of one workload (see the module docstring)."""
    columns = Figure(f"columns {MACHINE_BATCH:,} machines over HTTP / in process", 2.0, False)
    rate = Figure("machine designs per second per worker", None, True, digits=0)
    memory = Figure("worker peak memory per machine [kB]", None, False, digits=1)
    body = workload.columns_body(MACHINE_BATCH)
    service.stop()
    service.start(args.workers)
    verify_machines(workload, service.port, body)
    request = harness.post_request(workload.path, body)
    http_times, base_times, peaks = [], [], []
    for _ in range(args.repeat):
        with harness.PeakMemory(service.workers()) as memory_use:
            start = time.perf_counter()
            status, size = harness.exchange(service.port, request)
            http_times.append(time.perf_counter() - start)
        if status != 200:
            raise RuntimeError(f"{workload.path}: HTTP {status}")
        base_times.append(timed(workload.baseline, body))
        columns.ratios.append(http_times[-1] / base_times[-1])
        # One request is answered by one worker: its designs per second.
        rate.ratios.append(MACHINE_BATCH / http_times[-1])
        peaks.append(memory_use.peak - memory_use.before)
        memory.ratios.append(peaks[-1] / MACHINE_BATCH / 1e3)
    columns.detail = (f"[{statistics.median(http_times):.2f} s vs {statistics.median(base_times):.2f} s; "
                      f"body {_mb(len(body))}, answer {_mb(size)}]")
    rate.detail = "[one request of the batch on one worker]"
    memory.detail = f"[{_mb(statistics.median(peaks))} above the worker's memory before the request]"
    return [columns, rate, memory]


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="python -m tests.benchmarks", description=__doc__.splitlines()[0])
    parser.add_argument("--workers", type=int, default=2, help="gunicorn workers of each server (default 2)")
    parser.add_argument("--clients", type=int, default=4, help="concurrent connections of the load (default 4)")
    parser.add_argument("--seconds", type=float, default=1.5, help="length of each throughput run (default 1.5)")
    parser.add_argument("--repeat", type=int, default=5, help="repetitions of each figure (default 5)")
    parser.add_argument("--large-repeat", type=int, default=3, help="repetitions of the 1,000,000 case run")
    parser.add_argument("--only", choices=[w.name for w in (*WORKLOADS, *MACHINE_WORKLOADS)], action="append",
                        help="measure only this calculation (repeatable)")
    parser.add_argument("--time-limit", type=int, default=900, help="stop with status 2 after this many seconds")
    parser.add_argument("--memory", action="store_true",
                        help="then the worker's peak memory per case of every calculation and shape "
                             "(python -m tests.benchmarks.memory; about a minute)")
    args = parser.parse_args(argv)

    def out_of_time(signum, frame):
        raise TimeoutError(f"the benchmark ran over its time limit of {args.time_limit} s")

    signal.signal(signal.SIGALRM, out_of_time)
    signal.alarm(args.time_limit)

    for name in harness.IGNORED_ENVIRONMENT:  # the in-process app reads them too
        os.environ.pop(name, None)
    from service import create_app

    # Rows of 100,000 cases exceed the default 16 MiB body limit; columns do not.
    max_body = 64 * 1024 * 1024
    # The in-process million cases are measured, not refused by the memory a request may take.
    app = create_app({"MAX_BODY_BYTES": 1 << 30, "MAX_CASES": LARGE_BATCH, "MAX_MEMORY": 1 << 34,
                      "LOG_LEVEL": "warning"})
    service = harness.service_server(harness.free_port(), args.workers, max_body)
    echo = harness.echo_server(harness.free_port(), args.workers)
    print(f"meanline benchmark: {os.cpu_count()} CPUs, {args.workers} gunicorn workers per server "
          f"(service/gunicorn_conf.py), {args.clients} client connections, loopback; "
          f"median (lowest .. highest) of {args.repeat} repetitions ({args.large_repeat} for "
          f"{LARGE_BATCH:,} cases); Python {platform.python_version()}, numpy {np.__version__}, "
          f"orjson {orjson.__version__}; service body limit {max_body // 2**20} MiB; "
          f"load average {os.getloadavg()[0]:.1f} at the start", flush=True)
    figures: list[Figure] = []
    started = time.monotonic()
    try:
        service.start(args.workers)
        echo.start(args.workers)
        for workload in WORKLOADS:
            if args.only and workload.name not in args.only:
                continue
            print(f"{workload.name} ({workload.path})", flush=True)
            for figure in measure(workload, args, service, echo, app):
                print(figure.line(), flush=True)
                figures.append(figure)
        for workload in MACHINE_WORKLOADS:
            if args.only and workload.name not in args.only:
                continue
            print(f"{workload.name} ({workload.path}, {MACHINE_BATCH:,} machines of different stage counts)",
                  flush=True)
            for figure in measure_machines(workload, args, service):
                print(figure.line(), flush=True)
                figures.append(figure)
    except Exception as error:  # noqa: BLE001 - report any failure as status 2, servers stopped
        print(f"benchmark failed: {type(error).__name__}: {error}", file=sys.stderr)
        for server in (service, echo):
            if server.process is not None and server.process.poll() is not None:
                print(f"{server.name} log:\n{server.log_text()}", file=sys.stderr)
        return 2
    finally:
        signal.alarm(0)
        service.stop()
        echo.stop()
    missed = [f for f in figures if not f.met]
    targeted = [f for f in figures if f.target is not None]
    print(f"{len(targeted) - len(missed)} of {len(targeted)} figures with a target within it "
          f"({time.monotonic() - started:.0f} s; load average {os.getloadavg()[0]:.1f} at the end)")
    if args.memory:
        from tests.benchmarks import memory

        print("worker peak memory per case (VmHWM over VmRSS before the request):", flush=True)
        memory.main([])
    return 1 if missed else 0


if __name__ == "__main__":
    sys.exit(main())
