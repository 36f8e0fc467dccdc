"""``POST /v1/machine-design``: a multistage compressor or turbine laid out at the mean line."""

from __future__ import annotations

from marshmallow import Schema

from service.api.common import (
    EFFICIENCY_LIMITS,
    RATIO_LIMITS,
    WORK_SPLIT,
    StageSplitInputs,
    angle,
    given,
    integer_output,
    length,
    output,
    positive,
    ratio,
    shaft_speed_field,
    stage_count_choice,
)
from service.api.declarations import Alternative, Calculation, Choice, Default
from service.api.fields import Option, Quantity, QuantityPerStage
from service.core import flowpath, gas, machine_defaults, machine_span, zweifel
from service.core import machine as design
from service.core import machine_efficiency as estimated

#: How the stages' efficiencies are found.
EFFICIENCIES = ("given", "estimated")


def _defaulted(description: str, name: str) -> str:
    """``description`` with the default assumed where the field is left out, before its unit."""
    words = ", ".join(f"{machine} {value:g}" for machine, value in machine_defaults.DEFAULTS[name].items()
                      if value is not None)
    text, unit = description.rsplit(" [", 1)
    return (f"{text} Default where left out: {words} ({machine_defaults.COMMON_PRACTICE}, echoed in "
            f"`assumed`). [{unit}")


class MachineInput(StageSplitInputs):
    mass_flow = Quantity("Mass flow; at least 1e-6 kg/s. [kg s^-1]", "kg s^-1", minimum=1e-6, required=True)
    shaft_speed = shaft_speed_field("Shaft speed. [rev min^-1]", required=True)
    efficiency = Option(
        "How each stage's efficiency is found: `given` (default: polytropic_efficiency, the same in every stage) "
        "or `estimated` (each stage's from the loss model on its own triangles and rows, iterated with the split "
        "to a fixed point; see the description).", EFFICIENCIES, load_default="given")
    polytropic_efficiency = Quantity(
        "Polytropic (small-stage) efficiency of every stage (efficiency `given`, required); with efficiency "
        f"`estimated` the starting value of the first pass, which decides the stage count (default "
        f"{estimated.DEFAULT_STARTING_EFFICIENCY}). [-]", "-", **EFFICIENCY_LIMITS)
    loss_model = Option(
        "efficiency `estimated`: the loss correlations, `lieblein_howell` (compressor, the default there) or "
        "`soderberg` (turbine, the default there), as in stage-efficiency. kacker_okapuu is not offered: it "
        "needs chart readings at every row's own geometry that a machine design cannot supply.",
        tuple(estimated.MACHINE_LOSS_MODELS.values()))
    tip_clearance_to_height = Quantity(
        "efficiency `estimated`, compressor: rotor tip clearance over blade height for the tip-clearance loss "
        f"(default {estimated.DEFAULT_TIP_CLEARANCE_TO_HEIGHT}, common practice). [-]", "-", minimum=0.0,
        maximum=1.0, exclusive_maximum=True)
    dynamic_viscosity = positive(
        "efficiency `estimated`, turbine: dynamic viscosity of the gas for each row's Soderberg Reynolds number "
        "(default: air by Sutherland's law at the row's exit static temperature). [Pa s]", "Pa s")
    thickness_to_chord = Quantity(
        "efficiency `estimated`, turbine: blade thickness over chord, judged against Soderberg's range 0.15-0.25 "
        "(a warn check; it does not change the loss). [-]", "-", minimum=0.0, maximum=1.0,
        exclusive_minimum=True, exclusive_maximum=True)
    mean_radius = length("Mean radius, held constant through the machine. [m]")
    hub_radius = length("Hub radius, held constant through the machine. [m]")
    tip_radius = length("Tip (casing) radius, held constant through the machine. [m]")
    max_loading_coefficient = positive(_defaulted(
        "Largest stage loading coefficient (work / blade_speed^2, at each stage's own blade speed) allowed; the "
        "fewest stages that keep every stage within it are found. [-]", "max_loading_coefficient"), "-")
    flow_coefficient = QuantityPerStage(_defaulted(
        "Flow coefficient V_x / U at each stage's mean radius: one value for every stage or a list, front to "
        "rear; at least 1e-6. [-]", "flow_coefficient"), "-", **RATIO_LIMITS)
    reaction = QuantityPerStage(_defaulted(
        "Reaction of each stage: one value for every stage or a list, front to rear. For a compressor given "
        "inlet_swirl, the first stage's reaction follows from the swirl and replaces the first value. [-]",
        "reaction"), "-", minimum=-2.0, maximum=3.0)
    inlet_swirl = angle("Absolute flow angle at the machine inlet (station 1). Compressor: sets the first "
                        "stage's reaction (default: the angle follows from it). Turbine: the first nozzle's inlet "
                        "angle (default: the first rotor's exit angle).")
    outlet_swirl = angle("Compressor: absolute flow angle after the last stator (default: the inlet flow angle).")
    rotor_aspect_ratio = ratio(_defaulted("Blade height over axial chord of every rotor row. [-]",
                                          "rotor_aspect_ratio"))
    stator_aspect_ratio = ratio(_defaulted("Blade height over axial chord of every stator row. [-]",
                                           "stator_aspect_ratio"))
    zweifel_coefficient = ratio("Turbine rows: target Zweifel coefficient, incompressible (default 0.8). [-]",
                                load_default=zweifel.OPTIMUM_ZWEIFEL_COEFFICIENT)
    target_diffusion_factor = Quantity(_defaulted("Compressor rows: diffusion factor to size every row's solidity for. "
                                                  "[-]", "target_diffusion_factor"),
                                       "-", minimum=0.0, maximum=1.0, exclusive_minimum=True,
                                       exclusive_maximum=True)
    solidity = ratio("Compressor rows: solidity (chord over pitch) of every row; the blade count is rounded "
                     "up. [-]")
    axial_gap = Quantity("Axial gap after each row as a fraction of its axial chord (default 0.25, common "
                         "practice). [-]", "-", minimum=0.0, maximum=10.0, load_default=flowpath.DEFAULT_AXIAL_GAP)
    rotor_loss_fraction = Quantity(
        "The rotor's share of each stage's entropy rise; the stator takes the rest (default 0.5). [-]", "-",
        minimum=0.0, maximum=1.0, load_default=design.DEFAULT_ROTOR_LOSS_FRACTION)


