"""Slow clients on a real server (tests/drills/slow_clients.py), short: as many slow senders as
workers get 408 once they spend the receive timeout while a probe is answered throughout, and a
reader slower than the master's timeout gets the complete answer from a worker that is not
killed. The probe's latencies are printed, not asserted. Long version:
``python -m tests.drills.slow_clients``."""

from __future__ import annotations

import sys

import pytest

from tests.drills.slow_clients import describe, slow_clients_drill

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")


def test_slow_clients_hold_a_worker_for_a_bounded_time_and_answers_are_never_cut(report_figure):
    figures = slow_clients_drill(senders=2, receive_timeout=2, seconds=3.0)
    for line in describe(figures):
        report_figure("slow clients drill (short)", line)
    for sender in figures["senders"]:
        assert sender["status"] == 408 and sender["problem"], sender
    assert figures["probes"] > 0 and figures["probe_failures"] == 0, figures
    assert figures["reader"]["status"] == 200 and figures["reader"]["complete"], figures["reader"]
    assert figures["worker_timeouts"] == 0 and not figures["workers_replaced"], figures
