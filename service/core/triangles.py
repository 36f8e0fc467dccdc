"""Mean-radius velocity triangles of repeating axial compressor and turbine stages.

Conventions (shared by the whole service):

- angles are measured from the axial direction, in degrees; tangential velocities and
  angles are positive in the direction of rotor motion, and the blade speed U is positive;
- relative frame: ``W_x = V_x`` and ``W_theta = V_theta - U``;
- compressor stations: 1 rotor inlet, 2 rotor exit = stator inlet, 3 stator exit;
  turbine stations: 1 stator inlet, 2 stator exit = rotor inlet, 3 rotor exit;
- a repeating stage: constant axial velocity and mean radius, and the stage's exit flow
  equals its inlet flow (``alpha3 = alpha1``).

The duty coefficients are the flow coefficient ``phi = V_x / U``, the stage loading
``psi = Delta h0 / U^2`` (positive for both machines: work in for a compressor, work out
for a turbine) and the reaction ``R``, the rotor's share of the stage's static enthalpy
change. From Euler's work equation and the definition of reaction, for a stage of constant
axial velocity and radius (Dixon and Hall [1], ch. 5 and 4):

.. math::

    R = 1 - \\frac{V_{\\theta,\\mathrm{rotor\\,in}} + V_{\\theta,\\mathrm{rotor\\,out}}}{2 U}

which with ``psi`` fixes the rotor's tangential velocities:

- compressor: ``Vtheta1 = U (1 - R - psi/2)``, ``Vtheta2 = U (1 - R + psi/2)``;
- turbine: ``Vtheta2 = U (1 - R + psi/2)``, ``Vtheta3 = U (1 - R - psi/2)``.

References
----------
1. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of
   Turbomachinery", 7th ed., Butterworth-Heinemann.
2. Saravanamuttoo, H. I. H., Rogers, G. F. C., Cohen, H., Straznicky, P. V. and
   Nix, A. C. (2017), "Gas Turbine Theory", 7th ed., Pearson, ch. 5 and 7.
"""

from __future__ import annotations

import numpy as np

from service.core import gas
from service.core.angles import cos_tan, tangent_difference
from service.core.cases import broadcast_cases, masked_results
from service.core.checks import de_haller_check, deceleration_check

MACHINES = ("compressor", "turbine")

#: Stations of the rotor's inlet and outlet, and of the stator's, for each machine.
ROTOR_STATIONS = {"compressor": (1, 2), "turbine": (2, 3)}
STATOR_STATIONS = {"compressor": (2, 3), "turbine": (1, 2)}


def _check_machine(machine):
    if machine not in MACHINES:
        raise ValueError(f"machine must be one of {MACHINES}, not {machine!r}")


def angular_velocity(shaft_speed):
    """Angular velocity of a shaft.

    .. math:: \\Omega = 2 \\pi N / 60

    Parameters
    ----------
    shaft_speed : array_like
        Shaft speed. [rev min^-1]

    Returns
    -------
    numpy.ndarray
        Angular velocity. [rad s^-1]
    """
    return np.asarray(shaft_speed, dtype=float) * (2.0 * np.pi / 60.0)


def blade_speed(radius, shaft_speed):
    """Blade speed at a radius.

    .. math:: U = \\Omega r = 2 \\pi r N / 60

    Parameters
    ----------
    radius : array_like
        Radius. [m]
    shaft_speed : array_like
        Shaft speed. [rev min^-1]

    Returns
    -------
    numpy.ndarray
        Blade speed. [m s^-1]
    """
    return np.asarray(radius, dtype=float) * angular_velocity(shaft_speed)


def rotor_swirl_from_duty(machine, loading_coefficient, reaction, blade_speed):
    """Rotor inlet and outlet tangential velocities from the duty coefficients.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    loading_coefficient : array_like
        Stage loading, specific work over blade speed squared; positive. [-]
    reaction : array_like
        Rotor static enthalpy change over the stage's. [-]
    blade_speed : array_like
        Mean blade speed U. [m s^-1]

    Returns
    -------
    rotor_inlet_swirl, rotor_outlet_swirl : numpy.ndarray
        Absolute tangential velocity at the rotor inlet and outlet. [m s^-1]

    Notes
    -----
    Compressor: ``Vtheta1 = U (1 - R - psi/2)``, ``Vtheta2 = U (1 - R + psi/2)``.
    Turbine: ``Vtheta2 = U (1 - R + psi/2)``, ``Vtheta3 = U (1 - R - psi/2)``.
    """
    _check_machine(machine)
    psi, reaction, u = broadcast_cases(loading_coefficient, reaction, blade_speed)
    low = u * (1.0 - reaction - 0.5 * psi)
    high = u * (1.0 - reaction + 0.5 * psi)
    if machine == "compressor":
        return low, high
    return high, low


