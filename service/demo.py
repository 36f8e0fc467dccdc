"""``python -m service demo``: a preliminary design of a fictional gas turbine through the service.

The machine, the Corrie Vale CV6, and every number of its design intent below are invented
for this demo; they describe no real engine. The demo composes the endpoints as a designer
would: the stage split of each machine's pressure ratio, then each stage's velocity triangles
from the split's loading at a chosen flow coefficient and reaction, then Zweifel blade counts
for the turbine rows and diffusion-factor solidities for the compressor rows, and lists every
design check that warns or fails.

It runs against the service at ``--url`` (or ``MEANLINE_URL``, default ``DEFAULT_URL``) when
one answers there, else against an app created in this process; the report says which. All
physics is the service's: the demo only passes one endpoint's answers to the next and prints.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import sys
import textwrap
import urllib.error
import urllib.request
from dataclasses import dataclass
from typing import Any

DEFAULT_URL = "http://127.0.0.1:8080"
PROBE_TIMEOUT = 2.0  # [s] for the health probe of a running service
REQUEST_TIMEOUT = 30.0  # [s] for each calculation request

# --- Design intent of the fictional machine (invented numbers) ----------------------------------
MACHINE_NAME = "Corrie Vale CV6"
MACHINE_DESCRIPTION = "a fictional single-shaft industrial gas turbine of about 6 MW"
SHAFT_SPEED = 14_000.0  # [rpm]
COMPRESSOR = {
    "gas": "air",
    "pressure_ratio": 12.0,
    "total_temperature": 288.15,  # [K]
    "total_pressure": 101_325.0,  # [Pa]
    "polytropic_efficiency": 0.89,
    "max_loading_coefficient": 0.40,
    "rule": "equal_work",
    "mass_flow": 21.0,  # [kg s^-1]
    "mean_radius": 0.232,  # [m]
    "flow_coefficient": 0.50,
    "reaction": 0.50,
    "chord": 0.045,  # [m], true chord of rotors and stators
    "target_diffusion_factor": 0.45,
}
TURBINE = {
    "gas": "combustion_products",
    "pressure_ratio": 10.8,  # expansion ratio p0_in / p0_out
    "total_temperature": 1350.0,  # [K]
    "total_pressure": 1_167_000.0,  # [Pa]
    "polytropic_efficiency": 0.87,
    "max_loading_coefficient": 1.5,
    "rule": "equal_work",
    "mass_flow": 21.4,  # [kg s^-1], air plus fuel
    "mean_radius": 0.273,  # [m]
    "flow_coefficient": 0.60,
    "reaction": 0.50,
    "stator_axial_chord": 0.040,  # [m]
    "rotor_axial_chord": 0.032,  # [m]
    "zweifel_coefficient": 0.80,
}
MACHINES = {"compressor": COMPRESSOR, "turbine": TURBINE}
SPLIT_FIELDS = ("gas", "pressure_ratio", "total_temperature", "total_pressure", "polytropic_efficiency",
                "max_loading_coefficient", "rule", "mass_flow")

STAGE_SPLIT_MISSING = "stage-split endpoint not available"
STATUSES = ("ok", "warn", "fail")
REPORT_WIDTH = 100  # [characters] of the prose lines; tables are as wide as their columns


class DemoError(Exception):
    """The service refused a request, or could not be reached."""


def blade_speed(mean_radius: float) -> float:
    """Blade speed at the mean radius at ``SHAFT_SPEED``. [m s^-1]"""
    return 2.0 * math.pi * SHAFT_SPEED / 60.0 * mean_radius


# --- Clients ------------------------------------------------------------------------------------


class HttpClient:
    """A running service, over HTTP (standard library only)."""

    def __init__(self, url: str):
        self.url = url.rstrip("/")
        self.where = f"the running service at {self.url}"

    def get(self, path: str, timeout: float = PROBE_TIMEOUT) -> tuple[int, Any]:
        return self._send(urllib.request.Request(self.url + path, method="GET"), timeout)

    def post(self, path: str, body: dict) -> tuple[int, Any]:
        request = urllib.request.Request(self.url + path, data=json.dumps(body).encode(), method="POST",
                                         headers={"Content-Type": "application/json"})
        return self._send(request, REQUEST_TIMEOUT)

    @staticmethod
    def _send(request, timeout) -> tuple[int, Any]:
        try:
            with urllib.request.urlopen(request, timeout=timeout) as response:
                return response.status, _json_or_none(response.read())
        except urllib.error.HTTPError as error:
            return error.code, _json_or_none(error.read())


class InProcessClient:
    """An app created in this process; its request log is kept off the report."""

    where = "an app in this process (no service was running)"

    def __init__(self):
        # This app is not one of a server's workers: its metrics must not land in a server's
        # multiprocess directory (prometheus_client reads the variable when first imported).
        os.environ.pop("PROMETHEUS_MULTIPROC_DIR", None)
        from service import create_app

        self._client = create_app({"LOG_LEVEL": "warning"}).test_client()

    def post(self, path: str, body: dict) -> tuple[int, Any]:
        response = self._client.post(path, json=body)
        return response.status_code, response.get_json(silent=True)


def _json_or_none(raw: bytes):
    try:
        return json.loads(raw)
    except ValueError:
        return None


def connect(url: str | None, in_process: bool = False):
    """The client to run the demo with.

    A URL given explicitly (option or ``MEANLINE_URL``) must answer; without one the demo uses
    ``DEFAULT_URL`` if a meanline service answers there and an in-process app otherwise.
    """
    if in_process:
        client = InProcessClient()
        client.where = "an app in this process (--in-process)"
        return client
    explicit = url or os.environ.get("MEANLINE_URL", "").strip() or None
    client = HttpClient(explicit or DEFAULT_URL)
    try:
        status, body = client.get("/healthz")
        answered = status == 200 and isinstance(body, dict) and body.get("status") == "ok"
    except (OSError, urllib.error.URLError):
        answered = False
    if answered:
        return client
    if explicit:
        raise DemoError(f"no meanline service answered GET {client.url}/healthz; start one with "
                        "`python -m service serve`, or run the demo with --in-process")
    fallback = InProcessClient()
    fallback.where = f"an app in this process (no service answered at {DEFAULT_URL})"
    return fallback


def _call(client, path: str, body: dict) -> dict:
    return _answer(path, *client.post(path, body))


def _answer(path: str, status: int, answer) -> dict:
    if status != 200:
        detail = answer.get("detail", "") if isinstance(answer, dict) else ""
        request_id = answer.get("request_id", "") if isinstance(answer, dict) else ""
        raise DemoError(f"POST {path} answered HTTP {status}: {detail} (request id {request_id or 'none'})")
    return answer


# --- The design ---------------------------------------------------------------------------------


@dataclass
class MachineDesign:
    """One machine's requests and the service's answers."""

    machine: str
    blade_speed: float
    split_request: dict
    split: dict | None = None
    triangles_request: dict | None = None
    triangles: list | None = None
    rows_request: dict | None = None
    rows: list | None = None  # rotor and stator per stage, in the order of rows_request


def split_request(machine: str) -> dict:
    """The stage split of one machine's pressure ratio, at its mean blade speed."""
    intent = MACHINES[machine]
    body = {"machine": machine, **{name: intent[name] for name in SPLIT_FIELDS}}
    body["blade_speed"] = blade_speed(intent["mean_radius"])
    return body


