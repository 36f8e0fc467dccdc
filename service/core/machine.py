"""Whole-machine preliminary design at the mean line: from the cycle's duty to a stage-by-stage flowpath.

The pieces are the service's own methods, composed:

1. the overall pressure ratio is shared between stages (:func:`service.core.split.evaluate_stage_split`,
   polytropic efficiency): stage count, work and total states;
2. the loss of every stage is shared between its rotor and its stator (:func:`station_total_states`),
   giving the total state at every station;
3. each stage's velocity triangles follow from its own loading ``psi = Delta h0 / U^2``, flow
   coefficient and reaction at its mean radius (:func:`service.core.triangles.rotor_swirl_from_duty`,
   :func:`service.core.triangles.stage_triangles`), the static states from the velocities
   (:func:`service.core.gas.static_state`);
4. continuity gives the annulus area at every station, ``A = m / (rho V_x)``, and the held radius the
   others (:mod:`service.core.annulus`);
5. the rows are sized (:func:`service.core.blade_rows.size_rows`): Zweifel blade counts for turbine
   rows, diffusion-factor or solidity blade counts for compressor rows, and stacked along the axis
   (:mod:`service.core.flowpath`).

Stations and rows, in flow order (``n`` stages, ``2n + 1`` stations, ``2n`` rows, counted from 1):

- compressor: station ``2i - 1`` is rotor ``i``'s inlet, ``2i`` its exit (stator ``i``'s inlet), ``2i + 1``
  stator ``i``'s exit, which is rotor ``i + 1``'s inlet; rows R1, S1, R2, S2, ...;
- turbine: station ``2i - 1`` is stator (nozzle) ``i``'s inlet, ``2i`` its exit (rotor ``i``'s inlet),
  ``2i + 1`` rotor ``i``'s exit, which is stator ``i + 1``'s inlet; rows S1, R1, S2, R2, ...

Row ``j`` runs from station ``j`` to station ``j + 1``.

Assumptions (preliminary design; each stated where it is used):

- Constant axial velocity through each rotor, ``V_x = phi U`` at the stage's mean radius; the stator
  between two stages changes the axial velocity from one stage's to the next's (a compressor stator
  ends its stage; a turbine stator begins it). A non-repeating sequence: a compressor stator turns
  the flow to the next rotor's inlet angle, and the last stator to the outlet swirl (default: the
  machine's inlet flow angle); a turbine stator turns the upstream rotor's exit flow to its own exit
  angle.
- Inlet swirl. Compressor: the first rotor's inlet swirl and the first stage's reaction are tied by
  ``R = 1 - psi/2 - phi tan(alpha_1)``; given ``inlet_swirl`` the first stage's reaction follows from it
  (and replaces the first entry of ``reaction``, reported in ``stage_reaction``); without it the inlet
  angle follows from the first stage's reaction. Turbine: the first nozzle turns whatever enters, so
  ``inlet_swirl`` does not change a reaction; without it the inlet flow angle is the first rotor's
  exit angle (as in a repeating stage).
- Loss split: each stage's entropy rise, from its polytropic efficiency, is shared between rotor and
  stator, the rotor taking ``rotor_loss_fraction`` (default 0.5: an equal share, a common
  preliminary-design assumption for stages near 50 % reaction). Total temperature changes only in the
  rotor (adiabatic rows).
- Mean radius held: the stage's blade speed is taken at the mean radius of one station, the rotor's
  low-swirl station (compressor rotor inlet, turbine rotor exit), and held through the stage. With the
  mean radius held every station has that radius; with the hub or tip radius held the annulus at that
  station and its blade speed are solved together (:func:`service.core.annulus.hub_to_tip_ratio_for_flow`),
  and the other stations' annuli follow from their areas; the stage's triangles use the one blade
  speed (the mean line's drift inside a stage is reported in ``station_mean_radius``, not fed back).
- Rows take the mean of their inlet and outlet stations' blade heights and mean radii; aspect ratio on
  axial chord, ``h / c_x``; stagger estimated as the mean of the row's flow angles
  (:func:`service.core.flowpath.stagger_estimate`); axial gap a fraction of the upstream row's axial
  chord; the diffusion factor with the constant-radius form at the row's mean radius and the row's
  inlet and outlet axial velocities; the Zweifel coefficient incompressible.

References
----------
1. Saravanamuttoo, H. I. H., Rogers, G. F. C., Cohen, H., Straznicky, P. V. and Nix, A. C. (2017),
   "Gas Turbine Theory", 7th ed., Pearson, ch. 5 (axial compressor design from the cycle's duty) and
   ch. 7 (axial turbine mean-line design).
2. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of Turbomachinery",
   7th ed., Butterworth-Heinemann, ch. 4 and 5.
"""

from __future__ import annotations

import numpy as np

from service.core import annulus, blade_rows, flowpath, gas, machine_span, split, triangles, zweifel
from service.core.angles import cos_tan
from service.core.cases import CaseResults, reason_for
from service.core.stations import enthalpy_reaction, rotor_stations

MAX_STAGES = split.MAX_STAGES
#: The rotor's share of a stage's entropy rise, by default. [-]
DEFAULT_ROTOR_LOSS_FRACTION = 0.5
#: A stage within this relative margin of the loading limit counts as meeting it. [-]
LIMIT_RTOL = split.LIMIT_RTOL

