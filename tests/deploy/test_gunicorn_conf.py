"""The gunicorn settings module: environment parsing, defaults, hooks, and a real start.

The expected values come from the settings' own contract (the defaults documented in
service/gunicorn_conf.py and the README's configuration table) and from gunicorn's own
validators (gunicorn.config.Config), which is the program that consumes them.
"""

import importlib
import logging
import os
import pathlib
import runpy
import signal
import socket
import subprocess
import sys
import time
import types
import urllib.error
import urllib.request

import pytest
from gunicorn.config import Config

import service.gunicorn_conf as conf_module

REPO_ROOT = pathlib.Path(__file__).resolve().parents[2]
THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")


def _clear(monkeypatch, name):
    # setenv first so that monkeypatch restores the variable's absence afterwards, even when
    # reloading the module sets it again (the thread variables are set with setdefault).
    monkeypatch.setenv(name, "placeholder")
    monkeypatch.delenv(name)


@pytest.fixture
def load_conf(monkeypatch):
    """Reload the settings module under a clean environment plus the given variables.

    The CPU count is fixed through os.sched_getaffinity and the cgroup files are made to look
    absent, so the default worker count does not depend on the machine running the tests.
    """
    for name in conf_module.ENVIRONMENT_VARIABLES + THREAD_VARIABLES:
        _clear(monkeypatch, name)

    original_read_text = pathlib.Path.read_text

    def read_text_without_cgroup(self, *args, **kwargs):
        if str(self).startswith("/sys/fs/cgroup"):
            raise FileNotFoundError(str(self))
        return original_read_text(self, *args, **kwargs)

    monkeypatch.setattr(pathlib.Path, "read_text", read_text_without_cgroup)

    def load(cpus=6, **environment):
        monkeypatch.setattr(os, "sched_getaffinity", lambda pid: set(range(cpus)), raising=False)
        for name, value in environment.items():
            monkeypatch.setenv(name, value)
        return importlib.reload(conf_module)

    yield load
    monkeypatch.undo()
    importlib.reload(conf_module)


def test_defaults(load_conf):
    conf = load_conf(cpus=6)
    assert conf.bind == "127.0.0.1:8080"
    assert conf.DEFAULT_PORT == 8080
    assert conf.workers == 6  # one per usable CPU
    assert conf.worker_class == "service.worker.PacedSyncWorker"  # sync, with bounded waits on clients
    assert conf.threads == 1
    assert conf.timeout == 30
    assert conf.graceful_timeout == 30  # follows the request time limit
    assert conf.loglevel == "info"
    assert conf.accesslog is None
    assert conf.errorlog == "-"
    assert conf.max_requests > 0 and 0 < conf.max_requests_jitter < conf.max_requests
    assert conf.wsgi_app == "service:create_app()"
    # gunicorn preloads the app before calling on_starting, which empties the metrics directory
    assert conf.preload_app is False


def test_worker_count_floor_on_a_single_cpu(load_conf):
    # Two workers even on one CPU, so a long request does not leave the probes unanswered.
    assert load_conf(cpus=1).workers == 2


def test_environment_overrides(load_conf):
    conf = load_conf(
        MEANLINE_HOST="0.0.0.0",
        MEANLINE_PORT="9000",
        MEANLINE_WORKERS="3",
        MEANLINE_TIMEOUT="120",
        MEANLINE_GRACEFUL_TIMEOUT="10",
        MEANLINE_LOG_LEVEL="WARNING",
    )
    assert conf.bind == "0.0.0.0:9000"
    assert conf.workers == 3
    assert conf.timeout == 120
    assert conf.graceful_timeout == 10
    assert conf.loglevel == "warning"


def test_graceful_timeout_follows_timeout_when_unset(load_conf):
    assert load_conf(MEANLINE_TIMEOUT="45").graceful_timeout == 45


def test_ipv6_host_is_bracketed(load_conf):
    assert load_conf(MEANLINE_HOST="::").bind == "[::]:8080"


def test_empty_value_means_default(load_conf):
    assert load_conf(MEANLINE_PORT="  ", MEANLINE_WORKERS="").bind == "127.0.0.1:8080"


@pytest.mark.parametrize(
    ("name", "value", "message"),
    [
        ("MEANLINE_PORT", "http", r"MEANLINE_PORT must be an integer, got 'http'"),
        # what Kubernetes injects for a Service named "meanline" when service links are on
        ("MEANLINE_PORT", "tcp://10.0.0.1:80", r"MEANLINE_PORT must be an integer"),
        ("MEANLINE_PORT", "70000", r"MEANLINE_PORT must be at least 1 and at most 65535, got 70000"),
        ("MEANLINE_PORT", "0", r"MEANLINE_PORT must be at least 1"),
        ("MEANLINE_WORKERS", "0", r"MEANLINE_WORKERS must be at least 1"),
        ("MEANLINE_WORKERS", "2.5", r"MEANLINE_WORKERS must be an integer, got '2.5'"),
        ("MEANLINE_TIMEOUT", "-5", r"MEANLINE_TIMEOUT must be at least 1"),
        ("MEANLINE_TIMEOUT", "30s", r"MEANLINE_TIMEOUT must be an integer, got '30s'"),
        ("MEANLINE_GRACEFUL_TIMEOUT", "soon", r"MEANLINE_GRACEFUL_TIMEOUT must be an integer"),
        ("MEANLINE_HOST", "local host", r"MEANLINE_HOST must be a host name or IP address"),
        ("MEANLINE_LOG_LEVEL", "verbose", r"MEANLINE_LOG_LEVEL must be one of debug, info"),
    ],
)
def test_bad_values_name_the_variable(load_conf, name, value, message):
    with pytest.raises(ValueError, match=message):
        load_conf(**{name: value})


