"""API-key drill: key-file changes, worker deaths and reloads on a real server.

The master reads the key file at start and on SIGHUP; every worker inherits its keys. The drill
finds which worker answered each request from the request's log line (its ``pid``), so that
"every worker agrees" is checked worker by worker, not hoped for from the spread of requests.

Steps (each a dict of facts the tests assert on):

1. start with key A in the file;
2. change the file to key B without a signal and kill one worker: the replacement and the
   other worker both still take A and refuse B (before, the new worker took B and the old one A);
3. SIGHUP: once the new workers serve, every worker takes B and refuses A;
4. empty the file, kill a worker: the service keeps serving with B (before, the replacement
   failed to boot and the master shut down);
5. SIGHUP with the file still empty: the master logs that it kept the last keys; every worker
   still takes B.

Long version (repeats steps 2 to 5): ``python -m tests.drills.keys_reload --rounds 5``.
"""

from __future__ import annotations

import argparse
import json
import os
import signal
import sys
import tempfile
import threading
import time
import uuid
from pathlib import Path

from tests.drills.server import Server, request

CASE = json.dumps({"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
                   "blade_speed": 300.0}).encode()
WAIT_SECONDS = 30


def _key() -> str:
    return "drill-" + uuid.uuid4().hex


def ask(server: Server, key: str, count: int = 24, clients: int = 4) -> dict[int, set[int]]:
    """``count`` requests with ``key`` from ``clients`` threads: the statuses each worker pid gave."""
    tag = uuid.uuid4().hex[:12]
    statuses: dict[str, int] = {}

    def client(number: int) -> None:
        for i in range(number, count, clients):
            identifier = f"{tag}-{i}"
            status, _ = request(server.port, "POST", "/v1/triangles", CASE,
                                {"Content-Type": "application/json", "X-API-Key": key, "X-Request-ID": identifier})
            statuses[identifier] = status

    threads = [threading.Thread(target=client, args=(n,)) for n in range(clients)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(WAIT_SECONDS)
    by_pid: dict[int, set[int]] = {}
    deadline = time.monotonic() + 5
    while True:  # the log lines are written as the answers go out
        lines = [json.loads(line) for line in server.log_text().splitlines()
                 if line.startswith("{") and f'"{tag}-' in line]
        lines = [line for line in lines if line.get("message") == "request"]
        if len(lines) >= len(statuses) or time.monotonic() > deadline:
            break
        time.sleep(0.05)
    for line in lines:
        by_pid.setdefault(line["pid"], set()).add(line["status"])
    return by_pid


def _wait_for_workers(server: Server, old: set[int], replaced: int) -> list[int]:
    """Wait until at least ``replaced`` of the workers are new and all of them are up."""
    deadline = time.monotonic() + WAIT_SECONDS
    while True:
        pids = server.worker_pids()
        if len(pids) == server.workers and len(set(pids) - old) >= replaced:
            # Up means answering: the readiness probe on every worker is not addressable, so ask a few.
            if all(request(server.port, "GET", "/healthz")[0] == 200 for _ in range(4)):
                return pids
        if time.monotonic() > deadline:
            raise RuntimeError(f"workers not replaced within {WAIT_SECONDS} s:\n{server.log_text()[-3000:]}")
        time.sleep(0.05)


def _kill_one(server: Server) -> list[int]:
    before = set(server.worker_pids())
    os.kill(min(before), signal.SIGKILL)
    return _wait_for_workers(server, before, 1)


def _reload(server: Server) -> list[int]:
    before = set(server.worker_pids())
    server.process.send_signal(signal.SIGHUP)
    return _wait_for_workers(server, before, server.workers)


def _agreement(server: Server, right: str, wrong: str, rounds: int = 20) -> dict:
    """Ask with both keys until every current worker has answered each (a replacement worker may
    still be loading the app at first, and the kernel hands connections to whichever waits)."""
    workers = set(server.worker_pids())
    accepted: dict[int, set[int]] = {}
    refused: dict[int, set[int]] = {}
    for _ in range(rounds):
        for found, key in ((accepted, right), (refused, wrong)):
            for pid, statuses in ask(server, key).items():
                found.setdefault(pid, set()).update(statuses)
        if set(accepted) >= workers and set(refused) >= workers:
            break
    return {"workers": sorted(workers), "accepted_by": accepted, "refused_by": refused}


def key_drill(workers: int = 2, rounds: int = 1) -> list[dict]:
    """The steps of the module docstring; ``rounds`` repeats steps 2 to 5 with fresh keys."""
    steps = []
    with tempfile.TemporaryDirectory(prefix="meanline-keys-") as directory:
        path = Path(directory) / "api-keys"
        old = _key()
        path.write_text(old + "\n")
        with Server(workers=workers, environment={"MEANLINE_API_KEYS_FILE": str(path)}) as server:
            steps.append({"step": "start", **_agreement(server, old, "not-" + old)})
            for _ in range(rounds):
                new = _key()
                path.write_text(new + "\n")
                _kill_one(server)
                steps.append({"step": "file changed, a worker killed", **_agreement(server, old, new)})
                _reload(server)
                steps.append({"step": "SIGHUP", **_agreement(server, new, old)})
                path.write_text("# emptied by mistake\n")
                _kill_one(server)
                steps.append({"step": "file emptied, a worker killed", **_agreement(server, new, old)})
                _reload(server)
                steps.append({"step": "SIGHUP with the file empty", **_agreement(server, new, old),
                              "master_alive": server.process.poll() is None,
                              "logged": "API KEYS NOT RELOADED" in server.log_text()})
                old = new
    return steps


def consistent(step: dict) -> bool:
    """Every current worker answered, the right key with 200 and the wrong one with 403 only."""
    workers = set(step["workers"])
    return (set(step["accepted_by"]) == workers and set(step["refused_by"]) == workers
            and all(s == {200} for s in step["accepted_by"].values())
            and all(s == {403} for s in step["refused_by"].values()))


def describe(step: dict) -> str:
    return (f"{step['step']}: right key {sorted(set().union(*step['accepted_by'].values()))} and wrong key "
            f"{sorted(set().union(*step['refused_by'].values()))} on {len(step['accepted_by'])} and "
            f"{len(step['refused_by'])} of {len(step['workers'])} workers")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--rounds", type=int, default=5)
    parser.add_argument("--workers", type=int, default=2)
    args = parser.parse_args(argv)
    steps = key_drill(args.workers, args.rounds)
    for step in steps:
        print(describe(step), "-", "consistent" if consistent(step) else "INCONSISTENT")
    return 0 if all(map(consistent, steps)) else 1


if __name__ == "__main__":
    sys.exit(main())
