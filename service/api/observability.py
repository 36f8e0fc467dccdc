"""Request ids, one JSON log line per request, and Prometheus metrics at ``GET /metrics``.

:func:`init_app` hooks all three into the application. Every request gets an id: the caller's
``X-Request-ID`` when it is acceptable (1 to 128 characters of ``REQUEST_ID_CHARACTERS``),
otherwise a new UUID 4. The id comes back in the ``X-Request-ID`` response header, in every
problem document (``request_id``) and in the request's log line, so a caller's report of one
failed request leads to its line in the logs.

Logs are JSON lines on standard output, one per request, written by the ``service`` logger at
the level ``MEANLINE_LOG_LEVEL`` (or the ``LOG_LEVEL`` setting). Each line is written with a
single flush: under gunicorn every worker writes to the same inherited standard output, and a
line shorter than the pipe buffer arrives whole. Lines never carry input values, API keys or
bodies: only the method, the path, the status, the duration and the case counts.

Metrics use prometheus_client. When ``PROMETHEUS_MULTIPROC_DIR`` is set before the process
starts (prometheus_client reads it at import), each gunicorn worker writes its values to files
there and every scrape sums the files of all workers into a fresh registry; otherwise the
process's own registry is exposed. service/gunicorn_conf.py empties the directory at start
and marks dead workers.
"""

from __future__ import annotations

import json
import logging
import os
import re
import sys
import time
import traceback
import uuid
from collections.abc import Iterable
from datetime import UTC, datetime

from flask import Flask, Response, current_app, has_request_context, request
from prometheus_client import (
    CollectorRegistry,
    Counter,
    Histogram,
    disable_created_metrics,
    generate_latest,
    multiprocess,
)

REQUEST_ID_HEADER = "X-Request-ID"
#: Characters accepted in a caller's request id: enough for UUIDs, trace ids and base64, and
#: nothing that could break a log line or a header.
REQUEST_ID_CHARACTERS = "A-Za-z0-9._~:/+=@-"
REQUEST_ID_MAX_LENGTH = 128
_REQUEST_ID = re.compile(f"[{REQUEST_ID_CHARACTERS}]{{1,{REQUEST_ID_MAX_LENGTH}}}")

LOG_LEVELS = ("debug", "info", "warning", "error", "critical")
DEFAULT_LOG_LEVEL = "info"
LOGGER_NAME = "service"
REQUEST_LOGGER_NAME = "service.requests"
#: Longest path written to a log line; a longer one (only ever a 404) is cut.
MAX_LOGGED_PATH = 256

METRICS_PATH = "/metrics"
#: The Prometheus text exposition format, version 0.0.4, which every scraper reads.
METRICS_CONTENT_TYPE = "text/plain; version=0.0.4; charset=utf-8"
#: Endpoint label of requests that matched no route (404, 405), so that clients cannot create
#: new label values, and with them new time series, by inventing paths.
UNMATCHED = "unmatched"
#: Latency histogram buckets [s]: from a one-case answer (about a millisecond) to a batch near
#: the default worker timeout of 30 s.
LATENCY_BUCKETS = (0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1.0, 2.5, 5.0, 10.0, 30.0)

#: Base names; prometheus_client exposes the counters with a ``_total`` suffix and the histogram
#: as ``_bucket``, ``_count`` and ``_sum`` series.
METRIC_NAMES = {
    "requests": "meanline_http_requests",
    "latency": "meanline_http_request_duration_seconds",
    "cases": "meanline_cases_computed",
    "failures": "meanline_case_failures",
}

_EXTENSION = "meanline_observability"
# The ``*_created`` series (a timestamp per label set) exist only in single-process mode; leaving
# them out makes the exposition the same in both modes and halves the series per counter.
disable_created_metrics()
log = logging.getLogger(REQUEST_LOGGER_NAME)


# -- request ids ---------------------------------------------------------------------------------


#: Keys of the request's WSGI environ that carry its id and case counts to the log line.
ENVIRON_REQUEST_ID = "meanline.request_id"
_ENVIRON_CASES = "meanline.cases"
_ENVIRON_CASE_FAILURES = "meanline.case_failures"


def accepted_request_id(given: str) -> str:
    """``given`` if it is an acceptable request id, else a new UUID 4."""
    return given if _REQUEST_ID.fullmatch(given) else str(uuid.uuid4())


def request_id() -> str:
    """The current request's id: the caller's ``X-Request-ID`` if acceptable, else a new UUID 4.

    The middleware of :func:`init_app` decides it before the application sees the request, so
    that it is the same wherever it appears; an app used without it (a bare request context)
    decides it here on first use.
    """
    return _environ_request_id(request.environ)


def _environ_request_id(environ) -> str:
    """The id kept in the request's WSGI environ, decided and kept there on first use."""
    found = environ.get(ENVIRON_REQUEST_ID)
    if found is None:
        found = environ[ENVIRON_REQUEST_ID] = accepted_request_id(environ.get("HTTP_X_REQUEST_ID", ""))
    return found


