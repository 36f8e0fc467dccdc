"""Gunicorn settings for the meanline service, read from the environment.

`python -m service serve` (as ``-c python:service.gunicorn_conf``) and deploy/gunicorn.conf.py
(a re-export of this module) both load these settings, so a single host, a container and a
cluster run with the same values. Configuration is by environment variables only; every variable
read here is listed in ``ENVIRONMENT_VARIABLES``. A malformed value stops the server at start
with a ``ValueError`` that names the variable, rather than falling back silently.

Gunicorn takes every module-level name that matches one of its settings and ignores the rest,
so helpers here carry a leading underscore or an upper-case name.
"""

import math
import os
from pathlib import Path

# Names and defaults of the variables read here; the README's configuration table mirrors them.
DEFAULT_HOST = "127.0.0.1"
DEFAULT_PORT = 8080
DEFAULT_TIMEOUT = 30
DEFAULT_RECEIVE_TIMEOUT = 10
DEFAULT_SEND_TIMEOUT = 30
MIN_DEFAULT_WORKERS = 2
LOG_LEVELS = ("debug", "info", "warning", "error", "critical")
ENVIRONMENT_VARIABLES = (
    "MEANLINE_HOST",
    "MEANLINE_PORT",
    "MEANLINE_WORKERS",
    "MEANLINE_TIMEOUT",
    "MEANLINE_GRACEFUL_TIMEOUT",
    "MEANLINE_LOG_LEVEL",
    "MEANLINE_RECEIVE_TIMEOUT",
    "MEANLINE_SEND_TIMEOUT",
    "PROMETHEUS_MULTIPROC_DIR",
)

# Numerical libraries start one thread per core in every process by default. With one worker
# process per core that oversubscribes the CPUs (N workers x N threads) and makes latency erratic,
# so each process gets one thread. It takes effect only if it happens before numpy is first
# imported in the process (workers inherit it). setdefault keeps an operator's explicit choice.
for _thread_variable in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_thread_variable, "1")


def _env_int(name, default, minimum, maximum=None):
    """Integer from the environment variable `name`, or `default` when unset or empty."""
    raw = os.environ.get(name, "").strip()
    if not raw:
        return default
    try:
        value = int(raw)
    except ValueError:
        raise ValueError(f"{name} must be an integer, got {raw!r}") from None
    if value < minimum or (maximum is not None and value > maximum):
        upper = f" and at most {maximum}" if maximum is not None else ""
        raise ValueError(f"{name} must be at least {minimum}{upper}, got {value}")
    return value


def _env_host(name, default):
    """Listen address from `name`; IPv6 literals come back bracketed for the bind string."""
    raw = os.environ.get(name, "").strip()
    if not raw:
        return default
    if any(character.isspace() for character in raw) or "/" in raw:
        raise ValueError(f"{name} must be a host name or IP address, got {raw!r}")
    if ":" in raw and not raw.startswith("["):
        return f"[{raw}]"
    return raw


def _env_choice(name, default, choices):
    raw = os.environ.get(name, "").strip().lower()
    if not raw:
        return default
    if raw not in choices:
        raise ValueError(f"{name} must be one of {', '.join(choices)}, got {raw!r}")
    return raw


def available_cpus(cgroup_root="/sys/fs/cgroup"):
    """Number of CPUs this process may use, honouring affinity and a cgroup CPU quota.

    os.cpu_count() reports the host's cores, so a container limited to 2 CPUs on a 64-core
    node would otherwise start 64 workers, each holding its own copy of numpy and scipy, and
    have them throttled. The quota (cgroup v2 ``cpu.max``, or v1 ``cpu.cfs_quota_us`` over
    ``cpu.cfs_period_us``) is rounded up to whole CPUs.
    """
    try:
        cpus = len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        cpus = os.cpu_count() or 1
    root = Path(cgroup_root)
    quota = period = None
    try:
        fields = (root / "cpu.max").read_text().split()
        if len(fields) == 2 and fields[0] != "max":
            quota, period = int(fields[0]), int(fields[1])
    except (OSError, ValueError):
        try:
            quota = int((root / "cpu" / "cpu.cfs_quota_us").read_text())
            period = int((root / "cpu" / "cpu.cfs_period_us").read_text())
        except (OSError, ValueError):
            pass
    if quota is not None and period and quota > 0:
        cpus = min(cpus, math.ceil(quota / period))
    return max(cpus, 1)