def triangles_request(machine: str, split: dict) -> dict:
    """Each stage's triangles at the split's loading, inlet total state and the chosen duty."""
    intent = MACHINES[machine]
    duty = {"machine": machine, "gas": intent["gas"], "flow_coefficient": intent["flow_coefficient"],
            "reaction": intent["reaction"], "blade_speed": blade_speed(intent["mean_radius"])}
    stages = zip(split["stage_loading_coefficient"], split["stage_inlet_total_temperature"],
                 split["stage_inlet_total_pressure"], strict=True)
    return {"cases": [{**duty, "loading_coefficient": psi, "total_temperature": t0, "total_pressure": p0}
                      for psi, t0, p0 in stages]}


def rows_request(machine: str, triangles: list) -> dict:
    """Compressor: solidity and blade count of each row for the target diffusion factor, with
    angles in the row's frame. Turbine: Zweifel blade count of each row, likewise."""
    intent = MACHINES[machine]
    cases = []
    for stage in triangles:
        if machine == "compressor":
            common = {"axial_velocity": stage["axial_velocity"], "chord": intent["chord"],
                      "mean_radius": intent["mean_radius"],
                      "target_diffusion_factor": intent["target_diffusion_factor"]}
            cases += [
                {"row": "rotor", "inlet_angle": stage["beta1"], "outlet_angle": stage["beta2"], **common},
                {"row": "stator", "inlet_angle": stage["alpha2"], "outlet_angle": stage["alpha3"], **common},
            ]
        else:
            common = {"mean_radius": intent["mean_radius"],
                      "zweifel_coefficient": intent["zweifel_coefficient"]}
            cases += [{"inlet_angle": stage["alpha1"], "outlet_angle": stage["alpha2"],
                       "axial_chord": intent["stator_axial_chord"], **common},
                      {"inlet_angle": stage["beta2"], "outlet_angle": stage["beta3"],
                       "axial_chord": intent["rotor_axial_chord"], **common}]
    return {"cases": cases}


