"""Static checks of deploy/Dockerfile (no container engine needed).

The rules are the Dockerfile best practices of the Docker documentation ("Best practices for
writing Dockerfiles": pin base images, multi-stage builds, don't run as root, prefer COPY to
ADD) and the project's own contract (port and settings in service/gunicorn_conf.py).
"""

import http.server
import os
import pathlib
import subprocess
import sys
import threading

import pytest

from service.gunicorn_conf import DEFAULT_PORT
from tests.deploy import dockerfile_lint

REPO_ROOT = pathlib.Path(__file__).resolve().parents[2]
DOCKERFILE = REPO_ROOT / "deploy" / "Dockerfile"
VENV = "/opt/venv"


@pytest.fixture(scope="module")
def text():
    return DOCKERFILE.read_text()


@pytest.fixture(scope="module")
def stages(text):
    return dockerfile_lint.parse(text)


def test_dockerfile_passes_every_rule(text):
    assert dockerfile_lint.lint(text, DEFAULT_PORT) == []


def test_is_multi_stage_on_one_pinned_base(stages):
    assert len(stages) >= 2
    bases = {stage.base for stage in stages}
    assert len(bases) == 1, bases  # the venv must run on the interpreter it was built with
    repository, tag, digest = dockerfile_lint.split_image(stages[0].base)
    assert repository == "python"
    assert tag.endswith("-slim-bookworm")
    assert digest is not None and dockerfile_lint.DIGEST.match(digest)


def test_build_stage_builds_the_project_wheel_into_the_venv(stages):
    build = stages[0]
    copied = [path for item in build.all("COPY") for path in dockerfile_lint.copy_sources(item)[1]]
    assert "pyproject.toml" in copied and "service" in copied
    commands = " ".join(item.arguments for item in build.all("RUN"))
    assert f"python -m venv {VENV}" in commands
    assert f"{VENV}/bin/pip wheel --no-deps --wheel-dir /wheels ." in commands
    assert f"{VENV}/bin/pip install /wheels/" in commands


def test_final_stage_copies_only_the_venv(stages):
    final, build = stages[-1], stages[0]
    assert final.all("ADD") == []
    copies = [dockerfile_lint.copy_sources(item) for item in final.all("COPY")]
    assert copies == [([f"--from={build.name}"], [VENV])]


def test_runtime_environment(stages):
    env = stages[-1].env()
    assert env["MEANLINE_HOST"] == "0.0.0.0"
    assert int(env["MEANLINE_PORT"]) == DEFAULT_PORT
    assert env["PROMETHEUS_MULTIPROC_DIR"].startswith("/tmp/")
    assert env["PATH"].startswith(f"{VENV}/bin:")
    for name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        assert env[name] == "1"


def test_healthcheck_uses_the_standard_library_on_healthz(stages):
    healthcheck = stages[-1].all("HEALTHCHECK")[-1].arguments
    command = healthcheck[healthcheck.index("CMD") + len("CMD") :]
    words = dockerfile_lint.Instruction("CMD", command).exec_form()
    assert words[:2] == ["python", "-c"]
    assert "urllib.request" in words[2] and "/healthz" in words[2]
    assert "curl" not in healthcheck and "wget" not in healthcheck


def test_command_is_the_serve_command_in_exec_form(stages):
    assert stages[-1].all("CMD")[-1].exec_form() == ["python", "-m", "service", "serve"]


def test_build_context_allows_every_copied_path():
    """.dockerignore is an allowlist ('*' then '!path'); each COPY source must be let back in."""
    rules = [
        line.strip()
        for line in (REPO_ROOT / ".dockerignore").read_text().splitlines()
        if line.strip() and not line.startswith("#")
    ]
    assert rules[0] == "*"
    allowed = {rule[1:] for rule in rules if rule.startswith("!")}
    stages = dockerfile_lint.parse(DOCKERFILE.read_text())
    for stage in stages:
        for item in stage.all("COPY"):
            options, sources = dockerfile_lint.copy_sources(item)
            if any(option.startswith("--from=") for option in options):
                continue
            for source in sources:
                assert source.rstrip("/") in allowed, f"{source} is excluded by .dockerignore"


