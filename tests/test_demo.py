"""``python -m service demo``: every section is there and every printed number is the service's.

The demo's machine is invented; nothing here checks its physics. The test builds the designer's
requests itself from the demo's design intent, asks a live server the same questions, and
compares each number of the report with the answer at the precision the report prints it.
"""

import argparse
import json
import math
import os
import re
import subprocess
import sys

import pytest
from numpy.testing import assert_allclose

from service import demo
from tests.live_server import REPO_ROOT, free_port, live_server

DEMO_TIMEOUT = 120  # [s] for the demo process, a bound and not a measurement


def _blade_speed(mean_radius):
    return 2 * math.pi * demo.SHAFT_SPEED / 60 * mean_radius


def _ok(answer):
    status, _, body = answer
    assert status == 200, body
    return body


def _expected(server):
    """The design asked of the server directly: split, per-stage triangles, then the rows."""
    answers = {}
    for machine, intent in (("compressor", demo.COMPRESSOR), ("turbine", demo.TURBINE)):
        u = _blade_speed(intent["mean_radius"])
        split = _ok(server.post("/v1/stage-split", {
            "machine": machine, "gas": intent["gas"], "pressure_ratio": intent["pressure_ratio"],
            "total_temperature": intent["total_temperature"], "total_pressure": intent["total_pressure"],
            "polytropic_efficiency": intent["polytropic_efficiency"], "rule": intent["rule"],
            "max_loading_coefficient": intent["max_loading_coefficient"], "blade_speed": u,
            "mass_flow": intent["mass_flow"]}))
        stages = _ok(server.post("/v1/triangles", {"cases": [
            {"machine": machine, "gas": intent["gas"], "flow_coefficient": intent["flow_coefficient"],
             "reaction": intent["reaction"], "blade_speed": u, "loading_coefficient": psi,
             "total_temperature": t0, "total_pressure": p0}
            for psi, t0, p0 in zip(split["stage_loading_coefficient"], split["stage_inlet_total_temperature"],
                                   split["stage_inlet_total_pressure"], strict=True)]}))["results"]
        if machine == "compressor":
            rows = [(stage_number, row, {"row": row, "axial_velocity": stage["axial_velocity"],
                                         "inlet_angle": stage[inlet], "outlet_angle": stage[outlet],
                                         "target_diffusion_factor": intent["target_diffusion_factor"],
                                         "chord": intent["chord"], "mean_radius": intent["mean_radius"]})
                    for stage_number, stage in enumerate(stages, 1)
                    for row, inlet, outlet in (("rotor", "beta1", "beta2"), ("stator", "alpha2", "alpha3"))]
            path = "/v1/diffusion-factor"
        else:
            rows = [(stage_number, row, {"inlet_angle": stage[inlet], "outlet_angle": stage[outlet],
                                         "axial_chord": intent[f"{row}_axial_chord"],
                                         "mean_radius": intent["mean_radius"],
                                         "zweifel_coefficient": intent["zweifel_coefficient"]})
                    for stage_number, stage in enumerate(stages, 1)
                    for row, inlet, outlet in (("stator", "alpha1", "alpha2"), ("rotor", "beta2", "beta3"))]
            path = "/v1/zweifel"
        results = _ok(server.post(path, {"cases": [case for _, _, case in rows]}))["results"]
        answers[machine] = {"split": split, "stages": stages, "rows": [
            (n, row, case, result) for (n, row, case), result in zip(rows, results, strict=True)]}
    return answers


# --- reading the report ------------------------------------------------------------------------
def _tables(report):
    """Every table of the report, in order: a list of rows, each a dict header -> printed text."""
    tables, lines = [], report.splitlines()
    for i, line in enumerate(lines):
        headers = line.split()
        units = lines[i + 1].split() if i + 1 < len(lines) else []
        if headers[:1] != ["stage"] or not units or not all(u.startswith("[") for u in units):
            continue
        rows = []
        for row_line in lines[i + 2:]:
            cells = row_line.split()
            if not cells or not cells[0].isdigit():
                break
            assert len(cells) == len(headers), row_line
            rows.append(dict(zip(headers, cells, strict=True)))
        tables.append(rows)
    return tables


def _close(printed, expected):
    """The printed text equals the value rounded to the printed number of decimals."""
    decimals = len(printed.split(".")[1]) if "." in printed else 0
    assert_allclose(float(printed), expected, rtol=0, atol=0.5 * 10.0**-decimals + 1e-9)


