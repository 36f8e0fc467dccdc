"""Quantities given as strings with a unit ("30 mm", "14.696 psi", "518.67 degR"), converted with pint.

Every input quantity documents its SI unit as ``x-unit`` (``"m s^-1"``, ``"J kg^-1 K^-1"``,
``"rev min^-1"``); :data:`PINT_UNITS` maps each of those spellings to pint's, in this one place.
A string is a number followed by a unit that pint knows (``30 mm``, ``984.25 ft/s``,
``45 lb/s``, ``12000 rpm``, ``59 degF``); it is converted to the field's unit and then judged like
the number itself (range, whole number). A string without a unit is refused: a number is sent as
a JSON number. Temperatures are absolute (``degF`` and ``degC`` are converted with their offsets).
A shaft speed in ``Hz`` is refused as ambiguous (pint reads Hz as radians per second, a person as
revolutions per second): give ``rpm``, ``rev/s`` or ``rad/s``.
"""

from __future__ import annotations

import functools
import math
import re

import numpy as np
from marshmallow import ValidationError, missing

#: The ``x-unit`` spellings of the schemas, as pint reads them.
PINT_UNITS = {
    "-": "dimensionless",
    "deg": "degree",
    "m": "meter",
    "m^2": "meter ** 2",
    "m s^-1": "meter / second",
    "K": "kelvin",
    "Pa": "pascal",
    "W": "watt",
    "J kg^-1": "joule / kilogram",
    "J kg^-1 K^-1": "joule / kilogram / kelvin",
    "kg s^-1": "kilogram / second",
    "kg m^-3": "kilogram / meter ** 3",
    "rev min^-1": "revolution / minute",
    "Pa s": "pascal * second",
}

_QUANTITY = re.compile(r"\s*([-+]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][-+]?[0-9]+)?)\s*(.*?)\s*\Z", re.DOTALL)
#: What a unit is written with: letters, digits, spaces and * / ^ ( ) . - _ % (and the degree and micro signs).
_UNIT_TEXT = re.compile(r"[A-Za-z0-9 */^().\-_%°µ]+\Z")
#: Longest unit string read: the usual ones are a few characters; a long one is refused unparsed.
MAX_LENGTH = 64


@functools.cache
def registry():
    """pint's unit registry, made on first use (it takes a fraction of a second) and then only read."""
    import pint

    registry = pint.UnitRegistry()
    registry.define("rev = revolution")  # as in rev/s and rev/min
    return registry


@functools.lru_cache(maxsize=512)
def _unit(text: str):
    return registry().Unit(text)


def to_si(text: str, unit: str, field: str) -> float:
    """The number that ``text`` (a number and a unit) stands for in the field's unit ``unit``.

    Raises
    ------
    marshmallow.ValidationError
        Text that is not a number and a unit; a unit pint does not know; a unit of another
        dimension (naming the field and both dimensions).
    """
    field = field or "this quantity"
    match = _QUANTITY.match(text) if len(text) <= MAX_LENGTH else None
    if match is None:
        raise ValidationError(f"Not a number, nor a number with a unit such as '30 mm': {text[:MAX_LENGTH]!r}.")
    number, unit_text = match.groups()
    if not unit_text:
        raise ValidationError(f"A number in a string: send {number} as a JSON number, or give its unit.")
    target = PINT_UNITS[unit]
    if unit == "rev min^-1" and re.search(r"\bHz\b|hertz", unit_text):
        raise ValidationError("Hz is ambiguous for a shaft speed (revolutions or radians per second): give rpm, "
                              "rev/s or rad/s.")
    import pint

    try:
        if not _UNIT_TEXT.match(unit_text):
            raise ValueError(unit_text)
        given = _unit(unit_text)
    except Exception:  # noqa: BLE001 - pint's parser raises many kinds for text it cannot read: each is a 422
        raise ValidationError(f"Unknown unit {unit_text!r} in {text!r}.") from None
    wanted = _unit(target)
    if given.dimensionality != wanted.dimensionality:
        raise ValidationError(
            f"{field} is a quantity of dimension {_dimension(wanted)} ({unit}); {text!r} has dimension "
            f"{_dimension(given)}.")
    try:
        value = registry().Quantity(float(number), given).to(wanted).magnitude
    except (pint.errors.PintError, OverflowError, ValueError):
        raise ValidationError(f"{text!r} cannot be converted to {unit}.") from None
    if not math.isfinite(value):
        raise ValidationError("Must be a finite number.")
    return float(value)


