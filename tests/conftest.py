"""Figures that tests report (request counts, drill results), printed in pytest's terminal summary.

pytest captures what tests print, so a test hands its figures to ``report_figure`` and they
appear in a "figures" section at the end of every run, ``pytest -q`` included.
"""

import pytest

_FIGURES = pytest.StashKey[list]()


def pytest_configure(config):
    config.stash[_FIGURES] = []


@pytest.fixture(scope="session")
def report_figure(pytestconfig):
    """``report_figure(topic, text)``: show one line of figures in the terminal summary."""

    def report(topic: str, text: str) -> None:
        pytestconfig.stash[_FIGURES].append((topic, text))

    return report


def pytest_terminal_summary(terminalreporter, exitstatus, config):
    figures = config.stash.get(_FIGURES, [])
    if figures:
        terminalreporter.section("figures")
        for topic, text in figures:
            terminalreporter.write_line(f"{topic}: {text}")
