"""Sizing the blade rows of a flowpath laid out at the mean line, and their rules of thumb.

The rows' flow comes from the stations around them (:mod:`service.core.machine`); each row is sized
by the service's own row methods: Zweifel blade counts for turbine rows (:mod:`service.core.zweifel`),
diffusion-factor or solidity blade counts for compressor rows (:mod:`service.core.diffusion`), with
the geometry of :mod:`service.core.flowpath`.

References
----------
1. Zweifel, O. (1945), "The spacing of turbo-machine blading, especially with large angular
   deflection", Brown Boveri Review 32(12).
2. Lieblein, S., Schwenk, F. C. and Broderick, R. L. (1953), "Diffusion factor for estimating losses
   and limiting blade loadings in axial-flow-compressor blade elements", NACA RM E53D01.
3. de Haller, P. (1953), Brennstoff-Wärme-Kraft 5(10).
"""

from __future__ import annotations

from functools import partial

import numpy as np

from service.core import diffusion, flowpath, zweifel
from service.core.cases import prefixed, reason_for
from service.core.checks import de_haller_check, deceleration_check, solidity_checks


def size_rows(machine, stations, rotor_aspect_ratio, stator_aspect_ratio, *, zweifel_coefficient=None,
              target_diffusion_factor=None, solidity=None, shaft_speed=None):
    """Geometry and blade count of every row of a flowpath from its stations' values.

    Row ``j`` (from 0) runs from station ``j`` to ``j + 1``; a compressor's rows start with a rotor,
    a turbine's with a stator (nozzle). Each row's flow is taken in its own frame (relative angles
    and speeds for a rotor, absolute for a stator); its blade height and mean radius are the mean
    of its two stations' (:func:`service.core.flowpath.row_mean`), its axial chord the height over
    the aspect ratio, its true chord from the stagger estimate
    (:func:`service.core.flowpath.stagger_estimate`). Turbine rows are sized for a Zweifel target
    (:func:`service.core.zweifel.evaluate_zweifel_sizing`, incompressible definition, count rounded
    up); compressor rows for a target diffusion factor
    (:func:`service.core.diffusion.evaluate_diffusion_sizing` in NASA SP-36's radius-change form, from the
    row's inlet and outlet station mean radii and axial velocities; a rotor's tangential term is the change
    of absolute angular momentum, from ``shaft_speed``) or a target solidity (count rounded up, then
    :func:`service.core.diffusion.evaluate_diffusion_analysis`).

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    stations : dict of numpy.ndarray
        Station values, shape ``(m, s)``: ``station_alpha``, ``station_beta`` [deg],
        ``station_velocity``, ``station_relative_velocity``, ``station_axial_velocity`` [m s^-1],
        ``station_blade_height``, ``station_mean_radius`` [m].
    rotor_aspect_ratio, stator_aspect_ratio : array_like
        Blade height over axial chord, shape ``(m,)``. [-]
    zweifel_coefficient : array_like, optional
        Turbine: target Zweifel coefficient, shape ``(m,)``. [-]
    target_diffusion_factor, solidity : array_like, optional
        Compressor: exactly one, the target diffusion factor or solidity, shape ``(m,)``. [-]
    shaft_speed : array_like, optional
        Compressor: shaft speed, shape ``(m,)``, for the rotors' radius-change form. [rev min^-1]

    Returns
    -------
    rows : dict of numpy.ndarray
        Shape ``(m, s - 1)``: ``row_blade_count``, ``row_solidity``, ``row_de_haller`` [-],
        ``row_pitch``, ``row_chord``, ``row_axial_chord``, ``row_blade_height``,
        ``row_mean_radius`` [m], ``row_stagger``, ``row_inlet_angle``, ``row_outlet_angle`` [deg],
        and ``row_zweifel_coefficient`` (turbine) or ``row_diffusion_factor`` (compressor) [-].
    failures : list of (str or NumberedReason, numpy.ndarray)
        The row methods' failures, each prefixed with the row, e.g. ``row 3 (rotor 2): ...``.

    References
    ----------
    1. Zweifel, O. (1945), Brown Boveri Review 32(12).
    2. Lieblein, S., Schwenk, F. C. and Broderick, R. L. (1953), NACA RM E53D01.
    """
    st = stations
    first_is_rotor = machine == "compressor"
    m, s = st["station_alpha"].shape
    count = s - 1
    is_rotor = (np.arange(count) % 2 == 0) == first_is_rotor
    angle_in = np.where(is_rotor, st["station_beta"][:, :-1], st["station_alpha"][:, :-1])
    angle_out = np.where(is_rotor, st["station_beta"][:, 1:], st["station_alpha"][:, 1:])
    speed_in = np.where(is_rotor, st["station_relative_velocity"][:, :-1], st["station_velocity"][:, :-1])
    speed_out = np.where(is_rotor, st["station_relative_velocity"][:, 1:], st["station_velocity"][:, 1:])
    vx_in, vx_out = st["station_axial_velocity"][:, :-1], st["station_axial_velocity"][:, 1:]
    radius_in, radius_out = st["station_mean_radius"][:, :-1], st["station_mean_radius"][:, 1:]
    height = flowpath.row_mean(st["station_blade_height"])
    mean_radius = flowpath.row_mean(st["station_mean_radius"])
    aspect = np.where(is_rotor, np.asarray(rotor_aspect_ratio, dtype=float)[..., None],
                      np.asarray(stator_aspect_ratio, dtype=float)[..., None])
    with np.errstate(all="ignore"):
        axial_chord = height / aspect
        stagger = flowpath.stagger_estimate(angle_in, angle_out)
        chord = flowpath.chord_from_axial_chord(axial_chord, stagger)
    rows = {
        "row_blade_count": np.full((m, count), np.nan), "row_pitch": np.full((m, count), np.nan),
        "row_solidity": np.full((m, count), np.nan), "row_chord": chord, "row_axial_chord": axial_chord,
        "row_stagger": stagger, "row_blade_height": height, "row_mean_radius": mean_radius,
        "row_inlet_angle": angle_in, "row_outlet_angle": angle_out, "row_de_haller": speed_out / speed_in,
    }
    judged = "row_diffusion_factor" if machine == "compressor" else "row_zweifel_coefficient"
    rows[judged] = np.full((m, count), np.nan)
    failures = []
    for kind, start in (("rotor", 0 if first_is_rotor else 1), ("stator", 1 if first_is_rotor else 0)):
        cols = slice(start, None, 2)
        args = (angle_in[:, cols], angle_out[:, cols])
        radii = {"inlet_radius": radius_in[:, cols], "outlet_radius": radius_out[:, cols]}
        if kind == "rotor" and machine == "compressor":
            radii["shaft_speed"] = np.asarray(shaft_speed, dtype=float)[..., None]
        with np.errstate(all="ignore"):
            if machine == "turbine":
                sized = zweifel.evaluate_zweifel_sizing(*args, axial_chord[:, cols], mean_radius[:, cols],
                                                        zweifel_coefficient=np.asarray(zweifel_coefficient)[..., None])
                blades = sized.values["blade_count"].astype(float)
                pitch, value = sized.values["pitch"], sized.values["zweifel_coefficient_achieved"]
            elif target_diffusion_factor is not None:
                sized = diffusion.evaluate_diffusion_sizing(
                    kind, vx_in[:, cols], *args, np.asarray(target_diffusion_factor)[..., None], chord=chord[:, cols],
                    mean_radius=mean_radius[:, cols], outlet_axial_velocity=vx_out[:, cols], **radii)
                blades, pitch = sized.values["blade_count"], sized.values["pitch"]
                value = sized.values["diffusion_factor_achieved"]
            else:
                blades = diffusion.blade_count_for_solidity(chord[:, cols], mean_radius[:, cols],
                                                            np.asarray(solidity)[..., None])
                sized = diffusion.evaluate_diffusion_analysis(
                    kind, vx_in[:, cols], *args, chord=chord[:, cols], blade_count=blades,
                    mean_radius=mean_radius[:, cols], outlet_axial_velocity=vx_out[:, cols], **radii)
                pitch, value = 2.0 * np.pi * mean_radius[:, cols] / blades, sized.values["diffusion_factor"]
        rows["row_blade_count"][:, cols] = blades
        rows["row_pitch"][:, cols] = pitch
        rows["row_solidity"][:, cols] = chord[:, cols] / pitch
        rows[judged][:, cols] = value
        for reason, mask in sized.failures:
            for i in range(blades.shape[1]):
                column = partial(_column, shape=blades.shape, i=i)
                failures.append((reason_for(prefixed(f"row {start + 2 * i + 1} ({kind} {i + 1}): ", reason), column),
                                 column(mask)))
    return rows, failures


