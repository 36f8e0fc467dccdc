"""The GET form of a one-case calculation, for spreadsheet cells and plain URLs.

``GET /v1/<calculation>?machine=compressor&flow_coefficient=0.5&...&output=alpha1``

- The query holds the fields of a one-case JSON body, one parameter each. A value that is a JSON
  number (``0.5``, ``-3``, ``1e-05``) is that number; any other value is the string it spells (an
  option such as ``compressor``, or a quantity with its unit such as ``30 mm``).
- A list (``weights``, a per-stage value) is given comma-separated (``weights=1,2,1``), as
  repeated parameters (``weights=1&weights=2&weights=1``), or both. Any other field is given once.
- ``output`` selects outputs and checks (see :mod:`service.api.outputs`), comma-separated or
  repeated. With exactly one name the answer is ``text/plain`` holding that one value (a list as
  its values separated by commas), so that a spreadsheet's WEBSERVICE returns it; with several,
  or without ``output``, the JSON answer of one case.
- ``api_key``: the API key, only where the operator allows keys in the query
  (``MEANLINE_API_KEYS_IN_QUERY=1``); anywhere else a request that carries it is refused (400).

The case is validated and computed by the one mechanism (:func:`calculation.run_calculation`)
exactly as its JSON body would be. Each entry of a 422's ``errors`` keeps the JSON Pointer into
that equivalent body (``/flow_coefficient``, ``/weights/2``, ``/outputs/0``) and adds
``parameter``, the query parameter at fault (the pointer's first segment; ``output`` for the
selection).
"""

from __future__ import annotations

import re

from flask import current_app, request

from service.api import outputs
from service.api.fields import Quantity, QuantityList, QuantityPerStage
from service.api.problems import INVALID_INPUT, Problem, invalid_input

OUTPUT = outputs.QUERY_PARAMETER
API_KEY = "api_key"
UNITS = "units"
#: A JSON number, and nothing else (no nan, inf, hex, underscores or spaces as Python's float takes).
_NUMBER = re.compile(r"-?(?:0|[1-9][0-9]*)(?:\.[0-9]+)?(?:[eE][-+]?[0-9]+)?\Z")
_INTEGER = re.compile(r"-?(?:0|[1-9][0-9]*)\Z")


def number_or_text(text: str):
    """A JSON number as the JSON parser reads it (an integer literal of more than 18 digits as a
    float), else the text itself."""
    stripped = text.strip()
    if _INTEGER.match(stripped) and len(stripped) <= 18:
        return int(stripped)
    if _NUMBER.match(stripped):
        return float(stripped)
    return text


def typed_value(field, texts: list[str]):
    """The JSON value that the texts of one field stand for, by the field's kind: a list field's
    texts split at commas into numbers, a quantity's one text a number (or a unit string), an
    option's (or an unknown field's) one text as it is."""
    if isinstance(field, QuantityList):
        items = [number_or_text(part) for text in texts for part in text.split(",")]
        if isinstance(field, QuantityPerStage) and len(items) == 1:
            return items[0]  # one value for every stage
        return items
    if isinstance(field, Quantity):
        return number_or_text(texts[0])
    return texts[0]


def case_from_query(calculation, args) -> tuple[dict, list[str] | None]:
    """The one-case body and the output names (None if not given) of a query string.

    Raises
    ------
    Problem
        422 naming every parameter given more than once where one value is taken.
    """
    fields = calculation._case_schema.fields
    payload, names, errors = {}, None, []
    for key in dict.fromkeys(args.keys()):
        values = args.getlist(key)
        if key == OUTPUT:
            names = [name for value in values for name in value.split(",")]
        elif key in (API_KEY, UNITS):
            continue  # access control reads the key (where allowed), the view the unit system: no inputs
        elif len(values) > 1 and not isinstance(fields.get(key), QuantityList):
            errors.append((f"/{_escape(key)}", f"Given {len(values)} times: give {key} once.", key))
        else:
            payload[key] = typed_value(fields.get(key), values)
    if errors:
        raise invalid_input(errors)
    return payload, names


def with_parameters(problem: Problem) -> Problem:
    """A problem of the equivalent JSON body, with the query parameter named in each entry."""
    if problem.type == INVALID_INPUT or problem.errors:
        problem.errors = [entry if len(entry) > 2 else (*entry, _parameter(entry[0])) for entry in problem.errors]
    return problem


def _parameter(pointer: str) -> str:
    first = pointer.split("/")[1] if pointer.count("/") else ""
    first = first.replace("~1", "/").replace("~0", "~")
    return OUTPUT if first == outputs.BODY_MEMBER else first


def _escape(key: str) -> str:
    return key.replace("~", "~0").replace("/", "~1")


def check_api_key_parameter() -> None:
    """Refuse a key in the query where the operator has not allowed it (before access control,
    so that the caller learns why rather than getting a 401)."""
    if API_KEY in request.args and not current_app.config.get("API_KEYS_IN_QUERY"):
        raise Problem(400, "API key in the query not allowed",
                      "This server takes API keys only in the X-API-Key header or as Authorization: Bearer: a "
                      "key in a URL is seen by proxies, browser histories and server logs. Remove the api_key "
                      "parameter (and replace a key that has been sent this way).", INVALID_INPUT,
                      [("", "Not allowed on this server.", API_KEY)])


def query_keys() -> list[str]:
    """The key of a request's ``api_key`` parameter, where the operator allows keys in the query."""
    if current_app.config.get("API_KEYS_IN_QUERY"):
        key = request.args.get(API_KEY, "").strip()
        return [key] if key else []
    return []


def text_of(value) -> str:
    """One value as the text of a ``text/plain`` answer: a number as the shortest text that reads
    back as the same double, a list as its values separated by commas, a missing value empty."""
    if isinstance(value, list):
        return ",".join(text_of(item) for item in value)
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)
    return str(value)
