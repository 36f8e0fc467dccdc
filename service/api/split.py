"""``POST /v1/stage-split``: sharing an overall pressure ratio between stages."""

from __future__ import annotations

from marshmallow import Schema

from service.api.common import (
    EFFICIENCY_LIMITS,
    WORK_SPLIT,
    StageSplitInputs,
    given,
    integer_output,
    output,
    positive,
    speed,
    stage_count_choice,
)
from service.api.declarations import Alternative, Calculation, Choice
from service.api.fields import Quantity
from service.core import gas, split


class SplitInput(StageSplitInputs):
    polytropic_efficiency = Quantity("Polytropic (small-stage) efficiency, the same for every stage. [-]", "-",
                                     **EFFICIENCY_LIMITS)
    stage_isentropic_efficiency = Quantity("Isentropic (total-to-total) efficiency of every stage. [-]", "-",
                                           **EFFICIENCY_LIMITS)
    max_loading_coefficient = positive(
        "Largest stage loading coefficient (work / blade_speed^2) allowed; the fewest stages that keep every "
        "stage within it are found. [-]", "-")
    blade_speed = speed("Mean blade speed, for the stage loading coefficients. [m s^-1]")
    mass_flow = Quantity("Mass flow, for the power; at least 1e-6 kg/s. [kg s^-1]", "kg s^-1", minimum=1e-6)


def _per_stage(description: str, unit: str):
    field = output(description, unit)
    field.metadata["x-per-stage"] = True
    return field


SplitOutput = Schema.from_dict(
    {
        "stage_count": integer_output("Number of stages. [-]"),
        "stage_pressure_ratio": _per_stage("Pressure ratio of each stage (turbine: expansion ratio). [-]", "-"),
        "stage_inlet_total_temperature": _per_stage("Inlet total temperature of each stage. [K]", "K"),
        "stage_outlet_total_temperature": _per_stage("Outlet total temperature of each stage. [K]", "K"),
        "stage_inlet_total_pressure": _per_stage("Inlet total pressure of each stage. [Pa]", "Pa"),
        "stage_outlet_total_pressure": _per_stage("Outlet total pressure of each stage. [Pa]", "Pa"),
        "stage_total_temperature_change": _per_stage(
            "Total temperature rise (compressor) or drop (turbine) of each stage, positive. [K]", "K"),
        "stage_work": _per_stage("Specific work of each stage, positive for both machines. [J kg^-1]", "J kg^-1"),
        "stage_isentropic_efficiency": _per_stage("Isentropic (total-to-total) efficiency of each stage. [-]", "-"),
        "stage_loading_coefficient": _per_stage("Loading coefficient of each stage, work / blade_speed^2. [-]", "-"),
        "outlet_total_temperature": output("Machine outlet total temperature. [K]", "K"),
        "outlet_total_pressure": output("Machine outlet total pressure. [Pa]", "Pa"),
        "work": output("Total specific work, positive for both machines. [J kg^-1]", "J kg^-1"),
        "total_temperature_change": output("Total temperature rise (compressor) or drop (turbine), positive. [K]",
                                           "K"),
        "isentropic_efficiency": output("Overall isentropic (total-to-total) efficiency of the machine. [-]", "-"),
        "polytropic_efficiency": output(
            "Polytropic efficiency: as given, or the one that gives the same outlet temperature. [-]", "-"),
        "power": output("Shaft power, positive for both machines (absorbed or delivered). [W]", "W"),
    },
    name="SplitOutput",
)

EFFICIENCY = Choice("efficiency", "the efficiency", (
    Alternative("polytropic", "polytropic_efficiency", required=("polytropic_efficiency",)),
    Alternative("stage_isentropic", "stage_isentropic_efficiency", required=("stage_isentropic_efficiency",)),
))
COUNT = stage_count_choice(blade_speed=True)
_GIVEN = ("polytropic_efficiency", "stage_isentropic_efficiency", "stages", "max_loading_coefficient",
          "max_stage_pressure_ratio", "blade_speed", "weights", "mass_flow")


def _compute(options: dict, inputs: dict):
    cp, gamma = gas.gas_properties(options["gas"], inputs.get("cp"), inputs.get("gamma"))
    fields = given(inputs, _GIVEN)
    return split.evaluate_stage_split(
        options["machine"], options["rule"], inputs["pressure_ratio"], inputs["total_temperature"],
        inputs["total_pressure"], cp, gamma, **fields,
    )


CALCULATION = Calculation(
    name="stage-split",
    summary="Share an overall pressure ratio between stages",
    description=(
        "Splits an overall pressure ratio between stages of a compressor or turbine with a perfect gas: the "
        "stage count given or the fewest that keep every stage within a loading or stage pressure ratio limit; "
        "equal work, equal pressure ratio or weighted work shares; a polytropic efficiency (closed form) or a "
        "stage isentropic efficiency (solved with scipy to a relative tolerance of 1e-12). Per-stage outputs are "
        "lists, front to rear. Compressor stage: T0 ratio = PR^((gamma-1)/(gamma eta_p)); turbine stage: "
        "T0 ratio = ER^(-eta_p (gamma-1)/gamma). One case, rows or columns; in columns, `weights` may be a list "
        "of lists (one per case, of different lengths) and per-stage outputs are a list of lists, one per case at "
        "its own length (ragged, as rows give it)."
    ),
    schema=SplitInput,
    outputs=SplitOutput,
    choices=(EFFICIENCY, COUNT, WORK_SPLIT),
    compute=_compute,
    columns=True,
)
