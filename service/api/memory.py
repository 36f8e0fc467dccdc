"""The memory a request may take, judged from its case count before anything is computed.

A worker's peak memory grows with the cases of a request: the parsed body, the input arrays,
the core's intermediate arrays and the outputs until they are written. ``BYTES_PER_CASE`` holds
that growth per case, per calculation and request shape, measured as the peak resident memory
of a real worker over its resident memory before the request, divided by the cases (``python -m
tests.benchmarks.memory``, README "Limits"), rounded up with a margin. A request whose cases
times that cost exceed the memory limit (``MEANLINE_MAX_MEMORY``) is refused with 413 before it
is loaded into arrays, saying how many cases fit.

``CHUNK_CASES`` splits the computation of a calculation whose intermediate arrays are large per
case (the whole-machine design searches stage counts and lays out every station of every stage)
into chunks of cases, so that only one chunk's intermediates are alive at once; the answer is
then written a slice of cases at a time.
"""

from __future__ import annotations

import math
from pathlib import Path

#: Peak memory growth per case [bytes], by calculation and request shape: the figures measured
#: (``python -m tests.benchmarks.memory``, README "Limits") with a margin of about a third. The
#: machine design and the stage split were measured with the README's examples (six stages); a
#: case with more stages costs more.
BYTES_PER_CASE = {
    "triangles": {"rows": 1_600, "columns": 600},
    "zweifel": {"rows": 900, "columns": 200},
    "diffusion-factor": {"rows": 900, "columns": 260},
    "stage-split": {"rows": 1_700, "columns": 1_700},
    # Columns measured with the README's example (2,000 / 6,000 cases: +99.5 / +139.5 MiB, about 10.5 kB
    # per further case) and with the benchmark's 10,000 machines of 5 to 11 stages (+366 MB in all,
    # about 26 kB per case above the fixed share): the cost covers the larger machines.
    "machine-design": {"rows": 14_000, "columns": 28_000},
    # Measured with the compressor example (lieblein_howell, the most outputs): 1,967 and 928 bytes.
    "stage-efficiency": {"rows": 2_700, "columns": 1_300},
}
#: Growth that does not depend on the case count [bytes]: the machine design's first chunk of
#: cases (its intermediate arrays with the hub and tip of every station, and the solver's and
#: allocator's working memory). Measured with the README's example: 140 MiB above the worker's
#: memory before the request at 2,000 rows and 158 MiB at 6,000, i.e. about 131 MiB fixed and
#: 4.7 kB per further case.
FIXED_BYTES = {"machine-design": 160 << 20}
#: For a calculation not measured yet (assumed, not measured): measure it and add it above.
DEFAULT_BYTES_PER_CASE = 4_000
#: Cases computed at once, for the calculations whose intermediate arrays are large per case.
CHUNK_CASES = {"machine-design": 128, "stage-split": 4_096}
#: Larger chunks where a given input keeps the core's intermediate arrays small: with the mean radius
#: held the machine design solves no annulus and its stage-count search lays out no trial machines
#: (about 20 to 30 kB per case at once, against about 350 to 500 kB with the hub or tip radius held;
#: Python's tracemalloc, 128 and 1,024 cases of the benchmark's and the README's compressors; about
#: 330 kB for 128 of the benchmark's with the hub held since the annulus scan broadcasts its inputs), and
#: the 128-case chunks cost twice the core's time of the whole batch (tests/benchmarks, machine-design).
CHUNK_CASES_GIVEN = {"machine-design": {"mean_radius": 2_048}}
#: Without MEANLINE_MAX_MEMORY nor a container memory limit: the memory one request may take.
DEFAULT_MAX_MEMORY = 1 << 30
#: A worker's own memory before any request (interpreter, numpy, scipy, the app), about 60 MB,
#: counted when a request's share of a container's limit is derived.
WORKER_BASE_BYTES = 96 << 20


def bytes_per_case(name: str, shape: str) -> int:
    return BYTES_PER_CASE.get(name, {}).get(shape, DEFAULT_BYTES_PER_CASE)


def request_bytes(name: str, shape: str, cases: int) -> int:
    """The memory a batch of ``cases`` is expected to take at its peak [bytes]."""
    return FIXED_BYTES.get(name, 0) + cases * bytes_per_case(name, shape)


def chunk_cases(name: str, given=frozenset()) -> int | None:
    """Cases computed at once for a group of cases that give the fields ``given`` (None: all at once)."""
    for field, chunk in CHUNK_CASES_GIVEN.get(name, {}).items():
        if field in given:
            return chunk
    return CHUNK_CASES.get(name)


def cases_that_fit(name: str, shape: str, max_memory: int) -> int:
    return max((max_memory - FIXED_BYTES.get(name, 0)) // bytes_per_case(name, shape), 0)


def container_limit(cgroup_root: str = "/sys/fs/cgroup") -> int | None:
    """The memory limit of this process's cgroup [bytes] (v2 ``memory.max``, v1
    ``memory.limit_in_bytes``), or None where there is none."""
    root = Path(cgroup_root)
    for path in (root / "memory.max", root / "memory" / "memory.limit_in_bytes"):
        try:
            text = path.read_text().strip()
        except OSError:
            continue
        if text == "max":
            return None
        try:
            value = int(text)
        except ValueError:
            continue
        # cgroup v1 writes "no limit" as a huge number (the page-rounded maximum of a signed long).
        return value if value < 1 << 60 else None
    return None


def default_max_memory(workers: int, limit: int | None) -> int:
    """The memory one request may take when ``MEANLINE_MAX_MEMORY`` is not set: the container's
    limit less every worker's base memory, shared by the workers (each may run one request at a
    time); without a limit, :data:`DEFAULT_MAX_MEMORY`."""
    if limit is None:
        return DEFAULT_MAX_MEMORY
    share = (limit - (workers + 1) * WORKER_BASE_BYTES) // max(workers, 1)
    return max(share, 16 << 20)


def describe_bytes(count: int) -> str:
    return f"{count / 2**20:.0f} MiB" if count >= 2**20 else f"{math.ceil(count / 1024)} KiB"