ROW_ENDPOINTS = {"compressor": "/v1/diffusion-factor", "turbine": "/v1/zweifel"}
ROW_NAMES = {"compressor": ("rotor", "stator"), "turbine": ("stator", "rotor")}


def run_design(client) -> dict[str, MachineDesign]:
    """Both machines' designs; a machine's later steps are left empty when the stage split is
    not available from this service."""
    designs = {}
    for machine in MACHINES:
        design = MachineDesign(machine, blade_speed(MACHINES[machine]["mean_radius"]), split_request(machine))
        status, answer = client.post("/v1/stage-split", design.split_request)
        if status == 404:
            designs[machine] = design
            continue
        design.split = _answer("/v1/stage-split", status, answer)
        design.triangles_request = triangles_request(machine, design.split)
        design.triangles = _batch(_call(client, "/v1/triangles", design.triangles_request))
        design.rows_request = rows_request(machine, design.triangles)
        design.rows = _batch(_call(client, ROW_ENDPOINTS[machine], design.rows_request))
        designs[machine] = design
    return designs


def _batch(answer: dict) -> list:
    if answer["errors"]:
        first = answer["errors"][0]
        raise DemoError(f"case {first['index']} of a batch failed: {first['detail']}")
    return answer["results"]


# --- The report ---------------------------------------------------------------------------------


def _table(columns: list[tuple[str, str, str]], rows: list[list]) -> list[str]:
    """Columns of (header, unit, format); every cell right-aligned under its header."""
    cells = [[format(value, fmt) for value, (_, _, fmt) in zip(row, columns, strict=True)] for row in rows]
    widths = [max(len(header), len(unit), *(len(row[i]) for row in cells)) for i, (header, unit, _) in
              enumerate(columns)]
    lines = ["  ".join(header.rjust(w) for (header, _, _), w in zip(columns, widths, strict=True)),
             "  ".join(unit.rjust(w) for (_, unit, _), w in zip(columns, widths, strict=True))]
    lines += ["  ".join(cell.rjust(w) for cell, w in zip(row, widths, strict=True)) for row in cells]
    return ["    " + line for line in lines]


