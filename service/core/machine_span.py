"""Hub and tip of a machine laid out at the mean line: a free vortex about every station's mean radius.

The whole-machine design (:mod:`service.core.machine`) gives every station its own annulus and
mean-line velocities. Across the span each station is taken as a free vortex (Dixon & Hall [1],
ch. 6; Saravanamuttoo et al. [2], ch. 5): ``r V_theta`` constant and the axial velocity uniform,
the one vortex law under which simple radial equilibrium holds with uniform work, so the mean-line
design stays what it is and only the hub and tip are added. At a radius ``r`` of station ``k``:

.. math::

    V_\\theta(r) = V_{\\theta, m} \\frac{r_m}{r}, \\qquad V_x(r) = V_{x,m}, \\qquad U(r) = \\Omega r,
    \\qquad T(r) = T_0 - \\frac{V_x^2 + V_\\theta^2}{2 c_p}

with the station's total state uniform along the span (uniform work and, as the mean line assumes,
uniform loss). Rows take each station's value at its own hub (or tip), the radius-change form of the
diffusion factor between them (NASA SP-36 [3]) and the solidity of the same chord and blade count,
``sigma(r) = sigma_m r_m / r``. The reaction at the hub or tip is the enthalpy reaction of the static
states along that line (:func:`service.core.stations.enthalpy_reaction`).

References
----------
1. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of Turbomachinery",
   7th ed., Butterworth-Heinemann, ch. 6 (simple radial equilibrium, the free vortex).
2. Saravanamuttoo, H. I. H., Rogers, G. F. C., Cohen, H., Straznicky, P. V. and Nix, A. C. (2017),
   "Gas Turbine Theory", 7th ed., Pearson, ch. 5 and 7 (free-vortex compressor and turbine stages).
3. Johnsen, I. A. and Bullock, R. O. (eds.) (1965), "Aerodynamic Design of Axial-Flow Compressors",
   NASA SP-36.
"""

from __future__ import annotations

import numpy as np

from service.core import diffusion, gas, triangles
from service.core.checks import COMMON_PRACTICE, RuleCheck, de_haller_check
from service.core.span_checks import (
    axial_mach_check,
    hub_reaction_check,
    hub_to_tip_ratio_checks,
    rotor_tip_relative_mach_check,
    turbine_exit_mach_check,
    turbine_exit_swirl_check,
)
from service.core.stations import enthalpy_reaction, rotor_stations

#: The span ends answered beside the mean line.
SPAN_ENDS = ("hub", "tip")
#: Smallest blade height without a warning (common practice, from memory: below about 10 mm a
#: tip clearance held in manufacture is several per cent of the height). [m]
SMALLEST_BLADE_HEIGHT = 0.010

#: Station outputs answered at the hub and the tip (the rest follows from them and the mean line:
#: V_theta = V_x tan(alpha) with V_x uniform; kept few, since every list is paid for in every answer).
STATION_OUTPUTS = ("station_alpha", "station_beta", "station_mach", "station_relative_mach", "station_axial_mach")
#: Row outputs answered at the hub and the tip.
ROW_OUTPUTS = ("row_de_haller", "row_diffusion_factor")


