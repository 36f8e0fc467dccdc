"""Howell's drag coefficients of compressor rows: annulus, secondary and tip clearance.

Howell split the drag of a compressor blade row in a stage into the profile drag of the
cascade, the annulus-wall drag and the secondary drag; a tip-clearance drag is added after
Vavra. The drags are on the vector-mean velocity and convert into a stagnation-pressure loss
coefficient on the inlet dynamic pressure (low-speed cascade relations):

.. math::

    \\tan\\alpha_m = \\tfrac12 (\\tan\\alpha_1 + \\tan\\alpha_2), \\qquad
    C_L = \\frac{2}{\\sigma} \\cos\\alpha_m |\\tan\\alpha_1 - \\tan\\alpha_2|, \\qquad
    \\bar\\omega = C_D \\frac{\\sigma \\cos^2\\alpha_1}{\\cos^3\\alpha_m}

(the lift neglects the small ``C_D tan alpha_m`` term, as Saravanamuttoo et al. do). With this
lift, the diffuser efficiency of the row is Howell's ``1 - 2 C_D / (C_L sin 2 alpha_m)``.

References
----------
1. Howell, A. R. (1945), "Fluid dynamics of axial compressors", Proc. IMechE 153.
2. Saravanamuttoo, H. I. H., Rogers, G. F. C., Cohen, H., Straznicky, P. V. and Nix, A. C.
   (2017), "Gas Turbine Theory", 7th ed., Pearson, ch. 5 (``C_Da = 0.020 s/h``,
   ``C_Ds = 0.018 C_L^2``, the lift coefficient).
3. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of
   Turbomachinery", 7th ed., ch. 3 (lift, drag and loss of a compressor cascade; the diffuser
   efficiency).
4. Vavra, M. H. (1960), "Aero-Thermodynamics and Flow in Turbomachines", Wiley (tip-clearance
   drag ``0.29 (k/h) C_L^1.5``; quoted from memory, also as given by Lakshminarayana (1996),
   "Fluid Dynamics and Heat Transfer of Turbomachinery", Wiley).
"""

from __future__ import annotations

import numpy as np

from service.core.cases import broadcast_cases

#: Pitch over blade height of Howell's annulus-drag data: the rule was given for ordinary
#: compressor aspect ratios, pitch-to-height of about 0.1-0.5 (Howell 1945; from memory). [-]
PITCH_TO_HEIGHT_RANGE = (0.1, 0.5)
#: Tip clearance over blade height of the data behind the clearance drag (Vavra 1960; about
#: 0-5 %, from memory). [-]
TIP_CLEARANCE_RANGE = (0.0, 0.05)


def mean_angle(inlet_angle, outlet_angle):
    """Vector-mean flow angle, ``tan alpha_m = (tan alpha_1 + tan alpha_2) / 2``. [deg]"""
    a1, a2 = broadcast_cases(inlet_angle, outlet_angle)
    return np.degrees(np.arctan(0.5 * (np.tan(np.radians(a1)) + np.tan(np.radians(a2)))))


def lift_coefficient(inlet_angle, outlet_angle, solidity):
    """Lift coefficient of a compressor cascade on the vector-mean velocity.

    .. math:: C_L = \\frac{2}{\\sigma} \\cos\\alpha_m |\\tan\\alpha_1 - \\tan\\alpha_2|

    Parameters
    ----------
    inlet_angle, outlet_angle : array_like
        Flow angles in the row's own frame, from axial, signed. [deg]
    solidity : array_like
        Chord over pitch. [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Saravanamuttoo et al. (2017), 7th ed., ch. 5.
    """
    a1, a2, sigma = broadcast_cases(inlet_angle, outlet_angle, solidity)
    am = np.radians(mean_angle(a1, a2))
    return 2.0 / sigma * np.cos(am) * np.abs(np.tan(np.radians(a1)) - np.tan(np.radians(a2)))


def annulus_drag(pitch_to_height):
    """Howell's annulus-wall drag coefficient, ``C_Da = 0.020 s/h``.

    Parameters
    ----------
    pitch_to_height : array_like
        Blade pitch over blade height. [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Howell (1945); Saravanamuttoo et al. (2017), 7th ed., ch. 5.
    """
    return 0.020 * np.asarray(pitch_to_height, dtype=float)


def secondary_drag(lift):
    """Howell's secondary drag coefficient, ``C_Ds = 0.018 C_L^2``.

    Parameters
    ----------
    lift : array_like
        Lift coefficient, :func:`lift_coefficient`. [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Howell (1945); Saravanamuttoo et al. (2017), 7th ed., ch. 5.
    """
    return 0.018 * np.square(np.asarray(lift, dtype=float))


def tip_clearance_drag(clearance_to_height, lift):
    """Tip-clearance drag coefficient, ``C_Dk = 0.29 (k/h) C_L^1.5``.

    Parameters
    ----------
    clearance_to_height : array_like
        Tip clearance over blade height. [-]
    lift : array_like
        Lift coefficient. [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Vavra (1960) (from memory; see the module's references).
    """
    k, cl = broadcast_cases(clearance_to_height, lift)
    return 0.29 * k * cl**1.5


def loss_from_drag(drag, inlet_angle, outlet_angle, solidity):
    """Stagnation-pressure loss coefficient on the inlet dynamic pressure from a drag coefficient.

    .. math:: \\bar\\omega = C_D \\frac{\\sigma \\cos^2\\alpha_1}{\\cos^3\\alpha_m}

    Parameters
    ----------
    drag : array_like
        Drag coefficient on the vector-mean velocity. [-]
    inlet_angle, outlet_angle : array_like
        [deg]
    solidity : array_like
        [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Dixon and Hall (2014), 7th ed., ch. 3 (``C_D = zeta (s/l) cos^3 alpha_m / cos^2 alpha_1``).
    """
    cd, a1, a2, sigma = broadcast_cases(drag, inlet_angle, outlet_angle, solidity)
    am = np.radians(mean_angle(a1, a2))
    return cd * sigma * np.cos(np.radians(a1)) ** 2 / np.cos(am) ** 3


def drag_from_loss(loss, inlet_angle, outlet_angle, solidity):
    """The drag coefficient of a loss coefficient: the inverse of :func:`loss_from_drag`. [-]"""
    w, a1, a2, sigma = broadcast_cases(loss, inlet_angle, outlet_angle, solidity)
    am = np.radians(mean_angle(a1, a2))
    return w * np.cos(am) ** 3 / (sigma * np.cos(np.radians(a1)) ** 2)


def diffuser_efficiency(drag, lift, inlet_angle, outlet_angle):
    """Howell's diffuser efficiency of a compressor cascade, ``1 - 2 C_D / (C_L sin 2 alpha_m)``.

    Parameters
    ----------
    drag, lift : array_like
        [-]
    inlet_angle, outlet_angle : array_like
        [deg]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Howell (1945); Dixon and Hall (2014), 7th ed., ch. 3.
    """
    am = np.radians(np.abs(mean_angle(inlet_angle, outlet_angle)))
    return 1.0 - 2.0 * np.asarray(drag, dtype=float) / (np.asarray(lift, dtype=float) * np.sin(2.0 * am))
