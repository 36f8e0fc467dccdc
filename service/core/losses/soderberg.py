"""Soderberg's turbine blade-row loss correlation with its aspect-ratio and Reynolds corrections.

Soderberg correlated the losses of turbine cascades spaced at Zweifel's optimum pitch (load
coefficient about 0.8) against the deflection of the flow alone. The nominal loss coefficient
holds for a blade height over axial chord of 3 and a Reynolds number of 1e5 (based on the
hydraulic diameter of the blade passage at exit and the exit velocity); other aspect ratios and
Reynolds numbers are corrected by two factors. The loss coefficient is the enthalpy loss over
the exit kinetic energy of the row in its own frame,

.. math:: \\zeta = \\frac{h_2 - h_{2s}}{\\tfrac12 c_2^2}

The correlation includes profile and secondary losses but no tip-clearance loss.

References
----------
1. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of Turbomachinery",
   7th ed., Butterworth-Heinemann, ch. 4 (Soderberg's correlation; also ch. 4 of the 4th ed.
   (1998), eq. (4.11)-(4.14) and Fig. 4.3, adapted from Horlock (1960)).
2. Horlock, J. H. (1966), "Axial Flow Turbines", Butterworths (Soderberg's correlation).
"""

from __future__ import annotations

import numpy as np

from service.core.cases import broadcast_cases

#: Deflection range of Soderberg's chart (Dixon & Hall, ch. 4, Fig. "Soderberg's correlation of
#: turbine blade loss coefficient with fluid deflection": 0 to 120 deg, from memory). [deg]
DEFLECTION_RANGE = (0.0, 120.0)
#: Blade height over axial chord at which the nominal loss holds (Dixon & Hall, ch. 4). [-]
REFERENCE_ASPECT_RATIO = 3.0
#: Reynolds number at which the nominal loss holds (hydraulic diameter, exit velocity). [-]
REFERENCE_REYNOLDS = 1.0e5
#: Thickness-to-chord range of Soderberg's chart; the nominal equation is the 0.20 curve (Dixon &
#: Hall, ch. 4; from memory). [-]
THICKNESS_RANGE = (0.15, 0.25)
#: Zweifel load coefficient at which the blades were spaced (Dixon & Hall, ch. 4, eq. 4.11 of
#: the 4th ed.). [-]
ZWEIFEL_COEFFICIENT = 0.8
ROWS = ("stator", "rotor")


def soderberg_nominal_loss(deflection):
    """Soderberg's nominal loss coefficient from the flow deflection.

    .. math:: \\zeta^* = 0.04 \\left(1 + 1.5 \\left(\\frac{\\varepsilon}{100}\\right)^2\\right)

    Parameters
    ----------
    deflection : array_like
        Flow deflection of the row in its own frame, ``|inlet angle - outlet angle|`` with
        signed angles from axial. [deg]

    Returns
    -------
    numpy.ndarray
        Nominal enthalpy loss coefficient (aspect ratio 3, Reynolds number 1e5). [-]

    References
    ----------
    1. Dixon and Hall (2014), 7th ed., ch. 4, Soderberg's correlation.

    Examples
    --------
    >>> float(soderberg_nominal_loss(100.0))
    0.1
    """
    epsilon = np.asarray(deflection, dtype=float)
    return 0.04 * (1.0 + 1.5 * np.square(epsilon / 100.0))