def _list(description: str, unit: str, integer: bool = False, null_entries: bool = False):
    """A per-stage, per-station or per-row list; ``null_entries`` where some entries may not apply."""
    field = integer_output(description) if integer else output(description, unit)
    field.metadata["x-per-stage"] = True
    if null_entries:
        field.metadata["x-null-entries"] = True
    return field


_SPAN_WORDS = {
    "station_alpha": ("Absolute flow angle from axial", "deg"),
    "station_beta": ("Relative flow angle from axial (null where no rotor is next to the station)", "deg"),
    "station_mach": ("Absolute Mach number", "-"),
    "station_relative_mach": ("Relative Mach number (null where no rotor is next to the station)", "-"),
    "station_axial_mach": ("Axial Mach number", "-"),
    "row_de_haller": ("Outlet over inlet speed in the row's frame", "-"),
    "row_diffusion_factor": ("Compressor: diffusion factor (NASA SP-36 radius-change form, the solidity of the "
                             "same chord and blade count sigma_m r_m / r)", "-"),
}


def _span_list(name: str, end: str):
    words, unit = _SPAN_WORDS[name]
    where = "at every station" if name.startswith("station_") else "of every row"
    # The same words at either end, so that the document describes the pair once.
    return _list(f"{words} {where} at the hub (`_hub`) or the tip (`_tip`). [{unit}]", unit,
                 null_entries=name in ("station_beta", "station_relative_mach"))


# The numbering of stations and rows is said once, in the description of the calculation.
_STATION = "at every station"
_ROW = "of every row"