SPLIT_COLUMNS = [
    ("stage", "", "d"), ("PR", "[-]", ".4f"), ("T0_in", "[K]", ".2f"), ("T0_out", "[K]", ".2f"),
    ("p0_in", "[kPa]", ".2f"), ("p0_out", "[kPa]", ".2f"), ("dT0", "[K]", ".2f"), ("work", "[kJ/kg]", ".2f"),
    ("eta_s", "[-]", ".4f"), ("psi", "[-]", ".4f"),
]
SPLIT_FIELDS_BY_COLUMN = {
    "PR": ("stage_pressure_ratio", 1.0), "T0_in": ("stage_inlet_total_temperature", 1.0),
    "T0_out": ("stage_outlet_total_temperature", 1.0), "p0_in": ("stage_inlet_total_pressure", 1e3),
    "p0_out": ("stage_outlet_total_pressure", 1e3), "dT0": ("stage_total_temperature_change", 1.0),
    "work": ("stage_work", 1e3), "eta_s": ("stage_isentropic_efficiency", 1.0),
    "psi": ("stage_loading_coefficient", 1.0),
}
TRIANGLE_COLUMNS = {
    "compressor": [("alpha1", "deg"), ("alpha2", "deg"), ("beta1", "deg"), ("beta2", "deg"), ("V1", "m/s"),
                   ("W1", "m/s"), ("V2", "m/s"), ("W2", "m/s"), ("M1", "-"), ("M_rel1", "-"), ("M2", "-"),
                   ("de_haller_rotor", "-"), ("de_haller_stator", "-")],
    "turbine": [("alpha1", "deg"), ("alpha2", "deg"), ("beta2", "deg"), ("beta3", "deg"), ("V2", "m/s"),
                ("W2", "m/s"), ("V3", "m/s"), ("W3", "m/s"), ("M2", "-"), ("M_rel3", "-"), ("T2", "K"),
                ("de_haller_rotor", "-"), ("de_haller_stator", "-")],
}
UNIT_FORMATS = {"deg": ".2f", "m/s": ".1f", "-": ".3f", "K": ".1f"}


def _split_section(design: MachineDesign) -> list[str]:
    request, split, machine = design.split_request, design.split, design.machine
    ratio = "pressure ratio" if machine == "compressor" else "expansion ratio"
    lines = _prose(
        f"{machine.capitalize()}: {ratio} {request['pressure_ratio']:g} from "
        f"{request['total_temperature']:.2f} K and {request['total_pressure'] / 1e3:.2f} kPa "
        f"({request['gas']}), "
        f"polytropic efficiency {request['polytropic_efficiency']:g}, {request['rule'].replace('_', ' ')}, "
        f"loading coefficient at most {request['max_loading_coefficient']:g} at U = "
        f"{request['blade_speed']:.1f} m/s")
    if split is None:
        return lines + _prose(f"{STAGE_SPLIT_MISSING} at this service (HTTP 404): the {machine}'s triangles "
                              "and blade rows need its per-stage loading and are skipped", indent=4)
    lines += _prose(
        f"stages {split['stage_count']}, outlet T0 {split['outlet_total_temperature']:.2f} K, outlet p0 "
        f"{split['outlet_total_pressure'] / 1e3:.2f} kPa, work {split['work'] / 1e3:.2f} kJ/kg, isentropic "
        f"efficiency {split['isentropic_efficiency']:.4f}, power {split['power'] / 1e6:.3f} MW", indent=4)
    fields = [SPLIT_FIELDS_BY_COLUMN[header] for header, _, _ in SPLIT_COLUMNS[1:]]
    rows = [[i + 1] + [split[field][i] / scale for field, scale in fields]
            for i in range(split["stage_count"])]
    return lines + _table(SPLIT_COLUMNS, rows)


def _triangles_section(design: MachineDesign) -> list[str]:
    intent = MACHINES[design.machine]
    lines = _prose(f"{design.machine.capitalize()}: flow coefficient {intent['flow_coefficient']:.2f}, "
                   f"reaction {intent['reaction']:.2f}; each stage's loading coefficient and inlet total "
                   "state from the split")
    names = TRIANGLE_COLUMNS[design.machine]
    columns = [("stage", "", "d")] + [(name, f"[{unit}]", UNIT_FORMATS[unit]) for name, unit in names]
    rows = [[i + 1] + [stage[name] for name, _ in names] for i, stage in enumerate(design.triangles)]
    return lines + _table(columns, rows)


ROW_COLUMNS = [("stage", "", "d"), ("row", "", "s"), ("inlet", "[deg]", ".2f"), ("outlet", "[deg]", ".2f")]
ZWEIFEL_COLUMNS = ROW_COLUMNS + [("cx", "[mm]", ".1f"), ("s/cx", "[-]", ".4f"), ("blades", "[-]", "d"),
                                 ("pitch", "[mm]", ".2f"), ("Zw", "[-]", ".4f")]
DIFFUSION_COLUMNS = ROW_COLUMNS + [
    ("solidity", "[-]", ".4f"), ("blades", "[-]", "d"), ("pitch", "[mm]", ".2f"), ("DF", "[-]", ".4f"),
    ("de_haller", "[-]", ".4f"),
]


