"""Short versions of the load and fault drills (a few seconds each), against
``python -m service serve --workers 2`` on loopback. Their figures appear in the terminal
summary of every test run. The long versions are scripts: ``python -m tests.drills.load`` and
``python -m tests.drills.fault`` (see the README, "Reliability drills").

What is asserted is the behaviour, never the speed: no failed request under load; at most the
one request in flight on a killed sync worker fails, every request sent after the kill
succeeds and the master starts a replacement; a request in flight at SIGTERM is answered in full
and the master then exits with code 0.
"""

from __future__ import annotations

import sys

import pytest

from tests.drills.fault import describe_graceful, describe_kill, graceful_drill, kill_drill
from tests.drills.load import describe, describe_rss, load_drill
from tests.drills.server import Server

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")


def test_load(report_figure):
    # 1,200 requests after 200 of warm-up: fewer than the 1,000 or so after which a worker is
    # recycled (max_requests), so that the memory figures are usually those of the same workers.
    with Server(workers=2) as server:
        figures = load_drill(server, seconds=5, max_requests=1200, clients=4)
    report_figure("load drill (short)", describe(figures))
    report_figure("load drill (short)", "worker memory (VmRSS) after warm-up -> end: "
                  + describe_rss(figures["rss_before"], figures["rss_after"]))
    assert figures["requests"] > 0
    assert figures["errors"] == 0, figures["failures"]


def test_kill_a_worker_under_load_then_shut_down_gracefully(report_figure):
    with Server(workers=2) as server:
        kill = kill_drill(server, seconds_before=1.5, seconds_after=1.5, clients=4)
        report_figure("fault drill (short)", describe_kill(kill))
        graceful = graceful_drill(server, cases=100_000)
        report_figure("fault drill (short)", describe_graceful(graceful))
    assert kill["replacement"] != kill["victim"]
    assert kill["failed_at_kill"] <= 1, kill["failures"]  # only the request in flight on the victim
    assert kill["failed_after_kill"] == 0, kill["failures"]
    assert kill["sent_after_replacement"] > 0
    assert graceful["status_line"].startswith("HTTP/1.1 200")
    assert graceful["computed"] == graceful["cases"]
    assert graceful["case_errors"] == 0
    assert graceful["exit_code"] == 0