_STATION_OUTPUTS = (
    "station_total_temperature", "station_total_pressure", "station_static_temperature",
    "station_static_pressure", "station_density", "station_axial_velocity", "station_tangential_velocity",
    "station_velocity", "station_alpha", "station_relative_tangential_velocity", "station_relative_velocity",
    "station_beta", "station_mach", "station_relative_mach", "station_axial_mach", "station_area",
    "station_hub_radius", "station_tip_radius", "station_mean_radius", "station_blade_height",
    "station_hub_to_tip_ratio", "station_axial_position",
)


def _exactly_one(**given):
    named = [name for name, value in given.items() if value is not None]
    if len(named) != 1:
        raise ValueError(f"give exactly one of {tuple(given)}, not {tuple(named) or 'none'}")
    return named[0], given[named[0]]


def station_total_states(machine, stage_inlet_total_temperature, stage_outlet_total_temperature,
                         stage_inlet_total_pressure, stage_outlet_total_pressure, gamma,
                         rotor_loss_fraction=DEFAULT_ROTOR_LOSS_FRACTION):
    """Total temperature and pressure at every station from the stages' end states and a loss split.

    The stage's entropy rise ``Delta s / R = gamma/(gamma-1) ln(T0_out/T0_in) - ln(p0_out/p0_in)`` is
    shared: the rotor takes ``f`` of it, the stator ``1 - f``. Total temperature changes only across
    the rotor. Compressor (rotor first):

    .. math:: \\ln\\frac{p_{0,2}}{p_{0,1}} = \\frac{\\gamma}{\\gamma - 1}\\ln\\frac{T_{0,out}}{T_{0,in}}
              - f \\frac{\\Delta s}{R}

    turbine (stator first): ``ln(p0_2/p0_1) = -(1 - f) Delta s / R``; the stage's exit is its outlet
    total state in both.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    stage_inlet_total_temperature, stage_outlet_total_temperature : array_like
        Per stage, shape ``(cases, n)``. [K]
    stage_inlet_total_pressure, stage_outlet_total_pressure : array_like
        Per stage, shape ``(cases, n)``. [Pa]
    gamma : array_like
        Ratio of specific heats, shape ``(cases,)``. [-]
    rotor_loss_fraction : array_like
        The rotor's share of the stage's entropy rise, in [0, 1], shape ``(cases,)``. [-]

    Returns
    -------
    total_temperature, total_pressure : numpy.ndarray
        At stations 1 .. 2n + 1, shape ``(cases, 2n + 1)``. [K], [Pa]

    References
    ----------
    Dixon and Hall (2014), ch. 2 (entropy of a perfect gas, ``ds = cp dT0/T0 - R dp0/p0`` between
    total states).
    """
    t_in, t_out, p_in, p_out = (np.asarray(a, dtype=float) for a in (
        stage_inlet_total_temperature, stage_outlet_total_temperature, stage_inlet_total_pressure,
        stage_outlet_total_pressure))
    k = np.asarray(gamma, dtype=float)[..., None]
    k = k / (k - 1.0)
    fraction = np.asarray(rotor_loss_fraction, dtype=float)[..., None]
    log_tau = np.log(t_out / t_in)
    entropy = k * log_tau - np.log(p_out / p_in)
    if machine == "compressor":
        middle_t, middle_p = t_out, p_in * np.exp(k * log_tau - fraction * entropy)
    else:
        middle_t, middle_p = t_in, p_in * np.exp(-(1.0 - fraction) * entropy)
    shape = t_in.shape[:-1] + (2 * t_in.shape[-1] + 1,)
    temperature, pressure = np.empty(shape), np.empty(shape)
    for station, (first, middle, last) in ((temperature, (t_in, middle_t, t_out)),
                                           (pressure, (p_in, middle_p, p_out))):
        station[..., 0] = first[..., 0]
        station[..., 1::2] = middle
        station[..., 2::2] = last
    return temperature, pressure


#: Blade speed at a radius from the shaft speed (:func:`service.core.triangles.blade_speed`).
blade_speed = triangles.blade_speed


def _tan(angle):
    """``tan`` of a flow angle [deg], accurate to its last bit before 90 deg (:func:`service.core.angles.cos_tan`)."""
    return cos_tan(angle)[1]


def _low_swirl(u, flow_coefficient, work, reaction, fixed_angle):
    """Absolute swirl at the rotor's low-swirl station (compressor inlet, turbine exit): U (1 - R - psi/2),
    or ``V_x tan(alpha)`` where the angle is fixed (a compressor's inlet swirl)."""
    with np.errstate(all="ignore"):
        swirl = u * (1.0 - reaction) - 0.5 * work / u
        if fixed_angle is not None:
            # NaN marks the stages whose inlet swirl is not fixed.
            swirl = np.where(np.isnan(fixed_angle), swirl, flow_coefficient * u * _tan(fixed_angle))
    return swirl


