"""Annulus geometry of an axial machine: radii from the flow area, with one radius held.

The annulus between the hub radius ``r_h`` and the tip radius ``r_t`` has the area

.. math:: A = \\pi (r_t^2 - r_h^2) = 2 \\pi r_m h, \\qquad r_m = \\frac{r_h + r_t}{2}, \\quad h = r_t - r_h

so with one of the three radii held (:data:`RADII_HELD`) the area fixes the other two in closed
form (Saravanamuttoo et al. [1], ch. 5, the annulus of an axial compressor from continuity):

- ``mean``: ``h = A / (2 pi r_m)``, ``r_h = r_m - h/2``, ``r_t = r_m + h/2``;
- ``hub``: ``r_t = sqrt(r_h^2 + A / pi)``;
- ``tip``: ``r_h = sqrt(r_t^2 - A / pi)``, impossible once ``A > pi r_t^2``.

The flow area itself follows from continuity, ``A = m / (rho V_x)``; where the blade speed, and
so the velocities, depend on the mean radius the two are solved together with
:func:`hub_to_tip_ratio_for_flow`.

References
----------
1. Saravanamuttoo, H. I. H., Rogers, G. F. C., Cohen, H., Straznicky, P. V. and Nix, A. C.
   (2017), "Gas Turbine Theory", 7th ed., Pearson, ch. 5 (compressor annulus from the mass flow
   and the axial velocity).
"""

from __future__ import annotations

import numpy as np

from service.core.cases import broadcast_cases

#: Which radius is held constant through the machine.
RADII_HELD = ("mean", "hub", "tip")

#: Hub-to-tip ratios scanned for the first annulus that passes the flow, from short blades to long. [-]
_SCAN = np.concatenate([[1.0 - 1e-9], np.linspace(0.9995, 0.005, 400)])
#: Relative tolerance of the refined hub-to-tip ratio. [-]
RATIO_RTOL = 1e-12


def _check_held(held):
    if held not in RADII_HELD:
        raise ValueError(f"held must be one of {RADII_HELD}, not {held!r}")


def annulus_from_area(area, held, radius):
    """Hub, tip and mean radius and blade height of an annulus of given area.

    Parameters
    ----------
    area : array_like
        Annulus flow area normal to the axis. [m^2]
    held : str
        One of :data:`RADII_HELD`: the radius that ``radius`` gives.
    radius : array_like
        The held radius: mean, hub or tip. [m]

    Returns
    -------
    dict of numpy.ndarray
        ``hub_radius``, ``tip_radius``, ``mean_radius`` (``(r_h + r_t)/2``), ``blade_height``
        (``r_t - r_h``) [m] and ``hub_to_tip_ratio`` [-]. With ``mean`` held the hub radius may
        come out at or below zero (reported as it is); with ``tip`` held an area above
        ``pi r_t^2`` has no hub and every output is NaN.
    """
    _check_held(held)
    area, radius = broadcast_cases(area, radius)
    with np.errstate(invalid="ignore", divide="ignore"):
        if held == "mean":
            height = area / (2.0 * np.pi * radius)
            hub, tip = radius - 0.5 * height, radius + 0.5 * height
        elif held == "hub":
            hub, tip = radius, np.sqrt(np.square(radius) + area / np.pi)
        else:
            hub_squared = np.square(radius) - area / np.pi
            hub = np.sqrt(np.where(hub_squared >= 0, hub_squared, np.nan))
            tip = np.where(hub_squared >= 0, radius, np.nan)
        return {
            "hub_radius": hub,
            "tip_radius": tip,
            "mean_radius": 0.5 * (hub + tip),
            "blade_height": tip - hub,
            "hub_to_tip_ratio": hub / tip,
        }


def annulus_from_hub_to_tip_ratio(held, radius, hub_to_tip_ratio):
    """Radii and area of the annulus of a hub-to-tip ratio with the hub or tip radius held.

    Parameters
    ----------
    held : str
        ``hub`` or ``tip``.
    radius : array_like
        The held radius. [m]
    hub_to_tip_ratio : array_like
        ``r_h / r_t``, in (0, 1). [-]

    Returns
    -------
    dict of numpy.ndarray
        ``hub_radius``, ``tip_radius``, ``mean_radius`` [m] and ``area`` [m^2].
    """
    if held not in RADII_HELD[1:]:
        raise ValueError(f"held must be 'hub' or 'tip', not {held!r}")
    radius, ratio = broadcast_cases(radius, hub_to_tip_ratio)
    if held == "hub":
        hub, tip = radius, radius / ratio
    else:
        hub, tip = ratio * radius, radius
    return {"hub_radius": hub, "tip_radius": tip, "mean_radius": 0.5 * (hub + tip),
            "area": np.pi * (np.square(tip) - np.square(hub))}


