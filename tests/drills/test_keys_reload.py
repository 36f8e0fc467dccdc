"""API keys across workers on a real server (tests/drills/keys_reload.py): every worker agrees
after the key file changes and a worker dies, after SIGHUP, and an emptied key file neither stops
the service nor opens it. The long version is ``python -m tests.drills.keys_reload --rounds 5``."""

from __future__ import annotations

import sys

import pytest

from tests.drills.keys_reload import consistent, describe, key_drill

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")


def test_every_worker_holds_the_master_s_keys_through_changes_kills_and_reloads(report_figure):
    steps = key_drill(workers=2, rounds=1)
    for step in steps:
        report_figure("key drill (short)", describe(step))
    assert [step["step"] for step in steps] == ["start", "file changed, a worker killed", "SIGHUP",
                                                "file emptied, a worker killed", "SIGHUP with the file empty"]
    for step in steps:
        assert consistent(step), step
    assert steps[-1]["master_alive"] and steps[-1]["logged"]
