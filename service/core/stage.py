"""A repeating stage judged row by row: its velocity triangles fed to the row methods.

The triangles of :mod:`service.core.triangles` give each row's inlet and outlet flow in its
own frame (absolute for a stator, relative for a rotor). With row geometry the stage is sized
or judged in one call: Zweifel blade counts for turbine rows (:mod:`service.core.zweifel`),
diffusion factors for compressor rows (:mod:`service.core.diffusion`).
"""

from __future__ import annotations

import numpy as np

from service.core import diffusion, span, triangles, zweifel
from service.core.cases import CaseResults


def _row_flows(machine, values):
    """(row name, inlet angle, outlet angle) of each row in its own frame, in flow order."""
    if machine == "compressor":
        return (("rotor", values["beta1"], values["beta2"]), ("stator", values["alpha2"], values["alpha3"]))
    return (("stator", values["alpha1"], values["alpha2"]), ("rotor", values["beta2"], values["beta3"]))


def with_zweifel_rows(stage: CaseResults, axial_chord, mean_radius,
                      zweifel_coefficient=zweifel.OPTIMUM_ZWEIFEL_COEFFICIENT, rounding="up") -> CaseResults:
    """A turbine stage's results with each row's Zweifel blade count added.

    Parameters
    ----------
    stage : CaseResults
        Results of a turbine stage from :func:`service.core.triangles.evaluate_stage_from_duty`
        or :func:`~service.core.triangles.evaluate_stage_from_angles`.
    axial_chord : array_like
        Axial chord of both rows. [m]
    mean_radius : array_like
        Mean radius of the stage. [m]
    zweifel_coefficient : array_like
        Target Zweifel coefficient of both rows. [-]
    rounding : str
        One of :data:`service.core.zweifel.ROUNDINGS`.

    Returns
    -------
    CaseResults
        ``stage`` plus, for ``stator`` (alpha1 -> alpha2) and ``rotor`` (beta2 -> beta3), the
        outputs of :func:`service.core.zweifel.evaluate_zweifel_sizing` prefixed with the row
        name (``stator_blade_count``, ``rotor_zweifel_coefficient_achieved``, ...), their checks
        and failures.

    References
    ----------
    1. Zweifel, O. (1945), "The spacing of turbo-machine blading, especially with large angular
       deflection", Brown Boveri Review 32(12).
    """
    # Each row's swirls and outlet speed in its own frame (turbine: stator 1 -> 2, rotor 2 -> 3 relative).
    frames = {"stator": ("V", "Vtheta", 1, 2), "rotor": ("W", "Wtheta", 2, 3)}
    v = stage.values
    for row, inlet, outlet in _row_flows("turbine", stage.values):
        speed, swirl, k1, k2 = frames[row]
        # 2 cos^2(a2) |tan a1 - tan a2| = 2 Vx |Vtheta1 - Vtheta2| / V2^2, from the velocities rather than
        # from the angles rounded to degrees (which lose digits of the cosine a few ulps short of 90 deg).
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            vx = v["axial_velocity"]
            loading = 2.0 * np.square(vx / v[f"{speed}{k2}"]) * (np.abs(v[f"{swirl}{k1}"] - v[f"{swirl}{k2}"]) / vx)
        rows = zweifel.evaluate_zweifel_sizing(inlet, outlet, axial_chord, mean_radius,
                                               zweifel_coefficient=zweifel_coefficient, rounding=rounding,
                                               loading_per_pitch_ratio=loading)
        stage = stage.merged(rows, row)
    return stage


def with_diffusion_rows(stage: CaseResults, rotor_solidity, stator_solidity) -> CaseResults:
    """A compressor stage's results with each row's Lieblein diffusion factor added.

    Parameters
    ----------
    stage : CaseResults
        Results of a compressor stage from :mod:`service.core.triangles`.
    rotor_solidity, stator_solidity : array_like
        Chord over pitch of each row at the mean radius. [-]

    Returns
    -------
    CaseResults
        ``stage`` plus ``rotor_diffusion_factor`` (relative flow beta1 -> beta2) and
        ``stator_diffusion_factor`` (absolute flow alpha2 -> alpha3), the solidities, and the
        diffusion-factor check of each row at the mean radius (de Haller numbers are already
        in ``stage``).

    References
    ----------
    1. Lieblein, S., Schwenk, F. C. and Broderick, R. L. (1953), "Diffusion factor for estimating
       losses and limiting blade loadings in axial-flow-compressor blade elements", NACA RM E53D01.
    """
    solidities = {"rotor": rotor_solidity, "stator": stator_solidity}
    # Each row's speeds and swirls in its own frame (compressor: rotor 1 -> 2 relative, stator 2 -> 3).
    frames = {"rotor": ("W", "Wtheta", 1, 2), "stator": ("V", "Vtheta", 2, 3)}
    for row, inlet, outlet in _row_flows("compressor", stage.values):
        rows = diffusion.evaluate_diffusion_analysis(row, stage.values["axial_velocity"], inlet, outlet,
                                                     solidity=solidities[row])
        # The factor from the triangles' own velocities rather than from their angles in degrees: an
        # angle a few ulps short of 90 deg, rounded to degrees, would lose digits of its cosine.
        speed, swirl, k1, k2 = frames[row]
        v = stage.values
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            factor = np.where(rows.failed(), np.nan, diffusion.diffusion_factor(
                v[f"{speed}{k1}"], v[f"{speed}{k2}"], v[f"{swirl}{k1}"], v[f"{swirl}{k2}"], solidities[row]))
        kept = CaseResults(
            values={"diffusion_factor": factor, "solidity": rows.values["solidity"]},
            failures=rows.failures,
            checks={"diffusion_factor": diffusion.diffusion_factor_check(factor, row)},
        )
        stage = stage.merged(kept, row)
    return stage