def free_vortex_station(radius, mean_radius, axial_velocity, tangential_velocity, total_temperature,
                        total_pressure, blade_speed, cp, gamma):
    """Velocities and states of a station at a radius, a free vortex about its mean radius.

    Parameters
    ----------
    radius : array_like
        The radius the values are wanted at. [m]
    mean_radius : array_like
        The station's mean radius, where its mean-line values hold. [m]
    axial_velocity, tangential_velocity : array_like
        Mean-line axial and absolute tangential velocity. [m s^-1]
    total_temperature, total_pressure : array_like
        The station's total state, uniform along the span. [K], [Pa]
    blade_speed : array_like
        Blade speed at ``radius`` (NaN where no rotor is next to the station). [m s^-1]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    dict of numpy.ndarray
        ``station_tangential_velocity``, ``station_velocity``, ``station_relative_velocity``
        [m s^-1], ``station_alpha``, ``station_beta`` [deg], ``station_static_temperature`` [K],
        ``station_mach``, ``station_relative_mach``, ``station_axial_mach`` [-].

    References
    ----------
    Dixon and Hall (2014), ch. 6: the free vortex, ``r V_theta`` constant with uniform ``V_x``.
    """
    with np.errstate(all="ignore"):
        swirl = np.asarray(tangential_velocity, dtype=float) * (np.asarray(mean_radius, dtype=float)
                                                                / np.asarray(radius, dtype=float))
        vx = np.asarray(axial_velocity, dtype=float)
        speed = np.hypot(vx, swirl)
        relative_swirl = swirl - blade_speed
        relative = np.hypot(vx, relative_swirl)
        state = gas.static_state(total_temperature, total_pressure, speed, cp, gamma)
        sound = state["speed_of_sound"]
        return {
            "station_tangential_velocity": swirl, "station_velocity": speed, "station_relative_velocity": relative,
            "station_alpha": np.degrees(np.arctan2(swirl, vx)),
            "station_beta": np.degrees(np.arctan2(relative_swirl, vx)),
            "station_static_temperature": state["temperature"], "station_mach": speed / sound,
            "station_relative_mach": relative / sound, "station_axial_mach": vx / sound,
        }


def _rows_at(machine, end, at, stations, rows, shaft_speed):
    """Each row's de Haller number, solidity and (compressor) diffusion factor at one span end."""
    count = rows["row_solidity"].shape[1]
    is_rotor = (np.arange(count) % 2 == 0) == (machine == "compressor")
    radius = stations[f"station_{end}_radius"]
    r_in, r_out = radius[:, :-1], radius[:, 1:]
    speed = np.where(is_rotor, at["station_relative_velocity"][:, :-1], at["station_velocity"][:, :-1])
    speed_out = np.where(is_rotor, at["station_relative_velocity"][:, 1:], at["station_velocity"][:, 1:])
    with np.errstate(all="ignore"):
        solidity = rows["row_solidity"] * rows["row_mean_radius"] / (0.5 * (r_in + r_out))
        values = {"row_de_haller": speed_out / speed, "row_solidity": solidity}
        if machine == "compressor":
            # Absolute swirl and the shaft speed: the rotor's tangential term is its torque (diffusion.py).
            swirl = at["station_tangential_velocity"]
            rotor_swirl = at["station_tangential_velocity"] - at["blade_speed"]
            swirl_in = np.where(is_rotor, rotor_swirl[:, :-1], swirl[:, :-1])
            swirl_out = np.where(is_rotor, rotor_swirl[:, 1:], swirl[:, 1:])
            plain = diffusion.diffusion_factor(speed, speed_out, swirl_in, swirl_out, solidity, r_in, r_out)
            torque = diffusion.diffusion_factor(speed, speed_out, swirl_in, swirl_out, solidity, r_in, r_out,
                                                np.asarray(shaft_speed, dtype=float)[:, None])
            values["row_diffusion_factor"] = np.where(is_rotor, torque, plain)
    return values