def hub_to_tip_ratio_for_flow(held, radius, flow_ratio):
    """The highest hub-to-tip ratio (shortest blade) whose annulus passes the mass flow.

    Where the velocities depend on the mean radius (the blade speed does), the area needed,
    ``m / (rho V_x)``, and the annulus are solved together. ``flow_ratio(annulus, index)``
    returns the mass flow the annulus passes over the mass flow required, ``rho V_x A / m``,
    for the problems ``index``; it is NaN where the flow cannot exist (a static temperature at
    or below zero, an axial Mach number at or above one). Ratios from 1 down to 0.005 are
    scanned for the first at which the annulus passes the flow, and the crossing is refined
    with a bracketed root solve (Chandrupatla's method, :func:`scipy.optimize.elementwise.find_root`).

    Parameters
    ----------
    held : str
        ``hub`` or ``tip``.
    radius : array_like
        The held radius of each problem, shape ``(P,)``. [m]
    flow_ratio : callable
        ``flow_ratio(annulus, index) -> numpy.ndarray`` with ``annulus`` the dict of
        :func:`annulus_from_hub_to_tip_ratio`, whose arrays ``index`` (positions of the problems)
        broadcasts against: of their shape, or a row of one index per problem beside a 2-D grid. [-]

    Returns
    -------
    numpy.ndarray
        The hub-to-tip ratio, shape ``(P,)``; NaN where no annulus in the scanned range passes the
        mass flow with a valid flow. [-]

    Notes
    -----
    The scan goes from short blades to long ones and takes the first crossing: with the hub held
    that is the smallest mean radius, with the tip held the largest. Where the velocities grow with
    the blade speed more than one annulus can pass the flow; the one with the shortest blades is
    the one a designer holding a radius means.
    """
    (radius,) = broadcast_cases(radius)
    problems = radius.shape[0]
    # The scan's grid is (ratios, problems); every problem's inputs are taken once, as a row that
    # broadcasts down the grid, not gathered again for each ratio.
    index = np.arange(problems)[None, :]
    with np.errstate(all="ignore"):
        excess = flow_ratio(annulus_from_hub_to_tip_ratio(held, radius[index], _SCAN[:, None]), index) - 1.0
    passes = excess >= 0
    # The first grid point that passes, with a valid point just before it (a proper bracket).
    bracketed = passes[1:] & (excess[:-1] < 0)
    found = bracketed.any(axis=0)
    first = np.argmax(bracketed, axis=0)
    upper = _SCAN[first]
    lower = _SCAN[first + 1]
    ratio = np.full(problems, np.nan)
    if not found.any():
        return ratio
    active = np.flatnonzero(found)

    def residual(x, which):
        with np.errstate(all="ignore"):
            return flow_ratio(annulus_from_hub_to_tip_ratio(held, radius[which], x), which) - 1.0

    # Imported here, not at module level: scipy costs every worker ~48 MB at start.
    from scipy.optimize import elementwise

    result = elementwise.find_root(residual, (lower[active], upper[active]), args=(active,),
                                   tolerances={"xrtol": RATIO_RTOL})
    ratio[active] = np.where(result.success, result.x, np.nan)
    return ratio


def hub_to_tip_ratio_near(held, radius, flow_ratio, guess):
    """The hub-to-tip ratio whose annulus passes the mass flow, searched outwards from a guess.

    A station next to one already solved (the other side of the same rotor) has an annulus close to
    that one's: its root is bracketed from the neighbour's ratio outwards
    (:func:`scipy.optimize.elementwise.bracket_root`) and refined as in
    :func:`hub_to_tip_ratio_for_flow`, which takes over, with its scan from short blades to long, for
    the problems where that finds no bracket (no guess, a non-finite flow ratio on the way).

    Parameters
    ----------
    held : str
        ``hub`` or ``tip``.
    radius : array_like
        The held radius of each problem, shape ``(P,)``. [m]
    flow_ratio : callable
        As in :func:`hub_to_tip_ratio_for_flow`. [-]
    guess : array_like
        A hub-to-tip ratio near the root (NaN for none), shape ``(P,)``. [-]

    Returns
    -------
    numpy.ndarray
        The hub-to-tip ratio, shape ``(P,)``; NaN where no annulus passes the mass flow. [-]
    """
    radius, guess = broadcast_cases(radius, guess)
    ratio = np.full(radius.shape[0], np.nan)
    lowest, highest = _SCAN[-1], _SCAN[0]
    start = np.flatnonzero(np.isfinite(guess) & (guess > lowest) & (guess < highest))
    if start.size:
        from scipy.optimize import elementwise

        def residual(x, which):
            with np.errstate(all="ignore"):
                return flow_ratio(annulus_from_hub_to_tip_ratio(held, radius[which], x), which) - 1.0

        step = 0.01
        left = np.clip(guess[start] - step, lowest, highest - 2 * step)
        bracket = elementwise.bracket_root(residual, left, left + 2 * step, xmin=lowest, xmax=highest,
                                           args=(start,))
        found = start[bracket.success]
        if found.size:
            low, high = (np.asarray(edge)[bracket.success] for edge in bracket.bracket)
            result = elementwise.find_root(residual, (low, high), args=(found,),
                                           tolerances={"xrtol": RATIO_RTOL})
            ratio[found] = np.where(result.success, result.x, np.nan)
    rest = np.flatnonzero(np.isnan(ratio))
    if rest.size:
        sub = radius[rest]
        ratio[rest] = hub_to_tip_ratio_for_flow(held, sub, lambda ring, which: flow_ratio(ring, rest[which]))
    return ratio
