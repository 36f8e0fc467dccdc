"""Trigonometry of flow angles given in degrees, accurate right up to 90 deg from axial.

Flow angles are measured from the axial direction. Near 90 deg the cosine is the small
complement of the angle, which ``cos(radians(alpha))`` loses: ``radians`` rounds the angle to
about 1e-16 rad, as large as the whole complement of an angle 1e-14 deg short of 90.
``90 - |alpha|`` in degrees is exact in floating point for ``|alpha| >= 45`` (Sterbenz's lemma),
so its sine keeps the complement to full precision.

References
----------
1. Sterbenz, P. H. (1974), "Floating-Point Computation", Prentice-Hall, sec. 4.3 (the difference
   of two floating-point numbers within a factor of two of each other is exact).
"""

from __future__ import annotations

import numpy as np


def cos_tan(angle):
    """Cosine and tangent of a flow angle, accurate up to the angle's last bit before 90 deg.

    ``cos(alpha)`` is taken as ``sin(90 deg - |alpha|)``: the difference ``90 - |alpha|`` is
    exact in floating point for ``|alpha| >= 45``, so an angle 1e-12 deg short of 90 keeps its
    complement to full precision (``cos(radians(alpha))`` would keep about two digits of it).

    Parameters
    ----------
    angle : array_like
        Flow angle from axial. [deg]

    Returns
    -------
    cos, tan : numpy.ndarray
        ``cos(alpha)`` and ``tan(alpha) = sin(alpha) / cos(alpha)``; the cosine is zero or
        negative at or beyond 90 deg. [-]
    """
    angle = np.asarray(angle, dtype=float)
    cos = np.sin(np.radians(90.0 - np.abs(angle)))
    with np.errstate(divide="ignore", invalid="ignore"):
        return cos, np.sin(np.radians(angle)) / cos


def tangent_difference(first, second):
    """``tan(second) - tan(first)`` of two flow angles, without cancellation.

    For angles of the same sign it is ``sin(second - first) / (cos(first) cos(second))``: the
    difference of the angles is exact or nearly so, where the difference of two large, nearly
    equal tangents would cancel. For angles of opposite signs the tangents add in magnitude, and
    their difference is taken directly (the difference of the angles could be near 180 deg, where
    its sine would lose the digits).

    Parameters
    ----------
    first, second : array_like
        Flow angles from axial. [deg]

    Returns
    -------
    numpy.ndarray
        ``tan(second) - tan(first)``. [-]
    """
    first = np.asarray(first, dtype=float)
    second = np.asarray(second, dtype=float)
    cos1, tan1 = cos_tan(first)
    cos2, tan2 = cos_tan(second)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        same_sign = np.sin(np.radians(second - first)) / cos1 / cos2
        return np.where(first * second >= 0, same_sign, tan2 - tan1)
