"""Lieblein's profile loss of compressor blade rows: wake momentum thickness from the diffusion.

Lieblein correlated the momentum thickness of the wake behind compressor cascade blades (NACA
65-series and C.4 profiles, low speed, at the incidence of minimum loss) with the diffusion of
the suction-surface velocity: first with the diffusion factor D (Lieblein, Schwenk and
Broderick 1953), then more closely with the equivalent diffusion ratio ``D_eq`` (an estimate
of the peak suction-surface velocity over the exit velocity, Lieblein 1959; NASA SP-36 ch. 6).
The diffusion-factor chart of NASA SP-36 is a band of test points, not a curve, and was not
fitted here; the momentum thickness is taken from a published curve through Lieblein's ``D_eq``
data, and the diffusion factor is reported and judged against the range of the data.

The stagnation-pressure loss follows from the momentum thickness by mixing the wake out at
constant axial velocity (Lieblein's relation with the wake form-factor and blockage terms
dropped, i.e. the thin-wake limit; they change the loss by a few per cent at the loadings of
the data).

References
----------
1. Lieblein, S., Schwenk, F. C. and Broderick, R. L. (1953), NACA RM E53D01.
2. Lieblein, S. (1959), "Loss and stall analysis of compressor cascades", ASME J. Basic Eng.
   81, 387-400.
3. NASA SP-36 (1965), "Aerodynamic Design of Axial-Flow Compressors", ch. 6 (Lieblein).
4. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of
   Turbomachinery", 7th ed., ch. 3 (Lieblein's correlation of wake momentum thickness with
   ``D_eq``; quoted from memory).
5. Aungier, R. H. (2003), "Axial-Flow Compressors", ASME Press, ch. 6 (a second fit of the
   same data; quoted from memory).
6. Herrig, L. J., Emery, J. C. and Erwin, J. R. (1957), "Systematic two-dimensional cascade
   tests of NACA 65-series compressor blades at low speeds", NACA TN 3916 (the range of the
   cascade data: inlet angles 30-70 deg, solidities 0.5-1.5).
"""

from __future__ import annotations

import numpy as np

from service.core.cases import broadcast_cases

#: Inlet flow angles of the NACA 65-series cascade tests the correlation rests on (Herrig,
#: Emery and Erwin 1957, NACA TN 3916; from memory). [deg]
INLET_ANGLE_RANGE = (30.0, 70.0)
#: Solidities of those tests (NACA TN 3916; from memory). [-]
SOLIDITY_RANGE = (0.5, 1.5)
#: Diffusion factors of the data behind the loss correlation: the loss rises steeply and the
#: data end near 0.6 (Lieblein et al. 1953; NASA SP-36 ch. 6). [-]
DIFFUSION_FACTOR_RANGE = (0.0, 0.6)
#: Lieblein's limit of the equivalent diffusion ratio, near which cascades stall (Lieblein
#: 1959; NASA SP-36 ch. 6). [-]
MAX_EQUIVALENT_DIFFUSION_RATIO = 2.0


def equivalent_diffusion_ratio(inlet_angle, outlet_angle, solidity):
    """Lieblein's equivalent diffusion ratio at the incidence of minimum loss.

    .. math::

        D_{eq} = \\frac{\\cos\\beta_2}{\\cos\\beta_1}
                 \\left[1.12 + 0.61 \\frac{\\cos^2\\beta_1}{\\sigma}
                 \\,|\\tan\\beta_1 - \\tan\\beta_2|\\right]

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
    1. Lieblein (1959); NASA SP-36 (1965), ch. 6.
    """
    b1, b2, sigma = broadcast_cases(inlet_angle, outlet_angle, solidity)
    b1, b2 = np.radians(b1), np.radians(b2)
    cos1 = np.cos(b1)
    return np.cos(b2) / cos1 * (1.12 + 0.61 * cos1**2 / sigma * np.abs(np.tan(b1) - np.tan(b2)))