def record_cases(size: int, body: dict) -> None:
    """Note the cases a calculation computed, for its metrics and its log line.

    Parameters
    ----------
    size : int
        Number of cases in the request.
    body : dict
        The response body; in a batch, ``errors`` lists the cases that failed.
    """
    environ = request.environ
    environ[_ENVIRON_CASES] = int(size)
    environ[_ENVIRON_CASE_FAILURES] = len(body["errors"]) if ("results" in body or "columns" in body) else 0


# -- logging -------------------------------------------------------------------------------------


def log_level(config_value: str | None = None) -> str:
    """The log level from the ``LOG_LEVEL`` setting, else ``MEANLINE_LOG_LEVEL``, else info.

    Raises
    ------
    ValueError
        For a level other than those in ``LOG_LEVELS``, naming the variable.
    """
    if config_value:
        name, raw = "LOG_LEVEL", config_value
    else:
        name, raw = "MEANLINE_LOG_LEVEL", os.environ.get("MEANLINE_LOG_LEVEL", "")
    level = raw.strip().lower() or DEFAULT_LOG_LEVEL
    if level not in LOG_LEVELS:
        raise ValueError(f"{name} must be one of {', '.join(LOG_LEVELS)}, got {raw!r}")
    return level


class JsonFormatter(logging.Formatter):
    """One JSON object per record: time (UTC), level, logger, process id, message, the request id
    inside a request, the record's ``fields`` and, for an exception, its type and traceback."""

    def format(self, record: logging.LogRecord) -> str:
        entry = {
            "time": datetime.fromtimestamp(record.created, UTC).isoformat(timespec="milliseconds")
            .replace("+00:00", "Z"),
            "level": record.levelname.lower(),
            "logger": record.name,
            "pid": record.process,
            "message": record.getMessage(),
        }
        if has_request_context():
            entry["request_id"] = request_id()
        entry.update(getattr(record, "fields", {}))
        if record.exc_info and record.exc_info[0] is not None:
            entry["exception"] = _exception_summary(*record.exc_info)
        return _ENCODER.encode(entry)


# What json.dumps(entry, separators=(",", ":"), default=str) writes, without building an encoder
# for every line.
_ENCODER = json.JSONEncoder(separators=(",", ":"), default=str)


def _exception_summary(kind, _error, trace) -> dict:
    # The message is left out on purpose: exception messages may quote input values. The type
    # and the frames locate the bug.
    frames = [f"{frame.filename}:{frame.lineno} in {frame.name}" for frame in traceback.extract_tb(trace)]
    return {"type": f"{kind.__module__}.{kind.__qualname__}", "traceback": frames}


class _StdoutHandler(logging.Handler):
    """Writes each record as one line to the current ``sys.stdout`` and flushes it at once.

    ``sys.stdout`` is looked up per record rather than held, so that a replaced standard output
    (a test's capture, a redirect) is honoured.
    """

    def emit(self, record: logging.LogRecord) -> None:
        try:
            line = self.format(record) + "\n"
            stream = sys.stdout
            stream.write(line)
            stream.flush()
        except Exception:  # noqa: BLE001  (logging must never fail a request)
            self.handleError(record)


def configure_logging(level: str) -> logging.Logger:
    """Send the ``service`` loggers' records at ``level`` and above to standard output as JSON.

    Idempotent: the handler is added once per process however many apps are created.
    """
    logger = logging.getLogger(LOGGER_NAME)
    logger.setLevel(level.upper())
    # Not to the root logger as well: an embedding program's handlers would print each line twice.
    logger.propagate = False
    if not any(isinstance(handler, _StdoutHandler) for handler in logger.handlers):
        handler = _StdoutHandler()
        handler.setFormatter(JsonFormatter())
        logger.addHandler(handler)
    return logger


# -- metrics -------------------------------------------------------------------------------------


class Metrics:
    """The service's metrics, in a registry of their own (one per app).

    In multiprocess mode the values live in prometheus_client's files and the registry is not
    what a scrape reads; creating a second app in the same process would then share the files'
    series, so a gunicorn worker creates exactly one.
    """

    def __init__(self, multiprocess_dir: str | None):
        self.multiprocess_dir = multiprocess_dir
        self.registry = CollectorRegistry(auto_describe=True)
        self._children = {}
        self.requests = Counter(
            METRIC_NAMES["requests"], "HTTP requests answered, by endpoint and status.",
            ("endpoint", "status"), registry=self.registry)
        self.latency = Histogram(
            METRIC_NAMES["latency"], "Time from the start of handling a request to its response, by "
            "endpoint. [s]", ("endpoint",), buckets=LATENCY_BUCKETS, registry=self.registry)
        self.cases = Counter(
            METRIC_NAMES["cases"], "Cases computed by successful calculation requests (including the cases "
            "of a batch that failed individually), by endpoint.", ("endpoint",), registry=self.registry)
        self.failures = Counter(
            METRIC_NAMES["failures"], "Cases of batches that were physically impossible (null outputs and "
            "an entry in errors), by endpoint.", ("endpoint",), registry=self.registry)

    def child(self, metric, *labels):
        """``metric.labels(*labels)``, looked up once per label values: the endpoints and
        statuses are few (unmatched paths share one label), so the cache stays small."""
        key = (metric, labels)
        found = self._children.get(key)
        if found is None:
            found = self._children[key] = metric.labels(*labels)
        return found

    def exposition(self) -> bytes:
        if self.multiprocess_dir:
            # A fresh registry per scrape, as prometheus_client's multiprocess documentation asks:
            # the collector reads every worker's files at collection time.
            registry = CollectorRegistry()
            multiprocess.MultiProcessCollector(registry, path=self.multiprocess_dir)
            return generate_latest(registry)
        return generate_latest(self.registry)


