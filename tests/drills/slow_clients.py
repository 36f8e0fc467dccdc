"""Slow-client drill: clients that send or read a byte at a time, against a real server.

With as many slow senders as there are workers (each trickling its request a byte at a time,
headers or body), a probe keeps sending a small valid request: every probe must be answered 200,
each slow sender must get 408 (a problem document) once it has spent the receive timeout, and no
worker may be killed by the master. A slow reader of a large answer, which takes longer than the
master's ``MEANLINE_TIMEOUT`` to read it, must get the complete answer and keep its worker.
The probes' latencies are printed, not asserted (tests never assert on time): they are bounded by
the receive timeout, the time a slow sender may hold a worker.

Short version: tests/drills/test_slow_clients.py. Long version:

    python -m tests.drills.slow_clients --senders 4 --receive-timeout 10 --seconds 60
"""

from __future__ import annotations

import argparse
import json
import socket
import sys
import threading
import time

from tests.drills.server import Server

CASE = json.dumps({"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
                   "blade_speed": 300.0}).encode()


def _request(body: bytes) -> bytes:
    return (b"POST /v1/triangles HTTP/1.1\r\nHost: drill\r\nContent-Type: application/json\r\n"
            b"Content-Length: %d\r\nConnection: close\r\n\r\n" % len(body)) + body


def _read_all(sock: socket.socket) -> bytes:
    parts = []
    while True:
        try:
            chunk = sock.recv(65536)
        except (ConnectionResetError, TimeoutError):
            break
        if not chunk:
            break
        parts.append(chunk)
    return b"".join(parts)


def slow_sender(port: int, where: str, interval: float, limit: float, result: dict) -> None:
    """Send one request a byte every ``interval`` seconds (``where``: "headers" or "body" after the
    headers were sent at once) until the server answers or ``limit`` seconds pass."""
    data = _request(CASE)
    head_end = data.index(b"\r\n\r\n") + 4
    started = time.monotonic()
    with socket.create_connection(("127.0.0.1", port), timeout=limit) as sock:
        position = 0
        if where == "body":
            sock.sendall(data[:head_end])
            position = head_end
        sock.settimeout(interval)
        answer = b""
        while position < len(data) and time.monotonic() - started < limit:
            try:
                sock.sendall(data[position:position + 1])
            except OSError:  # closed by the server
                break
            position += 1
            try:
                answer = sock.recv(65536)
                if answer:
                    break
            except TimeoutError:
                continue
            except OSError:
                break
        if not answer:
            sock.settimeout(limit)
            answer = _read_all(sock)
        else:
            sock.settimeout(5)
            answer += _read_all(sock)
    status = int(answer[9:12]) if answer.startswith(b"HTTP/1.") else 0
    result.update(status=status, seconds=time.monotonic() - started, sent=position,
                  problem=b"application/problem+json" in answer.split(b"\r\n\r\n")[0])


def probe(port: int, stop: threading.Event, interval: float, results: list) -> None:
    while not stop.is_set():
        started = time.monotonic()
        try:
            with socket.create_connection(("127.0.0.1", port), timeout=60) as sock:
                sock.sendall(_request(CASE))
                answer = _read_all(sock)
            status = int(answer[9:12]) if answer.startswith(b"HTTP/1.") else 0
        except OSError:
            status = 0
        results.append((status, time.monotonic() - started))
        stop.wait(interval)


def slow_reader(port: int, cases: int, rate: int) -> dict:
    """Ask for a large columns answer and read it at about ``rate`` bytes per second."""
    body = json.dumps({"columns": {**json.loads(CASE), "flow_coefficient": [0.5 + 1e-7 * i for i in range(cases)]}})
    with socket.create_connection(("127.0.0.1", port), timeout=120) as sock:
        sock.setsockopt(socket.SOL_SOCKET, socket.SO_RCVBUF, 1 << 14)
        sock.sendall(_request(body.encode()))
        started, parts, received = time.monotonic(), [], 0
        while True:
            try:
                chunk = sock.recv(1 << 14)
            except OSError:
                break
            if not chunk:
                break
            parts.append(chunk)
            received += len(chunk)
            ahead = received / rate - (time.monotonic() - started)
            if ahead > 0:
                time.sleep(ahead)
    answer = b"".join(parts)
    head, _, text = answer.partition(b"\r\n\r\n")
    complete = False
    if b"transfer-encoding: chunked" in head.lower():
        from tests.live_server import decode_body

        try:
            text = decode_body(answer)
            complete = len(json.loads(text)["columns"]["alpha1"]) == cases
        except (ValueError, KeyError, IndexError):
            complete = False
    else:
        try:
            complete = len(json.loads(text)["columns"]["alpha1"]) == cases
        except (ValueError, KeyError):
            complete = False
    return {"status": int(answer[9:12]) if answer.startswith(b"HTTP/1.") else 0, "bytes": len(answer),
            "seconds": time.monotonic() - started, "complete": complete}