MachineOutput = Schema.from_dict(
    {
        "stage_count": integer_output("Number of stages n. [-]"),
        "outlet_total_temperature": output("Machine outlet total temperature. [K]", "K"),
        "outlet_total_pressure": output("Machine outlet total pressure. [Pa]", "Pa"),
        "work": output("Total specific work, positive for both machines. [J kg^-1]", "J kg^-1"),
        "power": output("Shaft power, positive for both machines (absorbed or delivered). [W]", "W"),
        "isentropic_efficiency": output("Overall isentropic (total-to-total) efficiency. [-]", "-"),
        "polytropic_efficiency": output(
            "Polytropic efficiency: as given, or (efficiency `estimated`) the whole machine's equivalent, the one "
            "polytropic efficiency giving the same outlet total temperature at the overall pressure ratio. [-]", "-"),
        "iterations": integer_output(
            "efficiency `estimated`: passes of the split and layout with estimated stage efficiencies until the "
            f"outlet state and every stage's efficiency changed by less than {estimated.TOLERANCE:g} (at most "
            f"{estimated.MAX_ITERATIONS}). [-]"),
        "axial_length": output("Axial length: the rows' axial chords and the gaps between them. [m]", "m"),
        "stage_pressure_ratio": _list("Pressure ratio of each stage (turbine: expansion ratio). [-]", "-"),
        "stage_total_temperature_change": _list("Total temperature rise (compressor) or drop (turbine) of each "
                                                "stage. [K]", "K"),
        "stage_work": _list("Specific work of each stage, positive. [J kg^-1]", "J kg^-1"),
        "stage_isentropic_efficiency": _list(
            "Isentropic (total-to-total) efficiency of each stage: from the polytropic efficiency given, or "
            "(efficiency `estimated`) the loss model's on the stage's own triangles and rows. [-]", "-"),
        "stage_total_to_static_efficiency": _list(
            "efficiency `estimated`: the loss model's total-to-static efficiency of each stage. [-]", "-"),
        "row_loss_coefficient": _list(
            "efficiency `estimated`: the loss model's loss coefficient of every row, 1 to 2n in flow order "
            "(soderberg: enthalpy loss over the exit kinetic energy; lieblein_howell: stagnation-pressure loss "
            "over the inlet dynamic pressure). [-]", "-"),
        "stage_loading_coefficient": _list("Loading coefficient of each stage at its blade speed. [-]", "-"),
        "stage_flow_coefficient": _list("Flow coefficient of each stage. [-]", "-"),
        "stage_reaction": _list("Reaction of each stage: the rotor's static enthalpy change over the stage's, from the "
                                "static temperatures at the stage's three stations. [-]", "-"),
        "stage_kinematic_reaction": _list(
            "Kinematic reaction of each stage at its design station, 1 - psi/2 - V_theta/U there (the reaction "
            "given, or for a compressor with inlet_swirl the first stage's from the swirl); equal to "
            "stage_reaction only for a repeating stage of constant radius and axial velocity. [-]", "-"),
        "stage_blade_speed": _list("Blade speed of each stage at its design station's mean radius (compressor rotor "
                                   "inlet, turbine rotor exit), where its flow and loading coefficients and "
                                   "kinematic reaction are set. [m s^-1]", "m s^-1"),
        "stage_mean_radius": _list("Mean radius of each stage's design station. [m]", "m"),
        "station_total_temperature": _list(f"Total temperature {_STATION}. [K]", "K"),
        "station_total_pressure": _list(f"Total pressure {_STATION}. [Pa]", "Pa"),
        "station_static_temperature": _list(f"Static temperature {_STATION}. [K]", "K"),
        "station_static_pressure": _list(f"Static pressure {_STATION}. [Pa]", "Pa"),
        "station_density": _list(f"Static density {_STATION}. [kg m^-3]", "kg m^-3"),
        "station_axial_velocity": _list(f"Axial velocity {_STATION}. [m s^-1]", "m s^-1"),
        "station_tangential_velocity": _list(f"Absolute tangential velocity {_STATION}. [m s^-1]", "m s^-1"),
        "station_velocity": _list(f"Absolute speed {_STATION}. [m s^-1]", "m s^-1"),
        "station_alpha": _list(f"Absolute flow angle from axial {_STATION}. [deg]", "deg"),
        "station_blade_speed": _list(
            f"Blade speed of the adjacent rotor at the station's own mean radius, 2 pi N r / 60, {_STATION}; null "
            "where no rotor is next to the station (compressor outlet, turbine inlet). [m s^-1]", "m s^-1",
            null_entries=True),
        "station_relative_tangential_velocity": _list(
            f"Relative tangential velocity V_theta - U {_STATION}, in the frame of the adjacent rotor at the "
            "station's own radius; null where no rotor is next to the station. [m s^-1]", "m s^-1", null_entries=True),
        "station_relative_velocity": _list(f"Relative speed {_STATION} (adjacent rotor's frame; null where there is "
                                           "none). [m s^-1]", "m s^-1", null_entries=True),
        "station_beta": _list(f"Relative flow angle from axial {_STATION} (adjacent rotor's frame; null where there "
                              "is none). [deg]", "deg", null_entries=True),
        "station_mach": _list(f"Absolute Mach number {_STATION}. [-]", "-"),
        "station_relative_mach": _list(f"Relative Mach number {_STATION} (adjacent rotor's frame; null where there "
                                       "is none). [-]", "-", null_entries=True),
        "station_axial_mach": _list(f"Axial Mach number {_STATION}; 1 chokes the annulus. [-]", "-"),
        "station_area": _list(f"Annulus area from continuity, m / (rho V_x), {_STATION}. [m^2]", "m^2"),
        "station_hub_radius": _list(f"Hub radius {_STATION}. [m]", "m"),
        "station_tip_radius": _list(f"Tip radius {_STATION}. [m]", "m"),
        "station_mean_radius": _list(f"Mean radius of the annulus, (hub + tip) / 2, {_STATION}. [m]", "m"),
        "station_blade_height": _list(f"Blade height (tip - hub) {_STATION}. [m]", "m"),
        "station_hub_to_tip_ratio": _list(f"Hub-to-tip radius ratio {_STATION}. [-]", "-"),
        "station_axial_position": _list(f"Axial position {_STATION} (first leading edge at 0). [m]", "m"),
        "row_blade_count": _list(f"Blade count {_ROW}, rounded up. [-]", "-", integer=True),
        "row_pitch": _list(f"Pitch at the mean radius {_ROW}. [m]", "m"),
        "row_solidity": _list(f"Solidity (true chord over pitch) {_ROW}. [-]", "-"),
        "row_chord": _list(f"True chord {_ROW}. [m]", "m"),
        "row_axial_chord": _list(f"Axial chord {_ROW}. [m]", "m"),
        "row_stagger": _list(f"Stagger estimate (mean of the row-frame flow angles) {_ROW}. [deg]", "deg"),
        "row_blade_height": _list(f"Blade height (mean of inlet and outlet) {_ROW}. [m]", "m"),
        "row_mean_radius": _list(f"Mean radius (mean of inlet and outlet) {_ROW}. [m]", "m"),
        "row_inlet_angle": _list(f"Inlet flow angle in the row's frame {_ROW}. [deg]", "deg"),
        "row_outlet_angle": _list(f"Outlet flow angle in the row's frame {_ROW}. [deg]", "deg"),
        "row_de_haller": _list(f"Outlet over inlet speed in the row's frame {_ROW}. [-]", "-"),
        "row_zweifel_coefficient": _list(f"Turbine: Zweifel coefficient of the blade count {_ROW}. [-]", "-"),
        "row_diffusion_factor": _list(f"Compressor: diffusion factor of the blade count {_ROW}. [-]", "-"),
        "row_leading_edge": _list(f"Axial position of the leading edge {_ROW}. [m]", "m"),
        "row_trailing_edge": _list(f"Axial position of the trailing edge {_ROW}. [m]", "m"),
        "flowpath_x": _list("Flowpath outline: axial positions, each row's leading and trailing edge. [m]", "m"),
        "flowpath_hub_radius": _list("Flowpath outline: hub radius at each point of flowpath_x. [m]", "m"),
        "flowpath_tip_radius": _list("Flowpath outline: tip radius at each point of flowpath_x. [m]", "m"),
        "stage_rotor_tip_relative_mach": _list("Relative Mach number at each rotor's inlet tip (free vortex). [-]",
                                               "-"),
        **{f"stage_reaction_{end}": _list("Enthalpy reaction of each stage along the hub (`_hub`) or the tip "
                                          "(`_tip`) line (free vortex). [-]", "-") for end in machine_span.SPAN_ENDS},
        **{f"{name}_{end}": _span_list(name, end) for name in (*machine_span.STATION_OUTPUTS, *machine_span.ROW_OUTPUTS)
           for end in machine_span.SPAN_ENDS},
    },
    name="MachineOutput",
)