def spanwise(machine, stations, rows, stage_count, shaft_speed, cp, gamma, rotor_frame):
    """Hub and tip values of every station, row and stage of a laid-out machine.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    stations : dict of numpy.ndarray
        The machine's station outputs, shape ``(m, 2n + 1)`` (:mod:`service.core.machine`):
        ``station_hub_radius``, ``station_tip_radius``, ``station_mean_radius`` [m],
        ``station_axial_velocity``, ``station_tangential_velocity`` [m s^-1],
        ``station_total_temperature`` [K], ``station_total_pressure`` [Pa].
    rows : dict of numpy.ndarray
        ``row_solidity`` [-] and ``row_mean_radius`` [m], shape ``(m, 2n)``.
    stage_count : int
        ``n``.
    shaft_speed : array_like
        Shaft speed, shape ``(m,)``. [rev min^-1]
    cp, gamma : array_like
        Gas, shape ``(m,)``. [J kg^-1 K^-1], [-]
    rotor_frame : numpy.ndarray
        Boolean, shape ``(2n + 1,)``: the stations a rotor is next to.

    Returns
    -------
    values : dict of numpy.ndarray
        :data:`STATION_OUTPUTS` and :data:`ROW_OUTPUTS` (``row_diffusion_factor`` for a compressor
        only) with the suffixes ``_hub`` and ``_tip``; per stage ``stage_reaction_hub``,
        ``stage_reaction_tip`` and ``stage_rotor_tip_relative_mach`` (the rotor inlet's relative
        Mach number at the tip).
    failures : list of (str, numpy.ndarray)
        A static temperature at or below zero at a station's hub or tip.

    References
    ----------
    Dixon and Hall (2014), ch. 6; NASA SP-36 (1965) for the rows' diffusion factor.
    """

    values, failures = {}, []
    cp, gamma = np.asarray(cp, dtype=float)[:, None], np.asarray(gamma, dtype=float)[:, None]
    speed = np.asarray(shaft_speed, dtype=float)[:, None]
    for end in SPAN_ENDS:
        radius = stations[f"station_{end}_radius"]
        blade = np.where(rotor_frame, triangles.blade_speed(radius, speed), np.nan)
        at = free_vortex_station(radius, stations["station_mean_radius"], stations["station_axial_velocity"],
                                 stations["station_tangential_velocity"], stations["station_total_temperature"],
                                 stations["station_total_pressure"], blade, cp, gamma)
        at["blade_speed"] = blade
        for k in range(at["station_static_temperature"].shape[1]):
            failures.append((f"station {k + 1}: the static temperature at the {end} is at or below zero (free "
                             "vortex: the swirl there is too strong for the total temperature)",
                             ~(at["station_static_temperature"][:, k] > 0)))
        for name in STATION_OUTPUTS:
            values[f"{name}_{end}"] = at[name]
        for name, array in _rows_at(machine, end, at, stations, rows, shaft_speed).items():
            if name in ROW_OUTPUTS:
                values[f"{name}_{end}"] = array
        values[f"stage_reaction_{end}"] = enthalpy_reaction(machine, at["station_static_temperature"])
    design, other = rotor_stations(machine, stage_count)
    rotor_inlet = design if machine == "compressor" else other
    values["stage_rotor_tip_relative_mach"] = values["station_relative_mach_tip"][:, rotor_inlet]
    return values, failures


#: The spanwise checks that judge one row (or one stage's rotor) each: (row kind, span end), so a
#: drawing or a report can mark the row whose hub or tip a check flags (:func:`flagged_rows`).
ROW_SPAN_CHECKS = {
    "rotor_diffusion_factor_tip": ("rotor", "tip"), "stator_diffusion_factor_hub": ("stator", "hub"),
    "rotor_de_haller_hub": ("rotor", "hub"), "stator_de_haller_hub": ("stator", "hub"),
    "stage_reaction_hub": ("rotor", "hub"), "stage_rotor_tip_relative_mach": ("rotor", "tip"),
}


def flagged_rows(machine, statuses):
    """The rows whose hub or tip a spanwise check flags, with the worst status and the span ends.

    Parameters
    ----------
    machine : str
        ``compressor`` (rows R1, S1, R2, ...) or ``turbine`` (S1, R1, S2, ...).
    statuses : dict of str to sequence of str or None
        Each check's status per rotor or stator (front to rear), as answered; checks not in
        :data:`ROW_SPAN_CHECKS` are passed over.

    Returns
    -------
    dict of int to (str, tuple of str)
        Row index (from 0) to its worst status (``warn`` or ``fail``) and the span ends flagged.
    """
    flagged = {}
    for name, (kind, end) in ROW_SPAN_CHECKS.items():
        for i, status in enumerate(statuses.get(name) or ()):
            if status not in ("warn", "fail"):
                continue
            row = 2 * i + (0 if (kind == "rotor") == (machine == "compressor") else 1)
            worst, ends = flagged.get(row, ("warn", ()))
            flagged[row] = ("fail" if "fail" in (worst, status) else "warn",
                            ends if end in ends else (*ends, end))
    return flagged