def test_numeric_libraries_get_one_thread_unless_set(load_conf):
    load_conf(OMP_NUM_THREADS="4")
    assert os.environ["OMP_NUM_THREADS"] == "4"  # an explicit choice is kept
    assert os.environ["OPENBLAS_NUM_THREADS"] == "1"
    assert os.environ["MKL_NUM_THREADS"] == "1"


def test_gunicorn_accepts_every_setting(load_conf):
    conf = load_conf(MEANLINE_HOST="0.0.0.0", MEANLINE_WORKERS="3")
    config = Config()
    taken = {name: value for name, value in vars(conf).items() if name in config.settings}
    for name, value in taken.items():
        config.set(name, value)  # gunicorn's validators raise on a wrong type
    required = {
        "bind",
        "workers",
        "worker_class",
        "timeout",
        "graceful_timeout",
        "keepalive",
        "max_requests",
        "max_requests_jitter",
        "limit_request_line",
        "limit_request_fields",
        "limit_request_field_size",
        "accesslog",
        "errorlog",
        "loglevel",
        "on_starting",
        "child_exit",
    }
    assert required <= taken.keys()
    assert config.address == [("0.0.0.0", 8080)]
    assert config.workers == 3
    assert config.worker_class_str == "service.worker.PacedSyncWorker"
    # gunicorn's own bounds: 0 < limit_request_line <= 8190, limit_request_fields <= 32768
    assert 0 < config.limit_request_line <= 8190
    assert 0 < config.limit_request_fields <= 32768


def test_deploy_file_reexports_the_module(load_conf):
    conf = load_conf(MEANLINE_PORT="9100")
    exported = runpy.run_path(str(REPO_ROOT / "deploy" / "gunicorn.conf.py"))
    settings = Config().settings
    ours = {name: value for name, value in vars(conf).items() if name in settings}
    theirs = {name: value for name, value in exported.items() if name in settings}
    assert theirs == ours
    assert theirs["bind"] == "127.0.0.1:9100"


@pytest.mark.parametrize(
    ("files", "affinity", "expected"),
    [
        ({"cpu.max": "150000 100000\n"}, 8, 2),  # cgroup v2, 1.5 CPUs rounds up to 2
        ({"cpu.max": "max 100000\n"}, 8, 8),  # cgroup v2, no quota
        ({"cpu/cpu.cfs_quota_us": "200000\n", "cpu/cpu.cfs_period_us": "100000\n"}, 8, 2),  # v1
        ({"cpu/cpu.cfs_quota_us": "-1\n", "cpu/cpu.cfs_period_us": "100000\n"}, 8, 8),  # v1, none
        ({"cpu.max": "400000 100000\n"}, 1, 1),  # affinity is the tighter bound
        ({}, 3, 3),  # no cgroup files at all
    ],
)
def test_available_cpus_honours_the_cgroup_quota(monkeypatch, tmp_path, files, affinity, expected):
    for relative, text in files.items():
        path = tmp_path / relative
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text)
    monkeypatch.setattr(os, "sched_getaffinity", lambda pid: set(range(affinity)), raising=False)
    assert conf_module.available_cpus(cgroup_root=tmp_path) == expected


def test_on_starting_removes_only_stale_metric_files(monkeypatch, tmp_path):
    monkeypatch.setattr(conf_module, "_read_api_keys", lambda server: None)  # tested below
    monkeypatch.setattr(conf_module, "_derive_max_memory", lambda server: None)
    directory = tmp_path / "prometheus"
    directory.mkdir()
    (directory / "counter_1234.db").write_bytes(b"stale")
    (directory / "notes.txt").write_text("not ours")
    monkeypatch.setenv("PROMETHEUS_MULTIPROC_DIR", str(directory))
    conf_module.on_starting(server=None)
    assert sorted(path.name for path in directory.iterdir()) == ["notes.txt"]


class _FakeServer:
    """What the hooks use of gunicorn's arbiter: its logger."""

    def __init__(self):
        self.log = logging.getLogger("test.arbiter")


