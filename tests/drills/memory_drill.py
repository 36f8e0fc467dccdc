"""Memory drill: batches at and over ``MEANLINE_MAX_MEMORY`` against a real server.

For each calculation given, on ``python -m service serve --workers 1`` with the bound set: the
batch of as many cases as fit (service/api/memory.py) must be answered 200 in full, with the
worker's peak resident memory during the request (VmHWM, reset first through
/proc/<pid>/clear_refs) at most the bound above its resident memory before it; one case more
must be refused with 413 before anything is computed, leaving the worker where it was.

The short version runs in the normal test run (tests/drills/test_memory_drill.py). The long one:

    python -m tests.drills.memory_drill --max-memory-mib 512

uses the README's machine-design example and the triangles, each at the size that fits.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from service.api import memory
from tests.benchmarks.memory import body
from tests.drills.server import Server, request

JSON = {"Content-Type": "application/json"}


def _vm(pid: int, field: str) -> int:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith(field + ":"):
            return int(line.split()[1]) * 1024
    raise KeyError(field)


def _reset_peak(pid: int) -> bool:
    """Reset the process's VmHWM to its current resident size (Linux 4.0 and later)."""
    try:
        Path(f"/proc/{pid}/clear_refs").write_text("5")
        return True
    except OSError:
        return False


def memory_drill(name: str, shape: str, max_memory: int, timeout: int = 600) -> dict:
    fit = memory.cases_that_fit(name, shape, max_memory)
    environment = {"MEANLINE_MAX_MEMORY": str(max_memory), "MEANLINE_MAX_BODY_BYTES": str(1 << 28),
                   "MEANLINE_TIMEOUT": str(timeout), "MEANLINE_LOG_LEVEL": "warning"}
    with Server(workers=1, environment=environment) as server:
        (worker,) = server.worker_pids()
        path = f"/v1/{name}"
        assert request(server.port, "POST", path, body(name, shape, 5), JSON)[0] == 200  # warm up
        over_status, over_answer = request(server.port, "POST", path, body(name, shape, fit + 1), JSON,
                                           timeout=timeout)
        before = _vm(worker, "VmRSS")
        reset = _reset_peak(worker)
        status, answer = request(server.port, "POST", path, body(name, shape, fit), JSON, timeout=timeout)
        peak = _vm(worker, "VmHWM")
        same_worker = server.worker_pids() == [worker]
    results = json.loads(answer)
    computed = len(results["results"]) if "results" in results else max(
        (len(v) for v in results.get("columns", {}).values() if isinstance(v, list)), default=0)
    return {"name": name, "shape": shape, "max_memory": max_memory, "fit": fit, "over_status": over_status,
            "over_detail": json.loads(over_answer).get("detail", ""), "status": status, "computed": computed,
            "before": before, "peak": peak, "growth": peak - before, "peak_reset": reset,
            "same_worker": same_worker}


def describe(figure: dict) -> str:
    return (f"{figure['name']} {figure['shape']} under a bound of {figure['max_memory'] / 2**20:.0f} MiB: "
            f"{figure['fit'] + 1:,} cases -> {figure['over_status']}, {figure['fit']:,} cases -> {figure['status']} "
            f"with worker VmRSS {figure['before'] / 2**20:.0f} MiB before, peak {figure['peak'] / 2**20:.0f} MiB "
            f"(+{figure['growth'] / 2**20:.0f} MiB)")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--max-memory-mib", type=int, default=512)
    parser.add_argument("--only", nargs="*", default=["machine-design", "triangles"])
    args = parser.parse_args(argv)
    failures = 0
    for name in args.only:
        for shape in ("rows", "columns") if name in ("triangles", "zweifel", "diffusion-factor") else ("rows",):
            figure = memory_drill(name, shape, args.max_memory_mib << 20)
            good = (figure["over_status"] == 413 and figure["status"] == 200 and figure["computed"] == figure["fit"]
                    and figure["growth"] <= figure["max_memory"])
            failures += not good
            print(describe(figure), "- ok" if good else "- FAILED", flush=True)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
