"""The contributor guide's recipe ("Adding an endpoint" in DEVELOPERS.md) is complete and true.

A minimal endpoint, ``POST /v1/blade-speed`` (U = 2 pi r N / 60), is built exactly as the guide
says: a core function returning CaseResults (tests/recipe/blade_speed_core.py, standing for
``service/core/``), an API module of schema, outputs, choices and compute
(tests/recipe/blade_speed_api.py, standing for ``service/api/``), and, in a temporary registry
(tests/recipe/plugin.py), its registry entry, its EXAMPLES entry and the regenerated OpenAPI
document. The parametrised API, contract and reliability tests then run on it in a subprocess and
must pass, with a good number of them actually run for it: a rule the guide does not write down
fails here.
"""

from __future__ import annotations

import math
import os
import subprocess
import sys
import xml.etree.ElementTree as ElementTree
from collections import Counter
from pathlib import Path

import numpy as np

from tests.recipe.blade_speed_core import evaluate_blade_speed

ROOT = Path(__file__).resolve().parents[2]
#: The test files parametrised over the registry (by calculation name or path).
PARAMETRISED = ["tests/api", "tests/contract/test_bad_input.py", "tests/contract/test_fuzz.py",
                "tests/reliability/test_access.py", "tests/reliability/test_limits.py",
                "tests/reliability/test_memory.py"]
#: Tests that read the whole registry without being parametrised by it (the new endpoint included).
REGISTRY_WIDE = ["test_every_calculation_has_examples", "test_committed_document_equals_the_generated_one",
                 "test_document_is_valid_openapi", "test_service_serves_the_committed_document",
                 "test_every_calculation_is_documented", "test_every_documented_unit_is_known_to_pint",
                 "test_the_corpus_is_large_and_every_case_applies_somewhere",
                 "test_every_measured_cost_is_of_a_served_calculation_and_shape"]
#: Fewer tests than this run on the new endpoint means the selection has lost them.
MIN_ENDPOINT_TESTS = 100
TIMEOUT_SECONDS = 1500


def test_the_minimal_endpoint_core_gives_the_blade_speed():
    # From the definition, not from the formula under test: at 6000 rev/min the shaft turns 100
    # times a second, and a point at r = 0.5 m travels one circumference, 2 pi 0.5 m = pi m, per turn.
    result = evaluate_blade_speed(6000.0, 0.5)
    assert math.isclose(float(result.values["blade_speed"]), 100 * math.pi, rel_tol=1e-15)
    # Broadcasting: one shaft speed, three radii; the blade speed is proportional to the radius.
    speeds = evaluate_blade_speed(6000.0, np.array([0.25, 0.5, 1.0])).values["blade_speed"]
    np.testing.assert_allclose(speeds, [50 * math.pi, 100 * math.pi, 200 * math.pi], rtol=1e-15)


def test_the_recipe_gives_an_endpoint_whose_parametrised_tests_pass(tmp_path):
    report = tmp_path / "report.xml"
    selection = " or ".join(["blade-speed", *REGISTRY_WIDE])
    command = [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "-p", "tests.recipe.plugin",
               "--recipe-spec", str(tmp_path / "openapi.json"), f"--junitxml={report}", "-k", selection,
               *PARAMETRISED]
    run = subprocess.run(command, cwd=ROOT, capture_output=True, text=True, timeout=TIMEOUT_SECONDS,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    tail = "\n".join(run.stdout.splitlines()[-40:])
    assert run.returncode == 0, tail

    cases = list(ElementTree.parse(report).getroot().iter("testcase"))
    outcome = Counter("skipped" if case.find("skipped") is not None else "passed" for case in cases)
    endpoint = [case for case in cases if "blade-speed" in case.get("name") and case.find("skipped") is None]
    by_file = Counter(case.get("classname") for case in endpoint)  # the module: no test classes here
    ran = {case.get("name").split("[")[0] for case in cases if case.find("skipped") is None}
    assert len(endpoint) >= MIN_ENDPOINT_TESTS, (by_file, tail)
    # Every parametrised file that names calculations ran some of its tests on the new endpoint.
    for module in ("test_shapes", "test_errors", "test_openapi", "test_csv", "test_outputs", "test_query",
                   "test_columns_read", "test_bad_input", "test_access", "test_limits", "test_memory"):
        assert any(name.endswith(module) for name in by_file), (module, by_file)
    # schemathesis names its tests by operation in the keywords only: POST and GET /v1/blade-speed.
    fuzzed = [case for case in cases if case.get("classname").endswith("test_fuzz")]
    assert len(fuzzed) == 2 and all(case.find("skipped") is None for case in fuzzed), fuzzed
    assert set(REGISTRY_WIDE) <= ran, set(REGISTRY_WIDE) - ran
    assert outcome["passed"] >= len(endpoint) + len(fuzzed) + len(REGISTRY_WIDE)
