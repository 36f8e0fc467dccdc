"""Rules of thumb judged where they bite along the span: the hub, the tip, or the worst station.

The mean line hides the limiting sections of a stage: a compressor rotor tip goes transonic, a
hub reaction turns negative, a hub stator stalls. Each function here judges one quantity at one
span position and returns a :class:`~service.core.checks.RuleCheck` with its basis, so that the
triangles endpoint and the whole-machine design judge a stage alike. :func:`span_checks` applies
them all to the values of :func:`service.core.span.evaluate_span`.

References
----------
1. de Haller, P. (1953), "Das Verhalten von Tragflügelgittern in Axialverdichtern und im
   Windkanal", Brennstoff-Wärme-Kraft 5(10).
2. Lieblein, S., Schwenk, F. C. and Broderick, R. L. (1953), NACA RM E53D01; NASA SP-36 (1965).
3. Saravanamuttoo, H. I. H., Rogers, G. F. C., Cohen, H., Straznicky, P. V. and Nix, A. C.
   (2017), "Gas Turbine Theory", 7th ed., Pearson, ch. 5 and 7 (the hub reaction of free-vortex
   stages; recalled from memory).
"""

from __future__ import annotations

import numpy as np

from service.core import diffusion
from service.core.checks import COMMON_PRACTICE, RuleCheck, de_haller_check

#: Rotor-tip relative Mach number: above the first the tip is transonic, above the second it is
#: beyond the experience of transonic fans and compressor front stages (common practice). [-]
TIP_RELATIVE_MACH_LIMITS = (1.0, 1.7)
#: Hub-to-tip ratio band of a stage (common practice): long blades below, short ones above. [-]
HUB_TO_TIP_RATIO_BAND = (0.4, 0.92)
#: Largest axial Mach number at any station and radius (common practice). [-]
AXIAL_MACH_LIMIT = 0.7
#: Turbine exit: largest absolute swirl angle [deg] and absolute Mach number [-] (common practice).
TURBINE_EXIT_SWIRL_LIMIT = 20.0
TURBINE_EXIT_MACH_LIMIT = 0.5

_SPAN_ENDS = ("hub", "tip")


def rotor_tip_relative_mach_check(relative_mach) -> RuleCheck:
    """The relative Mach number at a rotor's inlet tip, where it is highest.

    Parameters
    ----------
    relative_mach : array_like
        Relative Mach number at the rotor inlet at the tip radius. [-]

    Returns
    -------
    RuleCheck
        Warns above 1.0 (a transonic tip), fails above 1.7 (common practice).
    """
    transonic, supersonic = TIP_RELATIVE_MACH_LIMITS
    return RuleCheck(
        value=np.asarray(relative_mach, dtype=float), limit=transonic, comparison="at_most",
        basis=(f"{COMMON_PRACTICE}: above {transonic:g} the rotor tip is transonic (passage shock, shock loss); "
               f"transonic fans and compressor front stages reach about 1.3-1.6, above {supersonic:g} "
               "shock losses are beyond that experience"),
        fail_limit=supersonic,
    )


def hub_reaction_check(reaction) -> RuleCheck:
    """The reaction at the hub, where a free-vortex stage has its lowest.

    Parameters
    ----------
    reaction : array_like
        Reaction at the hub radius. [-]

    Returns
    -------
    RuleCheck
        Fails below zero: the rotor's hub section would diffuse where it should accelerate
        (turbine), or the stator would take more than the whole pressure rise (compressor).
    """
    return RuleCheck(
        value=np.asarray(reaction, dtype=float), limit=0.0, comparison="at_least",
        basis=(f"{COMMON_PRACTICE}: a negative hub reaction (Saravanamuttoo et al. (2017), Gas Turbine Theory, "
               "7th ed., ch. 5 and 7, from memory)"),
        beyond_limit="fail",
    )


def hub_to_tip_ratio_checks(hub_to_tip_ratio, band=HUB_TO_TIP_RATIO_BAND) -> dict[str, RuleCheck]:
    """The band of hub-to-tip ratio of a stage.

    Parameters
    ----------
    hub_to_tip_ratio : array_like
        ``r_h / r_t``. [-]
    band : (float, float)
        Lowest and highest ratio without a warning; the machine design may pass a first-stage
        or last-stage band. [-]

    Returns
    -------
    dict of str to RuleCheck
        ``hub_to_tip_ratio_low`` warns below ``band[0]`` (long, heavily twisted blades with a
        slow hub), ``hub_to_tip_ratio_high`` above ``band[1]`` (short blades whose tip
        clearance and end-wall losses dominate); common practice.
    """
    value = np.asarray(hub_to_tip_ratio, dtype=float)
    low, high = band
    return {
        "hub_to_tip_ratio_low": RuleCheck(
            value=value, limit=low, comparison="at_least",
            basis=f"{COMMON_PRACTICE}: below about {low:g} the blades are long and twisted and the hub is slow "
                  "(fans and first stages go lower)"),
        "hub_to_tip_ratio_high": RuleCheck(
            value=value, limit=high, comparison="at_most",
            basis=f"{COMMON_PRACTICE}: above about {high:g} the blades are short and tip-clearance and end-wall "
                  "losses dominate"),
    }


