"""``python -m tests.benchmarks.memory``: a worker's peak memory per case, for every calculation.

For each calculation and request shape (rows, and columns where offered), a fresh server with
one worker (``python -m service serve --workers 1``) answers one batch of ``--scale`` times the
shape's base count of cases; the figure is the worker's peak resident memory during the request
(VmHWM from /proc, reset just before it) less its resident memory before it (VmRSS), over the case count. The cases are
the README's examples (the machine design's is the README's compressor, whose stage count is
searched), each with its inlet temperature perturbed a little so that no column is one repeated
value. The answer is read in full by the client and discarded.

These figures are what ``service/api/memory.py`` (``BYTES_PER_CASE``) holds, with a margin, to
refuse a batch that would not fit in ``MEANLINE_MAX_MEMORY``. Not part of the test run.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from service.api.registry import CALCULATIONS
from tests.api.examples import EXAMPLES
from tests.drills.server import Server, request

#: The README's whole-machine example (README, "Whole-machine design").
MACHINE = {"machine": "compressor", "mass_flow": 30, "total_temperature": 288.15, "total_pressure": 101325,
           "pressure_ratio": 6, "shaft_speed": 11000, "polytropic_efficiency": 0.9, "tip_radius": 0.33,
           "max_loading_coefficient": 0.38, "flow_coefficient": 0.5, "reaction": 0.6, "rotor_aspect_ratio": 2.5,
           "stator_aspect_ratio": 3.0, "target_diffusion_factor": 0.45}
#: Cases per batch at --scale 1: enough that the per-case growth dominates the worker's noise.
BASE_CASES = {"machine-design": 2_000, "stage-split": 10_000}
DEFAULT_CASES = {"rows": 50_000, "columns": 200_000}


def case_of(name: str) -> dict:
    return MACHINE if name == "machine-design" else EXAMPLES[name].good


def body(name: str, shape: str, count: int) -> bytes:
    case = case_of(name)
    varied = "total_temperature" if "total_temperature" in case else next(
        key for key, value in case.items() if isinstance(value, float))
    values = [case[varied] * (1 + 1e-6 * i) for i in range(count)]
    if shape == "rows":
        return json.dumps({"cases": [{**case, varied: value} for value in values]}).encode()
    return json.dumps({"columns": {**case, varied: values}}).encode()


def status_vm(pid: int, field: str) -> int:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith(field + ":"):
            return int(line.split()[1]) * 1024
    raise KeyError(field)


def measure(name: str, shape: str, count: int) -> dict:
    data = body(name, shape, count)
    environment = {"MEANLINE_MAX_BODY_BYTES": str(1 << 28), "MEANLINE_MAX_MEMORY": str(1 << 40),
                   "MEANLINE_MAX_CASES": str(10_000_000), "MEANLINE_LOG_LEVEL": "warning",
                   "MEANLINE_TIMEOUT": "600"}
    with Server(workers=1, environment=environment) as server:
        (worker,) = server.worker_pids()
        path = f"/v1/{name}"
        # Warm up: the code paths of this calculation and shape, once.
        assert request(server.port, "POST", path, body(name, shape, 20), {"Content-Type": "application/json"})[0] == 200
        before = status_vm(worker, "VmRSS")
        try:  # the peak from here on (Linux 4.0 and later; else the peak since the worker started)
            Path(f"/proc/{worker}/clear_refs").write_text("5")
        except OSError:
            pass
        status, answer = request(server.port, "POST", path, data, {"Content-Type": "application/json"}, timeout=600)
        peak = status_vm(worker, "VmHWM")
    if status != 200:
        raise RuntimeError(f"{name} {shape}: {status} {answer[:300]!r}")
    return {"name": name, "shape": shape, "cases": count, "body": len(data), "answer": len(answer),
            "before": before, "peak": peak, "per_case": (peak - before) / count}


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--scale", type=float, default=1.0, help="batch sizes relative to the defaults")
    parser.add_argument("--only", nargs="*", help="calculation names")
    args = parser.parse_args(argv)
    print(f"{'calculation':<18} {'shape':<8} {'cases':>9} {'body MB':>8} {'answer MB':>10} {'RSS before MiB':>15} "
          f"{'peak MiB':>9} {'per case':>10}")
    for calculation in CALCULATIONS:
        if args.only and calculation.name not in args.only:
            continue
        for shape in ("rows", "columns") if calculation.columns else ("rows",):
            count = int(BASE_CASES.get(calculation.name, DEFAULT_CASES[shape]) * args.scale)
            figure = measure(calculation.name, shape, count)
            print(f"{figure['name']:<18} {shape:<8} {count:>9,} {figure['body'] / 1e6:>8.1f} "
                  f"{figure['answer'] / 1e6:>10.1f} {figure['before'] / 2**20:>15.1f} {figure['peak'] / 2**20:>9.1f} "
                  f"{figure['per_case']:>8,.0f} B", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
