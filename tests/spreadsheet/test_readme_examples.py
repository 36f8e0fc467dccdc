"""The README's spreadsheet section works as written: the URL of its cell formula answers the number
it shows, and its pandas example runs against a real server (its host swapped for the test's)."""

from __future__ import annotations

import re
import urllib.request
from pathlib import Path

import pytest

from tests.live_server import live_server

README = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
SECTION = README[README.index("## Spreadsheets, CSV and units"):README.index("## Conventions")]
README_HOST = "http://127.0.0.1:8080"


def test_the_cell_formula_answers_the_number_the_readme_shows(tmp_path):
    formula = re.search(r'^=NUMBERVALUE\(WEBSERVICE\("([^"]+)"\), "\."\)$', SECTION, re.MULTILINE)
    shown = re.search(r"gives (\d+\.\d+) \(alpha1", SECTION)
    assert formula and shown
    with live_server(tmp_path) as server:
        with urllib.request.urlopen(formula.group(1).replace(README_HOST, server.url), timeout=30) as answer:
            assert answer.headers.get_content_type() == "text/plain"
            text = answer.read().decode()
    # Calc shows 15 significant digits of the double that the text holds.
    assert float(text) == pytest.approx(float(shown.group(1)), rel=1e-14)


def test_the_pandas_example_runs_as_written(tmp_path, capsys):
    pytest.importorskip("pandas")
    code = re.search(r"```python\n(.*?)```", SECTION, re.DOTALL).group(1)
    assert len(code.strip().splitlines()) <= 10
    with live_server(tmp_path) as server:
        exec(compile(code.replace(README_HOST, server.url), "README.md", "exec"), {})  # noqa: S102
    printed = capsys.readouterr().out
    assert "W1" in printed and "compressor" in printed and "error" in printed
