"""Stand-in for ``service/api/blade_speed.py``: ``POST /v1/blade-speed``, the API half of the
contributor guide's recipe ("Adding an endpoint"), exactly as the guide writes it. Registered only
by the recipe test's plugin (tests/recipe/plugin.py), never by service.api.registry.
"""

from __future__ import annotations

from marshmallow import Schema

from service.api.common import length, output, shaft_speed_field
from service.api.declarations import Calculation
from service.api.fields import CaseSchema
from tests.recipe import blade_speed_core


class BladeSpeedInput(CaseSchema):
    shaft_speed = shaft_speed_field("Shaft speed. [rev min^-1]", required=True)
    mean_radius = length("Mean radius of the rotor. [m]", required=True)


BladeSpeedOutput = Schema.from_dict(
    {
        "blade_speed": output("Blade speed at the mean radius. [m s^-1]", "m s^-1"),
    },
    name="BladeSpeedOutput",
)


def _compute(options: dict, inputs: dict):
    return blade_speed_core.evaluate_blade_speed(inputs["shaft_speed"], inputs["mean_radius"])


CALCULATION = Calculation(
    name="blade-speed",
    summary="Blade speed at the mean radius from the shaft speed",
    description="U = 2 pi r N / 60 at the mean radius r of a rotor turning at N rev/min.",
    schema=BladeSpeedInput,
    outputs=BladeSpeedOutput,
    choices=(),
    compute=_compute,
)

