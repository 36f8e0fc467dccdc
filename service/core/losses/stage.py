"""Row losses and stage efficiencies of a repeating stage from its triangles and row geometry.

One entry point, :func:`evaluate_stage_efficiency`, applies a named set of correlations
(:data:`LOSS_MODELS`) to a stage's velocity triangles and states (as
:mod:`service.core.triangles` gives them) and the row geometry, and returns every row's loss
coefficient and its parts, the stage's total-to-total and total-to-static efficiencies, and a
warn check for every correlation input outside the range its correlation was fitted on.

Every input broadcasts, so a machine design can call it once for all stages of all cases with
arrays of shape ``(cases, stages)``.

These are preliminary-design estimates: the correlations reproduce the cascade and turbine
data they were fitted to within a few points of efficiency, and say nothing about a design
outside that data.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from service.core import flowpath, zweifel
from service.core.cases import CaseResults, broadcast_cases, masked_results, to_shape
from service.core.checks import RuleCheck
from service.core.diffusion import diffusion_factor, row_velocities
from service.core.losses import ainley, efficiency, howell, lieblein, soderberg
from service.core.triangles import MACHINES

#: Loss models: the correlation set named in an answer. ``soderberg`` and ``kacker_okapuu`` are for
#: turbine stages, ``lieblein_howell`` for compressor stages.
LOSS_MODELS = ("soderberg", "kacker_okapuu", "lieblein_howell")
#: The machine each loss model applies to.
LOSS_MODEL_MACHINE = {"soderberg": "turbine", "kacker_okapuu": "turbine", "lieblein_howell": "compressor"}

SODERBERG_BASIS = ("Soderberg's correlation, as given by Dixon & Hall (2014), Fluid Mechanics and Thermodynamics "
                   "of Turbomachinery, 7th ed., ch. 4")
LIEBLEIN_BASIS = "Lieblein (1959), ASME J. Basic Eng. 81; NASA SP-36 (1965), ch. 6"
AINLEY_BASIS = ("Ainley & Mathieson (1951), ARC R&M 2974 (profile-loss charts: t/c 0.15-0.25, outlet angles "
                "40-80 deg)")
CASCADE_BASIS = ("NACA 65-series cascade tests behind Lieblein's correlation: Herrig, Emery & Erwin (1957), "
                 "NACA TN 3916")


def _rows(machine, flow):
    """(row, inlet angle, outlet angle, inlet speed, outlet speed, inlet Mach, exit temperature) in the
    row's own frame (the turbine rotor's inlet Mach number only where the flow has it)."""
    if machine == "compressor":
        return (("rotor", flow["beta1"], flow["beta2"], flow["W1"], flow["W2"], flow["M_rel1"], flow["T2"]),
                ("stator", flow["alpha2"], flow["alpha3"], flow["V2"], flow["V3"], flow["M2"], flow["T3"]))
    return (("stator", flow["alpha1"], flow["alpha2"], flow["V1"], flow["V2"], flow["M1"], flow["T2"]),
            ("rotor", flow["beta2"], flow["beta3"], flow["W2"], flow["W3"], flow.get("M_rel2"), flow["T3"]))


#: Exit Mach number of each turbine row in its own frame.
_EXIT_MACH = {"turbine": {"stator": "M2", "rotor": "M_rel3"}}


def _range_checks(name, value, low, high, basis):
    checks = {}
    value = np.asarray(value, dtype=float)
    if low is not None:
        checks[f"{name}_low"] = RuleCheck(value=value, limit=low, comparison="at_least", basis=basis)
    if high is not None:
        checks[f"{name}_high"] = RuleCheck(value=value, limit=high, comparison="at_most", basis=basis)
    return checks


def _exit_density(flow, station, gamma):
    """Static density at a station from station 1's, along the isentrope (the losses change it by
    a few per cent, and the Reynolds number enters Soderberg's correction to the power 1/4)."""
    return flow["rho1"] * (flow[f"T{station}"] / flow["T1"]) ** (1.0 / (gamma - 1.0))