CHECK_LINE = re.compile(r"^\s+(?P<status>warn|fail)\s+(?P<machine>compressor|turbine)"
                        r"(?: stages? (?P<stages>[\d, -]+?))?(?: (?P<row>rotor|stator))?\s{2,}"
                        r"(?P<endpoint>\S+)\s+(?P<name>\S+)\s+(?P<value>-?\d+\.\d+)\s+\((?P<rule>.*)\)$")


def _stages(text):
    numbers = []
    for part in text.split(","):
        first, _, last = part.strip().partition("-")
        numbers += range(int(first), int(last or first) + 1)
    return numbers


def _printed_flags(report):
    section = report.split(demo.SECTION_TITLES[4], 1)[1]
    flags = {}
    for line in section.splitlines():
        match = CHECK_LINE.match(line)
        if match:
            for stage in _stages(match["stages"]):
                key = (match["machine"], stage, match["row"] or "", match["endpoint"], match["name"],
                       match["status"])
                assert key not in flags, line
                flags[key] = match["value"]
    return flags


def _expected_checks(answers):
    """(machine, stage, row, endpoint, name, status) -> value of every judged value."""
    judged = {}

    def add(machine, stage, row, endpoint, checks):
        for name, check in checks.items():
            if isinstance(check["value"], list):
                for k, (value, status) in enumerate(zip(check["value"], check["status"], strict=True), 1):
                    judged[(machine, k, row, endpoint, name, status)] = value
            else:
                judged[(machine, stage, row, endpoint, name, check["status"])] = check["value"]

    for machine, answer in answers.items():
        add(machine, None, "", "stage-split", answer["split"]["checks"])
        for n, stage in enumerate(answer["stages"], 1):
            add(machine, n, "", "triangles", stage["checks"])
        endpoint = "diffusion-factor" if machine == "compressor" else "zweifel"
        for n, row, _, result in answer["rows"]:
            add(machine, n, row, endpoint, result["checks"])
    return judged


# --- the tests ---------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def live_demo(tmp_path_factory):
    """The demo's report from a subprocess against a live server, and the server's own answers."""
    directory = tmp_path_factory.mktemp("demo")
    with live_server(directory, workers=1) as server:
        environment = {k: v for k, v in os.environ.items() if not k.startswith("MEANLINE_")}
        run = subprocess.run([sys.executable, "-m", "service", "demo", "--url", server.url], cwd=REPO_ROOT,
                             env=environment, capture_output=True, text=True, timeout=DEMO_TIMEOUT)
        answers = _expected(server)
    return run, answers, server


def test_demo_runs_against_the_live_server_and_has_every_section(live_demo):
    run, _, server = live_demo
    assert run.returncode == 0, run.stderr
    report = run.stdout
    assert f"Computed by the running service at {server.url}." in report
    assert demo.MACHINE_NAME in report and "invented" in report
    positions = [report.index(title) for title in demo.SECTION_TITLES]
    assert positions == sorted(positions)
    assert demo.STAGE_SPLIT_MISSING not in report
    assert len(_tables(report)) == 6  # split x 2, triangles x 2, Zweifel, diffusion


def test_demo_requests_are_in_the_server_log(live_demo):
    """The demo went through the server: its requests are in the server's request log."""
    _, _, server = live_demo
    lines = [json.loads(line) for line in server.stdout.read_text().splitlines() if line]
    demo_lines = [line for line in lines if line["path"] != "/readyz"][:7]  # before the test's own requests
    assert [(line["method"], line["path"], line["status"]) for line in demo_lines] == [
        ("GET", "/healthz", 200),
        ("POST", "/v1/stage-split", 200), ("POST", "/v1/triangles", 200),
        ("POST", "/v1/diffusion-factor", 200),
        ("POST", "/v1/stage-split", 200), ("POST", "/v1/triangles", 200), ("POST", "/v1/zweifel", 200),
    ]


def test_printed_split_equals_the_service(live_demo):
    run, answers, _ = live_demo
    split_tables = _tables(run.stdout)[:2]
    for machine, table in zip(("compressor", "turbine"), split_tables, strict=True):
        split = answers[machine]["split"]
        assert len(table) == split["stage_count"]
        for i, row in enumerate(table):
            assert int(row["stage"]) == i + 1
            for header, (field, scale) in demo.SPLIT_FIELDS_BY_COLUMN.items():
                _close(row[header], split[field][i] / scale)
        # The summary line, compared as the text it must be (the report wraps prose lines).
        summary = (f"stages {split['stage_count']}, outlet T0 {split['outlet_total_temperature']:.2f} K, "
                   f"outlet p0 {split['outlet_total_pressure'] / 1e3:.2f} kPa, work "
                   f"{split['work'] / 1e3:.2f} kJ/kg, isentropic efficiency "
                   f"{split['isentropic_efficiency']:.4f}, power "
                   f"{split['power'] / 1e6:.3f} MW")
        assert summary in " ".join(run.stdout.split())