def _solved_radius(held, radius, p, t0, p0, needed, velocities, given=None, guess=None):
    """Mean radius, (m, n), of one station of every stage with the hub or tip radius held.

    The station's velocities depend on the blade speed at its own radius, so its annulus and its blade
    speed are solved together (:func:`service.core.annulus.hub_to_tip_ratio_for_flow`).

    Parameters
    ----------
    held : str
        ``hub`` or ``tip``.
    radius : numpy.ndarray
        The held radius per case, (m,). [m]
    p : dict
        The per-case inputs (``shaft_speed``, ``mass_flow``, ``cp``, ``gamma``).
    t0, p0 : numpy.ndarray
        Total state at the station of every stage, (m, n). [K], [Pa]
    needed : dict of numpy.ndarray
        Per-stage values, (m, n), the velocities need; a stage where one is not finite is not solved.
    velocities : callable
        ``velocities(u, values) -> (V_x, V_theta)`` at the blade speed ``u`` [m s^-1], with ``values``
        the entries of ``needed`` and ``given`` of the problems solved.
    given : dict of numpy.ndarray, optional
        Per-stage values that may be NaN (e.g. a swirl angle fixed at some stages only).
    guess : numpy.ndarray, optional
        A hub-to-tip ratio near the station's, (m, n): the search starts there
        (:func:`service.core.annulus.hub_to_tip_ratio_near`). [-]

    Returns
    -------
    radius, hub_to_tip_ratio : numpy.ndarray
        The station's mean radius [m] and hub-to-tip ratio [-]; NaN where no annulus passes the mass flow.
    """
    m, n = t0.shape

    def per_stage(a):
        return np.broadcast_to(np.asarray(a, dtype=float)[:, None], (m, n)).ravel()

    every = {"radius": per_stage(radius), "speed": per_stage(p["shaft_speed"]),
             "mass_flow": per_stage(p["mass_flow"]), "cp": per_stage(p["cp"]), "gamma": per_stage(p["gamma"]),
             "t0": t0.ravel(), "p0": p0.ravel(), **{k: v.ravel() for k, v in needed.items()}}
    # Only stages whose duty is defined are solved (a failed split leaves NaN).
    defined = np.isfinite(every["t0"]) & np.isfinite(every["p0"])
    for name in needed:
        defined &= np.isfinite(every[name])
    every.update({k: np.broadcast_to(v, (m, n)).ravel() for k, v in (given or {}).items()})
    solved = np.flatnonzero(defined)
    sub = {name: value[solved] for name, value in every.items()}

    def flow_ratio(ring, which):
        u = blade_speed(ring["mean_radius"], sub["speed"][which])
        vx, swirl = velocities(u, {name: value[which] for name, value in sub.items()})
        state = gas.static_state(sub["t0"][which], sub["p0"][which], np.hypot(vx, swirl), sub["cp"][which],
                                 sub["gamma"][which])
        ratio = state["density"] * vx * ring["area"] / sub["mass_flow"][which]
        return np.where(vx / state["speed_of_sound"] < 1.0, ratio, np.nan)

    ratio = np.full(m * n, np.nan)
    if solved.size and guess is None:
        ratio[solved] = annulus.hub_to_tip_ratio_for_flow(held, sub["radius"], flow_ratio)
    elif solved.size:
        ratio[solved] = annulus.hub_to_tip_ratio_near(held, sub["radius"], flow_ratio, guess.ravel()[solved])
    ring = annulus.annulus_from_hub_to_tip_ratio(held, every["radius"], ratio)
    return ring["mean_radius"].reshape(m, n), ratio.reshape(m, n)


def _design_velocities(u, s):
    return s["phi"] * u, _low_swirl(u, s["phi"], s["work"], s["reaction"], s["fixed"])


def _euler_velocities(u, s):
    # Euler: work = U_other V_theta,other - U_design V_theta,design, for both machines.
    with np.errstate(all="ignore"):
        return s["vx"], (s["work"] + s["moment"]) / u


def _per_stage(value, n, name, m):
    """A per-stage input as (m, n), and the cases whose list does not have n entries."""
    array = np.asarray(value, dtype=float)
    if array.ndim < 2:
        return np.broadcast_to(np.broadcast_to(array, (m,))[:, None], (m, n)).astype(float), np.zeros(m, bool), None
    array = np.broadcast_to(array, (m, array.shape[-1]))
    count = np.sum(np.isfinite(array), axis=1)
    wrong = count != n
    out = np.full((m, n), np.nan)
    width = min(n, array.shape[1])
    out[:, :width] = array[:, :width]
    out[wrong] = np.nan
    reason = f"{name} has a different number of entries than the machine has stages ({n})"
    return out, wrong, reason


def _first_stages(array, n):
    """The first n stages of a per-stage split output; NaN where the split gave fewer (all its cases failed)."""
    array = array[:, :n]
    return np.pad(array, [(0, 0), (0, n - array.shape[1])], constant_values=np.nan)


