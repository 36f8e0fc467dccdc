"""A repeating stage judged row by row: its velocity triangles fed to the row methods.

The triangles of :mod:`service.core.triangles` give each row's inlet and outlet flow in its
own frame (absolute for a stator, relative for a rotor). With row geometry the stage is sized
or judged in one call: Zweifel blade counts for turbine rows (:mod:`service.core.zweifel`),
diffusion factors for compressor rows (:mod:`service.core.diffusion`).
"""

from __future__ import annotations

from service.core import diffusion, zweifel
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
    for row, inlet, outlet in _row_flows("turbine", stage.values):
        rows = zweifel.evaluate_zweifel_sizing(inlet, outlet, axial_chord, mean_radius,
                                               zweifel_coefficient=zweifel_coefficient, rounding=rounding)
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
    for row, inlet, outlet in _row_flows("compressor", stage.values):
        rows = diffusion.evaluate_diffusion_analysis(row, stage.values["axial_velocity"], inlet, outlet,
                                                     solidity=solidities[row])
        kept = CaseResults(
            values={name: rows.values[name] for name in ("diffusion_factor", "solidity")},
            failures=rows.failures,
            checks={"diffusion_factor": rows.checks["diffusion_factor"]},
        )
        stage = stage.merged(kept, row)
    return stage