def soderberg_reynolds_numbers(flow, rows, aspect_ratio, blade_height, gamma, dynamic_viscosity=None):
    """Soderberg's Reynolds number of each turbine row from the stage's state.

    Parameters
    ----------
    flow : mapping of str to array_like
        Triangles and states of the stage with the inlet density ``rho1`` (total pressure given).
    rows : sequence
        The rows as :func:`_rows` gives them.
    aspect_ratio : mapping of str to array_like
        Blade height over axial chord of ``stator`` and ``rotor``. [-]
    blade_height : array_like
        Blade height of both rows. [m]
    gamma : array_like
        [-]
    dynamic_viscosity : array_like, optional
        [Pa s]; by default air's by Sutherland's law at each row's exit temperature.

    Returns
    -------
    dict of str to numpy.ndarray
        Per row: ``rho2 c2 D_h / mu`` with the pitch of Zweifel's coefficient 0.8 (the spacing
        Soderberg's data had). [-]
    """
    out = {}
    for row, inlet, outlet, _, v_out, _, t_out in rows:
        station = 2 if (row == "stator") else 3
        axial_chord = zweifel.axial_chord_from_aspect_ratio(blade_height, aspect_ratio[row])
        pitch = zweifel.pitch_to_axial_chord_for_zweifel(inlet, outlet, soderberg.ZWEIFEL_COEFFICIENT) * axial_chord
        mu = efficiency.sutherland_viscosity(t_out) if dynamic_viscosity is None else dynamic_viscosity
        d_h = soderberg.hydraulic_diameter(pitch, blade_height, outlet)
        out[row] = _exit_density(flow, station, gamma) * v_out * d_h / mu
    return out


def _soderberg(flow, rows, cp, gamma, aspect_ratio, reynolds, thickness_to_chord):
    values, checks, loss = {}, {}, {}
    for row, inlet, outlet, _, v_out, _, _ in rows:
        parts = soderberg.soderberg_loss(row, inlet, outlet, aspect_ratio[row], reynolds[row])
        for name in ("deflection", "nominal_loss", "aspect_ratio_loss", "loss_coefficient"):
            values[f"{row}_{name}"] = parts[name]
        values[f"{row}_reynolds_number"] = np.asarray(reynolds[row], dtype=float)
        loss[row] = parts["loss_coefficient"] * 0.5 * np.square(v_out)
        checks.update(_range_checks(f"{row}_deflection", parts["deflection"], None, soderberg.DEFLECTION_RANGE[1],
                                    SODERBERG_BASIS))
    if thickness_to_chord is not None:
        checks.update(_range_checks("thickness_to_chord", thickness_to_chord, *soderberg.THICKNESS_RANGE,
                                    SODERBERG_BASIS))
    return values, checks, loss


def _lieblein_howell(flow, rows, cp, gamma, aspect_ratio, solidity, tip_clearance_to_height):
    values, checks, loss = {}, {}, {}
    for row, inlet, outlet, _, _, m_in, t_out in rows:
        sigma = solidity[row]
        profile = lieblein.lieblein_profile_loss(inlet, outlet, sigma)
        lift = howell.lift_coefficient(inlet, outlet, sigma)
        # Howell's annulus drag takes pitch over height; the aspect ratio is height over axial chord.
        stagger = flowpath.stagger_estimate(inlet, outlet)
        pitch_to_height = 1.0 / (sigma * aspect_ratio[row] * np.cos(np.radians(stagger)))
        parts = {
            "profile_loss": profile["loss_coefficient"],
            "annulus_loss": howell.loss_from_drag(howell.annulus_drag(pitch_to_height), inlet, outlet, sigma),
            "secondary_loss": howell.loss_from_drag(howell.secondary_drag(lift), inlet, outlet, sigma),
        }
        clearance = tip_clearance_to_height if (row == "rotor" and tip_clearance_to_height is not None) else 0.0
        parts["tip_clearance_loss"] = howell.loss_from_drag(howell.tip_clearance_drag(clearance, lift),
                                                            inlet, outlet, sigma)
        total = parts["profile_loss"] + parts["annulus_loss"] + parts["secondary_loss"] + parts["tip_clearance_loss"]
        swirl = row_velocities(1.0, inlet, outlet)
        df = diffusion_factor(swirl["inlet_velocity"], swirl["outlet_velocity"], swirl["inlet_swirl"],
                              swirl["outlet_swirl"], sigma)
        values.update({f"{row}_{name}": part for name, part in parts.items()})
        values.update({f"{row}_loss_coefficient": total, f"{row}_lift_coefficient": lift,
                       f"{row}_diffusion_factor": df,
                       f"{row}_equivalent_diffusion_ratio": profile["equivalent_diffusion_ratio"],
                       f"{row}_momentum_thickness": profile["momentum_thickness"]})
        ratio = efficiency.pressure_ratio_from_inlet_loss(total, m_in, gamma)
        loss[row] = efficiency.enthalpy_loss(efficiency.entropy_rise(ratio, cp, gamma), t_out, cp)
        checks.update(_range_checks(f"{row}_inlet_angle", np.abs(inlet), *lieblein.INLET_ANGLE_RANGE, CASCADE_BASIS))
        checks.update(_range_checks(f"{row}_solidity", sigma, *lieblein.SOLIDITY_RANGE, CASCADE_BASIS))
        checks.update(_range_checks(f"{row}_diffusion_factor", df, None, lieblein.DIFFUSION_FACTOR_RANGE[1],
                                    LIEBLEIN_BASIS))
        checks.update(_range_checks(f"{row}_equivalent_diffusion_ratio", profile["equivalent_diffusion_ratio"], None,
                                    lieblein.MAX_EQUIVALENT_DIFFUSION_RATIO, LIEBLEIN_BASIS))
    return values, checks, loss


