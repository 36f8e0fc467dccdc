"""``POST /v1/stage-efficiency``: row losses and stage efficiencies of a repeating stage by a named
set of loss correlations."""

from __future__ import annotations

import copy

from marshmallow import Schema

from service.api.common import GasInputs, InletStateInputs, given, machine_field, output, positive
from service.api.declarations import Alternative, Calculation, Choice
from service.api.fields import Option, Quantity
from service.api.triangles import FLOW, TrianglesInput, TrianglesOutput
from service.core import gas
from service.core import stage as core_stage
from service.core.losses import stage as losses

#: The stage's flow is given exactly as for /v1/triangles: the same fields, the same modes.
FLOW_FIELDS = ("flow_coefficient", "loading_coefficient", "reaction", "blade_speed", "axial_velocity",
               "alpha1", "alpha2", "alpha3")


class StageEfficiencyInput(GasInputs, InletStateInputs):
    machine = machine_field(required=True)
    locals().update({name: copy.deepcopy(TrianglesInput._declared_fields[name]) for name in FLOW_FIELDS})
    total_temperature = positive("Total (stagnation) temperature at the inlet (station 1). [K]", "K", required=True)
    loss_model = Option(
        "Correlation set, each with its sources in the calculation's description: `soderberg` or "
        "`kacker_okapuu` (turbine stages), `lieblein_howell` (compressor stages).", losses.LOSS_MODELS,
        required=True)
    rotor_aspect_ratio = positive("Blade height over axial chord of the rotor. [-]", "-", required=True)
    stator_aspect_ratio = positive("Blade height over axial chord of the stator. [-]", "-", required=True)
    rotor_solidity = positive("Solidity (true chord over pitch) of the compressor rotor at the mean radius. [-]",
                              "-")
    stator_solidity = positive("Solidity (true chord over pitch) of the compressor stator at the mean radius. [-]",
                               "-")
    tip_clearance_to_height = Quantity(
        "Rotor tip clearance over blade height (lieblein_howell, kacker_okapuu: an unshrouded tip); without it no "
        "clearance loss is counted. [-]", "-",
        minimum=0.0, maximum=1.0, exclusive_maximum=True)
    reynolds_number = positive(
        "Soderberg's Reynolds number of both turbine rows: exit density and velocity (row frame), hydraulic "
        "diameter 2 s h cos(alpha_out) / (s cos(alpha_out) + h) of the exit of the blade passage, viscosity. [-]",
        "-")
    blade_height = positive("Blade height of both turbine rows, for their Reynolds numbers from the state. [m]", "m")
    dynamic_viscosity = positive("Dynamic viscosity of the gas (default: air by Sutherland's law at each row's exit "
                                 "temperature). [Pa s]", "Pa s")
    thickness_to_chord = Quantity("Maximum thickness over chord of both turbine rows: kacker_okapuu's profile loss "
                                  "(Ainley & Mathieson's thickness correction); soderberg only judges it against "
                                  "the range 0.15-0.25. [-]", "-", minimum=0.0, maximum=1.0,
                                  exclusive_minimum=True, exclusive_maximum=True)
    locals().update({
        f"{row}_{kind}_profile_loss": Quantity(
            f"kacker_okapuu: Ainley & Mathieson's (1951, Fig. 4) profile loss Y_p of {kind} blades (inlet angle "
            f"{'0' if kind == 'nozzle' else 'equal to the outlet angle'}) read at the {row}'s pitch-chord ratio and "
            "outlet angle (t/c 0.2, Re 2e5); the service does not fit those charts. [-]", "-",
            minimum=0.0, maximum=1.0)
        for row in ("stator", "rotor") for kind in ("nozzle", "impulse")})
    trailing_edge_thickness_to_throat = Quantity(
        "kacker_okapuu: trailing-edge thickness over throat width of both turbine rows (Denton's trailing-edge "
        "loss). [-]", "-", minimum=0.0, maximum=1.0, exclusive_maximum=True)
    base_pressure_coefficient = Quantity(
        "kacker_okapuu: base pressure coefficient at the trailing edge, (p_base - p_out) / (rho V_out^2 / 2), "
        "usually negative (Denton 1993). [-]", "-", minimum=-2.0, maximum=1.0)


