"""The shipped buffering front (deploy/nginx/meanline.conf) in front of a real server
(tests/drills/proxy.py), short: more slow senders than workers never reach a worker, the probe is
answered throughout, a reader slower than the master's timeout gets the complete answer. nginx
comes from Debian's package; where it is missing the test installs it with apt-get (as CI runs,
as root), and is skipped, saying why, only where that is not possible."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys

import pytest

from tests.drills.proxy import describe, nginx_path, proxy_drill

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")


@pytest.fixture(scope="module")
def nginx():
    if nginx_path():
        return
    if os.geteuid() != 0 or shutil.which("apt-get") is None:
        pytest.skip("nginx is not installed and cannot be installed here (needs root and apt-get): install the "
                    "Debian package nginx")
    environment = {**os.environ, "DEBIAN_FRONTEND": "noninteractive"}
    subprocess.run(["apt-get", "update"], capture_output=True, timeout=600, env=environment)
    install = subprocess.run(["apt-get", "install", "-y", "--no-install-recommends", "nginx"], capture_output=True,
                             text=True, timeout=600, env=environment)
    if install.returncode != 0 or not nginx_path():
        pytest.skip(f"apt-get could not install nginx: {install.stderr[-500:]}")


def test_slow_clients_behind_the_buffering_front_never_reach_a_worker(nginx, report_figure):
    figures = proxy_drill(senders=6, seconds=3.0, client_timeout=2)
    for line in describe(figures):
        report_figure("proxy drill (short)", line)
    assert figures["service_408s"] == 0, figures  # the workers never waited for a slow client
    assert figures["probes"] > 0 and figures["probe_failures"] == 0, figures
    assert figures["reader"]["status"] == 200 and figures["reader"]["complete"], figures["reader"]
    assert figures["worker_timeouts"] == 0 and not figures["workers_replaced"], figures


def test_the_count_of_receive_timeouts_sees_a_slow_client_that_reaches_the_service():
    # The control for the assertion above: the same senders straight at the service are counted.
    import threading

    from tests.drills.proxy import receive_timeouts
    from tests.drills.server import Server
    from tests.drills.slow_clients import slow_sender

    with Server(workers=2, environment={"MEANLINE_RECEIVE_TIMEOUT": "1"}) as server:
        results = [{}, {}]
        threads = [threading.Thread(target=slow_sender, args=(server.port, where, 0.5, 3.0, result))
                   for where, result in zip(("headers", "body"), results, strict=True)]
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join(30)
        assert [result["status"] for result in results] == [408, 408]
        assert receive_timeouts(server.log_text()) == 2
