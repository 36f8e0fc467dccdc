"""Whole-machine mean-line design with every stage's efficiency estimated from its own losses.

:func:`service.core.machine.evaluate_machine_design` takes one polytropic efficiency for every
stage. Here each stage's total-to-total isentropic efficiency comes from a loss model
(:func:`service.core.losses.stage.evaluate_stage_efficiency`) applied to that stage's own
triangles, states and rows as the machine design lays them out, and the design is repeated
with those efficiencies until it stops changing (a fixed-point iteration):

1. a first pass with a starting polytropic efficiency (default :data:`DEFAULT_STARTING_EFFICIENCY`)
   decides the stage count (given, or the fewest meeting a loading or stage pressure ratio
   limit); the count is then held fixed, so a limit is met at the starting efficiency, and the
   loading and stage pressure ratio checks judge the final design;
2. each stage's losses are evaluated from its rotor's and stator's station values (angles and
   speeds in each row's frame at the row's own stations, with the radius change of the
   machine's annulus, static temperatures, Mach numbers, densities, the stage's work) and the
   machine's rows (aspect ratio, solidity, pitch, blade height);
3. the stage split is repeated with those stage isentropic efficiencies (the work shares and
   the overall pressure ratio held), and the flowpath laid out again;
4. steps 2-3 repeat until, between two passes, the relative change of the outlet total
   temperature and total pressure and the change of every stage's efficiency are all below
   ``tolerance`` (default :data:`TOLERANCE`); a case still changing after ``max_iterations``
   passes (default :data:`MAX_ITERATIONS`) fails with the reason
   "the estimated efficiency did not converge in N iterations".

The answer is the design of the last pass and the efficiencies it was made with: feeding them
back as given stage isentropic efficiencies reproduces it, and the loss model applied to it
returns them to within ``tolerance``.

Loss models (one per machine; Kacker-Okapuu is not offered: it needs the caller's readings of
Ainley and Mathieson's profile-loss charts at every row's own pitch-chord ratio and outlet
angle, which a machine design cannot supply):

- compressor, ``lieblein_howell``: Lieblein's profile loss at the row's own solidity, Howell's
  annulus and secondary drag with the pitch over height of the row's own aspect ratio and
  stagger, Vavra's tip-clearance drag of the rotors at ``tip_clearance_to_height`` (default
  :data:`DEFAULT_TIP_CLEARANCE_TO_HEIGHT`, common practice); the correlations use the row's
  angles only, so the radius change across a row enters through its angles, not as a separate
  term;
- turbine, ``soderberg``: Soderberg's loss with its aspect-ratio correction and its Reynolds
  correction at each row's Reynolds number ``rho V D_h / mu`` from the machine's own exit
  station (density, row-frame speed, static temperature) and the row's own pitch and blade
  height (hydraulic diameter :func:`service.core.losses.soderberg.hydraulic_diameter`); the
  viscosity is ``dynamic_viscosity`` or, by default, air's by Sutherland's law at the exit
  static temperature (:func:`service.core.losses.efficiency.sutherland_viscosity`), a fair
  estimate for lean combustion products too (common practice).

The entropy rise of each stage is still shared between rotor and stator by
``rotor_loss_fraction``, not by the two rows' own losses. Every correlation input outside its
fitted range is reported as a warn check named ``loss_<check>`` with one value per stage.
Preliminary-design estimates: the correlations reproduce their cascade and turbine data within
a few points of efficiency and say nothing about a design outside that data.

References
----------
1. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of Turbomachinery",
   7th ed., Butterworth-Heinemann, ch. 4 (Soderberg's correlation; stage efficiency from row
   losses) and ch. 5.
2. Lieblein, S. (1965), "Experimental flow in two-dimensional cascades", ch. 6 of NASA SP-36.
3. Saravanamuttoo, H. I. H., Rogers, G. F. C., Cohen, H., Straznicky, P. V. and Nix, A. C.
   (2017), "Gas Turbine Theory", 7th ed., Pearson, ch. 5 (Howell's drag coefficients).
"""

from __future__ import annotations

import numpy as np

from service.core import diffusion, zweifel
from service.core import machine as design
from service.core.cases import CaseResults
from service.core.losses import efficiency as loss_efficiency
from service.core.losses import soderberg
from service.core.losses import stage as stage_losses

