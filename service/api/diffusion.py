"""``POST /v1/diffusion-factor``: compressor blade-row loading and solidity sizing."""

from __future__ import annotations

from marshmallow import Schema

from service.api.common import angle, given, integer_output, length, output, ratio, shaft_speed_field, speed
from service.api.declarations import Alternative, Calculation, Choice
from service.api.fields import CaseSchema, Option, Quantity
from service.core import diffusion


class DiffusionInput(CaseSchema):
    row = Option("Kind of row: `rotor` (give relative angles) or `stator` (absolute angles); selects the "
                 "diffusion-factor limits of the checks.", diffusion.ROWS, load_default="rotor")
    span_position = Option("Where along the span the row is judged: `hub`, `mean` or `tip`; the rotor tip is held "
                           "to a lower diffusion-factor limit (NASA SP-36).", diffusion.SPAN_POSITIONS,
                           load_default="mean")
    axial_velocity = speed("Axial velocity at the row inlet. [m s^-1]", required=True)
    outlet_axial_velocity = speed("Axial velocity at the row outlet (default: the inlet's). [m s^-1]")
    inlet_angle = angle("Inlet flow angle in the row's own frame (relative for a rotor, absolute for a stator).",
                        required=True)
    outlet_angle = angle("Outlet flow angle in the row's own frame (relative for a rotor, absolute for a stator).",
                         required=True)
    inlet_radius = length("Mean radius at the row inlet, for a row whose radius changes (NASA SP-36 form). [m]")
    outlet_radius = length("Mean radius at the row outlet (with inlet_radius). [m]")
    shaft_speed = shaft_speed_field(
        "Rotor row given inlet_radius and outlet_radius: the shaft speed, so that the tangential term is the change "
        "of absolute angular momentum r2 Vtheta2 - r1 Vtheta1 = r2 Wtheta2 - r1 Wtheta1 + Omega (r2^2 - r1^2). "
        "[rev min^-1]")
    solidity = ratio("Solidity: true chord over pitch. [-]")
    chord = length("True (not axial) chord of the blades. [m]")
    pitch = length("Blade pitch at the mean radius. [m]")
    blade_count = Quantity("Number of blades in the row. [-]", "-", minimum=1, integer=True)
    mean_radius = length("Mean radius of the row, for the pitch from the blade count. [m]")
    target_diffusion_factor = Quantity("Diffusion factor to size the solidity for. [-]", "-",
                                       minimum=0.0, maximum=1.0, exclusive_minimum=True, exclusive_maximum=True)


DiffusionOutput = Schema.from_dict(
    {
        "diffusion_factor": output("Lieblein diffusion factor of the row. [-]", "-"),
        "diffusion_factor_achieved": output("Diffusion factor of the whole blade count (sizing). [-]", "-"),
        "minimum_diffusion_factor": output("Smallest diffusion factor any solidity reaches: 1 - V2/V1. [-]", "-"),
        "solidity": output("Solidity: chord over pitch (sizing: the solidity the target needs). [-]", "-"),
        "blade_count": integer_output("Whole number of blades, rounded up (sizing with chord and mean radius). [-]"),
        "pitch": output("Blade pitch of that blade count at the mean radius. [m]", "m"),
        "de_haller": output("De Haller number: outlet over inlet speed in the row's frame. [-]", "-"),
        "velocity_ratio": output("Outlet over inlet speed in the row's frame, judged against the hard floor. [-]", "-"),
        "tangential_velocity_change": output(
            "Outlet minus inlet tangential velocity in the row's frame, positive in the direction of rotor "
            "motion. [m s^-1]", "m s^-1"),
        "inlet_velocity": output("Inlet speed in the row's frame. [m s^-1]", "m s^-1"),
        "outlet_velocity": output("Outlet speed in the row's frame. [m s^-1]", "m s^-1"),
    },
    name="DiffusionOutput",
)


SOLIDITY = Choice("solidity", "the row's solidity, given or sized", (
    Alternative("solidity", "solidity", required=("solidity",)),
    Alternative("chord_and_pitch", "chord and pitch", required=("chord", "pitch")),
    Alternative("chord_and_blade_count", "chord, blade_count and mean_radius",
                required=("chord", "blade_count", "mean_radius")),
    Alternative("sizing", "target_diffusion_factor", required=("target_diffusion_factor",)),
    Alternative("sizing_with_count", "target_diffusion_factor, chord and mean_radius",
                required=("target_diffusion_factor", "chord", "mean_radius")),
))
RADIUS = Choice("radius_change", "the row's radius change", (
    Alternative("constant_radius", "a constant radius (no inlet_radius, outlet_radius)"),
    Alternative("stator_radius_change", "inlet_radius and outlet_radius (stator)",
                required=("inlet_radius", "outlet_radius"), when={"row": ("stator",)}),
    Alternative("rotor_radius_change", "inlet_radius, outlet_radius and shaft_speed (rotor)",
                required=("inlet_radius", "outlet_radius", "shaft_speed"), when={"row": ("rotor",)}),
))
_ROW = (*SOLIDITY.fields, *RADIUS.fields, "axial_velocity", "inlet_angle", "outlet_angle", "outlet_axial_velocity")


def _compute(options: dict, inputs: dict):
    return diffusion.evaluate_diffusion_row(options["row"], span_position=options["span_position"],
                                            **given(inputs, _ROW))


CALCULATION = Calculation(
    name="diffusion-factor",
    summary="Compressor blade-row diffusion factor, de Haller number and solidity sizing",
    description=(
        "Lieblein's diffusion factor DF = 1 - V2/V1 + |dVtheta| / (2 sigma V1) with velocities in the row's own "
        "frame (relative for a rotor, absolute for a stator) and solidity sigma = true chord / pitch; with inlet "
        "and outlet radii the tangential term is |r2 Vtheta2 - r1 Vtheta1| / ((r1 + r2) sigma V1) (NASA SP-36), with "
        "the absolute swirl Vtheta: the change of angular momentum is the torque, so a rotor row with radii needs "
        "shaft_speed to turn its relative swirl into the absolute one. "
        "Analysis of a row of given solidity (or chord and pitch, or chord, blade count and mean radius), or "
        "sizing: the solidity for a target diffusion factor and, with chord and mean radius, the blade count "
        "rounded up. A target at or below 1 - V2/V1 cannot be reached by any solidity."
    ),
    schema=DiffusionInput,
    outputs=DiffusionOutput,
    choices=(SOLIDITY, RADIUS),
    compute=_compute,
)