def _kacker_okapuu(flow, rows, cp, gamma, aspect_ratio, charts, thickness_to_chord, trailing_edge_thickness_to_throat,
                   base_pressure_coefficient, tip_clearance_to_height):
    values, checks, loss = {}, {}, {}
    for row, inlet, outlet, _, _, m_in, t_out in rows:
        m_out = flow[_EXIT_MACH["turbine"][row]]
        stagger = flowpath.stagger_estimate(inlet, outlet)
        height_to_chord = aspect_ratio[row] * np.cos(np.radians(stagger))
        blend = ainley.profile_loss_blend(charts[f"{row}_nozzle_profile_loss"], charts[f"{row}_impulse_profile_loss"],
                                          inlet, outlet, thickness_to_chord, "kacker_okapuu")
        parts = {
            "profile_loss": ainley.kacker_okapuu_profile_loss(blend, m_in, m_out),
            "secondary_loss": ainley.kacker_okapuu_secondary_loss(inlet, outlet, height_to_chord,
                                                                  1.0 / np.asarray(aspect_ratio[row], dtype=float),
                                                                  m_in, m_out),
            "trailing_edge_loss": ainley.denton_trailing_edge_loss(trailing_edge_thickness_to_throat,
                                                                   base_pressure_coefficient),
        }
        clearance = tip_clearance_to_height if (row == "rotor" and tip_clearance_to_height is not None) else 0.0
        parts["tip_clearance_loss"] = ainley.dunham_came_tip_clearance_loss(
            np.asarray(clearance, dtype=float) * height_to_chord, height_to_chord, inlet, outlet)
        total = sum(parts.values())
        values.update({f"{row}_{name}": part for name, part in parts.items()})
        values[f"{row}_loss_coefficient"] = total
        ratio = efficiency.pressure_ratio_from_exit_loss(total, m_out, gamma)
        loss[row] = efficiency.enthalpy_loss(efficiency.entropy_rise(ratio, cp, gamma), t_out, cp)
        checks.update(_range_checks(f"{row}_outlet_angle", np.abs(outlet), *ainley.OUTLET_ANGLE_RANGE, AINLEY_BASIS))
    checks.update(_range_checks("thickness_to_chord", thickness_to_chord, *ainley.THICKNESS_RANGE, AINLEY_BASIS))
    return values, checks, loss