#: The loss model of each machine (Kacker-Okapuu needs chart readings: not offered here).
MACHINE_LOSS_MODELS = {"compressor": "lieblein_howell", "turbine": "soderberg"}
#: Starting polytropic efficiency of the first pass, which decides the stage count. [-]
DEFAULT_STARTING_EFFICIENCY = 0.9
#: Rotor tip clearance over blade height (common practice: about 1-2 % of the blade height in
#: a core compressor; from memory). [-]
DEFAULT_TIP_CLEARANCE_TO_HEIGHT = 0.01
#: Largest change, between two passes, of the outlet total temperature and pressure (relative)
#: and of every stage's efficiency at which the iteration stops. [-]
TOLERANCE = 1e-9
#: Most passes with estimated efficiencies before a case fails. [-]
MAX_ITERATIONS = 50

_COUNTS = ("stages", "max_loading_coefficient", "max_stage_pressure_ratio")
#: The loss-model fields of each machine.
_OWN = {"compressor": ("tip_clearance_to_height",), "turbine": ("dynamic_viscosity", "thickness_to_chord")}


def stage_flow(values, width):
    """Every stage's triangles and states, keyed as :func:`~service.core.losses.stage.evaluate_stage_efficiency`
    reads them, from the machine design's station outputs.

    Stage ``i`` (from 0) spans stations ``2i``, ``2i + 1``, ``2i + 2`` (from 0), its stations 1, 2, 3.

    Parameters
    ----------
    values : mapping of str to numpy.ndarray
        Outputs of :func:`service.core.machine.evaluate_machine_design`: ``station_*`` of shape
        ``(cases, 2 width + 1)``, ``stage_work`` of shape ``(cases, width)``.
    width : int
        Stage count (the widest case's); NaN past a case's own count. [-]

    Returns
    -------
    dict of str to numpy.ndarray
        ``alpha1..3``, ``beta1..3`` [deg], ``V1..3``, ``W1..3`` [m s^-1], ``T1..3`` [K],
        ``M1..3``, ``M_rel1..3`` [-], ``rho1..3`` [kg m^-3], ``work`` [J kg^-1], each
        ``(cases, width)``; relative values NaN at the station no rotor is next to.
    """
    first = 2 * np.arange(width)
    names = {"alpha": "station_alpha", "beta": "station_beta", "V": "station_velocity",
             "W": "station_relative_velocity", "T": "station_static_temperature", "M": "station_mach",
             "M_rel": "station_relative_mach", "rho": "station_density"}
    flow = {f"{key}{j + 1}": values[name][:, first + j] for key, name in names.items() for j in range(3)}
    flow["work"] = values["stage_work"][:, :width]
    return flow


def _row_columns(machine, width):
    """Row indices (from 0) of every stage's rotor and stator."""
    first = 2 * np.arange(width)
    return (first, first + 1) if machine == "compressor" else (first + 1, first)