def _layout(machine, held, n, p, sp):
    """The whole flowpath of m cases that all have n stages. Returns (values, failures, rows)."""
    sp = {name: _first_stages(value, n) if np.ndim(value) == 2 else value for name, value in sp.items()}
    m = p["mass_flow"].shape[0]
    cp, gamma = p["cp"], p["gamma"]
    failures = []
    phi, wrong_phi, reason_phi = _per_stage(p["flow_coefficient"], n, "flow_coefficient", m)
    reaction, wrong_r, reason_r = _per_stage(p["reaction"], n, "reaction", m)
    for reason, wrong in ((reason_phi, wrong_phi), (reason_r, wrong_r)):
        if reason is not None:
            failures.append((reason, wrong))
    work = sp["stage_work"]
    t0, p0 = station_total_states(machine, sp["stage_inlet_total_temperature"],
                                  sp["stage_outlet_total_temperature"],
                                  sp["stage_inlet_total_pressure"], sp["stage_outlet_total_pressure"],
                                  gamma, p["rotor_loss_fraction"])

    # Each stage's duty is set at its rotor's low-swirl (design) station, at that station's own radius.
    radius = p["radius"]
    design, other = rotor_stations(machine, n)
    fixed = np.full((m, n), np.nan)
    if machine == "compressor" and p["inlet_swirl"] is not None:
        fixed[:, 0] = p["inlet_swirl"]
    if held == "mean":
        stage_radius = np.broadcast_to(radius[:, None], (m, n)).astype(float)
    else:
        stage_radius, stage_ratio = _solved_radius(held, radius, p, t0[:, design], p0[:, design],
                                                   {"phi": phi, "work": work, "reaction": reaction},
                                                   _design_velocities, {"fixed": fixed})
        for i in range(n):
            failures.append((
                f"stage {i + 1}: no annulus with the {held} radius held passes the mass flow at station "
                f"{design[i] + 1} (the axial Mach number would reach 1 or the static temperature zero)",
                ~np.isfinite(stage_radius[:, i]) & np.isfinite(work[:, i])))
    speed = p["shaft_speed"][:, None]
    u = blade_speed(stage_radius, speed)
    vx = phi * u
    with np.errstate(all="ignore"):
        psi = work / np.square(u)
    if machine == "compressor" and p["inlet_swirl"] is not None:
        reaction = reaction.copy()
        reaction[:, 0] = 1.0 - 0.5 * psi[:, 0] - phi[:, 0] * _tan(p["inlet_swirl"])
    design_swirl = _low_swirl(u, phi, work, reaction, None)

    # The rotor's other station: its own radius and blade speed, its swirl from Euler's work equation.
    moment = u * design_swirl
    if held == "mean":
        other_radius = stage_radius
    else:
        other_radius, _ = _solved_radius(held, radius, p, t0[:, other], p0[:, other],
                                         {"vx": vx, "work": work, "moment": moment}, _euler_velocities,
                                         guess=stage_ratio)
        for i in range(n):
            failures.append((
                f"stage {i + 1}: no annulus with the {held} radius held passes the mass flow at station "
                f"{other[i] + 1} (the axial Mach number would reach 1 or the static temperature zero)",
                ~np.isfinite(other_radius[:, i]) & np.isfinite(stage_radius[:, i])))
    u_other = blade_speed(other_radius, speed)
    _, other_swirl = _euler_velocities(u_other, {"vx": vx, "work": work, "moment": moment})

    # Velocities at the stations; the blade speed is that of the adjacent rotor at the station's own
    # radius, NaN at the one station without a rotor (compressor outlet, turbine inlet).
    s = 2 * n + 1
    vx_st, swirl_st, u_st = np.empty((m, s)), np.empty((m, s)), np.full((m, s), np.nan)
    for target, (a, b) in ((vx_st, (vx, vx)), (swirl_st, (design_swirl, other_swirl)), (u_st, (u, u_other))):
        target[:, design], target[:, other] = a, b
    if machine == "compressor":
        # The outlet angle: as given, or the machine's inlet angle (tan alpha1 = V_theta1 / V_x1).
        outlet_tan = design_swirl[:, 0] / vx[:, 0] if p["outlet_swirl"] is None else _tan(p["outlet_swirl"])
        vx_st[:, -1] = vx[:, -1]
        swirl_st[:, -1] = vx[:, -1] * outlet_tan
    else:
        vx_st[:, 0] = vx[:, 0]
        swirl_st[:, 0] = design_swirl[:, 0] if p["inlet_swirl"] is None else \
            vx[:, 0] * _tan(p["inlet_swirl"])
    speed_st = np.hypot(vx_st, swirl_st)
    relative_swirl = swirl_st - u_st
    relative = np.hypot(vx_st, relative_swirl)
    state = gas.static_state(t0, p0, speed_st, cp[:, None], gamma[:, None])
    with np.errstate(all="ignore"):
        axial_mach = vx_st / state["speed_of_sound"]
        area = p["mass_flow"][:, None] / (state["density"] * vx_st)
    ring = annulus.annulus_from_area(area, held, radius[:, None])
    for k in range(s):
        failures += [
            (f"station {k + 1}: the static temperature is at or below zero (the flow is faster than its total "
             f"temperature allows)", ~(state["temperature"][:, k] > 0)),
            (f"station {k + 1}: the axial Mach number reaches 1 (choked annulus)", ~(axial_mach[:, k] < 1)),
            (f"station {k + 1}: the hub radius is at or below zero (the annulus needs more area than the held "
             f"{held} radius allows)", ~(ring["hub_radius"][:, k] > 0)),
            (f"station {k + 1}: the blade height is at or below zero", ~(ring["blade_height"][:, k] > 0)),
        ]
    stations = {
        "station_total_temperature": t0, "station_total_pressure": p0,
        "station_static_temperature": state["temperature"], "station_static_pressure": state["pressure"],
        "station_density": state["density"], "station_axial_velocity": vx_st,
        "station_tangential_velocity": swirl_st, "station_velocity": speed_st,
        "station_alpha": np.degrees(np.arctan2(swirl_st, vx_st)),
        "station_blade_speed": u_st,
        "station_relative_tangential_velocity": relative_swirl, "station_relative_velocity": relative,
        "station_beta": np.degrees(np.arctan2(relative_swirl, vx_st)),
        "station_mach": state["mach"], "station_relative_mach": relative / state["speed_of_sound"],
        "station_axial_mach": axial_mach, "station_area": area,
        "station_hub_radius": ring["hub_radius"], "station_tip_radius": ring["tip_radius"],
        "station_mean_radius": ring["mean_radius"], "station_blade_height": ring["blade_height"],
        "station_hub_to_tip_ratio": ring["hub_to_tip_ratio"],
    }
    rows, row_failures = blade_rows.size_rows(
        machine, stations, p["rotor_aspect_ratio"], p["stator_aspect_ratio"],
        zweifel_coefficient=p["zweifel_coefficient"] if machine == "turbine" else None,
        target_diffusion_factor=p["target_diffusion_factor"], solidity=p["solidity"], shaft_speed=p["shaft_speed"])
    failures += row_failures
    rotor_frame = np.ones(s, dtype=bool)
    rotor_frame[-1 if machine == "compressor" else 0] = False
    span, span_failures = machine_span.spanwise(machine, stations, rows, n, p["shaft_speed"], cp, gamma, rotor_frame)
    failures += span_failures
    layout = flowpath.axial_layout(rows["row_axial_chord"], p["axial_gap"])
    stations["station_axial_position"] = layout["station_position"]
    line = flowpath.outline(layout["leading_edge"], layout["trailing_edge"], ring["hub_radius"], ring["tip_radius"])
    rows.update(row_leading_edge=layout["leading_edge"], row_trailing_edge=layout["trailing_edge"])
    stages = {
        "stage_pressure_ratio": sp["stage_pressure_ratio"],
        "stage_total_temperature_change": sp["stage_total_temperature_change"],
        "stage_work": work, "stage_isentropic_efficiency": sp["stage_isentropic_efficiency"],
        "stage_loading_coefficient": psi, "stage_flow_coefficient": phi,
        "stage_reaction": enthalpy_reaction(machine, state["temperature"]),
        "stage_kinematic_reaction": reaction, "stage_blade_speed": u, "stage_mean_radius": stage_radius,
    }
    overall = {"axial_length": layout["axial_length"]}
    outline = {"flowpath_x": line["x"], "flowpath_hub_radius": line["hub_radius"],
               "flowpath_tip_radius": line["tip_radius"]}
    return {**overall, **stages, **stations, **rows, **outline, **span}, failures