# The rules themselves must be able to fail: each bad example breaks exactly one of them.
GOOD = """\
FROM python:3.11.14-slim-bookworm AS build
RUN python -m venv /opt/venv
FROM python:3.11.14-slim-bookworm
COPY --from=build /opt/venv /opt/venv
USER 10001:10001
EXPOSE 8080
HEALTHCHECK CMD ["python", "-c", "pass"]
CMD ["python", "-m", "service", "serve"]
"""


@pytest.mark.parametrize(
    ("old", "new", "problem"),
    [
        ("FROM python:3.11.14-slim-bookworm\n", "FROM python:latest\n", "not pinned"),
        ("FROM python:3.11.14-slim-bookworm\n", "FROM python\n", "not pinned"),
        ("FROM python:3.11.14-slim-bookworm\n", "FROM python:3.11-slim\n", "not pinned"),
        ("FROM python:3.11.14-slim-bookworm\n", "FROM python:3.11.14-slim@sha256:abc\n", "malformed digest"),
        (
            "FROM python:3.11.14-slim-bookworm AS build\n",
            "ARG BASE=python:3.11\nFROM $BASE AS build\n",
            "not written out",
        ),
        ("USER 10001:10001\n", "USER 0\n", "final USER is root"),
        ("USER 10001:10001\n", "USER meanline\n", "not a numeric uid"),
        ("USER 10001:10001\n", "", "no USER"),
        ('HEALTHCHECK CMD ["python", "-c", "pass"]\n', "", "no HEALTHCHECK"),
        ('HEALTHCHECK CMD ["python", "-c", "pass"]\n', "HEALTHCHECK NONE\n", "no HEALTHCHECK"),
        ("EXPOSE 8080\n", "EXPOSE 8000\n", "differs from the default port"),
        ("EXPOSE 8080\n", "EXPOSE 8080 9090\n", "differs from the default port"),
        (
            "USER 10001:10001\n",
            "RUN apt-get update && apt-get install -y \\\n    build-essential\nUSER 10001:10001\n",
            "compilers ['build-essential']",
        ),
        ("USER 10001:10001\n", "RUN apt-get install -y gcc\nUSER 10001:10001\n", "compilers ['gcc']"),
        (
            "COPY --from=build /opt/venv /opt/venv\n",
            "ADD https://example.invalid/tool.tar.gz /opt/\n",
            "ADD of a remote source",
        ),
    ],
)
def test_rules_catch_bad_examples(old, new, problem):
    assert dockerfile_lint.lint(GOOD, 8080) == []
    assert old in GOOD
    problems = dockerfile_lint.lint(GOOD.replace(old, new, 1), 8080)
    assert len(problems) == 1 and problem in problems[0], problems


def test_parser_joins_continuations_and_skips_comments():
    stages = dockerfile_lint.parse(
        "# syntax=docker/dockerfile:1\nFROM a:1.2.3 AS one\nRUN echo a \\\n# inside\n    && echo b\n"
    )
    assert [(stage.base, stage.name) for stage in stages] == [("a:1.2.3", "one")]
    assert [item.arguments for item in stages[0].instructions] == ["echo a && echo b"]


class _HealthHandler(http.server.BaseHTTPRequestHandler):
    status = 200

    def do_GET(self):
        self.send_response(self.status if self.path == "/healthz" else 404)
        self.end_headers()

    def log_message(self, *args):
        pass


@pytest.mark.parametrize(("status", "exit_code"), [(200, 0), (503, 1)])
def test_healthcheck_command_exit_code(stages, status, exit_code):
    """Run the image's health check command against a stand-in server on loopback."""
    healthcheck = stages[-1].all("HEALTHCHECK")[-1].arguments
    command = dockerfile_lint.Instruction("CMD", healthcheck[healthcheck.index("CMD") + 3 :]).exec_form()
    handler = type("Handler", (_HealthHandler,), {"status": status})
    with http.server.HTTPServer(("127.0.0.1", 0), handler) as server:
        thread = threading.Thread(target=server.serve_forever, daemon=True)
        thread.start()
        try:
            environment = dict(os.environ, MEANLINE_PORT=str(server.server_address[1]))
            result = subprocess.run(
                [sys.executable, *command[1:]], env=environment, capture_output=True, timeout=30
            )
        finally:
            server.shutdown()
    assert result.returncode == exit_code, result.stderr.decode()
