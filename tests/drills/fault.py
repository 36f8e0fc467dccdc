"""Fault drills: a worker killed under load, and a graceful shutdown with a request in flight.

Kill: clients load the service; one gunicorn worker gets SIGKILL in the middle. A sync worker
serves one request at a time, so at most the one request in flight on it may fail; every
request sent after the kill must succeed, and the master must start a replacement worker.

Graceful shutdown: a large columns batch is sent up to its last kilobyte; once a worker has
accepted the connection, the master gets SIGTERM; then the rest of the body goes out. The
request must complete with 200 and every case computed, the master must exit with code 0, and
new connections must be refused meanwhile.

Both are bounded in time, run on loopback only and stop by themselves. The short versions run
in the normal test run (tests/drills/test_drills.py); the long version:

    python -m tests.drills.fault --seconds 60 --kills 5
"""

from __future__ import annotations

import argparse
import json
import os
import signal
import socket
import subprocess
import sys
import threading
import time
from pathlib import Path

from tests.drills.load import describe, run_load, summary
from tests.drills.server import STOP_SECONDS, Server
from tests.live_server import decode_body

REPLACE_SECONDS = 30


def _sockets(pid: int) -> set[str]:
    """The socket inodes a process holds open."""
    found = set()
    try:
        for fd in Path(f"/proc/{pid}/fd").iterdir():
            try:
                target = os.readlink(fd)
            except OSError:
                continue
            if target.startswith("socket:"):
                found.add(target)
    except OSError:
        pass
    return found


def _wait_until_dead(pid: int) -> float:
    """When the process is gone or a zombie (time.monotonic())."""
    deadline = time.monotonic() + REPLACE_SECONDS
    while time.monotonic() < deadline:
        try:
            stat = Path(f"/proc/{pid}/stat").read_text()
        except OSError:
            return time.monotonic()
        if stat[stat.rindex(")") + 2] in "ZX":
            return time.monotonic()
        time.sleep(0.0005)
    raise RuntimeError(f"worker {pid} still runs {REPLACE_SECONDS} s after SIGKILL")


def _wait_for_replacement(server: Server, gone: int, known: set[int]) -> tuple[int, float]:
    """The new worker's pid and when it appeared (time.monotonic())."""
    deadline = time.monotonic() + REPLACE_SECONDS
    while time.monotonic() < deadline:
        pids = set(server.worker_pids())
        new = pids - known - {gone}
        if new and gone not in pids:
            return min(new), time.monotonic()
        time.sleep(0.002)
    raise RuntimeError(f"no replacement for worker {gone} within {REPLACE_SECONDS} s")


def kill_drill(server: Server, *, seconds_before: float, seconds_after: float, clients: int = 4) -> dict:
    """Load; SIGKILL one worker after ``seconds_before``; load ``seconds_after`` more."""
    stop = threading.Event()
    outcomes = []
    loader = threading.Thread(target=lambda: outcomes.extend(
        run_load(server.port, seconds=seconds_before + seconds_after + REPLACE_SECONDS, max_requests=10**9,
                 clients=clients, stop=stop)), daemon=True)
    loader.start()
    time.sleep(seconds_before)
    before = set(server.worker_pids())
    victim = min(before)
    sent_at = time.monotonic()
    os.kill(victim, signal.SIGKILL)
    # From when it is dead: a request sent after that cannot have reached it.
    killed_at = _wait_until_dead(victim)
    replacement, replaced_at = _wait_for_replacement(server, victim, before)
    time.sleep(seconds_after)
    stop.set()
    loader.join(120)
    failed = [o for o in outcomes if not o.ok]
    figures = summary(outcomes)
    figures.update(
        victim=victim, replacement=replacement, replaced_ms=(replaced_at - sent_at) * 1000,
        failed_at_kill=len(failed),
        failed_after_kill=sum(o.started >= killed_at for o in failed),
        sent_after_kill=sum(o.started >= killed_at for o in outcomes),
        sent_after_replacement=sum(o.started >= replaced_at for o in outcomes),
        failures=failed[:10],
    )
    return figures


def describe_kill(figures: dict) -> str:
    return (f"SIGKILL to worker {figures['victim']} under load: {figures['failed_at_kill']} request(s) failed "
            f"(in flight on it), worker {figures['replacement']} replaced it in {figures['replaced_ms']:.0f} ms, "
            f"{figures['sent_after_kill']} requests sent after the kill, {figures['failed_after_kill']} of them "
            f"failed; overall {describe(figures)}")


def big_batch(cases: int) -> tuple[str, bytes]:
    """A columns sweep of the calculation with the fewest outputs (the least to send back): every
    value of its first real number varied."""
    from service.api.registry import CALCULATIONS
    from tests.drills.load import VALID_CASES

    calculation = min((c for c in CALCULATIONS if c.name in VALID_CASES and c.columns),
                      key=lambda c: len(c.outputs().fields))
    case = VALID_CASES[calculation.name][0]
    number = next(name for name, value in case.items() if isinstance(value, float))
    sweep = [round(case[number] * (0.9 + 0.2 * k / cases), 9) for k in range(cases)]
    return calculation.path, json.dumps({"columns": {**case, number: sweep}}).encode()


