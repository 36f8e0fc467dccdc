"""Velocity triangles across the span: hub and tip from the mean line and a vortex law.

The mean-line triangles of :mod:`service.core.triangles` hold at the mean radius
``r_m = (r_h + r_t) / 2``. Away from it the swirl follows a vortex law and the axial velocity
follows from simple radial equilibrium (cylindrical stream surfaces, no radial velocity,
entropy uniform along the span; Dixon & Hall [1], ch. 6; Saravanamuttoo et al. [2], ch. 5):

.. math::

    \\frac{d h_0}{d r} = V_x \\frac{d V_x}{d r} + \\frac{V_\\theta}{r} \\frac{d (r V_\\theta)}{d r}

At every station ``k`` the swirl is written with ``rho = r / r_m`` as

.. math::

    V_{\\theta k}(\\rho) = A_k \\rho^n + \\frac{B_k}{\\rho}

and the vortex laws (:data:`VORTEX_LAWS`) choose ``A_k``, ``B_k`` and ``n`` so that
``V_theta_k(1)`` is the mean-line swirl:

- ``free``: ``A_k = 0``, ``r V_theta`` constant (``B_k`` the mean swirl);
- ``forced``: ``B_k = 0``, ``n = 1``: ``V_theta`` proportional to ``r`` (solid-body swirl);
- ``exponential`` (``n = 0``), ``constant_reaction`` (``n = 1``, "first power") and ``power``
  (any ``n``): the general whirl distribution ``V_theta = a r^n -/+ b/r`` before/after the
  rotor ([1] eqs. 6.13, 6.15; [2] ch. 5), ``A = (V_theta,in + V_theta,out)/2`` and
  ``B = -/+ (V_theta,out - V_theta,in)/2`` at the rotor's inlet and outlet. ``n = -1`` is the
  free vortex again.

The stator station that is not a rotor station repeats the law of the station it equals in a
repeating stage (compressor station 3 that of station 1, turbine station 1 that of station 3).

Integrating the equilibrium equation from the mean radius, with the total enthalpy at each
radius from Euler's work at that radius, ``w(rho) = +/- U(rho) (V_theta,out - V_theta,in)``,
``U(rho) = U_m rho`` (the inlet total state, station 1, is uniform along the span):

.. math::

    V_{xk}^2(\\rho) = V_{xm}^2 + 2 [h_{0k}(\\rho) - h_{0k}(1)] - 2 J_k(\\rho), \\qquad
    J_k = A_k^2 (n + 1) F(2n, \\rho) + A_k B_k (n + 1) F(n - 1, \\rho)

with ``F(m, rho) = (rho^m - 1) / m`` (``ln rho`` for ``m = 0``). What is held: the axial
velocity at the mean radius equals the mean-line value at every station (so the mean-line
triangles hold there exactly), rather than the integration constant being fixed by continuity
over the annulus as in [1] eq. 6.12; for the free vortex both coincide (``V_x`` is uniform),
for the other laws ``V_x`` varies with radius and with station.

Reaction at a radius is the static enthalpy definition, ``h = h0 - V^2/2`` at that radius:
compressor ``(h2 - h1) / (h3 - h1)``, turbine ``(h2 - h3) / (h1 - h3)``, which is
``1 - (V_theta,in + V_theta,out) / (2U)`` wherever the axial velocity is the same at the three
stations ([1] eq. 6.16; [2] ch. 5), as for the free vortex.

Everything broadcasts: a machine's stages may be passed as ``(cases, stages)`` arrays, and the
failure masks come back in that shape.

References
----------
1. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of
   Turbomachinery", 7th ed., Butterworth-Heinemann, ch. 6 (the equation numbers quoted are
   those of the 5th ed., 2005, ch. 6).
2. Saravanamuttoo, H. I. H., Rogers, G. F. C., Cohen, H., Straznicky, P. V. and Nix, A. C.
   (2017), "Gas Turbine Theory", 7th ed., Pearson, ch. 5 (three-dimensional flow: free vortex,
   ``Cw = a R^n -/+ b/R``) and ch. 7 (vortex theory of turbine stages).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from service.core import diffusion, span_checks, triangles
from service.core.cases import CaseResults, broadcast_cases, masked_results

#: Vortex laws that carry the mean-line swirl across the span.
VORTEX_LAWS = ("free", "forced", "exponential", "constant_reaction", "power")
#: The laws that need no exponent of their own (``power`` needs ``exponent``).
NAMED_VORTEX_LAWS = VORTEX_LAWS[:-1]
#: The span positions answered beside the mean line (output suffixes ``_hub``, ``_tip``).
SPAN_ENDS = ("hub", "tip")

#: The exponent ``n`` of the named members of the general whirl distribution.
_FAMILY_EXPONENTS = {"exponential": 0.0, "constant_reaction": 1.0}
#: Below this |m| the integral ``F(m, rho)`` is taken as its limit ``ln rho``.
_SMALL_EXPONENT = 1e-12


def _check_vortex(vortex, exponent):
    if vortex not in VORTEX_LAWS:
        raise ValueError(f"vortex must be one of {VORTEX_LAWS}, not {vortex!r}")
    if (vortex == "power") != (exponent is not None):
        raise ValueError("exponent is given with vortex 'power', and only with it")


def radius_ratios(hub_radius, tip_radius):
    """Hub and tip radius over the mean radius ``(r_h + r_t) / 2``.

    Parameters
    ----------
    hub_radius, tip_radius : array_like
        Hub and tip radius of the annulus. [m]

    Returns
    -------
    dict of numpy.ndarray
        ``mean_radius`` [m], ``hub_to_tip_ratio`` [-], and ``hub``, ``tip``: each radius over
        the mean radius [-].
    """
    hub, tip = broadcast_cases(hub_radius, tip_radius)
    mean = 0.5 * (hub + tip)
    return {"mean_radius": mean, "hub_to_tip_ratio": hub / tip, "hub": hub / mean, "tip": tip / mean}


def radii_from_mean(mean_radius, hub_to_tip_ratio):
    """Hub and tip radius of an annulus of given mean radius and hub-to-tip ratio.

    Parameters
    ----------
    mean_radius : array_like
        ``(r_h + r_t) / 2``. [m]
    hub_to_tip_ratio : array_like
        ``r_h / r_t``. [-]

    Returns
    -------
    hub_radius, tip_radius : numpy.ndarray
        ``r_t = 2 r_m / (1 + r_h/r_t)``, ``r_h = (r_h/r_t) r_t``. [m]
    """
    mean, ratio = broadcast_cases(mean_radius, hub_to_tip_ratio)
    tip = 2.0 * mean / (1.0 + ratio)
    return ratio * tip, tip


def vortex_coefficients(machine, rotor_inlet_swirl, rotor_outlet_swirl, vortex="free", exponent=None):
    """Coefficients of ``V_theta_k(rho) = A_k rho^n + B_k / rho`` at every station.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    rotor_inlet_swirl, rotor_outlet_swirl : array_like
        Mean-line absolute tangential velocity at the rotor inlet and outlet. [m s^-1]
    vortex : str
        One of :data:`VORTEX_LAWS`.
    exponent : array_like, optional
        The exponent ``n`` of vortex ``power`` (only with it). [-]

    Returns
    -------
    coefficients : dict of int to (numpy.ndarray, numpy.ndarray)
        ``{k: (A_k, B_k)}`` for stations 1, 2, 3. [m s^-1]
    exponent : numpy.ndarray
        ``n``. [-]

    Raises
    ------
    ValueError
        For an unknown machine or vortex law, or an exponent given other than with ``power``.
    """
    triangles._check_machine(machine)
    _check_vortex(vortex, exponent)
    swirl_in, swirl_out = broadcast_cases(rotor_inlet_swirl, rotor_outlet_swirl)
    zero = np.zeros_like(swirl_in)
    if vortex == "free":
        n = np.asarray(-1.0)
        inlet, outlet = (zero, swirl_in), (zero, swirl_out)
    elif vortex == "forced":
        n = np.asarray(1.0)
        inlet, outlet = (swirl_in, zero), (swirl_out, zero)
    else:
        n = np.asarray(_FAMILY_EXPONENTS.get(vortex, exponent), dtype=float)
        a = 0.5 * (swirl_in + swirl_out)
        b = 0.5 * (swirl_out - swirl_in)
        inlet, outlet = (a, -b), (a, b)
    rotor_in, rotor_out = triangles.ROTOR_STATIONS[machine]
    coefficients = {rotor_in: inlet, rotor_out: outlet}
    # A repeating stage leaves with the flow it came in with: compressor 3 repeats 1, turbine 1 repeats 3.
    free_station = ({1, 2, 3} - set(coefficients)).pop()
    coefficients[free_station] = outlet if machine == "turbine" else inlet
    return coefficients, n


def _power_integral(m, rho):
    """``F(m, rho) = integral of x^(m-1) from 1 to rho``: ``(rho^m - 1)/m``, or ``ln rho`` at ``m = 0``."""
    log_rho = np.log(rho)
    small = np.abs(m) < _SMALL_EXPONENT
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(small, log_rho, np.expm1(m * log_rho) / np.where(small, 1.0, m))


def equilibrium_integral(coefficient_a, coefficient_b, exponent, radius_ratio):
    """``J(rho) = integral of (V_theta / r) d(r V_theta)/dr dr`` from the mean radius to ``rho r_m``.

    .. math::

        J = A^2 (n + 1) F(2n, \\rho) + A B (n + 1) F(n - 1, \\rho)

    Parameters
    ----------
    coefficient_a, coefficient_b : array_like
        ``A`` and ``B`` of ``V_theta = A rho^n + B / rho``. [m s^-1]
    exponent : array_like
        ``n``. [-]
    radius_ratio : array_like
        ``rho = r / r_m``; positive. [-]

    Returns
    -------
    numpy.ndarray
        ``J``; zero for a free vortex (``A = 0``) and at ``rho = 1``. [m^2 s^-2]
    """
    a, b, n, rho = broadcast_cases(coefficient_a, coefficient_b, exponent, radius_ratio)
    return a * a * (n + 1.0) * _power_integral(2.0 * n, rho) + a * b * (n + 1.0) * _power_integral(n - 1.0, rho)


def span_triangles(machine, blade_speed, axial_velocity, rotor_inlet_swirl, rotor_outlet_swirl, radius_ratio,
                   vortex="free", exponent=None):
    """Velocity triangles of a repeating stage at a radius ``r = rho r_m``.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    blade_speed : array_like
        Blade speed at the mean radius ``U_m``. [m s^-1]
    axial_velocity : array_like
        Mean-line axial velocity, held at the mean radius at every station. [m s^-1]
    rotor_inlet_swirl, rotor_outlet_swirl : array_like
        Mean-line absolute tangential velocity at the rotor inlet and outlet. [m s^-1]
    radius_ratio : array_like
        ``rho = r / r_m``; positive. [-]
    vortex : str
        One of :data:`VORTEX_LAWS`.
    exponent : array_like, optional
        ``n`` of vortex ``power``. [-]

    Returns
    -------
    dict of numpy.ndarray
        The keys of :func:`service.core.triangles.stage_triangles` at that radius (per station
        ``alpha{k}``, ``Vx{k}``, ``Vtheta{k}``, ``V{k}``; at the rotor's stations ``beta{k}``,
        ``Wtheta{k}``, ``W{k}``; ``blade_speed`` ``U = U_m rho``, ``work``,
        ``loading_coefficient`` ``work / U^2``, ``reaction``, ``de_haller_rotor``,
        ``de_haller_stator``) and ``Vx_squared{k}`` [m^2 s^-2], from simple radial equilibrium:
        where it is not positive the station has no axial flow at that radius and its
        velocities are NaN.

    References
    ----------
    1. Dixon and Hall (2014), ch. 6; Saravanamuttoo et al. (2017), ch. 5.
    """
    coefficients, n = vortex_coefficients(machine, rotor_inlet_swirl, rotor_outlet_swirl, vortex, exponent)
    um, vxm, rho = broadcast_cases(blade_speed, axial_velocity, radius_ratio)
    power = np.power(rho, n)
    swirl = {k: a * power + b / rho for k, (a, b) in coefficients.items()}
    u = um * rho
    rotor_in, rotor_out = triangles.ROTOR_STATIONS[machine]
    sign = 1.0 if machine == "compressor" else -1.0
    (a_in, b_in), (a_out, b_out) = coefficients[rotor_in], coefficients[rotor_out]
    # Euler's work at rho and at the mean radius, written alike so that their difference is 0.0 at rho = 1.
    work = sign * um * ((a_out - a_in) * power * rho + (b_out - b_in))
    work_mean = sign * um * ((a_out - a_in) + (b_out - b_in))
    # Total enthalpy after the rotor changes along the span as the work does (in for a compressor, out
    # for a turbine); the inlet total state is uniform.
    after_rotor = sign * (work - work_mean)
    out = {}
    for k in (1, 2, 3):
        total_enthalpy_change = after_rotor if k >= rotor_out else 0.0
        a, b = coefficients[k]
        vx_squared = vxm * vxm + 2.0 * total_enthalpy_change - 2.0 * equilibrium_integral(a, b, n, rho)
        with np.errstate(invalid="ignore", divide="ignore"):
            # V_x = V_xm sqrt(1 + ...) is exactly V_xm at the mean radius.
            vx = np.where(vx_squared > 0, vxm * np.sqrt(np.abs(vx_squared / (vxm * vxm))), np.nan)
        out[f"Vx_squared{k}"] = vx_squared
        out[f"alpha{k}"] = np.degrees(np.arctan2(swirl[k], vx))
        out[f"Vx{k}"] = vx
        out[f"Vtheta{k}"] = swirl[k]
        out[f"V{k}"] = np.hypot(vx, swirl[k])
    for k in (rotor_in, rotor_out):
        relative_swirl = swirl[k] - u
        out[f"beta{k}"] = np.degrees(np.arctan2(relative_swirl, out[f"Vx{k}"]))
        out[f"Wtheta{k}"] = relative_swirl
        out[f"W{k}"] = np.hypot(out[f"Vx{k}"], relative_swirl)
    # Static enthalpies relative to h01 at this radius: h = h0 - V^2 / 2.
    h0 = {1: 0.0, 2: work, 3: work} if machine == "compressor" else {1: 0.0, 2: 0.0, 3: -work}
    h = {k: h0[k] - 0.5 * np.square(out[f"V{k}"]) for k in (1, 2, 3)}
    with np.errstate(invalid="ignore", divide="ignore"):
        reaction = ((h[2] - h[1]) / (h[3] - h[1]) if machine == "compressor"
                    else (h[2] - h[3]) / (h[1] - h[3]))
    stator_in, stator_out = triangles.STATOR_STATIONS[machine]
    out.update(
        blade_speed=u,
        work=work,
        loading_coefficient=work / np.square(u),
        reaction=reaction,
        de_haller_rotor=out[f"W{rotor_out}"] / out[f"W{rotor_in}"],
        de_haller_stator=out[f"V{stator_out}"] / out[f"V{stator_in}"],
    )
    return out


def _row_diffusion_factors(machine, values, rotor_solidity, stator_solidity, rho):
    """Lieblein diffusion factor of each compressor row at a radius, the solidity scaled as
    ``sigma_m / rho`` (the same chord and blade count at every radius)."""
    rotor_sigma = np.asarray(rotor_solidity, dtype=float) / rho
    stator_sigma = np.asarray(stator_solidity, dtype=float) / rho
    rotor = diffusion.diffusion_factor(values["W1"], values["W2"], values["Wtheta1"], values["Wtheta2"], rotor_sigma)
    stator = diffusion.diffusion_factor(values["V2"], values["V3"], values["Vtheta2"], values["Vtheta3"],
                                        stator_sigma)
    return {"rotor_diffusion_factor": rotor, "rotor_solidity": rotor_sigma,
            "stator_diffusion_factor": stator, "stator_solidity": stator_sigma}


#: Outputs of the span function that are internal to the failure tests, not answered.
_INTERNAL = ("Vx_squared1", "Vx_squared2", "Vx_squared3")


def evaluate_span(machine, blade_speed, axial_velocity, rotor_inlet_swirl, rotor_outlet_swirl, hub_radius,
                  tip_radius, vortex="free", exponent=None, total_temperature=None, total_pressure=None,
                  cp=1005.0, gamma=1.4, rotor_solidity=None, stator_solidity=None):
    """Hub and tip triangles, states and checks of a repeating stage from its mean line.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    blade_speed : array_like
        Blade speed at the mean radius. [m s^-1]
    axial_velocity : array_like
        Mean-line axial velocity. [m s^-1]
    rotor_inlet_swirl, rotor_outlet_swirl : array_like
        Mean-line absolute tangential velocity at the rotor inlet and outlet (compressor
        ``Vtheta1``, ``Vtheta2``; turbine ``Vtheta2``, ``Vtheta3``). [m s^-1]
    hub_radius, tip_radius : array_like
        The annulus; the mean-line triangles hold at ``(r_h + r_t) / 2``. [m]
    vortex : str
        One of :data:`VORTEX_LAWS`.
    exponent : array_like, optional
        ``n`` of vortex ``power``. [-]
    total_temperature, total_pressure : array_like, optional
        Total state at station 1, uniform along the span; with the temperature the states of
        :func:`service.core.triangles.stage_states` are added at each radius, with the pressure
        also ``p1`` and ``rho1``. [K], [Pa]
    cp : array_like
        Specific heat at constant pressure. [J kg^-1 K^-1]
    gamma : array_like
        Ratio of specific heats. [-]
    rotor_solidity, stator_solidity : array_like, optional
        Compressor rows' solidity at the mean radius (both or neither); at a radius it is
        ``sigma_m r_m / r`` (the same chord and blade count along the span). [-]

    Returns
    -------
    CaseResults
        Values ``hub_radius``, ``tip_radius``, ``mean_radius`` [m], ``hub_to_tip_ratio`` [-],
        and every output of :func:`span_triangles` (and of the states; with solidities the
        rows' ``*_diffusion_factor`` and ``*_solidity``) with the suffix ``_hub`` and ``_tip``.
        Failures: the hub radius at or above the tip radius; no axial velocity from radial
        equilibrium at a station and radius; a static temperature at or below zero at a station
        and radius. Checks of :func:`service.core.span_checks.span_checks`.
    """
    if (rotor_solidity is None) != (stator_solidity is None):
        raise ValueError("rotor_solidity and stator_solidity must be given together")
    if rotor_solidity is not None and machine != "compressor":
        raise ValueError("diffusion factors across the span are for compressor rows")
    hub_radius, tip_radius = broadcast_cases(hub_radius, tip_radius)
    annulus = radius_ratios(hub_radius, tip_radius)
    no_annulus = ~((hub_radius > 0) & (tip_radius > hub_radius))
    failures = [("the hub radius is at or above the tip radius (or not positive): there is no annulus",
                 no_annulus)]
    values = {"hub_radius": hub_radius, "tip_radius": tip_radius, "mean_radius": annulus["mean_radius"],
              "hub_to_tip_ratio": annulus["hub_to_tip_ratio"]}
    with np.errstate(invalid="ignore", divide="ignore"):
        for end in SPAN_ENDS:
            rho = np.where(no_annulus, 1.0, annulus[end])
            at = span_triangles(machine, blade_speed, axial_velocity, rotor_inlet_swirl, rotor_outlet_swirl,
                                rho, vortex, exponent)
            for k in (1, 2, 3):
                failures.append((f"simple radial equilibrium leaves no axial velocity at station {k} at the "
                                 f"{end} (V_x^2 <= 0 with the {vortex} vortex): the swirl is too strong for "
                                 "this annulus", ~(at[f"Vx_squared{k}"] > 0) & ~no_annulus))
            if total_temperature is not None:
                at.update(triangles.stage_states(machine, at, total_temperature, total_pressure, cp, gamma))
                for k in (1, 2, 3):
                    failures.append((f"static temperature at station {k} at the {end} is at or below zero: the "
                                     "flow there is faster than the total temperature allows",
                                     ~(at[f"T{k}"] > 0) & ~no_annulus & (at[f"Vx_squared{k}"] > 0)))
                    at[f"M_axial{k}"] = at[f"M{k}"] * at[f"Vx{k}"] / at[f"V{k}"]
            if rotor_solidity is not None:
                at.update(_row_diffusion_factors(machine, at, rotor_solidity, stator_solidity, rho))
            values.update({f"{name}_{end}": array for name, array in at.items() if name not in _INTERNAL})
    shape = np.broadcast_shapes(*(np.shape(v) for v in values.values()))
    return masked_results(values, failures, lambda out, failed: span_checks.span_checks(machine, out),
                          shape=shape, inputs=(blade_speed, axial_velocity, rotor_inlet_swirl,
                                               rotor_outlet_swirl, hub_radius, tip_radius, total_temperature,
                                               total_pressure, cp, gamma, rotor_solidity, stator_solidity))


def with_span(stage: CaseResults, machine, hub_radius, tip_radius, vortex="free", exponent=None,
              total_temperature=None, total_pressure=None, cp=1005.0, gamma=1.4, rotor_solidity=None,
              stator_solidity=None) -> CaseResults:
    """A stage's mean-line results with its hub and tip values added.

    Parameters
    ----------
    stage : CaseResults
        Results of :func:`service.core.triangles.evaluate_stage_from_duty` or
        :func:`~service.core.triangles.evaluate_stage_from_angles` (optionally with rows).
    machine, hub_radius, tip_radius, vortex, exponent, total_temperature, total_pressure, cp, gamma, \
rotor_solidity, stator_solidity
        As :func:`evaluate_span`.

    Returns
    -------
    CaseResults
        ``stage``'s values unchanged (NaN where the span fails), plus those of
        :func:`evaluate_span`; the failures and checks of both.
    """
    rotor_in, rotor_out = triangles.ROTOR_STATIONS[machine]
    values = stage.values
    span = evaluate_span(machine, values["blade_speed"], values["axial_velocity"], values[f"Vtheta{rotor_in}"],
                         values[f"Vtheta{rotor_out}"], hub_radius, tip_radius, vortex, exponent,
                         total_temperature, total_pressure, cp, gamma, rotor_solidity, stator_solidity)
    failed = span.failed()
    merged = {name: np.where(failed, np.nan, array) if failed.any() else array for name, array in values.items()}
    merged.update(span.values)
    # replace() keeps whatever else the stage's results carry.
    return replace(stage, values=merged, failures=stage.failures + span.failures,
                   checks={**stage.checks, **span.checks})