def _dimension(unit) -> str:
    text = str(unit.dimensionality)
    return text if text != "dimensionless" else "1 (dimensionless)"


def column_to_si(values: list, unit: str, field: str) -> tuple[list, dict]:
    """A column whose strings are converted (numbers kept), and the errors by position."""
    converted, errors = [], {}
    for position, value in enumerate(values):
        if isinstance(value, str):
            try:
                value = to_si(value, unit, field)
            except ValidationError as error:
                errors[position] = error.messages
        elif type(value) not in (int, float):
            errors[position] = ["Not a number."]
        converted.append(value)
    return converted, errors


# -- answers in US customary units ---------------------------------------------------------------

#: The unit systems an answer may be given in: ``si`` (the default) or ``us``.
SYSTEMS = ("si", "us")
#: The US customary unit of each SI ``x-unit``: (as pint reads it, as written in ``x-unit-us``).
US_UNITS = {
    "-": ("dimensionless", "-"),
    "deg": ("degree", "deg"),
    "m": ("foot", "ft"),
    "m^2": ("foot ** 2", "ft^2"),
    "m s^-1": ("foot / second", "ft s^-1"),
    "K": ("degree_Rankine", "degR"),
    "Pa": ("pound_force / inch ** 2", "lbf in^-2"),
    "W": ("horsepower", "hp"),
    "J kg^-1": ("Btu / pound", "Btu lb^-1"),
    "J kg^-1 K^-1": ("Btu / pound / degree_Rankine", "Btu lb^-1 degR^-1"),
    "kg s^-1": ("pound / second", "lb s^-1"),
    "kg m^-3": ("pound / foot ** 3", "lb ft^-3"),
    "rev min^-1": ("revolution / minute", "rev min^-1"),
    "Pa s": ("pound_force * second / foot ** 2", "lbf s ft^-2"),
}


def us_unit(unit: str) -> str:
    """The ``x-unit-us`` spelling of an SI ``x-unit``."""
    return US_UNITS[unit][1]


@functools.cache
def us_factor(unit: str) -> float:
    """US customary value per SI value of a quantity in ``unit`` (absolute temperatures: K to degR
    is a factor, 1.8, since both scales start at absolute zero)."""
    return float(registry().Quantity(1.0, PINT_UNITS[unit]).to(US_UNITS[unit][0]).magnitude)


OVERFLOW = "a result does not fit a double in US customary units (overflow): check the magnitudes of the inputs"


def _scaled(value, factor: float):
    if value is None:
        return None
    if isinstance(value, list):
        return [_scaled(item, factor) for item in value]
    if hasattr(value, "dtype"):  # a numpy column
        return value * factor if value.dtype.kind == "f" else [_scaled(v, factor) for v in value.tolist()]
    return value * factor


def _overflowed(value) -> bool:
    """Whether a converted value (a number, a list, a column) holds an infinity."""
    if value is None or isinstance(value, str):
        return False
    if isinstance(value, list):
        return any(_overflowed(item) for item in value)
    return bool(np.isinf(np.asarray(value, dtype=float)).any())


def _failed_case(case: dict) -> dict:
    """A case's answer as a failed case's: null outputs, checks without value or status."""
    return {name: ({check: {**entry, "value": None, "status": None} for check, entry in value.items()}
                   if name == "checks" else value if name == "assumed" else None) for name, value in case.items()}