def wake_momentum_thickness(equivalent_diffusion):
    """Wake momentum thickness over chord from the equivalent diffusion ratio.

    .. math:: \\frac{\\theta_2}{c} = \\frac{0.004}{1 - 1.17 \\ln D_{eq}}

    NaN where ``D_eq`` reaches ``exp(1/1.17) = 2.35``, beyond stall, where the curve has no
    meaning.

    Parameters
    ----------
    equivalent_diffusion : array_like
        :func:`equivalent_diffusion_ratio`. [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Dixon and Hall (2014), 7th ed., ch. 3: the fit to Lieblein's (1959) data (from memory).
    """
    d = np.asarray(equivalent_diffusion, dtype=float)
    denominator = 1.0 - 1.17 * np.log(d)
    return np.where(denominator > 0.0, 0.004 / np.where(denominator > 0.0, denominator, 1.0), np.nan)


def wake_momentum_thickness_aungier(equivalent_diffusion):
    """A second published fit of Lieblein's wake momentum thickness, for comparison.

    .. math:: \\frac{\\theta_2}{c} = 0.004 \\left[1 + 3.1 (D_{eq} - 1)^2 + 0.4 (D_{eq} - 1)^8\\right]

    Parameters
    ----------
    equivalent_diffusion : array_like
        [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Aungier (2003), "Axial-Flow Compressors", ch. 6 (from memory).
    """
    excess = np.asarray(equivalent_diffusion, dtype=float) - 1.0
    return 0.004 * (1.0 + 3.1 * excess**2 + 0.4 * excess**8)


def wake_loss_coefficient(momentum_thickness, inlet_angle, outlet_angle, solidity):
    """Stagnation-pressure loss coefficient of a row from its wake momentum thickness.

    Mixing a thin wake out at constant axial velocity loses ``2 theta / (s cos beta2)`` of the
    exit dynamic pressure; over the inlet dynamic pressure:

    .. math::

        \\bar\\omega = \\frac{p_{01} - p_{02}}{p_{01} - p_1}
                     = 2 \\frac{\\theta_2}{c} \\frac{\\sigma \\cos^2\\beta_1}{\\cos^3\\beta_2}

    Parameters
    ----------
    momentum_thickness : array_like
        Wake momentum thickness over chord. [-]
    inlet_angle, outlet_angle : array_like
        Flow angles in the row's own frame, from axial. [deg]
    solidity : array_like
        Chord over pitch. [-]

    Returns
    -------
    numpy.ndarray
        Loss coefficient on the inlet dynamic pressure (low-speed definition). [-]

    References
    ----------
    1. Lieblein (1959); NASA SP-36 (1965), ch. 6 (the thin-wake limit of Lieblein's relation).
    2. Denton, J. D. (1993), "Loss mechanisms in turbomachines", ASME J. Turbomach. 115, 621-656
       (mixed-out loss of a wake, ``2 theta / w``).
    """
    theta, b1, b2, sigma = broadcast_cases(momentum_thickness, inlet_angle, outlet_angle, solidity)
    return 2.0 * theta * sigma * np.cos(np.radians(b1)) ** 2 / np.cos(np.radians(b2)) ** 3


def lieblein_profile_loss(inlet_angle, outlet_angle, solidity):
    """Profile loss coefficient of a compressor row at its minimum-loss incidence.

    Parameters
    ----------
    inlet_angle, outlet_angle : array_like
        Flow angles in the row's own frame, from axial, signed. [deg]
    solidity : array_like
        Chord over pitch. [-]

    Returns
    -------
    dict of numpy.ndarray
        ``equivalent_diffusion_ratio``, ``momentum_thickness`` (over chord) and
        ``loss_coefficient`` (on the inlet dynamic pressure). [-]
    """
    d_eq = equivalent_diffusion_ratio(inlet_angle, outlet_angle, solidity)
    theta = wake_momentum_thickness(d_eq)
    return {"equivalent_diffusion_ratio": d_eq, "momentum_thickness": theta,
            "loss_coefficient": wake_loss_coefficient(theta, inlet_angle, outlet_angle, solidity)}
