"""Key-count drill: bodies with tens of thousands of keys against a real server.

Each body is refused with 422 (unknown fields); what the drill measures is how long the refusal
takes, from the first byte sent to the last byte of the answer on loopback, and that the worker
then still answers. Before validation was made linear, one row of 40,000 unknown keys took 24 s
and one of 100,000 hit the worker timeout.

The short version runs in the normal test run (tests/drills/test_server_errors.py) and only
prints its figures (tests never assert on time). The long version:

    python -m tests.drills.keys --keys 40000 100000 200000

prints, for each key count and body shape, the body size and the best of ``--repeat`` times,
against the issue's target of 100 ms for the 40,000-key row.
"""

from __future__ import annotations

import argparse
import json
import sys
import time

from tests.drills.server import Server, request

CASE = {"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
        "blade_speed": 300.0}
SHAPES = ("row", "object", "rows of 40 keys")


def body(shape: str, keys: int) -> bytes:
    if shape == "row":
        document = {"cases": [{**CASE, **{f"k{i}": 1 for i in range(keys)}}]}
    elif shape == "object":
        document = {**CASE, **{f"k{i}": 1 for i in range(keys)}}
    else:  # every row its own 40 unknown keys, so that every row is a block of its own
        document = {"cases": [{**CASE, **{f"r{j}k{i}": 1 for i in range(40)}} for j in range(max(keys // 40, 1))]}
    return json.dumps(document).encode()


def key_count_drill(server: Server, keys: int, shapes=SHAPES, repeat: int = 3) -> list[dict]:
    """Per shape: status, body bytes, errors counted, best time [s] of ``repeat`` refusals."""
    figures = []
    for shape in shapes:
        data = body(shape, keys)
        times, status, answer = [], None, b""
        for _ in range(repeat):
            started = time.perf_counter()
            status, answer = request(server.port, "POST", "/v1/triangles", data,
                                     {"Content-Type": "application/json"})
            times.append(time.perf_counter() - started)
        problem = json.loads(answer)
        figures.append({"shape": shape, "keys": keys, "bytes": len(data), "status": status,
                        "errors": len(problem.get("errors", [])) + problem.get("errors_not_listed", 0),
                        "seconds": min(times)})
    return figures


def describe(figure: dict) -> str:
    return (f"{figure['keys']:,} unknown keys as {figure['shape']} ({figure['bytes'] / 1e3:.0f} kB): "
            f"{figure['status']} with {figure['errors']:,} errors counted in {figure['seconds'] * 1e3:.0f} ms")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--keys", type=int, nargs="+", default=[40_000, 100_000, 200_000])
    parser.add_argument("--repeat", type=int, default=3, help="refusals per body; the best time is shown")
    args = parser.parse_args(argv)
    with Server(workers=2) as server:
        for keys in args.keys:
            for figure in key_count_drill(server, keys, repeat=args.repeat):
                print(describe(figure), flush=True)
        status, _ = server.post("/v1/triangles", CASE)
        print(f"a valid case afterwards: {status}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