def _cases(values, per_stage, weights):
    """Broadcast per-case inputs to (cases,); per-stage inputs stay 2-D (cases, k) or per-case (cases,)."""
    sizes = [np.asarray(v).shape for v in values.values() if v is not None]
    sizes += [np.asarray(v).shape[:1] for v in per_stage.values() if np.ndim(v) == 2]
    if weights is not None and np.ndim(weights) == 2:
        sizes.append(np.shape(weights)[:1])
    sizes += [np.shape(v) for v in per_stage.values() if np.ndim(v) < 2]
    shape = np.broadcast_shapes(*sizes)
    if len(shape) > 1:
        raise ValueError(f"per-case inputs must be scalars or 1-D arrays over cases, not of shape {shape}")
    m = shape[0] if shape else 1
    out = {name: None if v is None else np.broadcast_to(np.asarray(v, dtype=float), (m,)).astype(float)
           for name, v in values.items()}
    for name, v in per_stage.items():
        v = np.asarray(v, dtype=float)
        out[name] = np.broadcast_to(v, (m, v.shape[-1])).astype(float) if v.ndim == 2 else \
            np.broadcast_to(v, (m,)).astype(float)
    return out, m


def _input_failures(p, machine):
    """Reasons for inputs outside their physical range (the API's schema rejects them first)."""
    def bad(name, low=0.0, high=np.inf, low_inclusive=False):
        value = p[name]
        with np.errstate(invalid="ignore"):
            outside = ~(np.isfinite(value) & ((value >= low) if low_inclusive else (value > low)) & (value <= high))
        return outside if outside.ndim == 1 else outside.any(axis=1)

    failures = [(f"{name} must be positive", bad(name)) for name in (
        "mass_flow", "shaft_speed", "radius", "rotor_aspect_ratio", "stator_aspect_ratio", "flow_coefficient")]
    failures += [
        ("axial_gap must not be negative", bad("axial_gap", low_inclusive=True)),
        ("rotor_loss_fraction must be in [0, 1]", bad("rotor_loss_fraction", 0.0, 1.0, low_inclusive=True)),
        ("reaction must be a finite number", bad("reaction", -np.inf)),
    ]
    for name in ("inlet_swirl", "outlet_swirl"):
        if p[name] is not None:
            with np.errstate(invalid="ignore"):
                outside = ~(np.abs(p[name]) < 90.0)
            failures.append((f"{name} must be between -90 and 90 deg, both excluded", outside))
    if machine == "turbine":
        failures.append(("zweifel_coefficient must be positive", bad("zweifel_coefficient")))
    elif p["target_diffusion_factor"] is not None:
        failures.append(("target_diffusion_factor must be in (0, 1)", bad("target_diffusion_factor", 0.0, 0.999999)))
    else:
        failures.append(("solidity must be positive", bad("solidity")))
    return failures


