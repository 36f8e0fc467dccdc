"""``POST /v1/triangles``: velocity triangles of a repeating compressor or turbine stage."""

from __future__ import annotations

from marshmallow import Schema

from service.api.calculation import Calculation, Mode, combine_modes
from service.api.common import (
    GasInputs,
    InletStateInputs,
    angle,
    integer_output,
    length,
    machine_field,
    output,
    ratio,
    speed,
)
from service.api.fields import Quantity
from service.core import diffusion, gas, stage, triangles, zweifel


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
    },
    name="TrianglesOutput",
)


def _compute(mode: Mode, options: dict, inputs: dict):
    machine = options["machine"]
    cp, gamma = gas.gas_properties(options.get("gas", "air"), inputs.get("cp"), inputs.get("gamma"))
    state = {
        "total_temperature": inputs.get("total_temperature"),
        "total_pressure": inputs.get("total_pressure"),
        "cp": cp,
        "gamma": gamma,
    }
    if mode.includes("Duty"):
        result = triangles.evaluate_stage_from_duty(
            machine, inputs["flow_coefficient"], inputs["loading_coefficient"], inputs["reaction"],
            inputs["blade_speed"], **state,
        )
    else:
        first, second = ("alpha1", "alpha2") if machine == "compressor" else ("alpha2", "alpha3")
        result = triangles.evaluate_stage_from_angles(
            machine, inputs["blade_speed"], inputs["axial_velocity"], inputs[first], inputs[second], **state,
        )
    if mode.includes("ZweifelChord") or mode.includes("ZweifelAspectRatio"):
        chord = inputs.get("axial_chord")
        if chord is None:
            chord = zweifel.axial_chord_from_aspect_ratio(inputs["blade_height"], inputs["aspect_ratio"])
        result = stage.with_zweifel_rows(result, chord, inputs["mean_radius"], inputs["zweifel_coefficient"])
    elif mode.includes("Solidities"):
        result = stage.with_diffusion_rows(result, inputs["rotor_solidity"], inputs["stator_solidity"])
    elif mode.includes("BladeCounts"):
        rotor, stator = (
            diffusion.solidity_from_blade_count(inputs["chord"], inputs["mean_radius"], inputs[f"{row}_blade_count"])
            for row in ("rotor", "stator")
        )
        result = stage.with_diffusion_rows(result, rotor, stator)
    return result


def _render_svg(payload: dict, body: dict) -> str:
    from service.api import drawings

    return drawings.triangles_svg(payload, body)


DUTY = ("flow_coefficient", "loading_coefficient", "reaction", "blade_speed")
FLOW = (
    Mode("Duty", "flow_coefficient, loading_coefficient, reaction and blade_speed", required=DUTY),
    Mode("CompressorAngles", "blade_speed, axial_velocity, alpha1 and alpha2 (compressor)",
         required=("blade_speed", "axial_velocity", "alpha1", "alpha2"), when={"machine": ("compressor",)}),
    Mode("TurbineAngles", "blade_speed, axial_velocity, alpha2 and alpha3 (turbine)",
         required=("blade_speed", "axial_velocity", "alpha2", "alpha3"), when={"machine": ("turbine",)}),
)
ROWS = (
    Mode("NoRows", "no blade-row geometry", required=()),
    Mode("ZweifelChord", "axial_chord and mean_radius (turbine Zweifel blade counts)",
         required=("axial_chord", "mean_radius"), optional=("zweifel_coefficient",), when={"machine": ("turbine",)}),
    Mode("ZweifelAspectRatio", "blade_height, aspect_ratio and mean_radius (turbine Zweifel blade counts)",
         required=("blade_height", "aspect_ratio", "mean_radius"), optional=("zweifel_coefficient",),
         when={"machine": ("turbine",)}),
    Mode("Solidities", "rotor_solidity and stator_solidity (compressor diffusion factors)",
         required=("rotor_solidity", "stator_solidity"), when={"machine": ("compressor",)}),
    Mode("BladeCounts", "chord, mean_radius, rotor_blade_count and stator_blade_count (compressor diffusion "
         "factors)", required=("chord", "mean_radius", "rotor_blade_count", "stator_blade_count"),
         when={"machine": ("compressor",)}),
)

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
        "factor. Send `Accept: image/svg+xml` with one case for a drawing of the rotor's velocity "
        "triangles."
    ),
    schema=TrianglesInput,
    outputs=TrianglesOutput,
    modes=combine_modes(FLOW, ROWS),
    compute=_compute,
    requires=(("total_pressure", "total_temperature"),),
    render_svg=_render_svg,
)