def evaluate_stage(machine, blade_speed, *, flow_coefficient=None, loading_coefficient=None, reaction=None,
                   axial_velocity=None, alpha1=None, alpha2=None, alpha3=None, total_temperature=None,
                   total_pressure=None, cp=1005.0, gamma=1.4) -> CaseResults:
    """A repeating stage's triangles from its duty coefficients, or from the rotor's absolute angles.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    blade_speed : array_like
        Mean blade speed. [m s^-1]
    flow_coefficient, loading_coefficient, reaction : array_like, optional
        The duty (all three, or none). [-]
    axial_velocity : array_like, optional
        Without the duty: the axial velocity. [m s^-1]
    alpha1, alpha2, alpha3 : array_like, optional
        Without the duty: the rotor's absolute inlet and exit angles (compressor ``alpha1``,
        ``alpha2``; turbine ``alpha2``, ``alpha3``). [deg]
    total_temperature, total_pressure, cp, gamma : array_like, optional
        Inlet total state and gas, as in :func:`service.core.triangles.evaluate_stage_from_duty`.

    Returns
    -------
    CaseResults
        As :func:`service.core.triangles.evaluate_stage_from_duty`.

    References
    ----------
    Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of Turbomachinery", 7th ed.,
    ch. 4 and 5 (the repeating stage).
    """
    state = {"total_temperature": total_temperature, "total_pressure": total_pressure, "cp": cp, "gamma": gamma}
    if flow_coefficient is not None:
        return triangles.evaluate_stage_from_duty(machine, flow_coefficient, loading_coefficient, reaction,
                                                  blade_speed, **state)
    first, second = (alpha1, alpha2) if machine == "compressor" else (alpha2, alpha3)
    return triangles.evaluate_stage_from_angles(machine, blade_speed, axial_velocity, first, second, **state)


def evaluate_stage_rows(machine, blade_speed, *, mean_radius=None, hub_radius=None, tip_radius=None,
                        hub_to_tip_ratio=None, vortex="free", axial_chord=None, blade_height=None,
                        aspect_ratio=None, zweifel_coefficient=zweifel.OPTIMUM_ZWEIFEL_COEFFICIENT,
                        rotor_solidity=None, stator_solidity=None, chord=None, rotor_blade_count=None,
                        stator_blade_count=None, **flow) -> CaseResults:
    """A repeating stage (:func:`evaluate_stage`) with its rows judged and its hub and tip where given.

    The radius: ``mean_radius`` alone (for blade counts), or the annulus as ``hub_radius`` and
    ``tip_radius`` or ``mean_radius`` and ``hub_to_tip_ratio`` (hub and tip values too). The rows:
    turbine Zweifel blade counts from ``axial_chord`` (or ``blade_height`` and ``aspect_ratio``) and
    the mean radius; compressor diffusion factors from the solidities (or ``chord`` and the blade
    counts at the mean radius).

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    blade_speed : array_like
        Mean blade speed. [m s^-1]
    mean_radius, hub_radius, tip_radius : array_like, optional
        Radii. [m]
    hub_to_tip_ratio : array_like, optional
        Hub over tip radius, with ``mean_radius``. [-]
    vortex : str
        The vortex law along the span (:func:`service.core.span.with_span`).
    axial_chord, blade_height, aspect_ratio, zweifel_coefficient : array_like, optional
        Turbine rows: axial chord [m] (or blade height [m] over aspect ratio [-]) and the Zweifel target [-].
    rotor_solidity, stator_solidity : array_like, optional
        Compressor rows: solidities. [-]
    chord, rotor_blade_count, stator_blade_count : array_like, optional
        Compressor rows, in place of the solidities: chord [m] and blade counts [-].
    **flow
        The keywords of :func:`evaluate_stage`.

    Returns
    -------
    CaseResults
        The stage, with the rows' outputs and checks (:func:`with_zweifel_rows`,
        :func:`with_diffusion_rows`) and the hub and tip (:func:`service.core.span.with_span`).

    References
    ----------
    Zweifel (1945); Lieblein et al. (1953), NASA SP-36 (1965) ch. 6; Dixon and Hall (2014) ch. 3
    (simple radial equilibrium).
    """
    result = evaluate_stage(machine, blade_speed, **flow)
    if hub_radius is not None:
        mean_radius = span.radius_ratios(hub_radius, tip_radius)["mean_radius"]
    elif hub_to_tip_ratio is not None:
        hub_radius, tip_radius = span.radii_from_mean(mean_radius, hub_to_tip_ratio)
    if blade_height is not None:
        axial_chord = zweifel.axial_chord_from_aspect_ratio(blade_height, aspect_ratio)
    if axial_chord is not None:
        result = with_zweifel_rows(result, axial_chord, mean_radius, zweifel_coefficient)
    if chord is not None:
        rotor_solidity, stator_solidity = (diffusion.solidity_from_blade_count(chord, mean_radius, count)
                                           for count in (rotor_blade_count, stator_blade_count))
    solidities = {}
    if rotor_solidity is not None:
        solidities = {"rotor_solidity": rotor_solidity, "stator_solidity": stator_solidity}
        result = with_diffusion_rows(result, rotor_solidity, stator_solidity)
    if hub_radius is not None:
        state = {name: flow.get(name) for name in ("total_temperature", "total_pressure")}
        state.update(cp=flow.get("cp", 1005.0), gamma=flow.get("gamma", 1.4))
        result = span.with_span(result, machine, hub_radius, tip_radius, vortex, **state, **solidities)
    return result