def _split(machine, rule, p, count_name, count_value, weights, held, max_stages):
    blade = blade_speed(p["radius"], p["shaft_speed"]) if held == "mean" else None
    efficiency = {name: p[name] for name in ("polytropic_efficiency", "stage_isentropic_efficiency")
                  if p.get(name) is not None}
    return split.evaluate_stage_split(
        machine, rule, p["pressure_ratio"], p["total_temperature"], p["total_pressure"], p["cp"], p["gamma"],
        **efficiency, **{count_name: count_value}, blade_speed=blade,
        weights=weights, mass_flow=p["mass_flow"], max_stages=max_stages)


def _subset(p, index):
    return {k: (v[index] if isinstance(v, np.ndarray) else v) for k, v in p.items()}


def _stage_count_for_loading(machine, rule, held, p, weights, max_stages):
    """Fewest stages whose laid-out stages (each at its own blade speed) keep the loading limit."""
    m = p["mass_flow"].shape[0]
    limit = p["max_loading_coefficient"]
    highest = np.full(m, max_stages)
    lowest = np.ones(m, dtype=np.int64)
    if weights is not None:
        lowest = highest = split.weight_counts(weights)[0]
    elif held == "tip":
        # The mean blade speed is below the tip's: the split at the tip speed is a proven lower bound.
        lowest = np.maximum(split.stage_count_for_loading(
            machine, rule, "polytropic", p["pressure_ratio"], p["polytropic_efficiency"], p["total_temperature"],
            p["cp"], p["gamma"], blade_speed(p["radius"], p["shaft_speed"]), limit, max_stages=max_stages), 1)
        lowest = np.where(lowest == 0, max_stages + 1, lowest)

    def meets(active, count):
        sub = _subset(p, active)
        sub_weights = None if weights is None else weights[active]
        sp = _split(machine, rule, sub, "stages", np.full(active.size, count), sub_weights, held, max_stages)
        values, failures = _layout(machine, held, count, sub, sp.values)
        failed = sp.failed()
        for _, mask in failures:
            failed |= mask
        with np.errstate(invalid="ignore"):
            return ~failed & np.all(values["stage_loading_coefficient"] <= limit[active, None] * (1 + LIMIT_RTOL),
                                    axis=1)

    return split.fewest_count(lowest, highest, max_stages, meets)