#: Members of an answer beside its outputs.
_NOT_OUTPUTS = ("checks", "assumed")


def answer_in_us(calculation, body: dict) -> dict:
    """An answer (any shape, not streamed) with every output in its US customary unit. Check
    values stay as they are: every rule of thumb judges a dimensionless number. A case whose
    conversion overflows fails as a case (a batch) or as the request (one case), as any output
    that is not finite does. The defaults a case took (``assumed``) are dimensionless or options and
    stay as they are."""
    factors = {name: us_factor(field.metadata["x-unit"]) for name, field in calculation.outputs().fields.items()}
    factors = {name: factor for name, factor in factors.items() if factor != 1.0}
    if "results" in body:
        return _rows_in_us(body, factors)
    if "columns" in body:
        return _columns_in_us(body, factors)
    converted = _converted(body, factors)
    if _case_overflowed(converted):
        from service.api.problems import PHYSICALLY_IMPOSSIBLE, Problem

        raise Problem(422, "Physically impossible case", OVERFLOW, PHYSICALLY_IMPOSSIBLE)
    return converted


def _converted(case: dict, factors: dict[str, float]) -> dict:
    """A case's (or the columns') outputs times their factors; others as they are."""
    with np.errstate(over="ignore"):
        return {name: _scaled(value, factors[name]) if name in factors else value for name, value in case.items()}


def _case_overflowed(case: dict) -> bool:
    return any(_overflowed(value) for name, value in case.items() if name not in _NOT_OUTPUTS)


def _with_overflows(body: dict, failed, **shape) -> dict:
    """``body`` with its answer replaced (``shape``) and one error per failed index, sorted."""
    errors = list(body.get("errors", [])) + [{"index": i, "detail": OVERFLOW} for i in failed]
    return {**body, **shape, "errors": sorted(errors, key=lambda e: e["index"])}


def _rows_in_us(body: dict, factors: dict[str, float]) -> dict:
    """A rows answer converted; a case that overflows fails as a case."""
    results, failed = [], []
    for index, case in enumerate(body["results"]):
        converted = _converted(case, factors) if case is not None else None
        if converted is not None and _case_overflowed(converted):
            converted = _failed_case(case)
            failed.append(index)
        results.append(converted)
    return _with_overflows(body, failed, results=results)


def _columns_in_us(body: dict, factors: dict[str, float]) -> dict:
    """A columns answer converted; the cases that overflow fail as cases (null in every column)."""
    columns = _converted(body["columns"], factors)
    size = max((len(v) for k, v in columns.items() if k not in _NOT_OUTPUTS), default=0)
    failed = sorted({i for k, v in columns.items() if k not in _NOT_OUTPUTS for i in range(size) if _overflowed(v[i])})
    if failed:
        for name, value in list(columns.items()):
            if name not in _NOT_OUTPUTS:
                columns[name] = _nulled(value, failed)
        for entry in columns.get("checks", {}).values():
            for key in ("value", "status"):
                entry[key] = _nulled(entry[key], failed)
    return _with_overflows(body, failed, columns=columns)


def _nulled(column, failed: list[int]) -> list:
    """A column (array or list) as a list, with null at the ``failed`` positions."""
    values = column.tolist() if hasattr(column, "tolist") else list(column)
    return [None if i in failed else v for i, v in enumerate(values)]


def system(value=missing, pointer: str = "/units", parameter: str | None = None) -> str:
    """The unit system asked for: ``si`` (also where none is given) or ``us``.

    Raises
    ------
    Problem
        422 naming the member (or query parameter) for any other value.
    """
    if value is missing:
        return "si"
    if value in SYSTEMS:
        return value
    from service.api.problems import invalid_input

    entry = (pointer, f"Must be one of: {', '.join(SYSTEMS)}.")
    raise invalid_input([entry + ((parameter,) if parameter else ())])
