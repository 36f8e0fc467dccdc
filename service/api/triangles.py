"""``POST /v1/triangles``: velocity triangles of a repeating compressor or turbine stage."""

from __future__ import annotations

from marshmallow import Schema

from service.api.calculation import Calculation, Mode
from service.api.common import GasInputs, InletStateInputs, angle, machine_field, output, positive
from service.api.fields import Quantity
from service.core import gas, triangles


class TrianglesInput(GasInputs, InletStateInputs):
    machine = machine_field(required=True)
    flow_coefficient = positive("Flow coefficient: axial velocity over blade speed. [-]", "-")
    loading_coefficient = positive(
        "Stage loading coefficient: specific work over blade speed squared, positive for both "
        "machines. [-]", "-")
    reaction = Quantity("Reaction: the rotor's share of the stage's static enthalpy change. [-]", "-",
                        minimum=-2.0, maximum=3.0)
    blade_speed = positive("Blade speed at the mean radius. [m s^-1]", "m s^-1")
    axial_velocity = positive("Axial velocity, the same at every station. [m s^-1]", "m s^-1")
    alpha1 = angle("Absolute flow angle at station 1 (compressor rotor inlet).")
    alpha2 = angle("Absolute flow angle at station 2 (compressor rotor exit; turbine stator exit).")
    alpha3 = angle("Absolute flow angle at station 3 (turbine rotor exit).")


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
    if mode.name == "Duty":
        return triangles.evaluate_stage_from_duty(
            machine, inputs["flow_coefficient"], inputs["loading_coefficient"], inputs["reaction"],
            inputs["blade_speed"], **state,
        )
    first, second = ("alpha1", "alpha2") if machine == "compressor" else ("alpha2", "alpha3")
    return triangles.evaluate_stage_from_angles(
        machine, inputs["blade_speed"], inputs["axial_velocity"], inputs[first], inputs[second], **state,
    )


DUTY = ("flow_coefficient", "loading_coefficient", "reaction", "blade_speed")

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
        "rotor exit."
    ),
    schema=TrianglesInput,
    outputs=TrianglesOutput,
    modes=(
        Mode("Duty", "flow_coefficient, loading_coefficient, reaction and blade_speed", required=DUTY),
        Mode("CompressorAngles", "blade_speed, axial_velocity, alpha1 and alpha2 (compressor)",
             required=("blade_speed", "axial_velocity", "alpha1", "alpha2"), when={"machine": ("compressor",)}),
        Mode("TurbineAngles", "blade_speed, axial_velocity, alpha2 and alpha3 (turbine)",
             required=("blade_speed", "axial_velocity", "alpha2", "alpha3"), when={"machine": ("turbine",)}),
    ),
    compute=_compute,
    together=(("total_temperature", "total_pressure"),),
)