def graceful_drill(server: Server, *, cases: int = 200_000) -> dict:
    """SIGTERM to the master while a large batch is in flight; the batch must still be answered."""
    path, body = big_batch(cases)
    baseline = {pid: _sockets(pid) for pid in server.worker_pids()}
    client = socket.create_connection(("127.0.0.1", server.port), timeout=STOP_SECONDS)
    head = (f"POST {path} HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n"
            f"Content-Length: {len(body)}\r\nConnection: close\r\n\r\n").encode()
    client.sendall(head + body[:-1024])
    # A worker that has accepted the connection holds one more socket than before.
    deadline = time.monotonic() + REPLACE_SECONDS
    while not any(_sockets(pid) - sockets for pid, sockets in baseline.items()):
        if time.monotonic() > deadline:
            raise RuntimeError("no worker accepted the connection")
        time.sleep(0.002)
    signalled_at = time.monotonic()
    server.process.send_signal(signal.SIGTERM)
    late = {}
    late_thread = threading.Thread(target=_late_request, args=(server.port, late), daemon=True)
    late_thread.start()
    client.sendall(body[-1024:])
    response = _read_response(client)
    answered_at = time.monotonic()
    try:
        exit_code = server.process.wait(timeout=STOP_SECONDS)
    except subprocess.TimeoutExpired:
        exit_code = None
    exited_at = time.monotonic()
    late_thread.join(STOP_SECONDS)
    status_line = response.partition(b"\r\n")[0]
    payload = json.loads(decode_body(response)) if b" 200 " in status_line else {}
    columns = payload.get("columns", {})
    computed = max((len(v) for v in columns.values() if isinstance(v, list)), default=0)
    return {
        "cases": cases, "status_line": status_line.decode(errors="replace"), "computed": computed,
        "case_errors": len(payload.get("errors", [])), "answered_after_ms": (answered_at - signalled_at) * 1000,
        "exit_code": exit_code, "exited_after_ms": (exited_at - signalled_at) * 1000,
        "late_request": late.get("outcome", "no outcome"),
        "late_request_ended_after_ms": (late.get("ended", float("nan")) - signalled_at) * 1000,
    }


def _late_request(port: int, result: dict) -> None:
    """A new connection after SIGTERM: refused, or what becomes of it."""
    time.sleep(0.05)
    try:
        connection = socket.create_connection(("127.0.0.1", port), timeout=STOP_SECONDS)
    except OSError as error:
        result.update(outcome=f"connection refused ({type(error).__name__})", ended=time.monotonic())
        return
    try:
        connection.sendall(b"GET /healthz HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\n\r\n")
        answer = connection.recv(1024)
        outcome = answer.split(b"\r\n", 1)[0].decode() if answer else "connection closed without an answer"
    except OSError as error:
        outcome = f"accepted, then {type(error).__name__} without an answer"
    finally:
        connection.close()
    result.update(outcome=outcome, ended=time.monotonic())


def _read_response(connection: socket.socket) -> bytes:
    chunks = []
    while True:
        chunk = connection.recv(1 << 20)
        if not chunk:
            break
        chunks.append(chunk)
    connection.close()
    return b"".join(chunks)


def describe_graceful(figures: dict) -> str:
    return (f"SIGTERM to the master with a {figures['cases']}-case batch in flight: {figures['status_line']}, "
            f"{figures['computed']} cases computed, answered {figures['answered_after_ms']:.0f} ms after the "
            f"signal; master exited with code {figures['exit_code']} after {figures['exited_after_ms']:.0f} ms; "
            f"a new connection after the signal: {figures['late_request']} "
            f"({figures['late_request_ended_after_ms']:.0f} ms after the signal)")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--seconds", type=float, default=60, help="load between kills [s]")
    parser.add_argument("--kills", type=int, default=5, help="workers to kill, one after another")
    parser.add_argument("--cases", type=int, default=300_000, help="cases in the batch in flight at SIGTERM")
    parser.add_argument("--clients", type=int, default=4)
    args = parser.parse_args(argv)
    worst = 0
    with Server(workers=2) as server:
        for _ in range(args.kills):
            figures = kill_drill(server, seconds_before=args.seconds / 2, seconds_after=args.seconds / 2,
                                 clients=args.clients)
            print(describe_kill(figures))
            for failure in figures["failures"]:
                print(f"  failed: {failure}")
            worst = max(worst, figures["failed_at_kill"], 2 * figures["failed_after_kill"])
        graceful = graceful_drill(server, cases=args.cases)
        print(describe_graceful(graceful))
    good = worst <= 1 and graceful["computed"] == args.cases and graceful["exit_code"] == 0
    return 0 if good else 1


if __name__ == "__main__":
    sys.exit(main())