# --- Server socket -------------------------------------------------------------------------
_host = _env_host("MEANLINE_HOST", DEFAULT_HOST)
_port = _env_int("MEANLINE_PORT", DEFAULT_PORT, minimum=1, maximum=65535)
bind = f"{_host}:{_port}"
wsgi_app = "service:create_app()"

# --- Worker processes ----------------------------------------------------------------------
# Sync workers: each request is numpy arithmetic plus JSON parsing and serialisation, all of it
# CPU work that holds the GIL. Green threads (gevent, eventlet) only help while a request waits
# on I/O, and this service never waits; they would also monkey-patch the standard library under
# numpy for no gain. gthread workers would run a worker's requests on one core in turn behind
# the GIL, adding queueing and memory without adding throughput. One single-threaded process per
# core is the configuration that uses the CPUs fully and keeps a runaway request isolated: the
# master kills that one worker after `timeout` and the others carry on. gunicorn's own sync worker
# waits on a slow client without limit and without a heartbeat (so the master killed it as stuck,
# also in the middle of an answer); the service's sync worker (service/worker.py) bounds the time it
# waits for a request (RECEIVE_TIMEOUT) and for the client to take an answer (SEND_TIMEOUT), and
# keeps its heartbeat while it waits. Many slow clients at once can still hold every worker for
# that long, so in front of untrusted clients a buffering proxy (ingress, load balancer) remains.
worker_class = "service.worker.PacedSyncWorker"
# One worker per usable CPU, but at least two, so a long batch in one worker does not leave the
# health probes and short requests waiting.
workers = _env_int("MEANLINE_WORKERS", max(MIN_DEFAULT_WORKERS, available_cpus()), minimum=1, maximum=256)
threads = 1
# The per-request time limit: a worker that has not told the master it is alive within it is
# stopped (the request answered 503) and replaced. The service's worker keeps telling it while it
# waits on a client, so this limits the time a request computes without sending.
timeout = _env_int("MEANLINE_TIMEOUT", DEFAULT_TIMEOUT, minimum=1, maximum=3600)
# On SIGTERM, workers get this long to finish the request in hand; by default as long as the
# longest request may take, so a rolling update drops none. Kubernetes' grace period must exceed
# it (deploy/kubernetes/deployment.yaml).
graceful_timeout = _env_int("MEANLINE_GRACEFUL_TIMEOUT", timeout, minimum=1, maximum=3600)
# The most time [s] a worker waits, in total, for a request's bytes (408 past it), and for the
# client to take an answer (the connection is closed past it). Not gunicorn settings: read by
# service.worker.PacedSyncWorker.
RECEIVE_TIMEOUT = _env_int("MEANLINE_RECEIVE_TIMEOUT", DEFAULT_RECEIVE_TIMEOUT, minimum=1, maximum=3600)
SEND_TIMEOUT = _env_int("MEANLINE_SEND_TIMEOUT", DEFAULT_SEND_TIMEOUT, minimum=1, maximum=3600)
# Sync workers close the connection after each response and ignore this; it takes effect only if
# the worker class is ever changed. Two seconds is gunicorn's default.
keepalive = 2
# Restart a worker after about this many requests, a backstop against slow growth. The memory a
# large batch leaves with the allocator is handed back right after that request instead
# (post_request below), so the count can be high: every restart costs a new worker's start-up
# (imports and the OpenAPI document, about 0.7 s of CPU), and at 1,000 requests that came to
# about as much CPU again as the single-case requests themselves (tests/benchmarks). The jitter
# keeps workers from all restarting at once.
max_requests = 50_000
max_requests_jitter = 5_000
# Each worker imports the app after the fork. Preloading it in the master would save a second
# of start-up per replacement worker, but gunicorn preloads before on_starting runs, so metric
# files the app creates at import would be deleted under it by the clean-up below. An app that
# fails to import still stops the server: gunicorn halts when a worker fails to boot.
preload_app = False
# The heartbeat file is touched by every worker; on a disk-backed /tmp that can block (see
# gunicorn's documentation on worker_tmp_dir). /dev/shm is memory-backed in containers and pods.
worker_tmp_dir = "/dev/shm" if os.path.isdir("/dev/shm") else None
# gunicorn 25.1 added a control socket that can resize or stop the server; nothing here uses it
# and the root filesystem of the container is read-only.
control_socket_disable = True

