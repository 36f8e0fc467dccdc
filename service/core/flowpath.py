"""Blade-row geometry and the axial layout of a flowpath at the mean line.

Rows sit between stations in flow order: row ``j`` (from 0) runs from station ``j`` to station
``j + 1``. Each row takes the mean of its inlet and outlet stations' blade heights and mean
radii; its axial chord follows from the aspect ratio on axial chord (``h / c_x``), its true chord
from a stagger estimate, and the rows are stacked axially with a gap after every row but the last:

.. math::

    c_x = \\frac{h}{(h/c_x)}, \\qquad \\xi \\approx \\frac{\\theta_{in} + \\theta_{out}}{2}, \\qquad
    c = \\frac{c_x}{\\cos \\xi}, \\qquad g = f_g \\, c_x

with ``theta`` the flow angles in the row's own frame and ``f_g`` the axial gap as a fraction of the
upstream row's axial chord. The stagger estimate (the mean of the flow angles, i.e. the blade
chord line taken half way between the inlet and outlet flow directions) is a preliminary-design
simplification: a profile's stagger also depends on its camber line, incidence and deviation.

References
----------
1. Saravanamuttoo, H. I. H., Rogers, G. F. C., Cohen, H., Straznicky, P. V. and Nix, A. C.
   (2017), "Gas Turbine Theory", 7th ed., Pearson, ch. 5 and 7 (blade geometry and spacing at
   the mean line).
2. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of Turbomachinery",
   7th ed., Butterworth-Heinemann, ch. 3 (cascade geometry: chord, axial chord, stagger).
"""

from __future__ import annotations

import numpy as np

#: Axial gap between rows as a fraction of the upstream row's axial chord (common practice:
#: about 0.2-0.5; closer rows interact more, wider ones lengthen the machine). [-]
DEFAULT_AXIAL_GAP = 0.25


def row_mean(station_values):
    """The mean of each row's inlet and outlet station values.

    Parameters
    ----------
    station_values : array_like
        Values at the stations, shape ``(..., stations)``.

    Returns
    -------
    numpy.ndarray
        Shape ``(..., stations - 1)``: ``(v_j + v_{j+1}) / 2`` for row ``j``.
    """
    values = np.asarray(station_values, dtype=float)
    return 0.5 * (values[..., :-1] + values[..., 1:])


def stagger_estimate(inlet_angle, outlet_angle):
    """Stagger of a row estimated as the mean of its inlet and outlet flow angles.

    Parameters
    ----------
    inlet_angle, outlet_angle : array_like
        Flow angles in the row's own frame, from axial, signed. [deg]

    Returns
    -------
    numpy.ndarray
        Stagger angle from axial, signed. [deg]
    """
    return 0.5 * (np.asarray(inlet_angle, dtype=float) + np.asarray(outlet_angle, dtype=float))


def chord_from_axial_chord(axial_chord, stagger):
    """True chord of a blade from its axial chord and stagger.

    .. math:: c = c_x / \\cos \\xi

    Parameters
    ----------
    axial_chord : array_like
        Axial chord. [m]
    stagger : array_like
        Stagger angle from axial. [deg]

    Returns
    -------
    numpy.ndarray
        True chord. [m]
    """
    return np.asarray(axial_chord, dtype=float) / np.cos(np.radians(stagger))


def axial_layout(axial_chord, axial_gap=DEFAULT_AXIAL_GAP):
    """Leading- and trailing-edge positions of rows stacked along the axis.

    Parameters
    ----------
    axial_chord : array_like
        Axial chord of every row in flow order, shape ``(..., rows)``. [m]
    axial_gap : array_like
        Gap after each row but the last, as a fraction of that row's axial chord; broadcasts
        over the rows. [-]

    Returns
    -------
    dict of numpy.ndarray
        ``leading_edge`` and ``trailing_edge`` positions (first leading edge at 0), shape
        ``(..., rows)`` [m]; ``gap`` after each row (0 after the last) [m]; ``axial_length``,
        the last trailing edge's position, shape ``(...)`` [m]; ``station_position``, shape
        ``(..., rows + 1)``: the first station at the first leading edge, the last at the last
        trailing edge, the others in the middle of the gap between rows [m].
    """
    chord = np.asarray(axial_chord, dtype=float)
    fraction = np.asarray(axial_gap, dtype=float)
    if fraction.ndim:
        fraction = fraction[..., None]
    gap = np.broadcast_to(fraction * chord, chord.shape).copy()
    gap[..., -1] = 0.0
    step = chord + gap
    leading = np.cumsum(step, axis=-1) - step
    trailing = leading + chord
    middle = 0.5 * (trailing[..., :-1] + leading[..., 1:])
    stations = np.concatenate([leading[..., :1], middle, trailing[..., -1:]], axis=-1)
    return {"leading_edge": leading, "trailing_edge": trailing, "gap": gap,
            "axial_length": trailing[..., -1], "station_position": stations}


def outline(leading_edge, trailing_edge, station_hub_radius, station_tip_radius):
    """Hub and tip lines of the meridional flowpath, point by point along the axis.

    Each row contributes its leading edge (at its inlet station's radii) and its trailing edge (at
    its outlet station's radii); in the gaps the radii are those of the station there.

    Parameters
    ----------
    leading_edge, trailing_edge : array_like
        Row edge positions, shape ``(..., rows)``. [m]
    station_hub_radius, station_tip_radius : array_like
        Radii at the stations, shape ``(..., rows + 1)``. [m]

    Returns
    -------
    dict of numpy.ndarray
        ``x``, ``hub_radius`` and ``tip_radius``, shape ``(..., 2 rows)``, in flow order. [m]
    """
    leading, trailing = np.asarray(leading_edge, dtype=float), np.asarray(trailing_edge, dtype=float)
    x = np.stack([leading, trailing], axis=-1).reshape(leading.shape[:-1] + (-1,))

    def edges(station):
        station = np.asarray(station, dtype=float)
        return np.stack([station[..., :-1], station[..., 1:]], axis=-1).reshape(x.shape)

    return {"x": x, "hub_radius": edges(station_hub_radius), "tip_radius": edges(station_tip_radius)}
