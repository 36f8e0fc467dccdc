"""``POST /v1/zweifel``: turbine blade pitch and blade count from the Zweifel coefficient."""

from __future__ import annotations

from marshmallow import Schema

from service.api.common import (
    PRESSURE_LIMITS,
    TEMPERATURE_LIMITS,
    GasInputs,
    angle,
    given,
    integer_output,
    length,
    output,
    positive,
    ratio,
)
from service.api.declarations import Alternative, Calculation, Choice
from service.api.fields import Option, Quantity
from service.core import gas, zweifel

COMPRESSIBLE_NOTE = (
    "The `compressible` definition takes the ideal tangential force from the actual inlet-total to "
    "outlet-static pressure difference and the outlet density; it depends only on the outlet Mach "
    "number and gamma (the total temperature and the pressure level cancel). At the same pitch it "
    "is lower than the incompressible value by about 2 % at an outlet Mach number of 0.3, 6 % at "
    "0.5, 11 % at 0.7, 18 % at 0.9 and 22 % at 1.0 (gamma 1.4)."
)


class ZweifelInput(GasInputs):
    inlet_angle = angle("Inlet flow angle in the row's own frame (absolute for a stator, relative for a rotor).",
                        required=True)
    outlet_angle = angle("Outlet flow angle in the row's own frame (absolute for a stator, relative for a rotor).",
                         required=True)
    axial_chord = length("Axial chord of the row. [m]")
    blade_height = length("Blade height (span) at the mean radius; with aspect_ratio, replaces axial_chord. [m]")
    aspect_ratio = ratio("Blade height over axial chord. [-]")
    mean_radius = length("Mean radius of the row. [m]")
    zweifel_coefficient = ratio("Target Zweifel coefficient for sizing (default 0.8). [-]",
                                load_default=zweifel.OPTIMUM_ZWEIFEL_COEFFICIENT)
    rounding = Option("How the blade count is rounded: `up` (achieved coefficient at or below the target), "
                      "`nearest`, or `even_up` (the next even count).", zweifel.ROUNDINGS, load_default="up")
    blade_count = Quantity("Number of blades in the row, for analysis. [-]", "-", minimum=1, integer=True)
    pitch = length("Blade pitch at the mean radius, for analysis. [m]")
    definition = Option("Definition of the coefficient: `incompressible` (the usual one: ideal force from the "
                        "outlet dynamic head) or `compressible` (ideal force from the inlet-total to outlet-static "
                        "pressure difference; see the calculation's description).", zweifel.DEFINITIONS,
                        load_default="incompressible")
    outlet_mach = positive("Outlet Mach number in the row's frame (compressible definition). [-]", "-")
    total_pressure = Quantity("Inlet total pressure in the row's frame, relative for a rotor (compressible "
                              "definition, with outlet_pressure); at least 1 Pa. [Pa]", "Pa", **PRESSURE_LIMITS)
    outlet_pressure = Quantity("Outlet static pressure (compressible definition, with total_pressure); at least "
                               "1 Pa. [Pa]", "Pa", **PRESSURE_LIMITS)
    total_temperature = Quantity("Inlet total temperature in the row's frame. Accepted for completeness: the "
                                 "compressible coefficient does not depend on it; at least 1 K. [K]", "K",
                                 **TEMPERATURE_LIMITS)


ZweifelOutput = Schema.from_dict(
    {
        "pitch_to_axial_chord": output("Pitch over axial chord (sizing: at the target, before rounding). [-]", "-"),
        "blade_count": integer_output("Whole number of blades in the row. [-]"),
        "pitch": output("Blade pitch at the mean radius (sizing: of the whole blade count). [m]", "m"),
        "zweifel_coefficient_achieved": output("Zweifel coefficient of the whole blade count. [-]", "-"),
        "zweifel_coefficient": output("Zweifel coefficient of the given row (analysis). [-]", "-"),
        "axial_chord": output("Axial chord used (given, or blade height over aspect ratio). [m]", "m"),
        "outlet_mach": output("Outlet Mach number used (compressible definition). [-]", "-"),
    },
    name="ZweifelOutput",
)

PURPOSE = Choice("purpose", "the row sized or analysed", (
    Alternative("sizing", "mean_radius (and optionally a target zweifel_coefficient and rounding) to size the row",
                required=("mean_radius",), optional=("zweifel_coefficient", "rounding")),
    Alternative("blade_count", "blade_count and mean_radius to analyse the row",
                required=("blade_count", "mean_radius")),
    Alternative("pitch", "pitch to analyse the row", required=("pitch",)),
))
CHORD = Choice("chord", "the axial chord", (
    Alternative("axial_chord", "axial_chord", required=("axial_chord",)),
    Alternative("aspect_ratio", "blade_height and aspect_ratio", required=("blade_height", "aspect_ratio")),
))
DEFINITION = Choice("definition", "the definition of the coefficient", (
    Alternative("incompressible", "the incompressible definition", when={"definition": ("incompressible",)}),
    Alternative("outlet_mach", "the compressible definition and outlet_mach", required=("outlet_mach",),
                optional=("total_temperature",), when={"definition": ("compressible",)}),
    Alternative("pressures", "the compressible definition, total_pressure and outlet_pressure",
                required=("total_pressure", "outlet_pressure"), optional=("total_temperature",),
                when={"definition": ("compressible",)}),
))
#: The fields handed to the core as they are (the rest are options or the gas's).
_ROW = ("inlet_angle", "outlet_angle", "axial_chord", "blade_height", "aspect_ratio", "mean_radius",
        "blade_count", "pitch", "outlet_mach", "outlet_pressure")


def _compute(options: dict, inputs: dict):
    _, gamma = gas.gas_properties(options["gas"], inputs.get("cp"), inputs.get("gamma"))
    sizing = {"zweifel_coefficient": inputs["zweifel_coefficient"], "rounding": options["rounding"]}
    return zweifel.evaluate_zweifel_row(
        **given(inputs, _ROW), **sizing,
        definition=options["definition"], inlet_total_pressure=inputs.get("total_pressure"), gamma=gamma)


CALCULATION = Calculation(
    name="zweifel",
    summary="Turbine blade pitch and blade count from the Zweifel loading coefficient",
    description=(
        "Sizing: the pitch over axial chord that gives a target Zweifel tangential loading coefficient "
        "(default 0.8), the whole blade count round the mean radius and the coefficient it achieves. "
        "Analysis: the coefficient of a row of given blade count (with mean radius) or pitch. Angles are "
        "in the row's own frame: absolute for a stator (nozzle), relative for a rotor; an inlet angle of "
        "opposite sign to the outlet angle adds to the turning. Zw = 2 (s/cx) cos^2(alpha_out) "
        "|tan alpha_in - tan alpha_out| (Zweifel 1945). " + COMPRESSIBLE_NOTE
    ),
    schema=ZweifelInput,
    outputs=ZweifelOutput,
    choices=(PURPOSE, CHORD, DEFINITION),
    compute=_compute,
)