# --- Request limits ------------------------------------------------------------------------
# Requests are a short POST line and a few headers; everything else is in the JSON body, whose
# size the app limits (MEANLINE_MAX_BODY_BYTES). These bound what a client can make a worker
# parse before the app sees the request.
limit_request_line = 4094
limit_request_fields = 50
limit_request_field_size = 8190

# --- Logging -------------------------------------------------------------------------------
# The app writes one structured JSON line per request to stdout, so gunicorn's access log would
# only duplicate it. Gunicorn's own messages (start, worker restarts, timeouts) go to stderr.
accesslog = None
errorlog = "-"
loglevel = _env_choice("MEANLINE_LOG_LEVEL", "info", LOG_LEVELS)


# --- Worker memory -------------------------------------------------------------------------
#: A worker this far above its resident size at start, after a request, hands the allocator's
#: free memory back to the system; one still further above than RECYCLE_ABOVE_BYTES is replaced.
TRIM_ABOVE_BYTES = 16 * 2**20
RECYCLE_ABOVE_BYTES = 512 * 2**20
_libc = None


def _resident_bytes():
    """This process's resident set size in bytes, or None where /proc is not available."""
    try:
        with open("/proc/self/statm", "rb") as statm:
            return int(statm.read().split()[1]) * os.sysconf("SC_PAGE_SIZE")
    except (OSError, ValueError, IndexError):
        return None


def _trim():
    """Return the C allocator's free memory to the system (glibc ``malloc_trim``; else nothing)."""
    global _libc
    try:
        if _libc is None:
            import ctypes

            _libc = ctypes.CDLL("libc.so.6")
        _libc.malloc_trim(0)
    except (OSError, AttributeError):
        pass


def post_worker_init(worker):
    """Note the worker's resident size once the app is loaded, the base of post_request's checks,
    and have gunicorn's own error answers written as problem documents."""
    worker.meanline_start_bytes = _resident_bytes()
    _answer_server_errors_as_problems()


def _server_problem(status, reason, detail):
    """The bytes of a problem document answering a request that gunicorn refused itself."""
    import json
    import uuid

    from service.api.access import SECURITY_HEADERS

    identifier = str(uuid.uuid4())
    body = json.dumps({"type": "about:blank", "title": reason, "status": status, "detail": detail,
                       "request_id": identifier}).encode("utf-8")
    headers = [f"HTTP/1.1 {status} {reason}", "Connection: close", "Content-Type: application/problem+json",
               f"Content-Length: {len(body)}", "Cache-Control: no-store", f"X-Request-ID: {identifier}",
               *(f"{name}: {value}" for name, value in SECURITY_HEADERS.items())]
    return ("\r\n".join(headers) + "\r\n\r\n").encode("latin-1") + body


def _answer_server_errors_as_problems():
    """Replace gunicorn's HTML error page (``gunicorn.util.write_error``) in this worker.

    Gunicorn answers a request it cannot parse itself, before the app sees it: a request line over
    ``limit_request_line`` (414), too many or too long header fields (431), a malformed request
    line, header or chunked framing (400), an unsupported transfer coding (501). Its workers write
    that answer through ``gunicorn.util.write_error``, which has no setting, so this worker's copy
    of it is replaced by one writing the same status as ``application/problem+json``.
    """
    from gunicorn import util

    def write_error(sock, status_int, reason, mesg):
        util.write_nonblock(sock, _server_problem(int(status_int), reason, mesg or reason))

    util.write_error = write_error


