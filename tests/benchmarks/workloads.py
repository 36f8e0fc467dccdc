"""The measured requests of each calculation, and the same work done in process without HTTP.

Each workload has one single case, a generator of column batches of any size, and
``baseline(body) -> bytes``: the numpy limit. It parses the same JSON bytes with orjson (the
fastest parser at hand), calls the core's ``evaluate_*`` function directly on the arrays and
writes the result arrays, the checks and the failed cases with orjson, without HTTP, without
validation and without the service's response layout. The batches are design sweeps in
plausible ranges (invented, not check values); some diffusion-factor targets are unreachable,
so that batch also carries per-case failures.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import orjson

from service.core import diffusion, gas, machine, triangles, zweifel
from service.core.cases import reason_texts
from service.core.losses.stage import with_stage_efficiency

NUMPY = orjson.OPT_SERIALIZE_NUMPY


@dataclass(frozen=True)
class Workload:
    name: str
    path: str
    single: dict
    columns: Callable[[int, np.random.Generator], dict]
    baseline: Callable[[bytes], bytes]

    def columns_body(self, size: int, seed: int = 1) -> bytes:
        return orjson.dumps({"columns": self.columns(size, np.random.default_rng(seed))})

    def rows_body(self, size: int, seed: int = 1) -> bytes:
        columns = self.columns(size, np.random.default_rng(seed))
        lists = {name: value for name, value in columns.items() if isinstance(value, list)}
        fixed = {name: value for name, value in columns.items() if not isinstance(value, list)}
        names = list(lists)
        cases = [{**fixed, **dict(zip(names, row, strict=True))} for row in zip(*lists.values(), strict=True)]
        return orjson.dumps({"cases": cases})


def _write(result, extra: dict | None = None) -> bytes:
    """The core's arrays as JSON: values, checks (value and status per case), and each failure
    reason with the cases it is the first reason for (the same information as the service's
    per-case errors, in the most compact layout)."""
    # orjson writes C-contiguous arrays only (a per-row check is a column slice of the rows' block).
    columns = {name: np.ascontiguousarray(value) for name, value in {**result.values, **(extra or {})}.items()}
    columns["checks"] = {name: {"value": np.ascontiguousarray(check.value), "status": check.status.tolist()}
                         for name, check in result.checks.items()}
    failed = np.zeros(np.shape(next(iter(result.values.values())))[:1], dtype=bool)
    errors = {}
    for reason, mask in result.failures:
        first = np.broadcast_to(mask, failed.shape) & ~failed
        if first.any():
            # A reason with a number per case has one text per distinct number.
            texts, which = reason_texts(reason, first)
            cases = np.flatnonzero(first)[np.argsort(which, kind="stable")]
            ends = np.cumsum(np.bincount(which, minlength=len(texts)))[:-1]
            errors.update(zip(texts, np.split(cases, ends), strict=True))
        failed |= first
    return orjson.dumps({"columns": columns, "errors": errors}, option=NUMPY)


def failed_cases(baseline_answer: dict) -> list[int]:
    """The failed cases of a baseline answer, in order."""
    return sorted(i for cases in baseline_answer["errors"].values() for i in cases)


def _arrays(body: bytes) -> dict:
    return {name: np.asarray(value, dtype=float) if isinstance(value, list) else value
            for name, value in orjson.loads(body)["columns"].items()}


# -- triangles: a compressor duty sweep with the inlet total state --------------------------------


def _triangle_columns(size: int, rng: np.random.Generator) -> dict:
    return {
        "machine": "compressor",
        "flow_coefficient": rng.uniform(0.4, 0.8, size).tolist(),
        "loading_coefficient": rng.uniform(0.25, 0.5, size).tolist(),
        "reaction": rng.uniform(0.5, 0.8, size).tolist(),
        "blade_speed": rng.uniform(250.0, 400.0, size).tolist(),
        "total_temperature": 288.15,
        "total_pressure": 101325.0,
    }


def _triangle_baseline(body: bytes) -> bytes:
    c = _arrays(body)
    cp, gamma = gas.gas_properties("air")
    result = triangles.evaluate_stage_from_duty(
        c["machine"], c["flow_coefficient"], c["loading_coefficient"], c["reaction"], c["blade_speed"],
        total_temperature=c["total_temperature"], total_pressure=c["total_pressure"], cp=cp, gamma=gamma)
    return _write(result)


TRIANGLES = Workload(
    name="triangles",
    path="/v1/triangles",
    # The README's example.
    single={"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
            "blade_speed": 300},
    columns=_triangle_columns,
    baseline=_triangle_baseline,
)


# -- zweifel: blade counts of a turbine row sweep -------------------------------------------------


def _zweifel_columns(size: int, rng: np.random.Generator) -> dict:
    return {
        "inlet_angle": rng.uniform(-10.0, 40.0, size).tolist(),
        "outlet_angle": rng.uniform(-75.0, -55.0, size).tolist(),
        "axial_chord": rng.uniform(0.02, 0.06, size).tolist(),
        "mean_radius": rng.uniform(0.2, 0.6, size).tolist(),
    }


def _zweifel_baseline(body: bytes) -> bytes:
    c = _arrays(body)
    result = zweifel.evaluate_zweifel_sizing(c["inlet_angle"], c["outlet_angle"], c["axial_chord"],
                                             c["mean_radius"])
    return _write(result, {"axial_chord": c["axial_chord"]})


ZWEIFEL = Workload(
    name="zweifel",
    path="/v1/zweifel",
    single={"inlet_angle": 10.0, "outlet_angle": -65.0, "axial_chord": 0.04, "mean_radius": 0.35},
    columns=_zweifel_columns,
    baseline=_zweifel_baseline,
)


# -- diffusion factor: solidity and blade count of a compressor rotor sweep -----------------------


def _diffusion_columns(size: int, rng: np.random.Generator) -> dict:
    return {
        "row": "rotor",
        "axial_velocity": rng.uniform(120.0, 180.0, size).tolist(),
        "inlet_angle": rng.uniform(-62.0, -45.0, size).tolist(),
        "outlet_angle": rng.uniform(-40.0, -15.0, size).tolist(),
        "target_diffusion_factor": rng.uniform(0.3, 0.5, size).tolist(),
        "chord": 0.05,
        "mean_radius": 0.3,
    }


def _diffusion_baseline(body: bytes) -> bytes:
    c = _arrays(body)
    result = diffusion.evaluate_diffusion_sizing(
        c["row"], c["axial_velocity"], c["inlet_angle"], c["outlet_angle"], c["target_diffusion_factor"],
        chord=c["chord"], mean_radius=c["mean_radius"])
    return _write(result)


DIFFUSION = Workload(
    name="diffusion-factor",
    path="/v1/diffusion-factor",
    single={"row": "rotor", "axial_velocity": 150.0, "inlet_angle": -55.0, "outlet_angle": -35.0,
            "target_diffusion_factor": 0.45, "chord": 0.05, "mean_radius": 0.3},
    columns=_diffusion_columns,
    baseline=_diffusion_baseline,
)


# -- stage efficiency: a compressor duty sweep through Lieblein's and Howell's losses --------------


def _stage_efficiency_columns(size: int, rng: np.random.Generator) -> dict:
    return {
        "machine": "compressor",
        "loss_model": "lieblein_howell",
        "flow_coefficient": rng.uniform(0.4, 0.7, size).tolist(),
        "loading_coefficient": rng.uniform(0.3, 0.45, size).tolist(),
        "reaction": rng.uniform(0.5, 0.7, size).tolist(),
        "blade_speed": rng.uniform(250.0, 350.0, size).tolist(),
        "total_temperature": 288.15,
        "rotor_aspect_ratio": 2.5,
        "stator_aspect_ratio": 3.0,
        "rotor_solidity": rng.uniform(0.9, 1.4, size).tolist(),
        "stator_solidity": 1.1,
        "tip_clearance_to_height": 0.01,
    }


def _stage_efficiency_baseline(body: bytes) -> bytes:
    c = _arrays(body)
    cp, gamma = gas.gas_properties("air")
    stage = triangles.evaluate_stage_from_duty(
        c["machine"], c["flow_coefficient"], c["loading_coefficient"], c["reaction"], c["blade_speed"],
        total_temperature=c["total_temperature"], cp=cp, gamma=gamma)
    result = with_stage_efficiency(stage, c["machine"], c["loss_model"], cp, gamma,
                                   rotor_aspect_ratio=c["rotor_aspect_ratio"],
                                   stator_aspect_ratio=c["stator_aspect_ratio"], rotor_solidity=c["rotor_solidity"],
                                   stator_solidity=c["stator_solidity"],
                                   tip_clearance_to_height=c["tip_clearance_to_height"])
    return _write(result)


STAGE_EFFICIENCY = Workload(
    name="stage-efficiency",
    path="/v1/stage-efficiency",
    single={"machine": "compressor", "loss_model": "lieblein_howell", "flow_coefficient": 0.5,
            "loading_coefficient": 0.4, "reaction": 0.6, "blade_speed": 300.0, "total_temperature": 288.15,
            "rotor_aspect_ratio": 2.5, "stator_aspect_ratio": 3.0, "rotor_solidity": 1.2, "stator_solidity": 1.1},
    columns=_stage_efficiency_columns,
    baseline=_stage_efficiency_baseline,
)

WORKLOADS = (TRIANGLES, ZWEIFEL, DIFFUSION, STAGE_EFFICIENCY)


# -- machine design: a design of experiments over whole compressors ------------------------------


def _machine_columns(size: int, rng: np.random.Generator) -> dict:
    """Whole compressors of one duty (the README's design-of-experiments machine, mean radius held),
    swept in flow coefficient, reaction, loading limit and pressure ratio: five to nine stages; the
    highest flow coefficients at the highest pressure ratios choke the last stages' annuli, so the
    batch also carries per-case failures."""
    return {
        "machine": "compressor",
        "mass_flow": 40.0,
        "total_temperature": 288.15,
        "total_pressure": 101325.0,
        "pressure_ratio": rng.uniform(4.0, 9.0, size).tolist(),
        "shaft_speed": 9500.0,
        "polytropic_efficiency": 0.9,
        "mean_radius": 0.3,
        "max_loading_coefficient": rng.uniform(0.3, 0.45, size).tolist(),
        "flow_coefficient": rng.uniform(0.4, 0.8, size).tolist(),
        "reaction": rng.uniform(0.5, 0.75, size).tolist(),
        "rotor_aspect_ratio": 2.5,
        "stator_aspect_ratio": 3.0,
        "target_diffusion_factor": 0.45,
    }


def _machine_baseline(body: bytes) -> bytes:
    c = _arrays(body)
    cp, gamma = gas.gas_properties("air")
    result = machine.evaluate_machine_design(
        c["machine"], c["mass_flow"], c["total_temperature"], c["total_pressure"], c["pressure_ratio"],
        c["shaft_speed"], c["polytropic_efficiency"], c["flow_coefficient"], c["reaction"], c["rotor_aspect_ratio"],
        c["stator_aspect_ratio"], cp=cp, gamma=gamma, mean_radius=c["mean_radius"],
        max_loading_coefficient=c["max_loading_coefficient"], target_diffusion_factor=c["target_diffusion_factor"])
    return _write(result)


MACHINE_DESIGN = Workload(
    name="machine-design",
    path="/v1/machine-design",
    single={"machine": "compressor", "mass_flow": 40.0, "total_temperature": 288.15, "total_pressure": 101325.0,
            "pressure_ratio": 6.0, "shaft_speed": 9500.0, "polytropic_efficiency": 0.9, "mean_radius": 0.3,
            "max_loading_coefficient": 0.4, "flow_coefficient": 0.55, "reaction": 0.6, "rotor_aspect_ratio": 2.5,
            "stator_aspect_ratio": 3.0, "target_diffusion_factor": 0.45},
    columns=_machine_columns,
    baseline=_machine_baseline,
)
#: Whole machines: measured in batches of 10,000 (tests/benchmarks/__main__.py, measure_machines).
MACHINE_WORKLOADS = (MACHINE_DESIGN,)