def evaluate_machine_design(
    machine, mass_flow, total_temperature, total_pressure, pressure_ratio, shaft_speed, polytropic_efficiency,
    flow_coefficient, reaction, rotor_aspect_ratio, stator_aspect_ratio, *, cp=1005.0, gamma=1.4,
    mean_radius=None, hub_radius=None, tip_radius=None,
    stages=None, max_loading_coefficient=None, max_stage_pressure_ratio=None, rule="equal_work", weights=None,
    inlet_swirl=None, outlet_swirl=None, zweifel_coefficient=zweifel.OPTIMUM_ZWEIFEL_COEFFICIENT,
    target_diffusion_factor=None, solidity=None, axial_gap=flowpath.DEFAULT_AXIAL_GAP,
    rotor_loss_fraction=DEFAULT_ROTOR_LOSS_FRACTION, max_stages=MAX_STAGES, stage_isentropic_efficiency=None,
):
    """A multistage compressor or turbine laid out at the mean line from the cycle's duty.

    See the module docstring for the stations, the rows and the assumptions.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    mass_flow : array_like
        Mass flow. [kg s^-1]
    total_temperature, total_pressure : array_like
        Total state at the machine inlet (station 1). [K], [Pa]
    pressure_ratio : array_like
        Overall ``p0_out / p0_in`` (compressor) or ``p0_in / p0_out`` (turbine); above one. [-]
    shaft_speed : array_like
        Shaft speed. [rev min^-1]
    polytropic_efficiency : array_like or None
        Polytropic efficiency of every stage, in (0, 1]; None with ``stage_isentropic_efficiency``. [-]
    flow_coefficient, reaction : array_like
        ``V_x / U`` and the reaction of every stage: per case (0-D or 1-D: one value for every
        stage) or per stage (2-D, ``(cases, k)``, front to rear, ``k`` the stage count). [-]
    rotor_aspect_ratio, stator_aspect_ratio : array_like
        Blade height over axial chord of the rotor rows and of the stator rows. [-]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]
    gamma : array_like
        Ratio of specific heats. [-]
    mean_radius, hub_radius, tip_radius : array_like
        Exactly one: the radius held constant through the machine. [m]
    stages, max_loading_coefficient, max_stage_pressure_ratio : array_like
        Exactly one, as in :func:`service.core.split.evaluate_stage_split`: the stage count, or the
        largest stage loading ``Delta h0 / U^2`` (at each stage's own blade speed), or the largest
        stage pressure ratio; a limit gives the fewest stages that meet it. [-]
    rule : str
        ``equal_work``, ``equal_pressure_ratio`` or ``weights`` (:data:`service.core.split.SPLIT_RULES`).
    weights : array_like, optional
        Relative work shares for rule ``weights``, ``(cases, k)`` or ``(k,)``. [-]
    inlet_swirl : array_like, optional
        Absolute flow angle at the machine inlet (station 1), from axial. Compressor: sets the first
        stage's reaction. Turbine: the first nozzle's inlet angle (default: the first rotor's exit
        angle). [deg]
    outlet_swirl : array_like, optional
        Compressor only: absolute flow angle after the last stator (default: the inlet flow angle). [deg]
    zweifel_coefficient : array_like
        Turbine rows: target Zweifel coefficient (incompressible), default 0.8. [-]
    target_diffusion_factor, solidity : array_like, optional
        Compressor rows: exactly one, the target diffusion factor or the target solidity of every row. [-]
    axial_gap : array_like
        Axial gap after each row, as a fraction of the row's axial chord (default 0.25, common
        practice). [-]
    rotor_loss_fraction : array_like
        The rotor's share of each stage's entropy rise (default 0.5). [-]
    max_stages : int
        Largest stage count given or solved. [-]
    stage_isentropic_efficiency : array_like, optional
        In place of ``polytropic_efficiency``: the total-to-total isentropic efficiency of every stage,
        per case (0-D or 1-D) or per stage (``(cases, k)``, front to rear, NaN padding a shorter case's
        row), in (0, 1]; needs ``stages`` (:func:`service.core.split.evaluate_stage_split`). [-]

    Returns
    -------
    CaseResults
        Overall, shape ``(cases,)``: ``stage_count`` (int64, 0 where the case failed),
        ``outlet_total_temperature`` [K], ``outlet_total_pressure`` [Pa], ``work`` [J kg^-1], ``power`` [W]
        (both positive for both machines), ``isentropic_efficiency``, ``polytropic_efficiency`` (the one
        given, or the whole machine's equivalent) [-],
        ``axial_length`` [m]. Per stage ``(cases, n)``: ``stage_pressure_ratio``,
        ``stage_isentropic_efficiency``, ``stage_loading_coefficient``, ``stage_flow_coefficient``,
        ``stage_reaction`` [-], ``stage_total_temperature_change`` [K], ``stage_work`` [J kg^-1],
        ``stage_blade_speed`` [m s^-1], ``stage_mean_radius`` [m]. Per station ``(cases, 2n + 1)``:
        ``station_total_temperature``, ``station_static_temperature`` [K], ``station_total_pressure``,
        ``station_static_pressure`` [Pa], ``station_density`` [kg m^-3], ``station_axial_velocity``,
        ``station_tangential_velocity``, ``station_velocity``, ``station_relative_tangential_velocity``,
        ``station_relative_velocity`` [m s^-1], ``station_alpha``, ``station_beta`` [deg],
        ``station_mach``, ``station_relative_mach``, ``station_axial_mach``, ``station_hub_to_tip_ratio``
        [-], ``station_area`` [m^2], ``station_hub_radius``, ``station_tip_radius``,
        ``station_mean_radius``, ``station_blade_height``, ``station_axial_position`` [m]. Per row
        ``(cases, 2n)``: ``row_blade_count`` [-], ``row_pitch``, ``row_chord``, ``row_axial_chord``,
        ``row_blade_height``, ``row_mean_radius``, ``row_leading_edge``, ``row_trailing_edge`` [m],
        ``row_solidity``, ``row_de_haller`` [-], ``row_stagger``, ``row_inlet_angle``,
        ``row_outlet_angle`` [deg] (row frame), and ``row_zweifel_coefficient`` (turbine) or
        ``row_diffusion_factor`` (compressor) [-]. Outline ``(cases, 4n)``: ``flowpath_x``,
        ``flowpath_hub_radius``, ``flowpath_tip_radius`` [m]. Lists are NaN-padded beyond a case's
        count. Failures name the stage, station or row and the quantity. Checks: per stage
        ``stage_loading_coefficient`` and (compressor) ``stage_pressure_ratio``; per row kind, one
        value per row of that kind front to rear: compressor ``rotor_diffusion_factor``,
        ``stator_diffusion_factor``, ``rotor_de_haller``, ``stator_de_haller``,
        ``rotor_velocity_ratio``, ``stator_velocity_ratio``, ``rotor_solidity_low``,
        ``rotor_solidity_high``, ``stator_solidity_low``, ``stator_solidity_high``; turbine
        ``rotor_zweifel_high``,
        ``rotor_zweifel_low``, ``stator_zweifel_high``, ``stator_zweifel_low``.

    Raises
    ------
    ValueError
        For an unknown option, or inputs given other than as described (not exactly one radius, count
        input or compressor row target; a row target or ``outlet_swirl`` that does not apply to the
        machine).
    """
    split._check_option("machine", machine, triangles.MACHINES)
    split._check_option("rule", rule, split.SPLIT_RULES)
    stages = split.stages_of_weights(weights, stages, max_loading_coefficient, max_stage_pressure_ratio)
    held_name, radius = _exactly_one(mean_radius=mean_radius, hub_radius=hub_radius, tip_radius=tip_radius)
    held = held_name.removesuffix("_radius")
    count_name, count_value = _exactly_one(stages=stages, max_loading_coefficient=max_loading_coefficient,
                                           max_stage_pressure_ratio=max_stage_pressure_ratio)
    _exactly_one(polytropic_efficiency=polytropic_efficiency, stage_isentropic_efficiency=stage_isentropic_efficiency)
    if stage_isentropic_efficiency is not None and count_name != "stages":
        raise ValueError("stage_isentropic_efficiency needs stages")
    if machine == "compressor":
        _exactly_one(target_diffusion_factor=target_diffusion_factor, solidity=solidity)
    elif target_diffusion_factor is not None or solidity is not None or outlet_swirl is not None:
        raise ValueError("target_diffusion_factor, solidity and outlet_swirl apply only to a compressor")
    per_case = {
        "mass_flow": mass_flow, "total_temperature": total_temperature, "total_pressure": total_pressure,
        "pressure_ratio": pressure_ratio, "shaft_speed": shaft_speed, "polytropic_efficiency": polytropic_efficiency,
        "rotor_aspect_ratio": rotor_aspect_ratio, "stator_aspect_ratio": stator_aspect_ratio, "cp": cp,
        "gamma": gamma, "radius": radius, "inlet_swirl": inlet_swirl, "outlet_swirl": outlet_swirl,
        "zweifel_coefficient": zweifel_coefficient, "target_diffusion_factor": target_diffusion_factor,
        "solidity": solidity, "axial_gap": axial_gap, "rotor_loss_fraction": rotor_loss_fraction,
        count_name: count_value,
    }
    per_stage = {"flow_coefficient": flow_coefficient, "reaction": reaction}
    if stage_isentropic_efficiency is not None:
        per_stage["stage_isentropic_efficiency"] = stage_isentropic_efficiency
    p, m = _cases(per_case, per_stage, weights)
    if weights is not None:
        weights = np.atleast_2d(np.asarray(weights, dtype=float))
        weights = np.broadcast_to(weights, (m, weights.shape[1]))
    failures = _input_failures(p, machine)
    good = np.ones(m, dtype=bool)
    for _, mask in failures:
        good &= ~mask
    if count_name == "max_loading_coefficient" and held != "mean":
        found = np.zeros(m, dtype=np.int64)
        index = np.flatnonzero(good)
        found[index] = _stage_count_for_loading(machine, rule, held, _subset(p, index),
                                                None if weights is None else weights[index], max_stages)
        failures.append((f"no stage count up to {max_stages} keeps every stage's loading coefficient within "
                         f"max_loading_coefficient at the stages' own blade speeds (with the {held} radius held)",
                         good & (found == 0)))
        count_name, count_value = "stages", np.maximum(found, 1)
    else:
        count_value = p[count_name]
    sp = _split(machine, rule, p, count_name, count_value, weights, held, max_stages)
    failures += sp.failures
    count = np.where(good & ~sp.failed(), sp.values["stage_count"], 0)
    for _, mask in failures:
        count = np.where(mask, 0, count)

    groups = [(n, np.flatnonzero(count == n)) for n in np.unique(count) if n > 0]
    width = max([n for n, _ in groups], default=1)
    values = {"stage_count": count.astype(np.int64)}
    for name in ("outlet_total_temperature", "outlet_total_pressure", "work", "power", "isentropic_efficiency",
                 "polytropic_efficiency"):
        values[name] = sp.values[name]
    laid = {}
    for n, index in groups:
        sub_values, sub_failures = _layout(machine, held, n, _subset(p, index),
                                           {k: v[index] for k, v in sp.values.items()})
        for name, array in sub_values.items():
            if name not in laid:
                laid[name] = np.full((m,) if array.ndim == 1 else (m, _width(name, width)), np.nan)
            target = laid[name]
            if array.ndim == 1:
                target[index] = array
            else:
                target[index, : array.shape[1]] = array
        for reason, mask in sub_failures:
            def in_place(a, index=index):
                full = np.zeros(m, dtype=np.asarray(a).dtype)
                full[index] = a
                return full

            failures.append((reason_for(reason, in_place), in_place(mask)))
    if not groups:
        for name in ("axial_length",):
            laid[name] = np.full(m, np.nan)
    values.update(laid)
    failed = np.zeros(m, dtype=bool)
    for _, mask in failures:
        failed |= mask
    values["stage_count"] = np.where(failed, 0, values["stage_count"]).astype(np.int64)
    values = {name: v if name == "stage_count" else np.where(failed.reshape((-1,) + (1,) * (v.ndim - 1)), np.nan, v)
              for name, v in values.items()}
    return CaseResults(values=values, failures=failures, checks=_checks(machine, values),
                       absent=_without_rotor(machine, values))