def rotor_swirl_from_angles(machine, axial_velocity, first_angle, second_angle):
    """Rotor inlet and outlet tangential velocities from the two absolute flow angles.

    Parameters
    ----------
    machine : str
        ``compressor`` (angles ``alpha1``, ``alpha2``: rotor inlet and outlet) or
        ``turbine`` (angles ``alpha2``, ``alpha3``: rotor inlet and outlet).
    axial_velocity : array_like
        Axial velocity, the same at every station. [m s^-1]
    first_angle, second_angle : array_like
        Absolute flow angles at the rotor inlet and outlet, from axial. [deg]

    Returns
    -------
    rotor_inlet_swirl, rotor_outlet_swirl : numpy.ndarray
        [m s^-1]
    """
    _check_machine(machine)
    vx, first, second = broadcast_cases(axial_velocity, first_angle, second_angle)
    return vx * cos_tan(first)[1], vx * cos_tan(second)[1]


def loading_from_angles(machine, flow_coefficient, first_angle, second_angle):
    """Stage loading coefficient of a repeating stage from the rotor's two absolute angles.

    .. math::

        \\psi = \\pm \\phi (\\tan\\alpha_b - \\tan\\alpha_a)
             = \\pm \\phi \\frac{\\sin(\\alpha_b - \\alpha_a)}{\\cos\\alpha_a \\cos\\alpha_b}

    (``+`` compressor, ``-`` turbine; ``a``, ``b`` the rotor inlet and outlet), from
    :func:`service.core.angles.tangent_difference`: the loading of two nearly equal angles keeps
    its digits, where the difference of two large tangents would cancel.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    flow_coefficient : array_like
        Axial velocity over blade speed. [-]
    first_angle, second_angle : array_like
        Absolute flow angles at the rotor inlet and outlet. [deg]

    Returns
    -------
    numpy.ndarray
        ``Delta h0 / U^2``, positive where the rotor works in the machine's sense. [-]
    """
    _check_machine(machine)
    phi, first, second = broadcast_cases(flow_coefficient, first_angle, second_angle)
    sign = 1.0 if machine == "compressor" else -1.0
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return sign * phi * tangent_difference(first, second)


