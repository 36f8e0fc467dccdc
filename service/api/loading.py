"""Loading one block of input (one case, or columns) with a calculation's schema.

Valid input takes a shortcut past marshmallow's per-field bookkeeping (:func:`load_plan`); input
with errors goes through marshmallow, and every error comes back as (JSON Pointer, detail).
"""

from __future__ import annotations

import numpy as np
from marshmallow import ValidationError, missing

from service.api.fields import CaseSchema, Option, Quantity, QuantityList
from service.api.problems import MAX_LISTED_ERRORS, unlisted


def load_plan(schema: CaseSchema):
    """What :func:`_load_valid` needs to load ``schema`` without marshmallow's per-field machinery:
    the service's own fields with their defaults, or None if the schema uses more of marshmallow
    (hooks, validators, renamed keys) than that shortcut reproduces."""
    if any(schema._hooks.values()):
        return None
    plan = []
    for name, f in schema.load_fields.items():
        if (not isinstance(f, Quantity | Option | QuantityList) or f.data_key is not None or f.attribute is not None
                or f.validators or getattr(f, "pre_load", None) or getattr(f, "post_load", None)):
            return None
        plan.append((name, f, f.required, f.load_default, f.allow_none))
    return tuple(plan), frozenset(schema.load_fields)


def _load_valid(plan, raw: dict):
    """``schema.load(raw)`` for valid input, or None where marshmallow would report an error: the
    same fields' own conversions and checks, the same defaults, without marshmallow's per-field
    bookkeeping (which costs more than a whole single case's arithmetic)."""
    fields, names = plan
    if not names.issuperset(raw):
        return None
    loaded = {}
    try:
        for name, f, required, default, allow_none in fields:
            value = raw.get(name, missing)
            if value is missing:
                if required:
                    return None
                if default is not missing:
                    loaded[name] = default() if callable(default) else default
            elif value is None:
                if not allow_none:
                    return None
                loaded[name] = None
            else:
                loaded[name] = f._deserialize(value, name, raw)
    except ValidationError:
        return None
    return loaded


def load(schema: CaseSchema, raw: dict, pointer, plan=None, listed: int = MAX_LISTED_ERRORS):
    """Loaded fields and errors; where loading fails, the valid option values still come back so
    that the choices can be judged too and every offending field is named at once. Unknown
    fields beyond the first ``listed`` are counted, not named."""
    if plan is not None:
        loaded = _load_valid(plan, raw)
        if loaded is not None:
            return loaded, []
    raw, unknown_errors = _without_unknown(schema, raw, pointer, listed)
    try:
        loaded = schema.load(raw)
    except ValidationError as error:
        return _valid_options(schema, raw, error.messages), list(_flatten(error.messages, pointer)) + unknown_errors
    if unknown_errors:
        options = {name: loaded[name] for name in loaded if isinstance(schema.fields.get(name), Option)}
        return options, unknown_errors
    return loaded, []


def _without_unknown(schema: CaseSchema, raw: dict, pointer, listed: int) -> tuple[dict, list]:
    """``raw`` without its unknown fields, and an error for each (the first ``listed`` named).

    Unknown fields are reported here rather than by marshmallow, which builds a message for each
    through several layers (thousands of them took seconds); past ``listed`` they are only
    counted, so that refusing them costs one pass over the keys.
    """
    known = {f.data_key or name for name, f in schema.load_fields.items()}
    if known >= raw.keys():
        return raw, []
    unknown = [name for name in raw if name not in known]
    errors = []
    for name in unknown[:listed]:
        pointers = pointer(name if name != "" else _EMPTY_NAME, ())
        errors += [(one, "Unknown field.") for one in ([pointers] if isinstance(pointers, str) else pointers)]
    if len(unknown) > listed:
        errors.append(unlisted((len(unknown) - listed) * _pointer_count(pointer)))
    return {name: value for name, value in raw.items() if name in known}, errors


def _valid_options(schema: CaseSchema, raw: dict, messages: dict) -> dict:
    """The option values that loaded (a string, or a list of strings in columns), without errors."""
    options = {}
    for name, f in schema.fields.items():
        if not isinstance(f, Option) or name in messages:
            continue
        value = raw.get(name, f.load_default)
        if isinstance(value, str):
            options[name] = value
        elif isinstance(value, list) and all(isinstance(v, str) for v in value):
            options[name] = np.asarray(value, dtype=str)
    return options


def _pointer_count(pointer) -> int:
    """How many cases a message about a whole field concerns (rows: every row of a block)."""
    pointers = pointer("", ())
    return 1 if isinstance(pointers, str) else len(pointers)


class _EmptyName:
    """A field named "" (pointer "/"), which join_pointer would otherwise drop as "no field" (pointer "")."""

    def __str__(self) -> str:
        return ""


_EMPTY_NAME = _EmptyName()


def _flatten(messages, pointer, path=()):
    """Marshmallow's nested messages -> (JSON Pointer, detail) pairs."""
    if isinstance(messages, dict):
        for key, value in messages.items():
            if key == "_schema":
                key = None
            elif key == "":
                key = _EMPTY_NAME
            yield from _flatten(value, pointer, path + ((key,) if key is not None else ()))
    else:
        for message in messages:
            pointers = pointer(path[0] if path else "", path[1:])
            for one in [pointers] if isinstance(pointers, str) else pointers:
                yield one, message


def join_pointer(prefix: str, *parts) -> str:
    escaped = (str(p).replace("~", "~0").replace("/", "~1") for p in parts if p != "")
    return "/".join([prefix, *escaped]) if parts else prefix