# -- middleware ----------------------------------------------------------------------------------


def init_app(app: Flask, endpoints: Iterable[str] = ()) -> None:
    """Add request ids, request logging and ``GET /metrics`` to ``app``.

    They wrap ``app.wsgi_app`` as WSGI middleware rather than hook into Flask: they see every
    answer, including one made outside Flask's handling (a request the server stops), and cost
    a request no lookups through Flask's context proxies. Reads ``LOG_LEVEL`` from the app's
    configuration (else ``MEANLINE_LOG_LEVEL``). ``endpoints``: the calculations' paths, whose case
    counters exist from the start.
    """
    configure_logging(log_level(app.config.get("LOG_LEVEL")))
    multiprocess_dir = os.environ.get("PROMETHEUS_MULTIPROC_DIR", "").strip() or None
    metrics = app.extensions[_EXTENSION] = Metrics(multiprocess_dir)
    # Every calculation's case counters exist from the start at zero, so that a rate over the
    # first failure is not lost to a series that appears only with it.
    for endpoint in endpoints:
        metrics.cases.labels(endpoint=endpoint)
        metrics.failures.labels(endpoint=endpoint)
    app.wsgi_app = _Observed(app, app.wsgi_app, metrics)
    app.add_url_rule(METRICS_PATH, endpoint="metrics", view_func=_metrics_view, methods=["GET"])


class _Observed:
    """WSGI middleware: the request id (decided first, echoed as a header), then, once the
    application has answered, the request's metrics and its log line."""

    def __init__(self, app: Flask, wsgi_app, metrics: Metrics):
        self.app, self.wsgi_app, self.metrics = app, wsgi_app, metrics
        self._routes = None

    def __call__(self, environ, start_response):
        started = time.perf_counter()
        identifier = _environ_request_id(environ)
        statuses = []

        def start(status, headers, exc_info=None):
            statuses.append(status)
            headers.append((REQUEST_ID_HEADER, identifier))
            return start_response(status, headers, exc_info)

        answer = self.wsgi_app(environ, start)
        self._record(environ, int(statuses[-1][:3]) if statuses else 500, time.perf_counter() - started)
        return answer

    def _endpoint(self, environ) -> str:
        """The matched route's path, or UNMATCHED (a 404, a 405 or a redirect): as Flask matches
        (every route is a fixed path), from a set built on first use, when all are registered."""
        if self._routes is None:
            self._routes = frozenset((rule.rule, method) for rule in self.app.url_map.iter_rules()
                                     for method in rule.methods)
        path = environ.get("PATH_INFO", "")
        return path if (path, environ.get("REQUEST_METHOD", "")) in self._routes else UNMATCHED

    def _record(self, environ, status: int, duration: float) -> None:
        endpoint = self._endpoint(environ)
        cases, failures = environ.get(_ENVIRON_CASES, 0), environ.get(_ENVIRON_CASE_FAILURES, 0)
        metrics = self.metrics
        metrics.child(metrics.requests, endpoint, str(status)).inc()
        metrics.child(metrics.latency, endpoint).observe(duration)
        if cases:
            metrics.child(metrics.cases, endpoint).inc(cases)
        if failures:
            metrics.child(metrics.failures, endpoint).inc(failures)
        if log.isEnabledFor(logging.INFO):
            # The record is made directly: Logger.info would also look up the calling source line
            # (a walk of the stack) that the JSON line does not carry.
            log.handle(log.makeRecord(log.name, logging.INFO, __file__, 0, "request", None, None, extra={"fields": {
                "request_id": environ[ENVIRON_REQUEST_ID],
                "method": environ.get("REQUEST_METHOD", "").upper(),
                "path": _request_path(environ)[:MAX_LOGGED_PATH],
                "endpoint": endpoint,
                "status": status,
                "duration_ms": round(duration * 1e3, 3),
                "cases": cases,
                "case_failures": failures,
            }}))


def _request_path(environ) -> str:
    """The path as Flask's ``request.path`` reads it: WSGI's latin-1 text decoded as UTF-8."""
    path = environ.get("PATH_INFO", "").encode("latin-1", "replace").decode("utf-8", "replace")
    return "/" + path.lstrip("/")


def _metrics_view() -> Response:
    return Response(current_app.extensions[_EXTENSION].exposition(), content_type=METRICS_CONTENT_TYPE)