def stage_triangles(machine, blade_speed, axial_velocity, rotor_inlet_swirl, rotor_outlet_swirl, *,
                    loading_coefficient=None, reaction=None):
    """Velocity triangles and duty of a repeating stage from the rotor's swirl.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    blade_speed : array_like
        Mean blade speed U. [m s^-1]
    axial_velocity : array_like
        Axial velocity, constant through the stage. [m s^-1]
    rotor_inlet_swirl, rotor_outlet_swirl : array_like
        Absolute tangential velocity at the rotor inlet and outlet. [m s^-1]
    loading_coefficient : array_like, optional
        The stage loading where the caller knows it exactly (from the duty, or
        :func:`loading_from_angles`); otherwise it follows from the difference of the two
        swirls, which cancels when the loading is small against ``1 - R``. [-]
    reaction : array_like, optional
        The reaction where the caller knows it exactly (from the duty); otherwise
        ``1 - (Vtheta_in + Vtheta_out) / 2U``, right to rounding of its terms. [-]

    Returns
    -------
    dict of numpy.ndarray
        Per station ``k``: ``alpha{k}`` [deg], ``Vx{k}``, ``Vtheta{k}``, ``V{k}`` [m s^-1];
        at the rotor's stations ``beta{k}`` [deg], ``Wtheta{k}``, ``W{k}`` [m s^-1]. Per
        stage: ``flow_coefficient``, ``loading_coefficient``, ``reaction`` [-], ``work``
        [J kg^-1] (positive for both machines), ``de_haller_rotor`` and
        ``de_haller_stator`` (outlet over inlet speed in each row's frame) [-].
    """
    _check_machine(machine)
    u, vx, swirl_in, swirl_out = broadcast_cases(
        blade_speed, axial_velocity, rotor_inlet_swirl, rotor_outlet_swirl
    )
    rotor_in, rotor_out = ROTOR_STATIONS[machine]
    # A repeating stage leaves with the flow it came in with: the free station repeats
    # the rotor's outlet (turbine) or inlet (compressor).
    swirl = {rotor_in: swirl_in, rotor_out: swirl_out}
    free_station = ({1, 2, 3} - set(swirl)).pop()
    swirl[free_station] = swirl_out if machine == "turbine" else swirl_in

    out = {}
    for k in (1, 2, 3):
        out[f"alpha{k}"] = np.degrees(np.arctan2(swirl[k], vx))
        out[f"Vx{k}"] = vx
        out[f"Vtheta{k}"] = swirl[k]
        out[f"V{k}"] = np.hypot(vx, swirl[k])
    for k in (rotor_in, rotor_out):
        relative_swirl = swirl[k] - u
        out[f"beta{k}"] = np.degrees(np.arctan2(relative_swirl, vx))
        out[f"Wtheta{k}"] = relative_swirl
        out[f"W{k}"] = np.hypot(vx, relative_swirl)

    if loading_coefficient is None:
        sign = 1.0 if machine == "compressor" else -1.0
        loading_coefficient = sign * (swirl_out - swirl_in) / u
    else:
        loading_coefficient, u = broadcast_cases(loading_coefficient, u)
    with np.errstate(over="ignore"):
        work = loading_coefficient * u * u
    stator_in, stator_out = STATOR_STATIONS[machine]
    out.update(
        flow_coefficient=vx / u,
        loading_coefficient=loading_coefficient,
        reaction=(1.0 - (swirl_in + swirl_out) / (2.0 * u) if reaction is None
                  else broadcast_cases(reaction, u)[0]),
        blade_speed=u,
        axial_velocity=vx,
        work=work,
        de_haller_rotor=out[f"W{rotor_out}"] / out[f"W{rotor_in}"],
        de_haller_stator=out[f"V{stator_out}"] / out[f"V{stator_in}"],
    )
    return out


def stage_states(machine, triangles, total_temperature, total_pressure, cp, gamma):
    """Temperatures, Mach numbers and the inlet static state of a repeating stage.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    triangles : dict of numpy.ndarray
        The output of :func:`stage_triangles`.
    total_temperature : array_like
        Total temperature at station 1. [K]
    total_pressure : array_like or None
        Total pressure at station 1; without it ``p1`` and ``rho1`` are left out. [Pa]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    dict of numpy.ndarray
        ``total_temperature_change`` (work / cp, positive for both machines) [K];
        per station ``T0{k}``, ``T{k}`` [K], ``M{k}`` [-]; at the rotor's stations
        ``T0_rel{k}`` [K] and ``M_rel{k}`` [-]; at station 1 ``p1`` [Pa] and ``rho1``
        [kg m^-3]. NaN wherever a static temperature is not positive.
    """
    _check_machine(machine)
    t01, cp, gamma = broadcast_cases(total_temperature, cp, gamma)
    # Temperatures and Mach numbers need only the total temperature; pressures need both.
    p01 = None if total_pressure is None else broadcast_cases(total_pressure, t01)[0]
    delta_t0 = triangles["work"] / cp
    rotor_in, rotor_out = ROTOR_STATIONS[machine]
    # Total temperature changes only across the rotor (adiabatic rows).
    after_rotor = t01 + delta_t0 if machine == "compressor" else t01 - delta_t0
    out = {"total_temperature_change": delta_t0}
    for k in (1, 2, 3):
        t0 = after_rotor if k >= rotor_out else t01
        state = gas.static_state(t0, p01 if k == 1 and p01 is not None else 1.0, triangles[f"V{k}"], cp, gamma)
        out[f"T0{k}"] = t0
        out[f"T{k}"] = state["temperature"]
        out[f"M{k}"] = state["mach"]
        if k in (rotor_in, rotor_out):
            out[f"T0_rel{k}"] = gas.total_temperature(state["temperature"], triangles[f"W{k}"], cp)
            out[f"M_rel{k}"] = triangles[f"W{k}"] / state["speed_of_sound"]
        if k == 1 and p01 is not None:
            out["p1"] = state["pressure"]
            out["rho1"] = state["density"]
    return out