def post_request(worker, req, environ, resp):
    """After a request that left the worker large, trim the allocator, or replace the worker.

    A 100,000-case batch leaves a worker 30-90 MB above its size at start, in chunks the numpy
    and Python allocations freed but glibc keeps; ``malloc_trim`` hands them back (measured: to
    within a few MB of the start). Checking costs one read of /proc/self/statm per request.
    """
    start = getattr(worker, "meanline_start_bytes", None)
    size = _resident_bytes()
    if start is None or size is None or size - start < TRIM_ABOVE_BYTES:
        return
    _trim()
    size = _resident_bytes()
    if size is not None and size - start > RECYCLE_ABOVE_BYTES:
        worker.log.info("worker %s holds %d MB more than at start after trimming; replacing it",
                        worker.pid, (size - start) // 2**20)
        worker.alive = False


# --- Prometheus multiprocess metrics -------------------------------------------------------
def _prometheus_dir():
    raw = os.environ.get("PROMETHEUS_MULTIPROC_DIR", "").strip()
    return Path(raw) if raw else None


def on_starting(server):
    """Read the API keys in the master; start with an empty metrics directory.

    The keys (``MEANLINE_API_KEYS``, ``MEANLINE_API_KEYS_FILE``) are read here once, and every
    worker forked from the master inherits them, so all workers agree, also one that replaces a
    dead worker after the file changed. A key source that is set but unreadable or empty stops the
    server (it must not run open by mistake). ``on_reload`` (SIGHUP) reads them again.

    Only prometheus_client's ``*.db`` files are removed, never anything else that a
    misconfigured path might point at, so counters of a previous run are not summed in.
    """
    _read_api_keys(server)
    _derive_max_memory(server)
    directory = _prometheus_dir()
    if directory is None:
        return
    directory.mkdir(parents=True, exist_ok=True)
    for stale in directory.glob("*.db"):
        stale.unlink()


def child_exit(server, worker):
    """Fold a dead worker's live gauges out of the shared metrics (prometheus_client docs)."""
    if _prometheus_dir() is None:
        return
    try:
        from prometheus_client import multiprocess
    except ImportError:
        return
    multiprocess.mark_process_dead(worker.pid)


# --- API keys --------------------------------------------------------------------------------
def _read_api_keys(server):
    from service.api import keys

    try:
        count = keys.read_for_server()
    except ValueError as error:
        server.log.error("API keys: %s; the server does not start", error)
        raise SystemExit(1) from None
    server.log.info("API keys read by the master: %d key(s) configured", count)


def on_reload(server):
    """SIGHUP: read the API keys again before the new workers start (the old ones then stop).

    A key source that has turned unreadable or empty keeps the keys read before, and the master
    logs an error, so a bad file never leaves the service without keys or open.
    """
    from service.api import keys

    keys.reload_for_server(logger=server.log)


# --- Memory per request ----------------------------------------------------------------------
def _derive_max_memory(server):
    """Without MEANLINE_MAX_MEMORY, a request's memory bound from the container's memory limit:
    the limit less every worker's base memory, shared by the workers (service/api/memory.py).
    Set in the master's environment, which the workers inherit."""
    if os.environ.get("MEANLINE_MAX_MEMORY", "").strip():
        return
    from service.api import memory

    limit = memory.container_limit()
    if limit is None:
        return  # the app's default applies
    count = getattr(getattr(server, "cfg", None), "workers", None) or workers
    os.environ["MEANLINE_MAX_MEMORY"] = str(memory.default_max_memory(count, limit))
    server.log.info("MEANLINE_MAX_MEMORY derived from the container's limit of %d MiB and %d workers: %d MiB "
                    "per request", limit >> 20, count, int(os.environ["MEANLINE_MAX_MEMORY"]) >> 20)