def _loss_outputs() -> dict:
    docs = {
        "total_to_total_efficiency": output(
            "Stage total-to-total isentropic efficiency from the row losses (enthalpy-loss relation with the "
            "static temperature ratio T3/T2, Dixon & Hall ch. 4). [-]", "-"),
        "total_to_static_efficiency": output(
            "Stage total-to-static isentropic efficiency: the exit kinetic energy counted as lost. [-]", "-"),
    }
    for row in ("stator", "rotor"):
        frame = "absolute" if row == "stator" else "relative"
        docs.update({
            f"{row}_loss_coefficient": output(
                f"Loss coefficient of the {row} ({frame} frame): soderberg, the enthalpy loss over the exit kinetic "
                "energy (h_out - h_out,s) / (V_out^2 / 2); lieblein_howell, the stagnation-pressure loss over the "
                "inlet dynamic pressure (p0_in - p0_out) / (p0_in - p_in); kacker_okapuu, over the exit dynamic "
                "pressure (p0_in - p0_out) / (p0_out - p_out); each the sum of its four parts. [-]", "-"),
            f"{row}_enthalpy_loss": output(
                f"Enthalpy of the {row}'s exit state above the isentropic state at the same pressure. [J kg^-1]",
                "J kg^-1"),
            f"{row}_entropy_rise": output(f"Entropy rise across the {row}. [J kg^-1 K^-1]", "J kg^-1 K^-1"),
            f"{row}_deflection": output(f"soderberg: flow deflection of the {row}, |inlet - outlet angle|. [deg]",
                                        "deg"),
            f"{row}_nominal_loss": output(
                f"soderberg: nominal loss coefficient of the {row}, 0.04 (1 + 1.5 (deflection / 100)^2), at "
                "aspect ratio 3 and Reynolds number 1e5. [-]", "-"),
            f"{row}_aspect_ratio_loss": output(
                f"soderberg: the {row}'s loss coefficient corrected to its aspect ratio (Reynolds number 1e5). [-]",
                "-"),
            f"{row}_reynolds_number": output(f"soderberg: Reynolds number of the {row} (see reynolds_number). [-]",
                                             "-"),
            f"{row}_profile_loss": output(
                f"lieblein_howell, kacker_okapuu: profile loss of the {row} (Lieblein's wake momentum thickness; "
                "Ainley & Mathieson's charts blended and scaled by Kacker & Okapuu). [-]", "-"),
            f"{row}_annulus_loss": output(f"lieblein_howell: Howell's annulus-wall loss of the {row}. [-]", "-"),
            f"{row}_secondary_loss": output(
                f"lieblein_howell, kacker_okapuu: secondary loss of the {row} (Howell's; Kacker & Okapuu's). [-]",
                "-"),
            f"{row}_tip_clearance_loss": output(
                f"lieblein_howell, kacker_okapuu: tip-clearance loss of the {row} (Vavra's drag; Dunham & Came's "
                "loss; zero for the stator). [-]", "-"),
            f"{row}_trailing_edge_loss": output(
                f"kacker_okapuu: trailing-edge loss of the {row} (Denton's mixed-out base-pressure relation). [-]",
                "-"),
            f"{row}_lift_coefficient": output(
                f"lieblein_howell: lift coefficient of the {row} on the vector-mean velocity. [-]", "-"),
            f"{row}_diffusion_factor": output(f"lieblein_howell: Lieblein diffusion factor of the {row}. [-]", "-"),
            f"{row}_equivalent_diffusion_ratio": output(
                f"lieblein_howell: Lieblein's equivalent diffusion ratio of the {row}. [-]", "-"),
            f"{row}_momentum_thickness": output(
                f"lieblein_howell: wake momentum thickness over chord of the {row}. [-]", "-"),
        })
    return docs


StageEfficiencyOutput = Schema.from_dict(
    # The mean-line outputs of the triangles (not their rows' nor their hub and tip values).
    {**{name: copy.deepcopy(f) for name, f in TrianglesOutput._declared_fields.items()
        if not name.startswith(("stator_", "rotor_")) and not name.endswith(("_hub", "_tip"))
        and name not in ("hub_radius", "tip_radius", "mean_radius", "hub_to_tip_ratio")},
     **_loss_outputs()},
    name="StageEfficiencyOutput",
)

_GEOMETRY = ("rotor_solidity", "stator_solidity", "tip_clearance_to_height", "reynolds_number", "blade_height",
             "dynamic_viscosity", "thickness_to_chord", "trailing_edge_thickness_to_throat",
             "base_pressure_coefficient")
_CHARTS = tuple(f"{row}_{kind}_profile_loss" for row in ("stator", "rotor") for kind in ("nozzle", "impulse"))


def _compute(options: dict, inputs: dict):
    machine = options["machine"]
    cp, gamma = gas.gas_properties(options.get("gas", "air"), inputs.get("cp"), inputs.get("gamma"))
    flow = given(inputs, FLOW.fields)
    stage = core_stage.evaluate_stage(machine, total_temperature=inputs["total_temperature"],
                                      total_pressure=inputs.get("total_pressure"), cp=cp, gamma=gamma, **flow)
    geometry = given(inputs, _GEOMETRY)
    if inputs.get(_CHARTS[0]) is not None:
        geometry["profile_chart_losses"] = {name: inputs[name] for name in _CHARTS}
    return losses.with_stage_efficiency(stage, machine, options["loss_model"], cp, gamma,
                                        rotor_aspect_ratio=inputs["rotor_aspect_ratio"],
                                        stator_aspect_ratio=inputs["stator_aspect_ratio"], **geometry)


