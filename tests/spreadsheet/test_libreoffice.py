"""A real spreadsheet: LibreOffice Calc, headless, fetching the GET form with WEBSERVICE.

The test starts the service (``python -m service serve`` on a loopback port), writes a flat ODF
spreadsheet whose cells call ``WEBSERVICE`` (``COM.MICROSOFT.WEBSERVICE`` in ODF's formula
namespace) on GET URLs, has LibreOffice Calc recalculate it and save it as CSV
(tests/spreadsheet/calc_uno.py, run by the system's Python with LibreOffice's uno module), and
checks that the cells hold the numbers and statuses that the service answers to the same cases
sent as JSON.

LibreOffice comes from Debian's packages libreoffice-calc and python3-uno. Where they are
missing, the fixture installs them with apt-get (as CI runs, as root); where that is not
possible, the test is skipped and says why.
"""

from __future__ import annotations

import math
import os
import shutil
import subprocess
import time
import urllib.parse
from xml.sax.saxutils import quoteattr

import pytest

from tests.api.examples import EXAMPLES
from tests.live_server import free_port, live_server

SYSTEM_PYTHON = "/usr/bin/python3"
PACKAGES = ("libreoffice-calc", "python3-uno")
SCRIPT = os.path.join(os.path.dirname(__file__), "calc_uno.py")

TRIANGLES = {"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
             "blade_speed": 300}
# The same stage with its blade speed and inlet state in US customary units (converted by the service).
TRIANGLES_US = {"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
                "blade_speed": "984.25 ft/s", "total_temperature": "518.67 degR", "total_pressure": "14.696 psi"}
SPLIT = dict(EXAMPLES["stage-split"].variants[1])
MACHINE = dict(EXAMPLES["machine-design"].good)

#: (case path, case, output, what the cell holds): "text" is WEBSERVICE's own text, "number" the
#: text read as a number with NUMBERVALUE(...; ".") (independent of the spreadsheet's locale).
CELLS = (
    ("/v1/triangles", TRIANGLES, "alpha1", "text"),
    ("/v1/triangles", TRIANGLES, "alpha1", "number"),
    ("/v1/triangles", TRIANGLES, "checks.de_haller_rotor.status", "text"),
    ("/v1/triangles", TRIANGLES_US, "M1", "number"),
    ("/v1/stage-split", SPLIT, "stage_pressure_ratio", "text"),
    ("/v1/machine-design", MACHINE, "stage_count", "number"),
)


def _installed() -> bool:
    if shutil.which("soffice") is None or not os.path.exists(SYSTEM_PYTHON):
        return False
    return subprocess.run([SYSTEM_PYTHON, "-c", "import uno"], capture_output=True, timeout=60).returncode == 0


@pytest.fixture(scope="module")
def libreoffice(report_figure):
    if _installed():
        return
    if os.geteuid() != 0 or shutil.which("apt-get") is None:
        pytest.skip(f"LibreOffice Calc is not installed and cannot be installed here (needs root and apt-get): "
                    f"install the Debian packages {' '.join(PACKAGES)}")
    started = time.monotonic()
    environment = {**os.environ, "DEBIAN_FRONTEND": "noninteractive"}
    subprocess.run(["apt-get", "update"], capture_output=True, timeout=600, env=environment)
    install = subprocess.run(["apt-get", "install", "-y", "--no-install-recommends", *PACKAGES],
                             capture_output=True, text=True, timeout=1200, env=environment)
    if install.returncode != 0 or not _installed():
        pytest.skip(f"apt-get could not install {' '.join(PACKAGES)}: {install.stderr[-500:]}")
    report_figure("LibreOffice install", f"{' '.join(PACKAGES)} installed by apt-get in "
                                         f"{time.monotonic() - started:.0f} s")


def _query(case: dict, output: str) -> str:
    pairs = []
    for name, value in case.items():
        if isinstance(value, list):
            pairs.append((name, ",".join(str(v) for v in value)))
        else:
            pairs.append((name, str(value)))
    pairs.append(("output", output))
    return urllib.parse.urlencode(pairs, quote_via=urllib.parse.quote)


def _formula(url: str, kind: str) -> str:
    fetch = f'COM.MICROSOFT.WEBSERVICE("{url}")'
    return f"of:={fetch}" if kind == "text" else f'of:=NUMBERVALUE({fetch};".")'


def _document(urls: list[tuple[str, str]]) -> str:
    cells = "".join(f"<table:table-cell table:formula={quoteattr(_formula(url, kind))}/>" for url, kind in urls)
    return (
        '<?xml version="1.0" encoding="UTF-8"?>\n'
        '<office:document xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
        'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
        'xmlns:of="urn:oasis:names:tc:opendocument:xmlns:of:1.2" office:version="1.2" '
        'office:mimetype="application/vnd.oasis.opendocument.spreadsheet">'
        '<office:body><office:spreadsheet><table:table table:name="Cases">'
        f"<table:table-row>{cells}</table:table-row>"
        "</table:table></office:spreadsheet></office:body></office:document>\n")


def _expected(server, path: str, case: dict, output: str):
    status, _, body = server.post(path, case)
    assert status == 200, body
    if output.startswith("checks."):
        _, name, part = output.split(".")
        return body["checks"][name][part]
    return body[output]


def test_calc_cells_hold_the_services_numbers(libreoffice, tmp_path):
    import csv

    with live_server(tmp_path) as server:
        urls = [(f"{server.url}{path}?{_query(case, output)}", kind) for path, case, output, kind in CELLS]
        assert all(len(url) < 2000 for url, _ in urls)
        document = tmp_path / "cases.fods"
        document.write_text(_document(urls), encoding="utf-8")
        output = tmp_path / "cases.csv"
        run = subprocess.run([SYSTEM_PYTHON, SCRIPT, str(document), str(output), str(tmp_path / "profile"),
                              str(free_port())], capture_output=True, text=True, timeout=300)
        assert run.returncode == 0, run.stderr
        with open(output, newline="", encoding="utf-8") as handle:
            cells = next(csv.reader(handle))
        assert len(cells) == len(CELLS), cells
        for cell, (path, case, name, kind) in zip(cells, CELLS, strict=True):
            expected = _expected(server, path, case, name)
            if isinstance(expected, list):  # a list answers as its values separated by commas
                assert [float(v) for v in cell.split(",")] == expected, (name, cell)
            elif isinstance(expected, str):
                assert cell == expected, (name, cell)
            elif kind == "text":  # WEBSERVICE's text: the service's shortest round-trip digits
                assert float(cell) == expected and cell == repr(expected), (name, cell)
            else:  # a number in Calc: a double, written back at full precision
                assert math.isclose(float(cell), expected, rel_tol=1e-14), (name, cell, expected)
        log = (tmp_path / "server.stdout").read_text()
        # Calc asks OPTIONS and HEAD before the GET; every one of them was answered 200.
        assert '"method":"GET"' in log and '"status":4' not in log and '"status":5' not in log
