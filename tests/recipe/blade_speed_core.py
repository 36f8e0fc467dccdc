"""Stand-in for ``service/core/blade_speed.py``: the core half of the contributor guide's recipe,
as the recipe test (tests/recipe/test_recipe.py) builds it. Not served: only the recipe test
registers it, in a temporary registry.
"""

from __future__ import annotations

import numpy as np

from service.core import triangles
from service.core.cases import CaseResults


def evaluate_blade_speed(shaft_speed, mean_radius):
    """Blade speed at the mean radius of a rotor.

    .. math:: U = 2 \\pi r N / 60

    Parameters
    ----------
    shaft_speed : array_like
        Shaft speed. [rev min^-1]
    mean_radius : array_like
        Mean radius. [m]

    Returns
    -------
    CaseResults
        ``blade_speed`` [m s^-1]. No case is physically impossible; a product too large for a
        float is infinite, which the mechanism answers as a per-case error (a non-finite output).

    References
    ----------
    The definitions: a shaft turning at N rev/min turns through 2 pi N / 60 rad/s, and a point at
    radius r moves at Omega r (kinematics of rigid rotation).
    """
    shaft_speed, mean_radius = np.broadcast_arrays(np.asarray(shaft_speed, dtype=float),
                                                   np.asarray(mean_radius, dtype=float))
    return CaseResults(values={"blade_speed": triangles.blade_speed(mean_radius, shaft_speed)})