def axial_mach_check(axial_mach) -> RuleCheck:
    """The largest axial Mach number of a stage (all stations, hub and tip).

    Parameters
    ----------
    axial_mach : array_like
        ``V_x / a``. [-]

    Returns
    -------
    RuleCheck
        Warns above 0.7: the annulus nears choking (common practice; compressor inlets are
        usually designed at about 0.5-0.6).
    """
    return RuleCheck(
        value=np.asarray(axial_mach, dtype=float), limit=AXIAL_MACH_LIMIT, comparison="at_most",
        basis=f"{COMMON_PRACTICE}: above about {AXIAL_MACH_LIMIT:g} the annulus nears choking "
              "(compressor inlets usually about 0.5-0.6)",
    )


def turbine_exit_swirl_check(exit_angle) -> RuleCheck:
    """The largest absolute swirl angle leaving a turbine stage.

    Parameters
    ----------
    exit_angle : array_like
        Absolute flow angle at the stage exit (station 3), from axial; judged by its
        magnitude. [deg]

    Returns
    -------
    RuleCheck
        Warns above 20 deg (common practice: swirl left in the exhaust is lost work and
        troubles the exhaust diffuser or the next row).
    """
    return RuleCheck(
        value=np.abs(np.asarray(exit_angle, dtype=float)), limit=TURBINE_EXIT_SWIRL_LIMIT, comparison="at_most",
        basis=f"{COMMON_PRACTICE}: exit swirl above about {TURBINE_EXIT_SWIRL_LIMIT:g} deg is lost kinetic energy "
              "and loads the exhaust diffuser",
    )


def turbine_exit_mach_check(exit_mach) -> RuleCheck:
    """The largest absolute Mach number leaving a turbine stage.

    Parameters
    ----------
    exit_mach : array_like
        Absolute Mach number at the stage exit (station 3). [-]

    Returns
    -------
    RuleCheck
        Warns above 0.5 (common practice: exhaust and jet-pipe losses grow with the square of
        the exit speed).
    """
    return RuleCheck(
        value=np.asarray(exit_mach, dtype=float), limit=TURBINE_EXIT_MACH_LIMIT, comparison="at_most",
        basis=f"{COMMON_PRACTICE}: above about {TURBINE_EXIT_MACH_LIMIT:g} exhaust losses grow quickly",
    )


def span_checks(machine, values) -> dict[str, RuleCheck]:
    """Every spanwise rule applied to the values of :func:`service.core.span.evaluate_span`.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    values : dict of numpy.ndarray
        Outputs with the suffixes ``_hub`` and ``_tip`` (and ``hub_to_tip_ratio``).

    Returns
    -------
    dict of str to RuleCheck
        ``reaction_hub``; ``de_haller_rotor_hub``, ``de_haller_rotor_tip``,
        ``de_haller_stator_hub``, ``de_haller_stator_tip``; ``hub_to_tip_ratio_low`` and
        ``_high``; with states ``rotor_tip_relative_mach`` (at the rotor inlet) and
        ``axial_mach`` (largest at hub and tip of every station); for a turbine with states
        ``exit_mach``, and ``exit_swirl`` always; with solidities each compressor row's
        diffusion factor at hub and tip, judged by
        :data:`service.core.diffusion.DIFFUSION_FACTOR_LIMITS` for that span position.
    """
    rotor_in = 1 if machine == "compressor" else 2
    checks = {"reaction_hub": hub_reaction_check(values["reaction_hub"])}
    for row in ("rotor", "stator"):
        for end in _SPAN_ENDS:
            checks[f"de_haller_{row}_{end}"] = de_haller_check(values[f"de_haller_{row}_{end}"])
    for row in ("rotor", "stator"):
        for end in _SPAN_ENDS:
            name = f"{row}_diffusion_factor_{end}"
            if name in values:
                checks[name] = diffusion.diffusion_factor_check(values[name], row, end)
    checks.update(hub_to_tip_ratio_checks(values["hub_to_tip_ratio"]))
    if f"M_rel{rotor_in}_tip" in values:
        checks["rotor_tip_relative_mach"] = rotor_tip_relative_mach_check(values[f"M_rel{rotor_in}_tip"])
        checks["axial_mach"] = axial_mach_check(np.max(
            [values[f"M_axial{k}_{end}"] for k in (1, 2, 3) for end in _SPAN_ENDS], axis=0))
    if machine == "turbine":
        checks["exit_swirl"] = turbine_exit_swirl_check(
            np.maximum(np.abs(values["alpha3_hub"]), np.abs(values["alpha3_tip"])))
        if "M3_hub" in values:
            checks["exit_mach"] = turbine_exit_mach_check(np.maximum(values["M3_hub"], values["M3_tip"]))
    return checks