def evaluate_stage_efficiency(machine, loss_model, flow: Mapping, cp, gamma, rotor_aspect_ratio, stator_aspect_ratio,
                              *, rotor_solidity=None, stator_solidity=None, tip_clearance_to_height=None,
                              reynolds_number=None, blade_height=None, dynamic_viscosity=None,
                              thickness_to_chord=None, profile_chart_losses=None,
                              trailing_edge_thickness_to_throat=None, base_pressure_coefficient=None) -> CaseResults:
    """Row losses and the stage efficiencies of a repeating stage, by a named correlation set.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    loss_model : str
        One of :data:`LOSS_MODELS`, for its machine (:data:`LOSS_MODEL_MACHINE`):
        ``soderberg`` (turbine: :mod:`service.core.losses.soderberg`), ``kacker_okapuu`` (turbine:
        :mod:`service.core.losses.ainley`, profile + secondary + trailing edge + tip clearance,
        with Ainley and Mathieson's chart readings given) or ``lieblein_howell``
        (compressor: :mod:`~service.core.losses.lieblein` profile loss, :mod:`~service.core.losses.howell`
        annulus, secondary and tip-clearance losses).
    flow : mapping of str to array_like
        The stage's triangles and states as :func:`service.core.triangles.stage_triangles` and
        :func:`~service.core.triangles.stage_states` name them: ``alpha1..3``, ``V1..3``, the
        rotor's ``beta``, ``W`` (and for a compressor ``M_rel1``), ``T1..3``, ``M1..3``, ``work``
        [J kg^-1]; with ``reynolds_number`` absent (turbine) also ``rho1`` [kg m^-3]. Any shape,
        e.g. ``(cases, stages)``.
    cp : array_like
        [J kg^-1 K^-1]
    gamma : array_like
        [-]
    rotor_aspect_ratio, stator_aspect_ratio : array_like
        Blade height over axial chord of each row. [-]
    rotor_solidity, stator_solidity : array_like, optional
        Chord over pitch (compressor). [-]
    tip_clearance_to_height : array_like, optional
        Rotor tip clearance over blade height (compressor, ``kacker_okapuu``); without it no
        clearance loss. [-]
    reynolds_number : array_like or mapping of str to array_like, optional
        Soderberg's Reynolds number of both turbine rows (exit velocity, hydraulic diameter), or
        of each, keyed ``stator`` and ``rotor``. Without it it is found from ``rho1``,
        ``blade_height`` and the viscosity. [-]
    blade_height : array_like, optional
        Blade height of both turbine rows, for the Reynolds number. [m]
    dynamic_viscosity : array_like, optional
        [Pa s]; by default air's by Sutherland's law.
    thickness_to_chord : array_like, optional
        Maximum thickness over chord of the turbine blades: ``kacker_okapuu``'s profile loss
        (required there); ``soderberg`` only judges it against its range (0.15-0.25). [-]
    profile_chart_losses : mapping of str to array_like, optional
        ``kacker_okapuu``: Ainley and Mathieson's profile-loss chart readings at each row's
        pitch-chord ratio and outlet angle, keys ``stator_nozzle_profile_loss``,
        ``stator_impulse_profile_loss``, ``rotor_nozzle_profile_loss``,
        ``rotor_impulse_profile_loss``. [-]
    trailing_edge_thickness_to_throat, base_pressure_coefficient : array_like, optional
        ``kacker_okapuu``: both rows' trailing-edge thickness over throat and base pressure
        coefficient, for Denton's trailing-edge loss. [-]

    Returns
    -------
    CaseResults
        Every output has the shape of the inputs broadcast (e.g. ``(cases, stages)``), and so has
        every failure mask: a caller with stages reduces a mask over its stage axis itself. A flow
        given as NaN (stages past a machine's last) gives NaN outputs and no failure.
        Values: ``{row}_loss_coefficient`` (turbine rows: Soderberg's enthalpy loss coefficient on
        the exit kinetic energy; compressor rows: stagnation-pressure loss on the inlet dynamic
        pressure; ``kacker_okapuu``: stagnation-pressure loss on the exit dynamic pressure, Ainley's Y)
        and its parts (``{row}_nominal_loss``, ``{row}_aspect_ratio_loss``; or ``{row}_profile_loss``,
        ``_annulus_loss`` or ``_trailing_edge_loss``, ``_secondary_loss``, ``_tip_clearance_loss``),
        ``{row}_entropy_rise`` [J kg^-1 K^-1], ``{row}_enthalpy_loss`` [J kg^-1],
        ``total_to_total_efficiency``, ``total_to_static_efficiency`` [-] and the correlations'
        intermediate numbers. Failures: losses beyond the correlation, losses above the work.
        Checks: a warn per correlation input outside its fitted range.

    Raises
    ------
    ValueError
        For an unknown ``machine`` or ``loss_model``, or a model of the other machine.
    """
    if machine not in MACHINES:
        raise ValueError(f"machine must be one of {MACHINES}, not {machine!r}")
    if loss_model not in LOSS_MODELS:
        raise ValueError(f"loss_model must be one of {LOSS_MODELS}, not {loss_model!r}")
    if LOSS_MODEL_MACHINE[loss_model] != machine:
        raise ValueError(f"loss_model {loss_model!r} is for a {LOSS_MODEL_MACHINE[loss_model]}, not a {machine}")
    cp, gamma = broadcast_cases(cp, gamma)
    rows = _rows(machine, flow)
    aspect_ratio = {"rotor": rotor_aspect_ratio, "stator": stator_aspect_ratio}
    if loss_model == "soderberg":
        if reynolds_number is None:
            reynolds = soderberg_reynolds_numbers(flow, rows, aspect_ratio, blade_height, gamma, dynamic_viscosity)
        elif isinstance(reynolds_number, Mapping):
            reynolds = {"stator": reynolds_number["stator"], "rotor": reynolds_number["rotor"]}
        else:
            reynolds = {"stator": reynolds_number, "rotor": reynolds_number}
        values, checks, loss = _soderberg(flow, rows, cp, gamma, aspect_ratio, reynolds, thickness_to_chord)
    elif loss_model == "kacker_okapuu":
        values, checks, loss = _kacker_okapuu(flow, rows, cp, gamma, aspect_ratio, profile_chart_losses,
                                              thickness_to_chord, trailing_edge_thickness_to_throat,
                                              base_pressure_coefficient, tip_clearance_to_height)
    else:
        values, checks, loss = _lieblein_howell(flow, rows, cp, gamma, aspect_ratio,
                                                {"rotor": rotor_solidity, "stator": stator_solidity},
                                                tip_clearance_to_height)
    for row, *_, t_out in rows:
        values[f"{row}_enthalpy_loss"] = loss[row]
        values[f"{row}_entropy_rise"] = efficiency.entropy_from_enthalpy_loss(loss[row], t_out, cp)
    if machine == "turbine":
        tt, ts = efficiency.turbine_stage_efficiencies(loss["stator"], loss["rotor"], flow["T2"], flow["T3"],
                                                       flow["work"], flow["V3"])
    else:
        tt, ts = efficiency.compressor_stage_efficiencies(loss["rotor"], loss["stator"], flow["T2"], flow["T3"],
                                                          flow["work"], flow["V3"])
    values["total_to_total_efficiency"] = tt
    values["total_to_static_efficiency"] = ts
    shape = np.broadcast_shapes(*(np.shape(v) for v in values.values()))
    # A flow given as NaN (a case that failed upstream, or a machine's stages past its last, padded with
    # NaN) gives NaN outputs and no reason of its own: the reason is the upstream one, if any.
    given = np.isfinite(np.asarray(flow["work"], dtype=float))
    failures = [
        (f"the {row} loss is outside its correlation (e.g. an equivalent diffusion ratio past stall)",
         ~np.isfinite(loss[row]) & given) for row, *_ in rows
    ]
    # A negative total-to-static efficiency is a real answer (the exit static pressure below the inlet
    # total pressure); a total-to-total one is not.
    failures.append(("the estimated losses exceed the stage work: no positive efficiency",
                     ~(tt > 0.0) & np.isfinite(tt)))
    judged = {name: RuleCheck(value=np.array(to_shape(check.value, shape), order="C"), limit=check.limit,
                              comparison=check.comparison, basis=check.basis) for name, check in checks.items()}
    return masked_results({name: to_shape(v, shape) for name, v in values.items()}, failures,
                          lambda out, failed: judged, shape=shape)


def with_stage_efficiency(stage: CaseResults, machine, loss_model, cp, gamma, **geometry) -> CaseResults:
    """A stage's triangle results with its losses and efficiencies added (values, failures and
    checks of both; a case that fails in either is blanked in both).

    Parameters
    ----------
    stage : CaseResults
        From :func:`service.core.triangles.evaluate_stage_from_duty` or
        :func:`~service.core.triangles.evaluate_stage_from_angles` with the inlet total state.
    machine, loss_model, cp, gamma, **geometry
        As :func:`evaluate_stage_efficiency`.

    Returns
    -------
    CaseResults
    """
    losses = evaluate_stage_efficiency(machine, loss_model, stage.values, cp, gamma, **geometry)
    values = {**stage.values, **losses.values}
    return masked_results(values, stage.failures + losses.failures,
                          lambda out, failed: {**stage.checks, **losses.checks}, shape=stage.shape)