def run_clients(server: Server, port: int, senders: int, interval: float, limit: float, settle: float,
                reader_cases: int, reader_rate: int) -> dict:
    """Slow senders and a probe at ``port`` (the server's, or a proxy's in front of it), then a slow
    reader; the figures both drills report. ``limit`` bounds each sender; ``settle`` is waited after
    the senders before the probe stops."""
    workers = set(server.worker_pids())
    stop, probes = threading.Event(), []
    prober = threading.Thread(target=probe, args=(port, stop, 0.1, probes))
    results = [{} for _ in range(senders)]
    threads = [threading.Thread(target=slow_sender, args=(port, "headers" if i % 2 == 0 else "body",
                                                          interval, limit, results[i]))
               for i in range(senders)]
    prober.start()
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(limit + 60)
    time.sleep(settle)
    stop.set()
    prober.join(60)
    reader = slow_reader(port, reader_cases, reader_rate)
    log = server.log_text()
    replaced = set(server.worker_pids()) != workers
    latencies = sorted(seconds for _, seconds in probes)
    return {"senders": results, "probes": len(probes), "probe_failures": sum(s != 200 for s, _ in probes),
            "probe_max": latencies[-1] if latencies else None,
            "probe_p50": latencies[len(latencies) // 2] if latencies else None,
            "reader": reader, "worker_timeouts": log.count("WORKER TIMEOUT"), "workers_replaced": replaced,
            "log": log}


def slow_clients_drill(senders: int = 2, receive_timeout: int = 2, seconds: float = 6.0, interval: float = 0.5,
                       reader_cases: int = 60_000, reader_rate: int = 8 << 20, master_timeout: int = 2) -> dict:
    environment = {"MEANLINE_RECEIVE_TIMEOUT": str(receive_timeout), "MEANLINE_SEND_TIMEOUT": "60",
                   "MEANLINE_TIMEOUT": str(master_timeout)}
    with Server(workers=2, environment=environment) as server:
        figures = run_clients(server, server.port, senders, interval, seconds + 30,
                              max(0.0, seconds - receive_timeout), reader_cases, reader_rate)
    del figures["log"]
    return {**figures, "receive_timeout": receive_timeout, "master_timeout": master_timeout}


def describe(figures: dict) -> list[str]:
    senders = ", ".join(f"{s.get('status')} after {s.get('seconds', 0):.1f} s ({s.get('sent')} bytes sent)"
                        for s in figures["senders"])
    reader = figures["reader"]
    return [f"{len(figures['senders'])} slow senders (a byte every 0.5 s, receive timeout "
            f"{figures['receive_timeout']} s): {senders}",
            f"probe meanwhile: {figures['probes']} requests, {figures['probe_failures']} failed, latency p50 "
            f"{figures['probe_p50'] * 1e3:.0f} ms, max {figures['probe_max'] * 1e3:.0f} ms",
            f"slow reader: {reader['status']}, {reader['bytes'] / 1e6:.1f} MB in {reader['seconds']:.1f} s "
            f"(master timeout {figures['master_timeout']} s), complete: {reader['complete']}; "
            f"WORKER TIMEOUT lines: {figures['worker_timeouts']}, workers replaced: {figures['workers_replaced']}"]


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--senders", type=int, default=4)
    parser.add_argument("--receive-timeout", type=int, default=10)
    parser.add_argument("--seconds", type=float, default=60)
    args = parser.parse_args(argv)
    figures = slow_clients_drill(args.senders, args.receive_timeout, args.seconds, master_timeout=5,
                                 reader_cases=200_000, reader_rate=4 << 20)
    for line in describe(figures):
        print(line)
    return 0


if __name__ == "__main__":
    sys.exit(main())
