"""Common-practice defaults of every blade-sizing input of the whole-machine design.

The smallest useful request for :func:`service.core.machine.evaluate_machine_design` is the duty:
the machine, its mass flow, inlet total state, pressure ratio, shaft speed, one radius and an
efficiency. Every other input a designer would otherwise have to choose has a default here: the
flow coefficient and reaction of every stage, the loading limit that sets the stage count, the
aspect ratios of the rotor and stator rows, the row target (compressor diffusion factor, turbine
Zweifel coefficient), the axial gap and the rotor's share of the stage loss.

Each default is a value a preliminary designer would assume, inside the range the textbooks give
for it, and each is marked with its basis. The ranges below were recalled without the books at
hand ("from memory"): check them against the cited chapters before relying on them. A default is a
starting point of a design, not a recommendation for a particular machine.

:data:`DEFAULTS` maps each input to its value per machine, ``{field: {machine: value}}``;
:data:`RANGES` to the usual range it sits in; :data:`BASIS` to the words that say where it comes
from. :func:`default_values` gives the values of one machine, or of a column of machines
(vectorised with ``numpy.where``).

References
----------
1. Saravanamuttoo, H. I. H., Rogers, G. F. C., Cohen, H., Straznicky, P. V. and Nix, A. C. (2017),
   "Gas Turbine Theory", 7th ed., Pearson, ch. 5 (axial compressor: flow coefficient, reaction,
   diffusion factor, aspect ratio) and ch. 7 (axial turbine: flow and loading coefficients,
   Zweifel coefficient, aspect ratio).
2. Dixon, S. L. and Hall, C. A. (2014), "Fluid Mechanics and Thermodynamics of Turbomachinery",
   7th ed., Butterworth-Heinemann, ch. 3 (Zweifel, Lieblein's diffusion factor), ch. 4 (turbine
   stage design, Smith's chart) and ch. 5 (compressor stage design).
3. Lieblein, S., Schwenk, F. C. and Broderick, R. L. (1953), NACA RM E53D01 (the diffusion factor
   and its limit).
4. Zweifel, O. (1945), Brown Boveri Review 32 (the optimum Zweifel coefficient, about 0.8).
"""

from __future__ import annotations

import numpy as np

from service.core import flowpath, zweifel
from service.core.machine import DEFAULT_ROTOR_LOSS_FRACTION
from service.core.triangles import MACHINES

COMMON_PRACTICE = "common practice"

#: The default of every blade-sizing input, per machine. ``None`` where the input does not
#: apply to that machine (a turbine row is sized by a Zweifel target, a compressor row by a
#: diffusion factor).
DEFAULTS: dict[str, dict[str, float | None]] = {
    # Stage duty at each stage's design station.
    "flow_coefficient": {"compressor": 0.5, "turbine": 0.6},
    "reaction": {"compressor": 0.5, "turbine": 0.5},
    # The stage count: the fewest stages that keep every stage's loading within this.
    "max_loading_coefficient": {"compressor": 0.4, "turbine": 2.0},
    # Rows.
    "rotor_aspect_ratio": {"compressor": 2.5, "turbine": 2.0},
    "stator_aspect_ratio": {"compressor": 3.0, "turbine": 1.5},
    "target_diffusion_factor": {"compressor": 0.45, "turbine": None},
    "zweifel_coefficient": {"compressor": None, "turbine": zweifel.OPTIMUM_ZWEIFEL_COEFFICIENT},
    "axial_gap": {machine: flowpath.DEFAULT_AXIAL_GAP for machine in MACHINES},
    "rotor_loss_fraction": {machine: DEFAULT_ROTOR_LOSS_FRACTION for machine in MACHINES},
}

#: The usual range of each input in preliminary design, per machine (from memory, see BASIS).
RANGES: dict[str, dict[str, tuple[float, float] | None]] = {
    "flow_coefficient": {"compressor": (0.4, 0.7), "turbine": (0.4, 1.0)},
    "reaction": {"compressor": (0.5, 0.7), "turbine": (0.3, 0.6)},
    "max_loading_coefficient": {"compressor": (0.3, 0.5), "turbine": (1.0, 2.5)},
    "rotor_aspect_ratio": {"compressor": (1.0, 4.0), "turbine": (1.0, 4.0)},
    "stator_aspect_ratio": {"compressor": (1.0, 4.0), "turbine": (1.0, 4.0)},
    "target_diffusion_factor": {"compressor": (0.35, 0.5), "turbine": None},
    "zweifel_coefficient": {"compressor": None, "turbine": (0.75, 1.1)},
    "axial_gap": {machine: (0.2, 0.5) for machine in MACHINES},
    "rotor_loss_fraction": {machine: (0.4, 0.6) for machine in MACHINES},
}