RADIUS = Choice("radius_held", "the radius held constant through the machine", (
    Alternative("mean_radius", "mean_radius", required=("mean_radius",)),
    Alternative("hub_radius", "hub_radius", required=("hub_radius",)),
    Alternative("tip_radius", "tip_radius", required=("tip_radius",)),
))
ROWS = Choice("row_sizing", "how the rows are sized", (
    Alternative("zweifel", "zweifel_coefficient or its default (turbine)", optional=("zweifel_coefficient",),
                when={"machine": ("turbine",)}),
    Alternative("diffusion_factor", "target_diffusion_factor (compressor)", required=("target_diffusion_factor",),
                optional=("outlet_swirl",), when={"machine": ("compressor",)}),
    Alternative("solidity", "solidity (compressor)", required=("solidity",), optional=("outlet_swirl",),
                when={"machine": ("compressor",)}),
))

EFFICIENCY = Choice("stage_efficiency", "how each stage's efficiency is found", (
    Alternative("given", "efficiency given (the default) with polytropic_efficiency",
                required=("polytropic_efficiency",), when={"efficiency": ("given",)}),
    # One alternative for both machines: the loss fields of the other machine's model are refused by the core
    # (a per-case reason naming the field), since a second machine-dependent choice defeats the schema fuzzer.
    Alternative("estimated", "efficiency estimated",
                optional=("polytropic_efficiency", "loss_model", "tip_clearance_to_height", "dynamic_viscosity",
                          "thickness_to_chord"), when={"efficiency": ("estimated",)}),
))