def _zweifel_section(design: MachineDesign) -> list[str]:
    intent = MACHINES["turbine"]
    lines = _prose(f"Target Zweifel coefficient {intent['zweifel_coefficient']:.2f}, mean radius "
                   f"{intent['mean_radius'] * 1e3:.0f} mm; angles in the row's frame (relative for rotors)")
    rows = [[j // 2 + 1, ROW_NAMES["turbine"][j % 2], case["inlet_angle"], case["outlet_angle"],
             case["axial_chord"] * 1e3, row["pitch_to_axial_chord"], row["blade_count"], row["pitch"] * 1e3,
             row["zweifel_coefficient_achieved"]]
            for j, (case, row) in enumerate(zip(design.rows_request["cases"], design.rows, strict=True))]
    return lines + _table(ZWEIFEL_COLUMNS, rows)


def _diffusion_section(design: MachineDesign) -> list[str]:
    intent = MACHINES["compressor"]
    lines = _prose(f"Target diffusion factor {intent['target_diffusion_factor']:.2f} at the mean radius "
                   f"{intent['mean_radius'] * 1e3:.0f} mm, chord {intent['chord'] * 1e3:.0f} mm; velocities "
                   "in the row's frame (relative for rotors)")
    rows = [[j // 2 + 1, case["row"], case["inlet_angle"], case["outlet_angle"], row["solidity"],
             row["blade_count"], row["pitch"] * 1e3, row["diffusion_factor_achieved"], row["de_haller"]]
            for j, (case, row) in enumerate(zip(design.rows_request["cases"], design.rows, strict=True))]
    return lines + _table(DIFFUSION_COLUMNS, rows)


