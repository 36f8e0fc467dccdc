"""``POST /v1/triangles``: velocity triangles of a repeating compressor or turbine stage."""

from __future__ import annotations

from marshmallow import Schema

from service.api.common import (
    AT_EITHER_END,
    GasInputs,
    InletStateInputs,
    angle,
    given,
    integer_output,
    length,
    machine_field,
    output,
    ratio,
    speed,
)
from service.api.declarations import Alternative, Calculation, Choice
from service.api.fields import Option, Quantity
from service.core import gas, span, stage, zweifel


class TrianglesInput(GasInputs, InletStateInputs):
    machine = machine_field(required=True)
    flow_coefficient = ratio("Flow coefficient: axial velocity over blade speed. [-]")
    loading_coefficient = ratio(
        "Stage loading coefficient: specific work over blade speed squared, positive for both "
        "machines. [-]")
    reaction = Quantity("Reaction: the rotor's share of the stage's static enthalpy change. [-]", "-",
                        minimum=-2.0, maximum=3.0)
    blade_speed = speed("Blade speed at the mean radius. [m s^-1]")
    axial_velocity = speed("Axial velocity, the same at every station. [m s^-1]")
    alpha1 = angle("Absolute flow angle at station 1 (compressor rotor inlet).")
    alpha2 = angle("Absolute flow angle at station 2 (compressor rotor exit; turbine stator exit).")
    alpha3 = angle("Absolute flow angle at station 3 (turbine rotor exit).")
    axial_chord = length("Axial chord of both turbine rows, for their Zweifel blade counts. [m]")
    blade_height = length("Blade height of both turbine rows; with aspect_ratio, replaces axial_chord. [m]")
    aspect_ratio = ratio("Blade height over axial chord of both turbine rows. [-]")
    mean_radius = length("Mean radius of the stage, for blade counts. [m]")
    zweifel_coefficient = ratio("Target Zweifel coefficient of both turbine rows (default 0.8). [-]",
                                load_default=zweifel.OPTIMUM_ZWEIFEL_COEFFICIENT)
    rotor_solidity = ratio("Solidity (chord over pitch) of the compressor rotor, for its diffusion factor. [-]")
    stator_solidity = ratio("Solidity of the compressor stator, for its diffusion factor. [-]")
    chord = length("True chord of both compressor rows, with their blade counts and the mean radius. [m]")
    rotor_blade_count = Quantity("Number of compressor rotor blades. [-]", "-", minimum=1, integer=True)
    stator_blade_count = Quantity("Number of compressor stator blades. [-]", "-", minimum=1, integer=True)
    hub_radius = length("Hub radius of the annulus; with tip_radius, the stage's hub and tip values are answered "
                        "and the mean line is taken at (hub_radius + tip_radius) / 2. [m]")
    tip_radius = length("Tip radius of the annulus, above hub_radius. [m]")
    hub_to_tip_ratio = Quantity("Hub radius over tip radius; with mean_radius, the stage's hub and tip values are "
                                "answered. [-]", "-", minimum=0.0, maximum=1.0, exclusive_minimum=True,
                                exclusive_maximum=True)
    vortex = Option(
        "Vortex law that carries the mean-line swirl to the hub and the tip, with the axial velocity from simple "
        "radial equilibrium: `free` (r Vtheta constant, uniform work and axial velocity), `forced` (Vtheta "
        "proportional to r), `exponential` (Vtheta = a -/+ b/r before/after the rotor), `constant_reaction` "
        "(Vtheta = a r -/+ b/r). The mean-line triangles hold at the mean radius.",
        span.NAMED_VORTEX_LAWS, load_default="free")


def _station_outputs() -> dict:
    docs = {}
    for k in (1, 2, 3):
        docs[f"alpha{k}"] = output(f"Absolute flow angle at station {k}, from axial. [deg]", "deg")
        docs[f"beta{k}"] = output(f"Relative flow angle at station {k} (rotor stations only), from axial. [deg]",
                                  "deg")
        docs[f"Vx{k}"] = output(f"Axial velocity at station {k}. [m s^-1]", "m s^-1")
        docs[f"Vtheta{k}"] = output(f"Absolute tangential velocity at station {k}. [m s^-1]", "m s^-1")
        docs[f"Wtheta{k}"] = output(f"Relative tangential velocity at station {k} (rotor stations). [m s^-1]",
                                    "m s^-1")
        docs[f"V{k}"] = output(f"Absolute speed at station {k}. [m s^-1]", "m s^-1")
        docs[f"W{k}"] = output(f"Relative speed at station {k} (rotor stations). [m s^-1]", "m s^-1")
        docs[f"T0{k}"] = output(f"Total temperature at station {k}. [K]", "K")
        docs[f"T{k}"] = output(f"Static temperature at station {k}. [K]", "K")
        docs[f"M{k}"] = output(f"Absolute Mach number at station {k}. [-]", "-")
        docs[f"M_rel{k}"] = output(f"Relative Mach number at station {k} (rotor stations). [-]", "-")
        docs[f"T0_rel{k}"] = output(f"Relative total temperature at station {k} (rotor stations). [K]", "K")
    return docs