#: Station outputs of the rotor frame: none at the station no rotor is next to.
ROTOR_FRAME_OUTPUTS = ("station_blade_speed", "station_relative_tangential_velocity", "station_relative_velocity",
                       "station_beta", "station_relative_mach", "station_beta_hub", "station_beta_tip",
                       "station_relative_mach_hub", "station_relative_mach_tip")


def _without_rotor(machine, values):
    """The station no rotor is next to (compressor outlet, turbine inlet) in the rotor-frame outputs."""
    if "station_beta" not in values:
        return {}
    count = values["stage_count"]
    columns = np.arange(values["station_beta"].shape[1])
    lone = 2 * count if machine == "compressor" else np.zeros_like(count)
    mask = (columns[None, :] == lone[:, None]) & (count[:, None] > 0)
    return {name: mask for name in ROTOR_FRAME_OUTPUTS}


def _width(name, stages):
    if name.startswith("station_"):
        return 2 * stages + 1
    if name.startswith("row_"):
        return 2 * stages
    if name.startswith("flowpath_"):
        return 4 * stages
    return stages


def _checks(machine, values):
    checks = {}
    if "stage_loading_coefficient" not in values:
        return checks
    if machine == "compressor":
        checks["stage_pressure_ratio"] = split.compressor_stage_pressure_ratio_check(values["stage_pressure_ratio"])
    checks["stage_loading_coefficient"] = split.stage_loading_check(machine, values["stage_loading_coefficient"])
    checks.update(blade_rows.row_checks(machine, values))
    checks.update(machine_span.span_checks(machine, values))
    return checks
