"""Worker memory hooks of the gunicorn settings: trim after a large request, replace if still large.

References: the kernel's own accounting of the process (``VmRSS`` in /proc/self/status, proc(5))
for the resident size, and gunicorn's worker contract: a sync worker leaves its request loop and
is replaced by the arbiter once ``worker.alive`` is false (the mechanism of ``max_requests``).
"""

import mmap
import types
from pathlib import Path

import numpy as np
import pytest
from gunicorn.config import Config

import service.gunicorn_conf as conf

MB = 2**20


def _vm_rss_bytes():
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) * 1024
    raise AssertionError("no VmRSS line")


class _Log:
    def __init__(self):
        self.messages = []

    def info(self, message, *args):
        self.messages.append(message % args)


def _worker(start):
    return types.SimpleNamespace(alive=True, pid=4321, log=_Log(), meanline_start_bytes=start)


@pytest.fixture
def sizes(monkeypatch):
    """Resident sizes handed out one per call, and a record of the trims."""
    state = {"sizes": [], "trims": 0}
    monkeypatch.setattr(conf, "_resident_bytes", lambda: state["sizes"].pop(0))

    def trim():
        state["trims"] += 1

    monkeypatch.setattr(conf, "_trim", trim)
    return state


@pytest.mark.skipif(not Path("/proc/self/statm").exists(), reason="needs /proc")
def test_resident_size_is_the_kernels_vm_rss():
    before = conf._resident_bytes()
    np.testing.assert_allclose(before, _vm_rss_bytes(), rtol=0.05)
    # A fresh anonymous mapping, every page written: 64 MB more resident, whatever memory the allocator
    # of this test process already holds from earlier tests (a numpy block could reuse it).
    block = mmap.mmap(-1, 64 * MB)
    for offset in range(0, 64 * MB, mmap.PAGESIZE):
        block[offset] = 1
    grown = conf._resident_bytes()
    np.testing.assert_allclose(grown - before, 64 * MB, rtol=0.2)
    block.close()


def test_a_small_request_neither_trims_nor_replaces(sizes):
    sizes["sizes"] = [100 * MB + conf.TRIM_ABOVE_BYTES - 1]
    worker = _worker(100 * MB)
    conf.post_request(worker, None, {}, None)
    assert sizes["trims"] == 0 and worker.alive is True


def test_a_large_request_trims_and_the_worker_stays_when_that_is_enough(sizes):
    sizes["sizes"] = [100 * MB + conf.TRIM_ABOVE_BYTES, 110 * MB]
    worker = _worker(100 * MB)
    conf.post_request(worker, None, {}, None)
    assert sizes["trims"] == 1 and worker.alive is True and worker.log.messages == []


def test_a_worker_still_large_after_trimming_is_replaced(sizes):
    sizes["sizes"] = [100 * MB + conf.RECYCLE_ABOVE_BYTES + 2 * MB, 100 * MB + conf.RECYCLE_ABOVE_BYTES + MB]
    worker = _worker(100 * MB)
    conf.post_request(worker, None, {}, None)
    assert sizes["trims"] == 1 and worker.alive is False
    assert "replacing" in worker.log.messages[0]


def test_without_a_size_at_start_nothing_is_judged(sizes):
    sizes["sizes"] = [10_000 * MB]
    worker = _worker(None)
    conf.post_request(worker, None, {}, None)
    assert sizes["trims"] == 0 and worker.alive is True


def test_the_start_size_is_noted_after_the_app_is_loaded(monkeypatch):
    monkeypatch.setattr(conf, "_resident_bytes", lambda: 123 * MB)
    worker = types.SimpleNamespace()
    conf.post_worker_init(worker)
    assert worker.meanline_start_bytes == 123 * MB


def test_gunicorn_accepts_the_hooks_and_the_recycling_count():
    config = Config()
    for name in ("post_request", "post_worker_init", "max_requests", "max_requests_jitter"):
        config.set(name, getattr(conf, name))
    assert config.max_requests == conf.max_requests
    assert 0 < conf.max_requests_jitter < conf.max_requests
