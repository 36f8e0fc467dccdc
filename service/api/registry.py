"""Every calculation the service offers, in the order the OpenAPI document lists them."""

from service.api import diffusion, machine, split, stage_efficiency, triangles, zweifel

CALCULATIONS = (triangles.CALCULATION, zweifel.CALCULATION, diffusion.CALCULATION, split.CALCULATION,
                machine.CALCULATION, stage_efficiency.CALCULATION)