_TURBINE = {"machine": ("turbine",), "loss_model": ("soderberg",)}
LOSSES = Choice("losses", "the loss model's inputs", (
    Alternative("soderberg_reynolds", "loss_model soderberg (turbine) with reynolds_number",
                required=("reynolds_number",), optional=("thickness_to_chord", "total_pressure"), when=_TURBINE),
    Alternative("soderberg_state", "loss_model soderberg (turbine) with total_pressure and blade_height (Reynolds "
                "number from the state)", required=("total_pressure", "blade_height"),
                optional=("dynamic_viscosity", "thickness_to_chord"), when=_TURBINE),
    Alternative("kacker_okapuu", "loss_model kacker_okapuu (turbine) with the four profile-loss chart readings, "
                "thickness_to_chord, trailing_edge_thickness_to_throat and base_pressure_coefficient",
                required=(*_CHARTS, "thickness_to_chord", "trailing_edge_thickness_to_throat",
                          "base_pressure_coefficient"),
                optional=("tip_clearance_to_height", "total_pressure"),
                when={"machine": ("turbine",), "loss_model": ("kacker_okapuu",)}),
    Alternative("lieblein_howell", "loss_model lieblein_howell (compressor) with rotor_solidity and "
                "stator_solidity", required=("rotor_solidity", "stator_solidity"),
                optional=("tip_clearance_to_height", "total_pressure"),
                when={"machine": ("compressor",), "loss_model": ("lieblein_howell",)}),
))

CALCULATION = Calculation(
    name="stage-efficiency",
    summary="Row losses and stage efficiencies of a repeating stage from published loss correlations",
    description=(
        "The stage's velocity triangles as for /v1/triangles (duty coefficients, or blade speed, axial velocity "
        "and the rotor's two absolute angles) with the inlet total temperature, plus the row geometry the named "
        "correlation set needs. `soderberg` (turbine): each row's enthalpy loss coefficient from Soderberg's "
        "correlation, 0.04 (1 + 1.5 (deflection/100)^2) at aspect ratio 3 and Reynolds number 1e5, corrected "
        "for aspect ratio and Reynolds number (Dixon & Hall, Fluid Mechanics and Thermodynamics of "
        "Turbomachinery, 7th ed., ch. 4); fitted on deflections up to 120 deg and blades at Zweifel's "
        "coefficient 0.8; no tip-clearance loss. `kacker_okapuu` (turbine): each row's stagnation-pressure loss "
        "coefficient Y on the exit dynamic pressure as profile + secondary + trailing edge + tip clearance: "
        "Ainley & Mathieson's (1951) profile loss blended between the caller's readings of their nozzle and "
        "impulse charts with Kacker & Okapuu's (1982) sign-preserving form, thickness correction, 2/3 and 0.914 "
        "scaling and compressibility factor; Kacker & Okapuu's secondary loss (Dunham & Came's with their "
        "aspect-ratio function, 1.2 and K_s); Denton's (1993) trailing-edge loss in place of Kacker & Okapuu's "
        "chart; Dunham & Came's (1970) tip-clearance loss of a plain tip; no shock, incidence or Reynolds "
        "corrections; charts fitted on t/c 0.15-0.25 and outlet angles 40-80 deg (several coefficients quoted "
        "from memory, see the README). `lieblein_howell` (compressor): profile loss from Lieblein's "
        "wake momentum thickness against the equivalent diffusion ratio (NASA SP-36 ch. 6; NACA 65-series "
        "cascade data, inlet angles 30-70 deg, solidities 0.5-1.5, diffusion factors up to 0.6), Howell's "
        "annulus drag 0.020 s/h and secondary drag 0.018 C_L^2 (Saravanamuttoo et al., Gas Turbine Theory, "
        "ch. 5) and Vavra's tip-clearance drag 0.29 (k/h) C_L^1.5. The stage total-to-total and "
        "total-to-static efficiencies follow from the row enthalpy losses with the static temperature ratio "
        "T3/T2 (Dixon & Hall ch. 4). Every correlation input outside its fitted range gets a `warn` check "
        "naming the correlation's source; the number is still answered. Preliminary-design estimates: a "
        "design that matters is checked by detailed analysis and test."
    ),
    schema=StageEfficiencyInput,
    outputs=StageEfficiencyOutput,
    choices=(FLOW, LOSSES),
    compute=_compute,
)