_OPTIONAL = ("mean_radius", "hub_radius", "tip_radius", "stages", "max_loading_coefficient",
             "max_stage_pressure_ratio", "weights", "inlet_swirl", "outlet_swirl", "target_diffusion_factor",
             "solidity", "axial_gap", "rotor_loss_fraction")


_ESTIMATED = ("polytropic_efficiency", "tip_clearance_to_height", "dynamic_viscosity", "thickness_to_chord")


def _compute(options: dict, inputs: dict):
    machine = options["machine"]
    cp, gamma = gas.gas_properties(options["gas"], inputs.get("cp"), inputs.get("gamma"))
    fields = given(inputs, _OPTIONAL)
    if machine == "turbine":
        fields["zweifel_coefficient"] = inputs["zweifel_coefficient"]
    if options["efficiency"] == "estimated":
        fields.update(given(inputs, _ESTIMATED))
        return estimated.evaluate_machine_design_estimated(
            machine, inputs["mass_flow"], inputs["total_temperature"], inputs["total_pressure"],
            inputs["pressure_ratio"], inputs["shaft_speed"], inputs["flow_coefficient"], inputs["reaction"],
            inputs["rotor_aspect_ratio"], inputs["stator_aspect_ratio"], loss_model=options.get("loss_model"),
            cp=cp, gamma=gamma, rule=options["rule"], **fields)
    return design.evaluate_machine_design(
        machine, inputs["mass_flow"], inputs["total_temperature"], inputs["total_pressure"],
        inputs["pressure_ratio"], inputs["shaft_speed"], inputs["polytropic_efficiency"],
        inputs["flow_coefficient"], inputs["reaction"], inputs["rotor_aspect_ratio"], inputs["stator_aspect_ratio"],
        cp=cp, gamma=gamma, rule=options["rule"], **fields,
    )


_ESTIMATING = {"efficiency": ("estimated",)}
#: What is assumed where the caller leaves a blade-sizing input out (service.core.machine_defaults),
#: and, with efficiency estimated, the loss model's inputs that the core fills the same way
#: (service.core.machine_efficiency; the viscosity, a law rather than a value, is not echoed).
DEFAULTS = {
    **{name: tuple(Default(value, machine_defaults.BASIS[name], when={"machine": (machine,)})
                   for machine, value in per_machine.items() if value is not None)
       for name, per_machine in machine_defaults.DEFAULTS.items()
       if name in ("flow_coefficient", "reaction", "max_loading_coefficient", "rotor_aspect_ratio",
                   "stator_aspect_ratio", "target_diffusion_factor")},
    "polytropic_efficiency": (Default(estimated.DEFAULT_STARTING_EFFICIENCY, "the first pass's starting value",
                                      when=_ESTIMATING),),
    "loss_model": tuple(Default(model, "the machine's loss correlations", when={"machine": (machine,), **_ESTIMATING})
                        for machine, model in estimated.MACHINE_LOSS_MODELS.items()),
    "tip_clearance_to_height": (Default(estimated.DEFAULT_TIP_CLEARANCE_TO_HEIGHT, "common practice (from memory)",
                                        when={"machine": ("compressor",), **_ESTIMATING}),),
}


def _render_svg(payload: dict, body: dict) -> str:
    from service.api import drawings

    return drawings.flowpath_svg(payload, body)


