"""Input fields shared by several calculations: one name and one description everywhere."""

from __future__ import annotations

from marshmallow import fields

from service.api.fields import CaseSchema, Option, Quantity, QuantityList
from service.core.gas import GAS_NAMES
from service.core.split import MAX_STAGES, SPLIT_RULES
from service.core.triangles import MACHINES

ANGLE_LIMITS = {"minimum": -90.0, "maximum": 90.0, "exclusive_minimum": True, "exclusive_maximum": True}
POSITIVE = {"minimum": 0.0, "exclusive_minimum": True}


def angle(description: str, **kwargs) -> Quantity:
    """A flow angle from the axial direction, positive in the direction of rotor motion."""
    return Quantity(f"{description} Measured from axial, positive in the direction of rotor motion. [deg]",
                    "deg", **ANGLE_LIMITS, **kwargs)


def positive(description: str, unit: str, **kwargs) -> Quantity:
    return Quantity(description, unit, **POSITIVE, **kwargs)


def machine_field(**kwargs) -> Option:
    return Option("Kind of machine: `compressor` (work in) or `turbine` (work out).", MACHINES, **kwargs)


class GasInputs(CaseSchema):
    """The working fluid: a named perfect gas, optionally with its cp or gamma replaced."""

    gas = Option(
        "Named perfect gas: `air` (cp 1005 J/(kg K), gamma 1.40) or `combustion_products` "
        "(cp 1148 J/(kg K), gamma 1.333).",
        GAS_NAMES,
        load_default="air",
    )
    cp = positive("Specific heat at constant pressure, replacing the named gas's value. [J kg^-1 K^-1]",
                  "J kg^-1 K^-1", load_default=None)
    gamma = Quantity("Ratio of specific heats, replacing the named gas's value; greater than 1. [-]", "-",
                     minimum=1.0, exclusive_minimum=True, maximum=5.0 / 3.0, load_default=None)


def _inlet_state(required: bool) -> dict:
    return {
        "total_temperature": positive("Total (stagnation) temperature at the inlet (station 1). [K]", "K",
                                      required=required),
        "total_pressure": positive("Total (stagnation) pressure at the inlet (station 1). [Pa]", "Pa",
                                   required=required),
    }


class InletStateInputs(CaseSchema):
    """The total (stagnation) state at the inlet of the stage, when the caller wants states."""

    locals().update(_inlet_state(required=False))


class RequiredInletStateInputs(CaseSchema):
    """The total (stagnation) state at the inlet of the stage or machine, always needed."""

    locals().update(_inlet_state(required=True))


def output(description: str, unit: str) -> fields.Float:
    """An output number, documented with its unit."""
    return fields.Float(metadata={"description": description, "x-unit": unit})


def integer_output(description: str) -> fields.Integer:
    return fields.Integer(metadata={"description": description, "x-unit": "-"})


EFFICIENCY_LIMITS = {"minimum": 0.0, "maximum": 1.0, "exclusive_minimum": True}


class StageSplitInputs(GasInputs, RequiredInletStateInputs):
    """The duty and the split choices shared by the stage split and the whole-machine design."""

    machine = machine_field(required=True)
    pressure_ratio = Quantity("Overall total pressure ratio, above 1: p0_out / p0_in for a compressor, "
                              "p0_in / p0_out for a turbine. [-]", "-", minimum=1.0, exclusive_minimum=True,
                              required=True)
    stages = Quantity("Number of stages. [-]", "-", minimum=1, maximum=MAX_STAGES, integer=True)
    max_stage_pressure_ratio = Quantity(
        "Largest stage pressure ratio (turbine: expansion ratio) allowed; the fewest stages that keep every "
        "stage within it are found. [-]", "-", minimum=1.0, exclusive_minimum=True)
    rule = Option("How the work is shared: `equal_work` (every stage the same total temperature change), "
                  "`equal_pressure_ratio`, or `weights` (relative work shares, one per stage).", SPLIT_RULES,
                  load_default="equal_work")
    weights = QuantityList("Relative work share of each stage, front to rear (rule `weights`); normalised. [-]",
                           "-", minimum=0.0, exclusive_minimum=True)
