"""Station and row conventions of a multistage machine, shared by the core and the layers above.

Stations 1 to 2n + 1 in flow order (counted from 0 in arrays): a compressor stage i (from 0)
spans stations 2i (rotor inlet), 2i + 1 (rotor exit = stator inlet) and 2i + 2 (stator exit); a
turbine stage spans 2i (stator inlet), 2i + 1 (stator exit = rotor inlet) and 2i + 2 (rotor
exit). Rows 1 to 2n lie between them: compressor R1, S1, R2, ...; turbine S1, R1, S2, ...
"""

from __future__ import annotations

import numpy as np


def enthalpy_reaction(machine, station_static_temperature):
    """Reaction of every stage: the rotor's static enthalpy change over the stage's.

    .. math:: R = \\frac{h_{rotor,in} - h_{rotor,out}}{h_{stage,in} - h_{stage,out}}

    with a perfect gas of constant ``cp``, so enthalpy differences are ``cp`` times temperature
    differences. Stage ``i`` (from 0) spans stations ``2i`` to ``2i + 2``; its rotor is the first row
    (compressor) or the second (turbine). For a repeating stage of constant axial velocity and radius
    it equals the kinematic reaction ``1 - (V_theta1 + V_theta2) / (2 U)``; where a stage's inlet and
    outlet velocities differ, or its radius changes, the two differ.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    station_static_temperature : array_like
        Static temperature at stations 1 .. 2n + 1, shape ``(..., 2n + 1)``. [K]

    Returns
    -------
    numpy.ndarray
        The reaction of each stage, shape ``(..., n)``. [-]

    References
    ----------
    Dixon and Hall (2014), ch. 5 (compressor) and ch. 4 (turbine): the definition of reaction.
    """
    t = np.asarray(station_static_temperature, dtype=float)
    inlet, middle, outlet = t[..., :-1:2], t[..., 1::2], t[..., 2::2]
    rotor_in, rotor_out = (inlet, middle) if machine == "compressor" else (middle, outlet)
    with np.errstate(all="ignore"):
        return (rotor_in - rotor_out) / (inlet - outlet)


def rotor_stations(machine, stages):
    """The stations of every stage's rotor, counted from 0: its design (low-swirl) station and its other one.

    A stage's flow coefficient, loading and reaction are set at its rotor's low-swirl station (compressor
    rotor inlet ``2i``, turbine rotor exit ``2i + 2``); the other rotor station (compressor rotor exit
    ``2i + 1``, turbine rotor inlet ``2i + 1``) takes its swirl from Euler's work equation.

    Parameters
    ----------
    machine : str
        ``compressor`` or ``turbine``.
    stages : int
        Stage count ``n``.

    Returns
    -------
    design, other : numpy.ndarray
        Station indices (from 0), shape ``(n,)``.
    """
    first = 2 * np.arange(stages)
    if machine == "compressor":
        return first, first + 1
    return first + 2, first + 1
