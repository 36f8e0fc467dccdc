"""Redocly CLI's lint of the committed OpenAPI document: no errors and no warnings.

The rules are Redocly's recommended set with the changes in ``redocly.yaml`` (each one justified
there). The CLI is fetched from the npm registry by ``npx`` at a pinned version; the test is
skipped only where ``npx`` (Node.js) is not installed.
"""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import pytest

from service.__main__ import SPEC_PATH

ROOT = Path(__file__).resolve().parents[2]
#: Pinned: a new release may add rules. 2.77.0 installs and runs on the Node.js 20 of CI's machine.
REDOCLY_CLI = "@redocly/cli@2.77.0"


@pytest.mark.skipif(shutil.which("npx") is None, reason="npx (Node.js) is not installed: Redocly CLI cannot run")
def test_redocly_lint_finds_nothing():
    result = subprocess.run(
        ["npx", "--yes", REDOCLY_CLI, "lint", str(SPEC_PATH), "--config", "redocly.yaml", "--format=json"],
        cwd=ROOT, capture_output=True, text=True, timeout=600)
    assert result.stdout.strip(), result.stderr
    report = json.loads(result.stdout)
    problems = [(p["ruleId"], p["severity"], p["message"], [loc.get("pointer") for loc in p.get("location", [])])
                for p in report["problems"]]
    assert report["totals"]["errors"] == 0 and report["totals"]["warnings"] == 0, problems
    assert result.returncode == 0, result.stderr
