"""Every calculation the service offers, in the order the OpenAPI document lists them."""

from service.api import triangles

CALCULATIONS = (triangles.CALCULATION,)