def _row_outputs() -> dict:
    docs = {}
    for row in ("stator", "rotor"):
        frame = "absolute" if row == "stator" else "relative"
        docs[f"{row}_pitch_to_axial_chord"] = output(
            f"Turbine {row}: pitch over axial chord at the target Zweifel coefficient. [-]", "-")
        docs[f"{row}_blade_count"] = integer_output(f"Turbine {row}: Zweifel blade count, rounded up. [-]")
        docs[f"{row}_pitch"] = output(f"Turbine {row}: pitch of that blade count. [m]", "m")
        docs[f"{row}_zweifel_coefficient_achieved"] = output(
            f"Turbine {row}: Zweifel coefficient of that blade count ({frame} angles). [-]", "-")
        docs[f"{row}_diffusion_factor"] = output(
            f"Compressor {row}: Lieblein diffusion factor ({frame} velocities). [-]", "-")
        docs[f"{row}_solidity"] = output(f"Compressor {row}: solidity, chord over pitch. [-]", "-")
    return docs


def _at_end(docs: dict, end: str) -> dict:
    """The mean-line outputs ``docs`` as hub or tip outputs: the name with the suffix, the place in the text."""
    out = {}
    for name, doc in docs.items():
        text, unit = doc.metadata["description"].rsplit(" [", 1), doc.metadata["x-unit"]
        # The same words at either end, so that the document describes the pair once.
        out[f"{name}_{end}"] = output(f"{text[0]}{AT_EITHER_END} [{text[1]}", unit)
    return out


def _span_outputs() -> dict:
    docs = {
        **_station_outputs(),
        **{f"M_axial{k}": output(f"Axial Mach number at station {k}. [-]", "-") for k in (1, 2, 3)},
        "p1": output("Static pressure at station 1 (the inlet total pressure is uniform). [Pa]", "Pa"),
        "rho1": output("Static density at station 1. [kg m^-3]", "kg m^-3"),
        "blade_speed": output("Blade speed. [m s^-1]", "m s^-1"),
        "work": output("Specific work, Euler's equation, positive for both machines. [J kg^-1]", "J kg^-1"),
        "loading_coefficient": output("Loading coefficient: work over blade speed squared. [-]", "-"),
        "total_temperature_change": output("Total temperature rise (compressor) or drop (turbine): work / cp. [K]",
                                           "K"),
        "reaction": output("Reaction: rotor over stage static enthalpy change. [-]", "-"),
        "de_haller_rotor": output("Rotor outlet over inlet relative speed. [-]", "-"),
        "de_haller_stator": output("Stator outlet over inlet absolute speed. [-]", "-"),
    }
    for row in ("rotor", "stator"):
        frame = "absolute" if row == "stator" else "relative"
        docs[f"{row}_diffusion_factor"] = output(
            f"Compressor {row}: Lieblein diffusion factor ({frame} velocities). [-]", "-")
        docs[f"{row}_solidity"] = output(
            f"Compressor {row}: solidity, the mean-radius solidity times mean over local radius (the same chord "
            "and blade count along the span). [-]", "-")
    return {**_at_end(docs, "hub"), **_at_end(docs, "tip")}


TrianglesOutput = Schema.from_dict(
    {
        "flow_coefficient": output("Flow coefficient: axial velocity over blade speed. [-]", "-"),
        "loading_coefficient": output("Stage loading coefficient: work over blade speed squared. [-]", "-"),
        "reaction": output("Reaction: rotor over stage static enthalpy change. [-]", "-"),
        "blade_speed": output("Blade speed at the mean radius. [m s^-1]", "m s^-1"),
        "axial_velocity": output("Axial velocity. [m s^-1]", "m s^-1"),
        "work": output("Specific work of the stage, positive for both machines (in for a compressor, "
                       "out for a turbine). [J kg^-1]", "J kg^-1"),
        "total_temperature_change": output(
            "Total temperature rise (compressor) or drop (turbine) across the stage, positive for both: "
            "work / cp. [K]", "K"),
        "de_haller_rotor": output("Rotor outlet over inlet relative speed. [-]", "-"),
        "de_haller_stator": output("Stator outlet over inlet absolute speed. [-]", "-"),
        **_station_outputs(),
        "p1": output("Static pressure at station 1. [Pa]", "Pa"),
        "rho1": output("Static density at station 1. [kg m^-3]", "kg m^-3"),
        **_row_outputs(),
        "hub_radius": output("Hub radius of the annulus. [m]", "m"),
        "tip_radius": output("Tip radius of the annulus. [m]", "m"),
        "mean_radius": output("Mean radius of the annulus, (hub_radius + tip_radius) / 2, where the mean-line "
                              "triangles hold. [m]", "m"),
        "hub_to_tip_ratio": output("Hub radius over tip radius. [-]", "-"),
        **_span_outputs(),
    },
    name="TrianglesOutput",
)


def _compute(options: dict, inputs: dict):
    cp, gamma = gas.gas_properties(options.get("gas", "air"), inputs.get("cp"), inputs.get("gamma"))
    fields = given(inputs, GIVEN)
    return stage.evaluate_stage_rows(options["machine"], inputs["blade_speed"], cp=cp, gamma=gamma,
                                     vortex=options.get("vortex", "free"), **fields)