def smallest_blade_height_check(blade_height) -> RuleCheck:
    """The shortest blade of a machine.

    Parameters
    ----------
    blade_height : array_like
        The smallest station blade height of each case. [m]

    Returns
    -------
    RuleCheck
        Warns below :data:`SMALLEST_BLADE_HEIGHT` (common practice, from memory).
    """
    return RuleCheck(value=np.asarray(blade_height, dtype=float), limit=SMALLEST_BLADE_HEIGHT, comparison="at_least",
                     basis=f"{COMMON_PRACTICE} (from memory): below about {SMALLEST_BLADE_HEIGHT * 1e3:g} mm a tip "
                           "clearance held in manufacture is several per cent of the blade height")


def span_checks(machine, values) -> dict:
    """The spanwise rules of a laid-out machine, each where it bites.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    values : dict of numpy.ndarray
        The machine's outputs with the spanwise ones of :func:`spanwise`.

    Returns
    -------
    dict of str to RuleCheck
        Per stage: ``stage_reaction_hub`` (fail below 0), ``stage_rotor_tip_relative_mach``. Per row
        kind: ``rotor_de_haller_hub``, ``stator_de_haller_hub`` (compressor), ``rotor_diffusion_factor_tip``
        (the rotor-tip limits), ``stator_diffusion_factor_hub`` (compressor). Per case:
        ``inlet_hub_to_tip_ratio_low``/``_high`` (station 1), ``outlet_hub_to_tip_ratio_low``/``_high``
        (the last station), ``smallest_blade_height``, ``axial_mach`` (largest over the stations at
        the hub, where the static temperature is lowest); turbine ``exit_swirl`` and ``exit_mach``
        (the last station, larger of hub and tip).
    """
    checks = {"stage_reaction_hub": hub_reaction_check(values["stage_reaction_hub"]),
              "stage_rotor_tip_relative_mach": rotor_tip_relative_mach_check(values["stage_rotor_tip_relative_mach"])}
    if machine == "compressor":
        # Compressor rows in flow order: rotors R1, R2, ... at 0, 2, ...; stators at 1, 3, ...
        for kind, start in (("rotor", 0), ("stator", 1)):
            checks[f"{kind}_de_haller_hub"] = de_haller_check(values["row_de_haller_hub"][:, start::2])
        checks["rotor_diffusion_factor_tip"] = diffusion.diffusion_factor_check(
            values["row_diffusion_factor_tip"][:, 0::2], "rotor", "tip")
        checks["stator_diffusion_factor_hub"] = diffusion.diffusion_factor_check(
            values["row_diffusion_factor_hub"][:, 1::2], "stator", "hub")
    ratio = values["station_hub_to_tip_ratio"]
    last = _last(ratio)
    for place, value in (("inlet", ratio[:, 0]), ("outlet", last)):
        for name, check in hub_to_tip_ratio_checks(value).items():
            checks[f"{place}_{name}"] = check
    with np.errstate(invalid="ignore"):
        checks["smallest_blade_height"] = smallest_blade_height_check(_extreme(values["station_blade_height"], min))
        checks["axial_mach"] = axial_mach_check(_extreme(values["station_axial_mach_hub"], max))
        if machine == "turbine":
            checks["exit_swirl"] = turbine_exit_swirl_check(np.maximum(
                np.abs(_last(values["station_alpha_hub"])), np.abs(_last(values["station_alpha_tip"]))))
            checks["exit_mach"] = turbine_exit_mach_check(np.maximum(_last(values["station_mach_hub"]),
                                                                     _last(values["station_mach_tip"])))
    return checks


def _extreme(array, which):
    """Each case's smallest (``which`` min) or largest (max) finite entry; NaN where there is none."""
    finite = np.isfinite(array)
    if which is min:
        value = np.where(finite, array, np.inf).min(axis=1)
    else:
        value = np.where(finite, array, -np.inf).max(axis=1)
    return np.where(finite.any(axis=1), value, np.nan)


def _last(array):
    """Each case's last finite entry of a NaN-padded list (NaN where there is none)."""
    finite = np.isfinite(array)
    index = np.where(finite.any(axis=1), array.shape[1] - 1 - np.argmax(finite[:, ::-1], axis=1), 0)
    return np.where(finite.any(axis=1), array[np.arange(array.shape[0]), index], np.nan)