def _evaluate(machine, blade_speed, axial_velocity, swirl, total_temperature, total_pressure, cp, gamma, loading,
              reaction=None):
    values = stage_triangles(machine, blade_speed, axial_velocity, *swirl, loading_coefficient=loading,
                             reaction=reaction)
    failures = []
    if machine == "compressor":
        failures.append(("the rotor does no work on the flow (alpha2 <= alpha1): not a compressor stage",
                         ~(values["work"] > 0)))
    else:
        failures.append(("the rotor extracts no work from the flow (alpha2 <= alpha3): not a turbine stage",
                         ~(values["work"] > 0)))
    if total_temperature is not None:
        values.update(stage_states(machine, values, total_temperature, total_pressure, cp, gamma))
        for k in (1, 2, 3):
            failures.append(
                (f"static temperature at station {k} is at or below zero: the flow is faster than "
                 f"the total temperature allows", ~(values[f"T{k}"] > 0))
            )
    return masked_results(values, failures, _stage_checks, shape=np.shape(values["work"]),
                          inputs=(blade_speed, axial_velocity, *swirl, total_temperature, total_pressure, cp, gamma))


def _stage_checks(values, failed):
    checks = {}
    for row, ratio in (("rotor", values["de_haller_rotor"]), ("stator", values["de_haller_stator"])):
        checks[f"de_haller_{row}"] = de_haller_check(ratio)
        checks[f"velocity_ratio_{row}"] = deceleration_check(ratio)
    return checks


def evaluate_stage_from_duty(
    machine, flow_coefficient, loading_coefficient, reaction, blade_speed,
    total_temperature=None, total_pressure=None, cp=1005.0, gamma=1.4,
):
    """Triangles, states and checks of a repeating stage given its duty coefficients.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    flow_coefficient : array_like
        Axial velocity over blade speed; positive. [-]
    loading_coefficient : array_like
        Specific work over blade speed squared; positive. [-]
    reaction : array_like
        Rotor static enthalpy change over the stage's. [-]
    blade_speed : array_like
        Mean blade speed; positive. [m s^-1]
    total_temperature, total_pressure : array_like, optional
        Total state at station 1; with the temperature the states of :func:`stage_states` are
        added, with the pressure too the static pressure and density at station 1. [K], [Pa]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    CaseResults
        Values of :func:`stage_triangles` (and :func:`stage_states`), failures (static
        temperature at or below zero) and the de Haller and velocity-ratio checks of both
        rows.
    """
    swirl = rotor_swirl_from_duty(machine, loading_coefficient, reaction, blade_speed)
    axial_velocity = np.asarray(flow_coefficient, dtype=float) * blade_speed
    return _evaluate(machine, blade_speed, axial_velocity, swirl, total_temperature, total_pressure, cp, gamma,
                     loading_coefficient, reaction)


def evaluate_stage_from_angles(
    machine, blade_speed, axial_velocity, first_angle, second_angle,
    total_temperature=None, total_pressure=None, cp=1005.0, gamma=1.4,
):
    """Triangles, states and checks of a repeating stage given the rotor's absolute angles.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    blade_speed : array_like
        Mean blade speed; positive. [m s^-1]
    axial_velocity : array_like
        Axial velocity; positive. [m s^-1]
    first_angle, second_angle : array_like
        Absolute flow angles at the rotor's inlet and outlet: ``alpha1``, ``alpha2`` for a
        compressor; ``alpha2``, ``alpha3`` for a turbine. [deg]
    total_temperature, total_pressure : array_like, optional
        Total state at station 1. [K], [Pa]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]
    gamma : array_like
        Ratio of specific heats. [-]

    Returns
    -------
    CaseResults
        As :func:`evaluate_stage_from_duty`, plus a failure where the angles give no work
        in the machine's sense.
    """
    swirl = rotor_swirl_from_angles(machine, axial_velocity, first_angle, second_angle)
    with np.errstate(divide="ignore", invalid="ignore"):
        phi = np.asarray(axial_velocity, dtype=float) / blade_speed
    loading = loading_from_angles(machine, phi, first_angle, second_angle)
    return _evaluate(machine, blade_speed, axial_velocity, swirl, total_temperature, total_pressure, cp, gamma,
                     loading)