def _render_svg(payload: dict, body: dict) -> str:
    from service.api import drawings

    return drawings.triangles_svg(payload, body)


DUTY = ("flow_coefficient", "loading_coefficient", "reaction", "blade_speed")
FLOW = Choice("flow", "the stage's duty or its angles", (
    Alternative("duty", "flow_coefficient, loading_coefficient, reaction and blade_speed", required=DUTY),
    Alternative("compressor_angles", "blade_speed, axial_velocity, alpha1 and alpha2 (compressor)",
                required=("blade_speed", "axial_velocity", "alpha1", "alpha2"), when={"machine": ("compressor",)}),
    Alternative("turbine_angles", "blade_speed, axial_velocity, alpha2 and alpha3 (turbine)",
                required=("blade_speed", "axial_velocity", "alpha2", "alpha3"), when={"machine": ("turbine",)}),
))
_RADII = ("mean_radius", "hub_and_tip", "mean_and_ratio")
_ROWS_WITH_COUNTS = ("zweifel_chord", "zweifel_aspect_ratio", "blade_counts")
RADIUS = Choice("radius", "the radius: none, the mean radius for blade counts, or the annulus", (
    Alternative("none", "no radius"),
    Alternative("mean_radius", "mean_radius (for blade counts)", required=("mean_radius",),
                needs={"rows": _ROWS_WITH_COUNTS}),
    Alternative("hub_and_tip", "hub_radius and tip_radius (hub and tip values too; optionally the vortex law)",
                required=("hub_radius", "tip_radius"), optional=("vortex",)),
    Alternative("mean_and_ratio", "mean_radius and hub_to_tip_ratio (hub and tip values too; optionally the "
                "vortex law)", required=("mean_radius", "hub_to_tip_ratio"), optional=("vortex",)),
))
ROWS = Choice("rows", "the blade-row geometry the rows are judged with", (
    Alternative("none", "no blade-row geometry"),
    Alternative("zweifel_chord", "axial_chord (turbine Zweifel blade counts; with a radius)",
                required=("axial_chord",), optional=("zweifel_coefficient",), when={"machine": ("turbine",)},
                needs={"radius": _RADII}),
    Alternative("zweifel_aspect_ratio", "blade_height and aspect_ratio (turbine Zweifel blade counts; with a "
                "radius)", required=("blade_height", "aspect_ratio"), optional=("zweifel_coefficient",),
                when={"machine": ("turbine",)}, needs={"radius": _RADII}),
    Alternative("solidities", "rotor_solidity and stator_solidity (compressor diffusion factors)",
                required=("rotor_solidity", "stator_solidity"), when={"machine": ("compressor",)}),
    Alternative("blade_counts", "chord, rotor_blade_count and stator_blade_count (compressor diffusion factors; "
                "with a radius)", required=("chord", "rotor_blade_count", "stator_blade_count"),
                when={"machine": ("compressor",)}, needs={"radius": _RADII}),
))
#: The fields handed to the core by name (the rest are options, the gas's or the blade speed).
GIVEN = (*FLOW.fields - {"blade_speed"}, *RADIUS.fields - {"vortex"}, *ROWS.fields, "total_temperature",
         "total_pressure")

CALCULATION = Calculation(
    name="triangles",
    summary="Velocity triangles of a repeating compressor or turbine stage",
    description=(
        "Mean-radius velocity triangles of a repeating stage (constant axial velocity and radius, "
        "stage exit flow equal to its inlet flow), from the duty coefficients or from the blade "
        "speed, axial velocity and the rotor's two absolute flow angles. Reports every station's "
        "angles and velocities, the duty coefficients, the work and the de Haller numbers, and with "
        "an inlet total state the temperatures and Mach numbers. Compressor stations: 1 rotor "
        "inlet, 2 rotor exit, 3 stator exit. Turbine stations: 1 stator inlet, 2 stator exit, 3 "
        "rotor exit. With row geometry the rows are judged too: a turbine's axial chord (or blade "
        "height and aspect ratio) and mean radius give each row's Zweifel blade count; a "
        "compressor's solidities (or chord, mean radius and blade counts) give each row's diffusion "
        "factor. With the annulus (hub_radius and tip_radius, or mean_radius and hub_to_tip_ratio) the "
        "same quantities are answered at the hub and the tip too (suffixes `_hub`, `_tip`), from a vortex law "
        "and simple radial equilibrium, with the rules that bite there (hub reaction, rotor-tip relative Mach "
        "number, hub and tip de Haller numbers and diffusion factors, hub-to-tip ratio, axial Mach number, "
        "turbine exit swirl and Mach number); the mean-line values are unchanged. Send `Accept: "
        "image/svg+xml` with one case for a drawing of the rotor's velocity triangles."
    ),
    schema=TrianglesInput,
    outputs=TrianglesOutput,
    choices=(FLOW, RADIUS, ROWS),
    compute=_compute,
    requires=(("total_pressure", "total_temperature"),),
    render_svg=_render_svg,
)