def design_row_geometry(machine, values, zweifel_coefficient=zweifel.OPTIMUM_ZWEIFEL_COEFFICIENT,
                        target_diffusion_factor=None, solidity=None, shaft_speed=None):
    """Every row's solidity and pitch as its sizing target asks, before the blade count is rounded.

    The machine design rounds every blade count up, so its ``row_solidity`` and ``row_pitch``
    jump as a row's flow changes a little; the loss model takes the target's own (continuous)
    value so that the estimated efficiency is a continuous function of the design and the
    iteration can settle. Compressor: the given ``solidity``, or the solidity
    :func:`service.core.diffusion.evaluate_diffusion_sizing` finds for ``target_diffusion_factor``
    with the row's own velocities and radii (as :func:`service.core.blade_rows.size_rows` does);
    turbine: the pitch of the incompressible Zweifel target
    (:func:`service.core.zweifel.pitch_to_axial_chord_for_zweifel` times the axial chord).

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    values : mapping of str to numpy.ndarray
        Outputs of :func:`service.core.machine.evaluate_machine_design`, ``(cases, ...)``.
    zweifel_coefficient : array_like
        Turbine: per case. [-]
    target_diffusion_factor, solidity : array_like, optional
        Compressor: exactly one, per case. [-]
    shaft_speed : array_like, optional
        Compressor with a target diffusion factor: per case. [rev min^-1]

    Returns
    -------
    dict of str to numpy.ndarray
        ``row_solidity`` [-] and ``row_pitch`` [m], ``(cases, 2 width)``.
    """
    inlet, outlet = values["row_inlet_angle"], values["row_outlet_angle"]
    axial_chord, chord = values["row_axial_chord"], values["row_chord"]
    with np.errstate(all="ignore"):
        if machine == "turbine":
            pitch = zweifel.pitch_to_axial_chord_for_zweifel(
                inlet, outlet, np.asarray(zweifel_coefficient, dtype=float).reshape(-1, 1)) * axial_chord
            return {"row_pitch": pitch, "row_solidity": chord / pitch}
        if solidity is not None:
            sigma = np.broadcast_to(np.asarray(solidity, dtype=float).reshape(-1, 1), chord.shape).copy()
        else:
            sigma = np.full(chord.shape, np.nan)
            vx, r = values["station_axial_velocity"], values["station_mean_radius"]
            target = np.asarray(target_diffusion_factor, dtype=float).reshape(-1, 1)
            for kind, cols in (("rotor", slice(0, None, 2)), ("stator", slice(1, None, 2))):
                radii = {"inlet_radius": r[:, :-1][:, cols], "outlet_radius": r[:, 1:][:, cols]}
                if kind == "rotor":
                    radii["shaft_speed"] = np.asarray(shaft_speed, dtype=float).reshape(-1, 1)
                sized = diffusion.evaluate_diffusion_sizing(
                    kind, vx[:, :-1][:, cols], inlet[:, cols], outlet[:, cols], target,
                    outlet_axial_velocity=vx[:, 1:][:, cols], **radii)
                sigma[:, cols] = sized.values["solidity"]
        return {"row_solidity": sigma, "row_pitch": chord / sigma}


def soderberg_row_reynolds_numbers(values, rows, width, dynamic_viscosity=None):
    """Soderberg's Reynolds number of every turbine row from the machine's own rows and exit stations.

    .. math:: Re = \\frac{\\rho_{out} c_{out} D_h}{\\mu}, \\qquad
              D_h = \\frac{2 s H \\cos\\alpha_{out}}{s \\cos\\alpha_{out} + H}

    with the row's exit density, speed and flow angle in its own frame, its pitch ``s`` and blade
    height ``H`` at the mean radius.

    Parameters
    ----------
    values : mapping of str to numpy.ndarray
        Turbine outputs of :func:`service.core.machine.evaluate_machine_design`.
    rows : mapping of str to numpy.ndarray
        ``row_pitch`` of every row, ``(cases, 2 width)`` (:func:`design_row_geometry`). [m]
    width : int
        Stage count (the widest case's). [-]
    dynamic_viscosity : array_like, optional
        Per case, ``(cases,)``. [Pa s]; by default air's by Sutherland's law at each row's exit
        static temperature.

    Returns
    -------
    dict of str to numpy.ndarray
        ``stator`` and ``rotor``: per stage, ``(cases, width)``. [-]

    References
    ----------
    Dixon and Hall (2014), ch. 4 (Soderberg's Reynolds number on the hydraulic diameter).
    """
    rotor, stator = _row_columns("turbine", width)
    out = {}
    for row, column, speed, angle in (("stator", stator, "station_velocity", "station_alpha"),
                                      ("rotor", rotor, "station_relative_velocity", "station_beta")):
        exit_station = column + 1
        temperature = values["station_static_temperature"][:, exit_station]
        mu = loss_efficiency.sutherland_viscosity(temperature) if dynamic_viscosity is None else \
            np.asarray(dynamic_viscosity, dtype=float)[:, None]
        d_h = soderberg.hydraulic_diameter(rows["row_pitch"][:, column], values["row_blade_height"][:, column],
                                           values[angle][:, exit_station])
        out[row] = values["station_density"][:, exit_station] * values[speed][:, exit_station] * d_h / mu
    return out