def test_the_master_reads_the_api_keys_at_start_and_on_reload(monkeypatch, tmp_path, caplog):
    from service.api import keys

    monkeypatch.setattr(keys, "_server_digests", None)
    monkeypatch.setattr(conf_module, "_derive_max_memory", lambda server: None)
    monkeypatch.delenv("PROMETHEUS_MULTIPROC_DIR", raising=False)
    monkeypatch.delenv("MEANLINE_API_KEYS", raising=False)
    path = tmp_path / "api-keys"
    path.write_text("first-key-0123456789\n")
    monkeypatch.setenv("MEANLINE_API_KEYS_FILE", str(path))
    conf_module.on_starting(_FakeServer())
    first = keys.server_digests()
    assert len(first) == 1
    path.write_text("second-key-0123456789\nthird-key-0123456789\n")
    conf_module.on_reload(_FakeServer())
    assert len(keys.server_digests()) == 2
    path.write_text("")
    with caplog.at_level(logging.ERROR):
        conf_module.on_reload(_FakeServer())
    assert len(keys.server_digests()) == 2 and "API KEYS NOT RELOADED" in caplog.text
    # At start, a bad key source stops the server rather than leave it open.
    monkeypatch.setattr(keys, "_server_digests", None)
    with pytest.raises(SystemExit):
        conf_module.on_starting(_FakeServer())


def test_on_starting_creates_the_directory(monkeypatch, tmp_path):
    monkeypatch.setattr(conf_module, "_read_api_keys", lambda server: None)  # tested below
    monkeypatch.setattr(conf_module, "_derive_max_memory", lambda server: None)
    directory = tmp_path / "missing" / "prometheus"
    monkeypatch.setenv("PROMETHEUS_MULTIPROC_DIR", str(directory))
    conf_module.on_starting(server=None)
    assert directory.is_dir()


def _fake_prometheus(monkeypatch):
    dead = []
    multiprocess = types.ModuleType("prometheus_client.multiprocess")
    multiprocess.mark_process_dead = dead.append
    package = types.ModuleType("prometheus_client")
    package.multiprocess = multiprocess
    monkeypatch.setitem(sys.modules, "prometheus_client", package)
    monkeypatch.setitem(sys.modules, "prometheus_client.multiprocess", multiprocess)
    return dead


def test_child_exit_marks_the_worker_dead(monkeypatch, tmp_path):
    dead = _fake_prometheus(monkeypatch)
    monkeypatch.setenv("PROMETHEUS_MULTIPROC_DIR", str(tmp_path))
    conf_module.child_exit(server=None, worker=types.SimpleNamespace(pid=4321))
    assert dead == [4321]


def test_child_exit_does_nothing_without_multiprocess_dir(monkeypatch):
    dead = _fake_prometheus(monkeypatch)
    _clear(monkeypatch, "PROMETHEUS_MULTIPROC_DIR")
    conf_module.child_exit(server=None, worker=types.SimpleNamespace(pid=4321))
    assert dead == []


def test_child_exit_tolerates_missing_prometheus_client(monkeypatch, tmp_path):
    monkeypatch.setitem(sys.modules, "prometheus_client", None)  # makes the import fail
    monkeypatch.setenv("PROMETHEUS_MULTIPROC_DIR", str(tmp_path))
    with pytest.raises(ImportError):
        import prometheus_client  # noqa: F401  (the condition the hook must survive)
    assert conf_module.child_exit(server=None, worker=types.SimpleNamespace(pid=1)) is None


STUB_APP = """
def app(environ, start_response):
    start_response("200 OK", [("Content-Type", "text/plain")])
    return [b"stub"]
"""


def _free_port():
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def test_gunicorn_starts_with_the_deploy_file(tmp_path):
    """A real gunicorn start on loopback with deploy/gunicorn.conf.py and a stub WSGI app.

    Bounded: at most 40 polls of 0.25 s for the socket, then SIGTERM and a bounded wait.
    """
    (tmp_path / "stub_app.py").write_text(STUB_APP)
    metrics = tmp_path / "prometheus"
    metrics.mkdir()
    (metrics / "gauge_99999.db").write_bytes(b"stale")
    port = _free_port()
    environment = {key: value for key, value in os.environ.items() if not key.startswith("MEANLINE_")}
    environment.update(MEANLINE_PORT=str(port), MEANLINE_WORKERS="1", PROMETHEUS_MULTIPROC_DIR=str(metrics))
    server = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "gunicorn",
            "-c",
            "deploy/gunicorn.conf.py",
            "--pythonpath",
            str(tmp_path),
            "stub_app:app",
        ],
        cwd=REPO_ROOT,
        env=environment,
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
    )
    try:
        body = None
        for _ in range(40):
            try:
                with urllib.request.urlopen(f"http://127.0.0.1:{port}/", timeout=2) as response:
                    body = response.read()
                break
            except (urllib.error.URLError, ConnectionError):
                if server.poll() is not None:
                    break
                time.sleep(0.25)
        assert body == b"stub", server.stdout.read().decode() if server.poll() is not None else ""
        assert list(metrics.iterdir()) == []  # on_starting emptied the metrics directory
    finally:
        server.send_signal(signal.SIGTERM)
        output = server.communicate(timeout=30)[0].decode()
    assert server.returncode == 0, output
    assert "Using worker: service.worker.PacedSyncWorker" in output