def soderberg_aspect_ratio_loss(row, nominal_loss, aspect_ratio):
    """Soderberg's loss coefficient corrected to an aspect ratio other than 3.

    .. math::

        1 + \\zeta_1 = (1 + \\zeta^*) (0.993 + 0.021\\, b/H) \\quad \\text{(nozzle, stator)}

        1 + \\zeta_1 = (1 + \\zeta^*) (0.975 + 0.075\\, b/H) \\quad \\text{(rotor)}

    Parameters
    ----------
    row : str
        ``stator`` (nozzle) or ``rotor``.
    nominal_loss : array_like
        Nominal loss coefficient from :func:`soderberg_nominal_loss`. [-]
    aspect_ratio : array_like
        Blade height over axial chord, ``H/b``. [-]

    Returns
    -------
    numpy.ndarray
        Loss coefficient at that aspect ratio (Reynolds number 1e5). [-]

    References
    ----------
    1. Dixon and Hall (2014), 7th ed., ch. 4, Soderberg's aspect-ratio correction.
    """
    if row not in ROWS:
        raise ValueError(f"row must be one of {ROWS}, not {row!r}")
    nominal, ratio = broadcast_cases(nominal_loss, aspect_ratio)
    a, b = (0.993, 0.021) if row == "stator" else (0.975, 0.075)
    return (1.0 + nominal) * (a + b / ratio) - 1.0


def soderberg_reynolds_loss(loss, reynolds_number):
    """Soderberg's loss coefficient corrected to a Reynolds number other than 1e5.

    .. math:: \\zeta_2 = \\left(\\frac{10^5}{Re}\\right)^{1/4} \\zeta_1

    Parameters
    ----------
    loss : array_like
        Loss coefficient at Reynolds number 1e5, from :func:`soderberg_aspect_ratio_loss`. [-]
    reynolds_number : array_like
        ``rho2 c2 D_h / mu`` with the exit velocity and the hydraulic diameter of
        :func:`hydraulic_diameter`. [-]

    Returns
    -------
    numpy.ndarray
        [-]

    References
    ----------
    1. Dixon and Hall (2014), 7th ed., ch. 4, Soderberg's Reynolds-number correction.
    """
    loss, re = broadcast_cases(loss, reynolds_number)
    return loss * (REFERENCE_REYNOLDS / re) ** 0.25


def hydraulic_diameter(pitch, blade_height, outlet_angle):
    """Hydraulic diameter of the exit of a blade passage, for Soderberg's Reynolds number.

    .. math:: D_h = \\frac{2 s H \\cos\\alpha_2}{s \\cos\\alpha_2 + H}

    Parameters
    ----------
    pitch : array_like
        Blade pitch. [m]
    blade_height : array_like
        Blade height. [m]
    outlet_angle : array_like
        Outlet flow angle in the row's frame, from axial. [deg]

    Returns
    -------
    numpy.ndarray
        [m]

    References
    ----------
    1. Dixon and Hall (2014), 7th ed., ch. 4.
    """
    s, h, angle = broadcast_cases(pitch, blade_height, outlet_angle)
    throat = s * np.cos(np.radians(angle))
    return 2.0 * throat * h / (throat + h)


def soderberg_loss(row, inlet_angle, outlet_angle, aspect_ratio, reynolds_number):
    """Soderberg's loss coefficient of a turbine row, with both corrections.

    Parameters
    ----------
    row : str
        ``stator`` or ``rotor``.
    inlet_angle, outlet_angle : array_like
        Flow angles in the row's own frame (relative for a rotor), from axial, signed. [deg]
    aspect_ratio : array_like
        Blade height over axial chord. [-]
    reynolds_number : array_like
        Exit velocity and hydraulic diameter (:func:`hydraulic_diameter`). [-]

    Returns
    -------
    dict of numpy.ndarray
        ``deflection`` [deg], ``nominal_loss``, ``aspect_ratio_loss`` (after the aspect-ratio
        correction) and ``loss_coefficient`` (after both) [-].
    """
    deflection = np.abs(np.asarray(inlet_angle, dtype=float) - np.asarray(outlet_angle, dtype=float))
    nominal = soderberg_nominal_loss(deflection)
    corrected = soderberg_aspect_ratio_loss(row, nominal, aspect_ratio)
    return {"deflection": deflection, "nominal_loss": nominal, "aspect_ratio_loss": corrected,
            "loss_coefficient": soderberg_reynolds_loss(corrected, reynolds_number)}