CALCULATION = Calculation(
    name="machine-design",
    summary="Lay out a multistage compressor or turbine at the mean line",
    description=(
        "From the cycle's duty (mass flow, inlet total state, pressure ratio, shaft speed, polytropic efficiency) "
        "to a stage-by-stage flowpath: the stage split (as stage-split), each stage's velocity triangles from its "
        "own loading, flow coefficient and reaction at its mean radius (as triangles), static states and Mach "
        "numbers at every station, the annulus from continuity (A = m / (rho V_x)) with the mean, hub or tip radius "
        "held, and every row sized: turbine rows by a Zweifel target (as zweifel), compressor rows by a target "
        "diffusion factor or solidity (as diffusion-factor), stacked along the axis. Stations 1 to 2n+1 in flow "
        "order (compressor: 2i-1 rotor i inlet, 2i rotor i exit, 2i+1 stator i exit; turbine: 2i-1 stator i inlet, "
        "2i stator exit = rotor i inlet, 2i+1 rotor i exit); rows 1 to 2n between them (compressor R1, S1, R2, "
        "...; turbine S1, R1, S2, ...); every `station_*` output has one entry per station and every `row_*` "
        "output one per row, in that order; an output suffixed `_hub` or `_tip` is at the hub or the tip, each "
        "station a free vortex about its mean radius (r V_theta and V_x uniform along the span). Assumptions: "
        "constant axial "
        "velocity through each rotor (V_x = phi U), the stator between stages changing it to the next stage's; "
        "each stage's flow coefficient, loading and kinematic reaction set at its rotor's low-swirl (design) "
        "station (compressor rotor inlet, turbine rotor exit) at that station's blade speed; the blade speed at "
        "every station is the shaft's at the station's own mean radius, so with the hub or tip radius held the "
        "other rotor station's swirl follows from Euler's work equation (work = U_out V_theta,out - U_in "
        "V_theta,in) and its annulus from continuity, solved together; stage_reaction is the enthalpy reaction "
        "of the resulting static states; a compressor's "
        "inlet_swirl sets the first stage's reaction, its last stator returns the flow to outlet_swirl (default "
        "the inlet angle); each stage's entropy rise shared between rotor (rotor_loss_fraction, default 0.5) and "
        "stator; rows at the mean of their stations' heights and radii, axial chord = height / aspect ratio, "
        "stagger = mean of the row-frame flow angles, true chord = axial chord / cos(stagger); axial gap a "
        "fraction of the axial chord. A station whose static temperature reaches zero, whose hub radius or blade "
        "height is at or below zero, or whose axial Mach number reaches 1 fails the case, naming the station. "
        "With efficiency `estimated` each stage's isentropic efficiency comes from the loss model (loss_model, as "
        "stage-efficiency: lieblein_howell for a compressor, soderberg for a turbine) applied to the stage's own "
        "station values (row-frame angles and speeds with the annulus's radius change, static temperatures, Mach "
        "numbers, densities, work) and rows (aspect ratios; the solidity or pitch the row target asks for before "
        "the blade count is rounded; soderberg's Reynolds number from the row's exit density, speed, hydraulic "
        "diameter and viscosity); the split and layout are repeated with those efficiencies until the outlet "
        f"total temperature and pressure (relative) and every stage's efficiency change by less than "
        f"{estimated.TOLERANCE:g} between passes, at most {estimated.MAX_ITERATIONS} passes, else the case fails "
        "saying so. The first pass, at polytropic_efficiency (default "
        f"{estimated.DEFAULT_STARTING_EFFICIENCY}), decides the stage count, which is then held. Correlation "
        "inputs outside their fitted range are `warn` checks named loss_<check>, one value per stage. "
        "Preliminary-design estimates, within a few points of efficiency at best. "
        "Send `Accept: image/svg+xml` with one case for a drawing of the meridional flowpath and its rows. One "
        "case, rows or columns; in columns, per-stage inputs may be a list of lists (one per case, of different "
        "lengths) and every per-stage, per-station and per-row output is a list of lists, one per case at its "
        "own length (ragged, as rows give it)."
    ),
    schema=MachineInput,
    outputs=MachineOutput,
    choices=(RADIUS, stage_count_choice(blade_speed=False), WORK_SPLIT, ROWS, EFFICIENCY),
    compute=_compute,
    defaults=DEFAULTS,
    columns=True,
    render_svg=_render_svg,
)