def stage_losses_of_design(machine, loss_model, values, rows, cp, gamma, rotor_aspect_ratio, stator_aspect_ratio,
                           tip_clearance_to_height=DEFAULT_TIP_CLEARANCE_TO_HEIGHT, dynamic_viscosity=None,
                           thickness_to_chord=None):
    """Row losses and stage efficiencies of every stage of a laid-out machine.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    loss_model : str
        ``lieblein_howell`` (compressor) or ``soderberg`` (turbine).
    values : mapping of str to numpy.ndarray
        Outputs of :func:`service.core.machine.evaluate_machine_design`, ``(cases, ...)``.
    rows : mapping of str to numpy.ndarray
        ``row_solidity`` [-] and ``row_pitch`` [m] of every row, ``(cases, 2 width)``, e.g.
        :func:`design_row_geometry`'s.
    cp : array_like
        Per case. [J kg^-1 K^-1]
    gamma : array_like
        Per case. [-]
    rotor_aspect_ratio, stator_aspect_ratio : array_like
        Per case: blade height over axial chord. [-]
    tip_clearance_to_height : array_like
        Per case: rotor tip clearance over blade height (compressor). [-]
    dynamic_viscosity : array_like, optional
        Per case (turbine); by default Sutherland's law for air. [Pa s]
    thickness_to_chord : array_like, optional
        Per case (turbine): judged against Soderberg's range only. [-]

    Returns
    -------
    CaseResults
        Of :func:`service.core.losses.stage.evaluate_stage_efficiency`, every output and mask
        ``(cases, width)``.
    """
    width = values["stage_work"].shape[1]

    def per_case(a):
        return np.asarray(a, dtype=float).reshape(-1, 1)

    flow = stage_flow(values, width)
    common = (machine, loss_model, flow, per_case(cp), per_case(gamma), per_case(rotor_aspect_ratio),
              per_case(stator_aspect_ratio))
    if machine == "compressor":
        rotor, stator = _row_columns(machine, width)
        return stage_losses.evaluate_stage_efficiency(
            *common, rotor_solidity=rows["row_solidity"][:, rotor], stator_solidity=rows["row_solidity"][:, stator],
            tip_clearance_to_height=per_case(tip_clearance_to_height))
    reynolds = soderberg_row_reynolds_numbers(values, rows, width, dynamic_viscosity)
    return stage_losses.evaluate_stage_efficiency(
        *common, reynolds_number=reynolds,
        thickness_to_chord=None if thickness_to_chord is None else per_case(thickness_to_chord))


def _per_case(value, m):
    """A per-case input broadcast to (m,), a per-stage one to (m, k); None and strings as they are."""
    if value is None or isinstance(value, str):
        return value
    array = np.asarray(value, dtype=float)
    if array.ndim == 2:
        return np.broadcast_to(array, (m, array.shape[1]))
    return np.broadcast_to(array, (m,))


def _take(value, index):
    return value[index] if isinstance(value, np.ndarray) else value


def _largest_change(before, after):
    with np.errstate(all="ignore"):
        change = np.maximum(np.abs(after["outlet_total_temperature"] / before["outlet_total_temperature"] - 1.0),
                            np.abs(after["outlet_total_pressure"] / before["outlet_total_pressure"] - 1.0))
    return np.where(np.isfinite(change), change, np.inf)