def _column(array, shape, i):
    return np.broadcast_to(array, shape)[:, i]


def row_checks(machine, values):
    """The rules of thumb of every row, one check per row kind with a value per row, front to rear.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    values : dict of numpy.ndarray
        ``row_de_haller``, ``row_solidity`` and ``row_diffusion_factor`` (compressor) or
        ``row_zweifel_coefficient`` (turbine), shape ``(cases, 2n)`` in flow order. [-]

    Returns
    -------
    dict of str to RuleCheck
        Compressor: ``rotor_diffusion_factor``, ``stator_diffusion_factor`` (mean-line limits of
        :func:`service.core.diffusion.diffusion_factor_check`), ``rotor_de_haller``,
        ``stator_de_haller``, ``rotor_velocity_ratio``, ``stator_velocity_ratio``,
        ``rotor_solidity_low``, ``rotor_solidity_high``, ``stator_solidity_low``,
        ``stator_solidity_high`` (:func:`service.core.checks.solidity_checks`). Turbine:
        ``rotor_zweifel_high``, ``rotor_zweifel_low``, ``stator_zweifel_high``, ``stator_zweifel_low``
        (:func:`service.core.zweifel.zweifel_checks`).
    """
    checks = {}
    rotor_start = 0 if machine == "compressor" else 1
    for kind, start in (("rotor", rotor_start), ("stator", 1 - rotor_start)):
        cols = slice(start, None, 2)
        if machine == "compressor":
            checks[f"{kind}_diffusion_factor"] = diffusion.diffusion_factor_check(
                values["row_diffusion_factor"][:, cols], kind, "mean")
            checks[f"{kind}_de_haller"] = de_haller_check(values["row_de_haller"][:, cols])
            checks[f"{kind}_velocity_ratio"] = deceleration_check(values["row_de_haller"][:, cols])
            for name, check in solidity_checks(values["row_solidity"][:, cols]).items():
                checks[f"{kind}_{name}"] = check
        else:
            for name, check in zweifel.zweifel_checks(values["row_zweifel_coefficient"][:, cols]).items():
                checks[f"{kind}_{name}"] = check
    return checks
