"""Metrics and request logs under a real gunicorn with two workers (prometheus multiprocess mode).

A scrape is answered by one worker, so counts that only one worker knows would come out short;
the test makes sure both workers served requests (their process ids are in the log lines) and
that one scrape reports the sum. Expected counts are those of the requests sent, and which
cases failed is taken from each response's own ``errors``.
"""

import json
from concurrent.futures import ThreadPoolExecutor

from prometheus_client.parser import text_string_to_metric_families

from tests.api.test_observability import IMPOSSIBLE_T0, POSSIBLE_T0, _state
from tests.live_server import live_server

BURST = 8  # concurrent requests per burst
MAX_BURSTS = 25
ENDPOINT = "/v1/triangles"


def _log_lines(path):
    return [json.loads(line) for line in path.read_text().splitlines() if line]


def _body(number):
    """Request ``number``: a batch of 2 to 4 cases, the first of them impossible for odd numbers."""
    cases = [_state(POSSIBLE_T0) for _ in range(2 + number % 3)]
    if number % 2:
        cases[0] = _state(IMPOSSIBLE_T0)
    return {"cases": cases}


def test_metrics_and_logs_of_all_workers(tmp_path):
    metrics_dir = tmp_path / "prometheus"
    environment = {"PROMETHEUS_MULTIPROC_DIR": str(metrics_dir)}
    with live_server(tmp_path, workers=2, environment=environment) as server:
        sent = []  # (request id, cases, failures)

        def send(number):
            request_id = f"gunicorn-{number}"
            status, headers, body = server.post(ENDPOINT, _body(number), headers={"X-Request-ID": request_id})
            assert status == 200 and headers["X-Request-ID"] == request_id
            return request_id, len(body["results"]), len(body["errors"])

        for burst in range(MAX_BURSTS):
            with ThreadPoolExecutor(BURST) as pool:
                sent += pool.map(send, range(burst * BURST, (burst + 1) * BURST))
            ids = {request_id for request_id, _, _ in sent}
            pids = {line["pid"] for line in _log_lines(server.stdout) if line.get("request_id") in ids}
            if len(pids) == 2:
                break
        assert len(pids) == 2, "both workers should have served requests"
        status, headers, text = server.get("/metrics")
    assert status == 200 and headers["Content-Type"].startswith("text/plain; version=0.0.4")
    assert server.process.returncode == 0, server.stderr.read_text()

    samples = {(s.name, tuple(sorted(s.labels.items()))): s.value
               for family in text_string_to_metric_families(text.decode()) for s in family.samples}
    label = (("endpoint", ENDPOINT),)
    assert samples[("meanline_http_requests_total", (*label, ("status", "200")))] == len(sent)
    assert samples[("meanline_http_request_duration_seconds_count", label)] == len(sent)
    assert samples[("meanline_http_request_duration_seconds_bucket", (*label, ("le", "+Inf")))] == len(sent)
    assert samples[("meanline_cases_computed_total", label)] == sum(cases for _, cases, _ in sent)
    assert samples[("meanline_case_failures_total", label)] == sum(failures for _, _, failures in sent)
    assert sum(failures for _, _, failures in sent) == sum(n % 2 for n in range(len(sent)))

    # Every line on standard output is whole JSON (gunicorn's own messages go to standard error),
    # and every request has exactly one line, from one of the two workers.
    lines = _log_lines(server.stdout)
    by_id = {}
    for line in lines:
        by_id.setdefault(line["request_id"], []).append(line)
    for request_id, cases, failures in sent:
        (line,) = by_id[request_id]
        assert (line["status"], line["cases"], line["case_failures"]) == (200, cases, failures)
    assert {line["pid"] for line in lines if line["request_id"].startswith("gunicorn-")} == pids