def test_printed_triangles_equal_the_service(live_demo):
    run, answers, _ = live_demo
    for machine, table in zip(("compressor", "turbine"), _tables(run.stdout)[2:4], strict=True):
        stages = answers[machine]["stages"]
        assert len(table) == len(stages)
        for row, stage in zip(table, stages, strict=True):
            for header, printed in row.items():
                if header != "stage":
                    _close(printed, stage[header])  # the headers are the endpoint's field names


def test_printed_blade_rows_equal_the_service(live_demo):
    run, answers, _ = live_demo
    zweifel_table, diffusion_table = _tables(run.stdout)[4:6]
    for table, machine in ((zweifel_table, "turbine"), (diffusion_table, "compressor")):
        rows = answers[machine]["rows"]
        assert len(table) == len(rows)
        for printed, (stage, row, case, result) in zip(table, rows, strict=True):
            assert (int(printed["stage"]), printed["row"]) == (stage, row)
            _close(printed["inlet"], case["inlet_angle"])
            _close(printed["outlet"], case["outlet_angle"])
            _close(printed["pitch"], result["pitch"] * 1e3)
            assert int(printed["blades"]) == result["blade_count"]
            if machine == "turbine":
                _close(printed["cx"], case["axial_chord"] * 1e3)
                _close(printed["s/cx"], result["pitch_to_axial_chord"])
                _close(printed["Zw"], result["zweifel_coefficient_achieved"])
            else:
                _close(printed["solidity"], result["solidity"])
                _close(printed["DF"], result["diffusion_factor_achieved"])
                _close(printed["de_haller"], result["de_haller"])


def test_every_check_that_warns_or_fails_is_listed(live_demo):
    run, answers, _ = live_demo
    judged = _expected_checks(answers)
    expected = {key: value for key, value in judged.items() if key[-1] in ("warn", "fail")}
    printed = _printed_flags(run.stdout)
    assert expected, "the demo design should show at least one warning"
    assert set(printed) == set(expected)
    for key, text in printed.items():
        _close(text, expected[key])
    statuses = [key[-1] for key in judged]
    summary = (f"{len(judged)} values judged: {statuses.count('ok')} ok, {statuses.count('warn')} warn, "
               f"{statuses.count('fail')} fail.")
    assert summary in " ".join(run.stdout.split())


# --- without a server ----------------------------------------------------------------------------
def test_without_a_server_the_demo_runs_in_process(monkeypatch, capsys):
    nobody = f"http://127.0.0.1:{free_port()}"
    monkeypatch.setattr(demo, "DEFAULT_URL", nobody)
    monkeypatch.delenv("MEANLINE_URL", raising=False)
    assert demo.run(argparse.Namespace(url=None, in_process=False)) == 0
    report = capsys.readouterr().out
    assert f"Computed by an app in this process (no service answered at {nobody})." in report
    assert all(title in report for title in demo.SECTION_TITLES)
    assert '"request_id"' not in report  # the in-process app's request log stays out of the report


def test_an_explicit_url_must_answer(monkeypatch, capsys):
    nobody = f"http://127.0.0.1:{free_port()}"
    monkeypatch.setenv("MEANLINE_URL", nobody)
    assert demo.run(argparse.Namespace(url=None, in_process=False)) == 1
    captured = capsys.readouterr()
    assert captured.out == ""
    assert f"no meanline service answered GET {nobody}/healthz" in captured.err


class _WithoutStageSplit(demo.InProcessClient):
    """A service from before the stage-split endpoint: 404 there, as Flask answers any unknown path."""

    def post(self, path, body):
        return super().post("/v1/no-such-endpoint" if path == "/v1/stage-split" else path, body)


def test_a_service_without_the_stage_split_is_reported():
    designs = demo.run_design(_WithoutStageSplit())
    assert all(design.split is None for design in designs.values())
    report = demo.render(designs, "a test service")
    assert f"{demo.STAGE_SPLIT_MISSING} at this service (HTTP 404)" in " ".join(report.split())
    assert report.count(f"skipped ({demo.STAGE_SPLIT_MISSING})") == 4
    assert all(title in report for title in demo.SECTION_TITLES)