def judged_checks(designs: dict[str, MachineDesign]) -> list[dict]:
    """Every judged value of every answer, in report order, with the machine, stage and row."""
    entries = []

    def add(machine, stage, row, endpoint, checks):
        for name, check in checks.items():
            per_stage = isinstance(check["value"], list)
            values = check["value"] if per_stage else [check["value"]]
            statuses = check["status"] if per_stage else [check["status"]]
            for k, (value, status) in enumerate(zip(values, statuses, strict=True)):
                entries.append({"machine": machine, "stage": k + 1 if per_stage else stage, "row": row,
                                "endpoint": endpoint, "name": name, "value": value, "status": status,
                                "comparison": check["comparison"], "limit": check["limit"],
                                "fail_limit": check["fail_limit"], "basis": check["basis"]})

    for machine, design in designs.items():
        if design.split is None:
            continue
        add(machine, None, "", "stage-split", design.split["checks"])
        for i, stage in enumerate(design.triangles):
            add(machine, i + 1, "", "triangles", stage["checks"])
        for j, row in enumerate(design.rows):
            add(machine, j // 2 + 1, ROW_NAMES[machine][j % 2], ROW_ENDPOINTS[machine][4:], row["checks"])
    return entries


VALUE_FORMAT = ".4f"


def _stages_text(stages: list[int]) -> str:
    """1, 2, 3, 5 -> 'stages 1-3, 5'."""
    runs = []
    for stage in stages:
        if runs and stage == runs[-1][1] + 1:
            runs[-1][1] = stage
        else:
            runs.append([stage, stage])
    text = ", ".join(f"{a}-{b}" if b > a else f"{a}" for a, b in runs)
    return f"stage{'s' if len(stages) > 1 else ''} {text}"


def flagged_lines(entries: list[dict]) -> list[str]:
    """One line per rule, row and status that warns or fails; the stages that share the value
    at its printed precision are listed together."""
    groups: dict[tuple, list[int]] = {}
    for entry in entries:
        if entry["status"] not in ("warn", "fail"):
            continue
        key = (entry["machine"], entry["row"], entry["endpoint"], entry["name"], entry["status"],
               format(entry["value"], VALUE_FORMAT), entry["comparison"], entry["limit"], entry["fail_limit"],
               entry["basis"])
        groups.setdefault(key, []).append(entry["stage"])
    lines = []
    for key, stages in groups.items():
        machine, row, endpoint, name, status, value, comparison, limit, fail_limit, basis = key
        bound = f"{'min' if comparison == 'at_least' else 'max'} {limit:g}"
        if fail_limit is not None:
            bound += f", fail beyond {fail_limit:g}"
        where = " ".join(part for part in (machine, _stages_text(stages), row) if part)
        lines.append(f"    {status:<4}  {where:<30}  {endpoint:<16}  {name:<20}  {value:>7}  "
                     f"({bound}; {basis})")
    return lines


def _checks_section(designs: dict[str, MachineDesign]) -> list[str]:
    entries = judged_checks(designs)
    counts = {status: sum(entry["status"] == status for entry in entries) for status in STATUSES}
    lines = _prose(f"{len(entries)} values judged: {counts['ok']} ok, {counts['warn']} warn, "
                   f"{counts['fail']} fail. Those that warn or fail:")
    return lines + (flagged_lines(entries) or ["    none"])


SECTION_TITLES = ("1. Stage split", "2. Velocity triangles at the mean radius",
                  "3. Zweifel blade counts (turbine rows)", "4. Diffusion factors (compressor rows)",
                  "5. Design checks that warn or fail")


def render(designs: dict[str, MachineDesign], where: str) -> str:
    """The plain-text report."""
    compressor, turbine = designs["compressor"], designs["turbine"]
    title = f"{MACHINE_NAME}: preliminary meanline design of {MACHINE_DESCRIPTION}"
    lines = [title, "=" * len(title)]
    lines += _prose(f"Computed by {where}.", indent=0, hanging=0)
    lines += _prose("The machine and its design intent are invented for this demo.", indent=0, hanging=0)
    lines += _prose(f"Single shaft at {SHAFT_SPEED:.0f} rpm; compressor mean radius "
                    f"{COMPRESSOR['mean_radius'] * 1e3:.0f} mm (U {compressor.blade_speed:.1f} m/s), turbine "
                    f"mean radius {TURBINE['mean_radius'] * 1e3:.0f} mm (U {turbine.blade_speed:.1f} m/s).",
                    indent=0, hanging=0)
    lines += ["", f"{SECTION_TITLES[0]} (POST /v1/stage-split)"]
    for design in (compressor, turbine):
        lines += _split_section(design)
    lines += _prose("PR: stage pressure ratio (turbine: expansion ratio); eta_s: stage isentropic "
                    "efficiency; psi: stage loading coefficient", indent=4)
    lines += ["", f"{SECTION_TITLES[1]} (POST /v1/triangles)"]
    lines += _available(compressor, _triangles_section) + _available(turbine, _triangles_section)
    lines += ["", f"{SECTION_TITLES[2]} (POST /v1/zweifel)"] + _available(turbine, _zweifel_section)
    lines += ["", f"{SECTION_TITLES[3]} (POST /v1/diffusion-factor)"]
    lines += _available(compressor, _diffusion_section)
    lines += ["", SECTION_TITLES[4]] + _checks_section(designs) + [""]
    lines += _prose("Preliminary-design estimates from mean-radius methods and rules of thumb: to be "
                    "confirmed by detailed analysis and test.", indent=0, hanging=0)
    return "\n".join(lines) + "\n"


def _prose(text: str, indent: int = 2, hanging: int = 2) -> list[str]:
    return textwrap.wrap(text, width=REPORT_WIDTH, initial_indent=" " * indent,
                         subsequent_indent=" " * (indent + hanging))


def _available(design: MachineDesign, section) -> list[str]:
    if design.split is None:
        return [f"  {design.machine.capitalize()}: skipped ({STAGE_SPLIT_MISSING})"]
    return section(design)


# --- Command line -------------------------------------------------------------------------------


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--url", help=f"service to use (default MEANLINE_URL, else {DEFAULT_URL} if a "
                                      "service answers there, else an app in this process)")
    parser.add_argument("--in-process", action="store_true", help="use an app in this process, not a server")


def run(args) -> int:
    try:
        client = connect(args.url, args.in_process)
        designs = run_design(client)
    except DemoError as error:
        print(f"demo: {error}", file=sys.stderr)
        return 1
    sys.stdout.write(render(designs, client.where))
    return 0 if all(design.split is not None for design in designs.values()) else 1