def evaluate_machine_design_estimated(
    machine, mass_flow, total_temperature, total_pressure, pressure_ratio, shaft_speed, flow_coefficient, reaction,
    rotor_aspect_ratio, stator_aspect_ratio, *, polytropic_efficiency=DEFAULT_STARTING_EFFICIENCY, loss_model=None,
    tip_clearance_to_height=None, dynamic_viscosity=None, thickness_to_chord=None,
    tolerance=TOLERANCE, max_iterations=MAX_ITERATIONS, cp=1005.0, gamma=1.4, weights=None, **layout,
):
    """A multistage compressor or turbine laid out at the mean line with estimated stage efficiencies.

    See the module docstring for the iteration, the loss models and what is held fixed.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    mass_flow, total_temperature, total_pressure, pressure_ratio, shaft_speed : array_like
        As :func:`service.core.machine.evaluate_machine_design`. [kg s^-1], [K], [Pa], [-], [rev min^-1]
    flow_coefficient, reaction : array_like
        Per case or per stage, as :func:`service.core.machine.evaluate_machine_design`. [-]
    rotor_aspect_ratio, stator_aspect_ratio : array_like
        Blade height over axial chord of the rotor and stator rows (also the loss model's). [-]
    polytropic_efficiency : array_like
        Starting polytropic efficiency of the first pass, in (0, 1] (default 0.9). [-]
    loss_model : str, optional
        ``lieblein_howell`` (compressor) or ``soderberg`` (turbine); by default the machine's
        (:data:`MACHINE_LOSS_MODELS`). A model of the other machine fails every case, naming it.
    tip_clearance_to_height : array_like, optional
        Compressor rotors: tip clearance over blade height (default 0.01, common practice). [-]
    dynamic_viscosity : array_like, optional
        Turbine: the gas's dynamic viscosity for Soderberg's Reynolds number (default: air by
        Sutherland's law at each row's exit static temperature). [Pa s]
    thickness_to_chord : array_like, optional
        Turbine: blade thickness over chord, judged against Soderberg's range (0.15-0.25). [-]

        A field of the other machine's loss model (``tip_clearance_to_height`` for a turbine,
        ``dynamic_viscosity`` or ``thickness_to_chord`` for a compressor) fails every case, naming it.
    tolerance : float
        Convergence tolerance (default 1e-9). [-]
    max_iterations : int
        Most passes with estimated efficiencies (default 50). [-]
    cp : array_like
        [J kg^-1 K^-1]
    gamma : array_like
        [-]
    weights : array_like, optional
        Rule ``weights``: relative work shares, ``(cases, k)`` or ``(k,)``. [-]
    **layout
        The other keywords of :func:`service.core.machine.evaluate_machine_design` (the radius
        held, one stage-count input, ``rule``, row targets, swirl, ``axial_gap``,
        ``rotor_loss_fraction``, ``max_stages``).

    Returns
    -------
    CaseResults
        The outputs of :func:`service.core.machine.evaluate_machine_design` for the last pass,
        with ``stage_isentropic_efficiency`` the estimated one of each stage, ``isentropic_efficiency``
        and ``polytropic_efficiency`` the whole machine's that follow from them, and
        ``iterations`` (int64: the passes with estimated efficiencies, 0 where the case failed),
        ``row_loss_coefficient`` [-] (the loss model's coefficient of every row, in flow order) and
        ``stage_total_to_static_efficiency`` [-]. Failures: the design's, the loss model's (naming
        the stage), "the estimated efficiency did not converge in N iterations". Checks: the
        design's, and ``loss_<name>`` for every correlation range (one value per stage).

    Raises
    ------
    ValueError
        For an unknown option (``loss_model`` ``kacker_okapuu`` among them), ``stage_isentropic_efficiency``
        given, or as :func:`service.core.machine.evaluate_machine_design`.

    References
    ----------
    Dixon and Hall (2014), ch. 4; Lieblein (1965), NASA SP-36 ch. 6; Saravanamuttoo et al. (2017), ch. 5.
    """
    if machine not in MACHINE_LOSS_MODELS:
        raise ValueError(f"machine must be one of {tuple(MACHINE_LOSS_MODELS)}, not {machine!r}")
    models = tuple(MACHINE_LOSS_MODELS.values())
    if loss_model is not None and loss_model not in models:
        raise ValueError(f"loss_model must be one of {models} for a machine design, not {loss_model!r}")
    if "stage_isentropic_efficiency" in layout:
        raise ValueError("stage_isentropic_efficiency is estimated here, not given")
    model = MACHINE_LOSS_MODELS[machine] if loss_model is None else loss_model
    if int(max_iterations) < 1:
        raise ValueError(f"max_iterations must be at least 1, not {max_iterations!r}")
    args = (machine, mass_flow, total_temperature, total_pressure, pressure_ratio, shaft_speed)
    first = design.evaluate_machine_design(
        *args, polytropic_efficiency, flow_coefficient, reaction, rotor_aspect_ratio, stator_aspect_ratio,
        cp=cp, gamma=gamma, weights=weights, **layout)
    m = first.values["stage_count"].shape[0]
    count = first.values["stage_count"]

    # Every per-case input as (m,) so that a subset of the cases can be designed again.
    fixed = {name: value for name, value in layout.items() if name not in _COUNTS}
    per_case = {"args": [_per_case(a, m) for a in args[1:]], "flow_coefficient": _per_case(flow_coefficient, m),
                "reaction": _per_case(reaction, m), "rotor_aspect_ratio": _per_case(rotor_aspect_ratio, m),
                "stator_aspect_ratio": _per_case(stator_aspect_ratio, m), "cp": _per_case(cp, m),
                "gamma": _per_case(gamma, m), **{name: _per_case(v, m) for name, v in fixed.items()}}
    if weights is not None:
        weights = np.atleast_2d(np.asarray(weights, dtype=float))
        per_case["weights"] = np.broadcast_to(weights, (m, weights.shape[1]))
    given_geometry = {"tip_clearance_to_height": tip_clearance_to_height, "dynamic_viscosity": dynamic_viscosity,
                      "thickness_to_chord": thickness_to_chord}
    geometry = {name: _per_case(value, m) for name, value in given_geometry.items() if name in _OWN[machine]}
    if machine == "compressor" and tip_clearance_to_height is None:
        geometry["tip_clearance_to_height"] = _per_case(DEFAULT_TIP_CLEARANCE_TO_HEIGHT, m)

    def run(index, efficiency):
        """The design of the cases ``index`` with the per-stage efficiencies given."""
        sub = {name: _take(value, index) for name, value in per_case.items() if name != "args"}
        return design.evaluate_machine_design(
            machine, *(_take(a, index) for a in per_case["args"]), None, sub.pop("flow_coefficient"),
            sub.pop("reaction"), sub.pop("rotor_aspect_ratio"), sub.pop("stator_aspect_ratio"),
            stages=np.maximum(count[index], 1), stage_isentropic_efficiency=efficiency, **sub)

    sizing = {name: per_case.get(name) for name in ("target_diffusion_factor", "solidity", "shaft_speed")}
    sizing["shaft_speed"] = per_case["args"][-1]
    if machine == "turbine":
        sizing = {"zweifel_coefficient": _per_case(layout.get("zweifel_coefficient",
                                                              zweifel.OPTIMUM_ZWEIFEL_COEFFICIENT), m)}

    def estimate(result, index):
        if "row_inlet_angle" not in result.values:  # no case laid out: nothing to estimate
            blank = np.full((len(index), 1), np.nan)
            return CaseResults(values={name: blank for name in (
                "total_to_total_efficiency", "total_to_static_efficiency", "rotor_loss_coefficient",
                "stator_loss_coefficient")})
        rows = design_row_geometry(machine, result.values, **{k: _take(v, index) for k, v in sizing.items()})
        # A model of the other machine fails every case (below); the machine's own keeps the arrays defined.
        return stage_losses_of_design(
            machine, MACHINE_LOSS_MODELS[machine], result.values, rows, _take(per_case["cp"], index),
            _take(per_case["gamma"], index),
            _take(per_case["rotor_aspect_ratio"], index), _take(per_case["stator_aspect_ratio"], index),
            **{name: _take(value, index) for name, value in geometry.items()})

    wrong_model = np.full(m, model != MACHINE_LOSS_MODELS[machine])
    foreign = [name for name, value in given_geometry.items() if value is not None and name not in _OWN[machine]]
    wrong_model |= bool(foreign)
    width = max(1, int(count.max(initial=0)))
    everyone = np.arange(m)
    efficiency = np.full((m, width), np.nan)
    iterations = np.zeros(m, dtype=np.int64)
    converged = np.zeros(m, dtype=bool)
    running = (count > 0) & ~first.failed() & ~wrong_model
    laid = running.copy()
    first_losses = estimate(first, everyone)
    if running.any():
        efficiency = _finite_within(first_losses.values["total_to_total_efficiency"], count, width)
        running &= np.all(np.isfinite(efficiency) | (np.arange(width) >= count[:, None]), axis=1)
    used = efficiency.copy()
    before = {name: first.values[name].copy() for name in ("outlet_total_temperature", "outlet_total_pressure")}
    for iteration in range(1, int(max_iterations) + 1):
        index = np.flatnonzero(running)
        if not index.size:
            break
        result = run(index, efficiency[index])
        used[index], iterations[index] = efficiency[index], iteration
        after = _finite_within(estimate(result, index).values["total_to_total_efficiency"], count[index], width)
        inside = np.arange(width) < count[index, None]
        with np.errstate(invalid="ignore"):
            step = np.max(np.where(inside, np.abs(after - efficiency[index]), 0.0), axis=1)
        step = np.where(np.isfinite(step), step, np.inf)
        change = np.maximum(_largest_change({k: v[index] for k, v in before.items()}, result.values), step)
        usable = ~result.failed() & np.all(np.isfinite(after) | ~inside, axis=1)
        for name in before:
            before[name][index] = result.values[name]
        efficiency[index] = after
        converged[index] = usable & (change < tolerance)
        running[index] = usable & ~converged[index]

    # The answer: the last pass of every case again, all cases at once (the same inputs give the same design).
    # A case never iterated failed before: in the first pass, or in the losses of its first pass.
    iterated = iterations > 0
    final = run(everyone, np.where(iterated[:, None], used, 1.0))
    losses = estimate(final, everyone)
    failures = [(reason, mask & ~laid) for reason, mask in first.failures]
    if foreign:
        failures.append((f"{foreign[0]} does not apply to a {machine} (its loss model, {MACHINE_LOSS_MODELS[machine]}, "
                         "does not use it)", wrong_model))
    failures.append((f"loss_model {model!r} is for a {'turbine' if model == 'soderberg' else 'compressor'}, "
                     f"not a {machine}", wrong_model))
    failures += _stage_failures(first_losses, m, laid & ~iterated)
    failures += [(reason, mask & iterated) for reason, mask in final.failures]
    failures += _stage_failures(losses, m, iterated)
    passes = f"{int(max_iterations)} iteration{'' if int(max_iterations) == 1 else 's'}"
    failures.append((f"the estimated efficiency did not converge in {passes}", laid & ~converged))
    failed = np.zeros(m, dtype=bool)
    for _, mask in failures:
        failed |= mask

    values = dict(final.values)
    values["stage_count"] = np.where(failed, 0, count).astype(np.int64)
    values["iterations"] = np.where(failed, 0, iterations).astype(np.int64)
    values["stage_total_to_static_efficiency"] = _finite_within(losses.values["total_to_static_efficiency"],
                                                               count, width)
    rows = np.full((m, 2 * width), np.nan)
    rotor, stator = _row_columns(machine, width)
    rows[:, rotor] = _finite_within(losses.values["rotor_loss_coefficient"], count, width)
    rows[:, stator] = _finite_within(losses.values["stator_loss_coefficient"], count, width)
    values["row_loss_coefficient"] = rows
    values = {name: v if name in ("stage_count", "iterations") else
              np.where(failed.reshape((-1,) + (1,) * (v.ndim - 1)), np.nan, v) for name, v in values.items()}
    checks = dict(final.checks)
    for name, check in losses.checks.items():
        value = _finite_within(np.asarray(check.value, dtype=float).reshape(m, -1), count, width)
        checks[f"loss_{name}"] = type(check)(value=np.where(failed[:, None], np.nan, value), limit=check.limit,
                                             comparison=check.comparison, basis=check.basis)
    return CaseResults(values=values, failures=failures, checks=checks,
                       absent=design._without_rotor(machine, values))


def _stage_failures(losses, m, where):
    """The loss model's failures, (cases, stages) masks, as one reason per stage naming it, for the cases ``where``."""
    failures = []
    for reason, mask in losses.failures:
        mask = np.asarray(mask).reshape(m, -1)
        failures += [(f"stage {i + 1}: {reason}", mask[:, i] & where) for i in range(mask.shape[1])]
    return failures


def _finite_within(array, count, width):
    """A per-stage array as (cases, width), cut or padded, with NaN past each case's stage count."""
    array = np.asarray(array, dtype=float)
    array = array[:, :width] if array.ndim == 2 else array[:, None]
    if array.shape[1] < width:
        array = np.pad(array, [(0, 0), (0, width - array.shape[1])], constant_values=np.nan)
    return np.where(np.arange(width) < np.asarray(count)[:, None], array, np.nan)
