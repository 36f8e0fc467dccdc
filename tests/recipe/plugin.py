"""pytest plugin of the recipe test: serves the guide's minimal endpoint in a temporary registry.

Loaded with ``-p tests.recipe.plugin`` (tests/recipe/test_recipe.py runs pytest in a subprocess),
it does, before any test module is imported, what DEVELOPERS.md ("Adding an endpoint") tells a
contributor to do in the repository, and nothing else:

- registry: the calculation appended to ``service.api.registry.CALCULATIONS``;
- the test example: its ``Example`` added to ``tests.api.examples.EXAMPLES``;
- the OpenAPI document: regenerated (``python -m service spec``'s text) into ``--recipe-spec`` and
  ``service.__main__.SPEC_PATH`` pointed at it, as committing the regenerated document would.
"""

from __future__ import annotations

import sys
from pathlib import Path


def pytest_addoption(parser):
    parser.addoption("--recipe-spec", required=True, help="where to write the regenerated OpenAPI document")


def pytest_configure(config):
    import service.__main__ as command
    from service.api import registry

    if any(c.name == "blade-speed" for c in registry.CALCULATIONS):
        return
    # Before anything binds ``from service.api.registry import CALCULATIONS`` (the app, the tests).
    assert "service.api.app" not in sys.modules, "the plugin must run before the app is imported"
    from tests.recipe import blade_speed_api

    registry.CALCULATIONS = (*registry.CALCULATIONS, blade_speed_api.CALCULATION)

    from tests.api import examples

    # What the guide puts in tests/api/examples.py's EXAMPLES (invented inputs, not check values).
    examples.EXAMPLES["blade-speed"] = examples.Example(
        good={"shaft_speed": 12000.0, "mean_radius": 0.3},
        bad={"shaft_speed": 1e300, "mean_radius": 1e300},
        bad_reason="not a finite number",
    )

    spec = Path(config.getoption("--recipe-spec")).resolve()
    spec.write_text(command.spec_text(), encoding="utf-8")
    command.SPEC_PATH = spec