#: Where each default comes from, in words that an answer can echo.
BASIS: dict[str, str] = {
    "flow_coefficient": (
        f"{COMMON_PRACTICE}: compressor stages about 0.4-0.7, turbine stages about 0.4-1.0 (Smith's chart) "
        "(Saravanamuttoo et al. 2017 ch. 5 and 7; Dixon & Hall 2014 ch. 4 and 5; from memory)"),
    "reaction": (
        f"{COMMON_PRACTICE}: 50 % reaction, symmetric triangles; compressors about 0.5-0.7, turbines about "
        "0.3-0.6 (Dixon & Hall 2014 ch. 4 and 5; from memory)"),
    "max_loading_coefficient": (
        f"{COMMON_PRACTICE}: stage loading Delta h0 / U^2 about 0.3-0.5 for a compressor, about 1-2.5 for a "
        "turbine; the stage count is the fewest stages within it (Dixon & Hall 2014 ch. 4 and 5; "
        "Saravanamuttoo et al. 2017 ch. 5 and 7; from memory)"),
    "rotor_aspect_ratio": (
        f"{COMMON_PRACTICE}: blade height over axial chord about 1-4 (Saravanamuttoo et al. 2017 ch. 5 and 7; "
        "from memory)"),
    "stator_aspect_ratio": (
        f"{COMMON_PRACTICE}: blade height over axial chord about 1-4 (Saravanamuttoo et al. 2017 ch. 5 and 7; "
        "from memory)"),
    "target_diffusion_factor": (
        f"{COMMON_PRACTICE}: compressor rows sized for a diffusion factor of about 0.45, below the 0.6 at which "
        "losses rise steeply (Lieblein, Schwenk & Broderick 1953, NACA RM E53D01; Dixon & Hall 2014 ch. 3)"),
    "zweifel_coefficient": (
        "Zweifel's optimum, about 0.8 (Zweifel 1945, Brown Boveri Review 32; Dixon & Hall 2014 ch. 3); "
        f"high-lift rows go to about 1.0-1.1 ({COMMON_PRACTICE})"),
    "axial_gap": (
        f"{COMMON_PRACTICE}: an axial gap of about 0.2-0.5 of the upstream row's axial chord (from memory)"),
    "rotor_loss_fraction": (
        f"{COMMON_PRACTICE}: the stage's loss shared equally between rotor and stator, near 50 % reaction "
        "(from memory)"),
}


def default_values(machine):
    """The default of every blade-sizing input, for one machine or a column of machines.

    Parameters
    ----------
    machine : str or array_like of str
        ``compressor`` or ``turbine``, per case.

    Returns
    -------
    dict of str to float or numpy.ndarray
        Each input of :data:`DEFAULTS` that applies: a float for one machine; for a column of
        machines an array per case, NaN where the input does not apply to that case's machine. [-]

    Raises
    ------
    ValueError
        For a machine not in :data:`service.core.triangles.MACHINES`.

    Examples
    --------
    >>> default_values("compressor")["target_diffusion_factor"]
    0.45
    >>> default_values(["compressor", "turbine"])["flow_coefficient"].tolist()
    [0.5, 0.6]
    """
    names = np.asarray(machine, dtype=str)
    unknown = sorted(set(np.unique(names).tolist()) - set(MACHINES))
    if unknown:
        raise ValueError(f"machine must be one of {MACHINES}, not {unknown}")
    if names.ndim == 0:
        one = str(names)
        return {field: values[one] for field, values in DEFAULTS.items() if values[one] is not None}
    compressor = names == "compressor"
    return {field: np.where(compressor, np.nan if values["compressor"] is None else values["compressor"],
                            np.nan if values["turbine"] is None else values["turbine"])
            for field, values in DEFAULTS.items()}
