"""Input fields shared by several calculations: one name and one description everywhere."""

from __future__ import annotations

from marshmallow import fields

from service.api.declarations import Alternative, Choice
from service.api.fields import CaseSchema, Option, Quantity, QuantityList
from service.core.gas import GAS_NAMES
from service.core.split import MAX_STAGES, SPLIT_RULES
from service.core.triangles import MACHINES

ANGLE_LIMITS = {"minimum": -90.0, "maximum": 90.0, "exclusive_minimum": True, "exclusive_maximum": True}
POSITIVE = {"minimum": 0.0, "exclusive_minimum": True}

# Physical ranges of dimensional inputs. Within them every calculation is right to rounding (the
# core forms its results from ratios, so they do not depend on the scale); outside them a number is
# not a physical value of the quantity for any turbomachine, and tiny values (down to the
# subnormal floats, which carry fewer digits) would make ratios of them meaningless.
#: Speeds: from 1 mm/s to below the speed of light. [m s^-1]
SPEED_LIMITS = {"minimum": 1e-3, "maximum": 299792458.0, "exclusive_maximum": True}
#: Lengths: from 1 micrometre, far below any blade chord, pitch, height or radius. [m]
LENGTH_LIMITS = {"minimum": 1e-6}
#: Temperatures: from 1 K; no gas turbomachine runs colder. [K]
TEMPERATURE_LIMITS = {"minimum": 1.0}
#: Pressures: from 1 Pa; below it the mean free path of air (about 7 mm at 1 Pa and 300 K, kinetic
#: theory) is as long as a blade chord and the flow is no longer a continuum. [Pa]
PRESSURE_LIMITS = {"minimum": 1.0}
#: Dimensionless design parameters whose tiny values mean no flow, no work or no blade: flow and
#: loading coefficients, solidities, aspect ratios, Zweifel targets. [-]
RATIO_LIMITS = {"minimum": 1e-6}


def angle(description: str, **kwargs) -> Quantity:
    """A flow angle from the axial direction, positive in the direction of rotor motion."""
    return Quantity(f"{description} Measured from axial, positive in the direction of rotor motion. [deg]",
                    "deg", **ANGLE_LIMITS, **kwargs)


def positive(description: str, unit: str, **kwargs) -> Quantity:
    return Quantity(description, unit, **POSITIVE, **kwargs)


def _ranged(description: str, range_text: str) -> str:
    """The description with its physical range put before the closing unit in brackets."""
    text, unit = description.rsplit(" [", 1)
    return f"{text} {range_text} [{unit}"


def speed(description: str, **kwargs) -> Quantity:
    """A speed in its physical range (:data:`SPEED_LIMITS`)."""
    return Quantity(_ranged(description, "From 1e-3 m/s to below the speed of light."), "m s^-1",
                    **SPEED_LIMITS, **kwargs)


def length(description: str, **kwargs) -> Quantity:
    """A length in its physical range (:data:`LENGTH_LIMITS`)."""
    return Quantity(_ranged(description, "At least 1e-6 m."), "m", **LENGTH_LIMITS, **kwargs)


def shaft_speed_field(description: str, **kwargs) -> Quantity:
    """A shaft speed of at least 1e-3 rev/min."""
    return Quantity(_ranged(description, "At least 1e-3 rev/min."), "rev min^-1", minimum=1e-3, **kwargs)


def ratio(description: str, **kwargs) -> Quantity:
    """A positive dimensionless design parameter of at least 1e-6 (:data:`RATIO_LIMITS`)."""
    return Quantity(_ranged(description, "At least 1e-6."), "-", **RATIO_LIMITS, **kwargs)


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
    cp = Quantity("Specific heat at constant pressure, replacing the named gas's value; at least 1. [J kg^-1 K^-1]",
                  "J kg^-1 K^-1", minimum=1.0, load_default=None)
    gamma = Quantity("Ratio of specific heats, replacing the named gas's value; greater than 1. [-]", "-",
                     minimum=1.0, exclusive_minimum=True, maximum=5.0 / 3.0, load_default=None)


def _inlet_state(required: bool) -> dict:
    return {
        "total_temperature": Quantity("Total (stagnation) temperature at the inlet (station 1); at least 1 K. [K]",
                                      "K", **TEMPERATURE_LIMITS, required=required),
        "total_pressure": Quantity("Total (stagnation) pressure at the inlet (station 1); at least 1 Pa. [Pa]", "Pa",
                                   **PRESSURE_LIMITS, required=required),
    }


class InletStateInputs(CaseSchema):
    """The total (stagnation) state at the inlet of the stage, when the caller wants states."""

    locals().update(_inlet_state(required=False))


class RequiredInletStateInputs(CaseSchema):
    """The total (stagnation) state at the inlet of the stage or machine, always needed."""

    locals().update(_inlet_state(required=True))


#: How a hub or tip output's description ends where it is the mean-line output's at that end.
AT_EITHER_END = " At the hub (`_hub`) or the tip (`_tip`)."


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


def stage_count_choice(blade_speed: bool) -> Choice:
    """How a machine's stage count is found; with ``blade_speed`` the loading limit needs the (one)
    blade speed, which every other alternative accepts for the stages' loading coefficients."""
    speed = ("blade_speed",) if blade_speed else ()
    loading = "max_loading_coefficient and blade_speed" if blade_speed else "max_loading_coefficient"
    return Choice("stage_count", "how the stage count is found", (
        Alternative("stages", "stages", required=("stages",), optional=speed),
        Alternative("loading", loading, required=("max_loading_coefficient", *speed)),
        Alternative("stage_pressure_ratio", "max_stage_pressure_ratio", required=("max_stage_pressure_ratio",),
                    optional=speed),
        Alternative("weight_count", "one weight per stage (the count of weights is the stage count)",
                    optional=speed, when={"rule": ("weights",)}),
    ))


WORK_SPLIT = Choice("work_split", "how the work is shared between the stages", (
    Alternative("rule", "rule equal_work or equal_pressure_ratio",
                when={"rule": ("equal_work", "equal_pressure_ratio")}),
    Alternative("weights", "rule weights and weights", required=("weights",), when={"rule": ("weights",)}),
))


def given(inputs: dict, names) -> dict:
    """The fields among ``names`` that a case holds a value for (given, or a default), to hand to the
    core by name."""
    return {name: inputs[name] for name in names if inputs.get(name) is not None}
