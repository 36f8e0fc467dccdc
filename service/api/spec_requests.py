"""The request schemas of the OpenAPI document, written from the calculations' choices, and the
``assumed`` member of an answer, written from their defaults (see :mod:`service.api.declarations`).

One object of every field; each choice one small ``oneOf`` of its alternatives, each alternative
saying which fields it requires, which it keeps out, the option values it applies to and what it
needs of the other choices.
"""

from __future__ import annotations

from collections.abc import Callable

from service.api.declarations import Alternative, Calculation, Choice


def request_schema(calculation: Calculation, field_ref: Callable[[str], dict]) -> dict:
    """The one-case object of every field, with one small ``oneOf`` per choice (``allOf`` of them)."""
    schema = calculation._case_schema
    body = {"type": "object",
            "properties": {name: field_ref(name) for name in schema.fields},
            "required": [name for name, f in schema.fields.items() if f.required], "additionalProperties": False}
    constraints = [_choice_schema(calculation, choice) for choice in calculation.choices]
    if constraints:
        body["allOf"] = constraints
    dependent = _dependent_required(calculation)
    if dependent:
        body["dependentRequired"] = dependent
    return body


def _dependent_required(calculation: Calculation) -> dict[str, list[str]]:
    """Fields given together, and fields given only with another."""
    dependent = {f: [g for g in group if g != f] for group in calculation.together for f in group}
    for field_name, needed in calculation.requires:
        dependent.setdefault(field_name, []).append(needed)
    return dependent


def _choice_schema(calculation: Calculation, choice: Choice) -> dict:
    return {"description": f"`{choice.name}`: {choice.description}; give exactly one of these.",
            "oneOf": [_alternative_schema(calculation, choice, alternative)
                      for alternative in choice.alternatives]}


def _alternative_schema(calculation: Calculation, choice: Choice, alternative: Alternative) -> dict:
    """The alternative's own fields required (but those a default fills), the other alternatives'
    fields absent (not among the case's property names), the option values it applies to and the
    alternatives of other choices it needs. An alternative taken on its defaults is also kept from
    the cases that another alternative takes on its option values alone (as the service prefers the
    alternative that needs the fewest defaults)."""
    schema = {"title": alternative.value, **_option_marker(calculation, alternative)}
    required = _required(calculation, alternative) + schema.pop("required", [])
    if required:
        schema["required"] = required
    others = sorted(choice.fields - set(alternative.fields))
    if others:
        schema["propertyNames"] = {"not": {"enum": others}}
    defaulted = [name for name in alternative.required if name not in required]
    if defaulted:
        # Taken on its defaults only where they are left out: given, they are the alternative's own.
        preferred = [{**_option_marker(calculation, other), "not": _none_of(defaulted)}
                     for other in choice.alternatives
                     if other is not alternative and other.when and set(other.required) <= set(alternative.fields)
                     and not _disjoint(other.when, alternative.when)]
        if preferred:
            schema["not"] = _any_of(preferred)
    needs = _needs_schemas(calculation, alternative)
    if needs:
        schema["allOf"] = needs
    return schema


def _required(calculation: Calculation, alternative: Alternative) -> list[str]:
    """The alternative's required fields but those a default fills wherever the alternative applies."""
    return [name for name in alternative.required if not _defaulted(calculation, name, alternative.when)]


def _defaulted(calculation: Calculation, name: str, when) -> bool:
    defaults = calculation.defaults.get(name, ())
    if any(not default.when for default in defaults):
        return True
    fields = calculation._case_schema.fields
    options = {option for default in defaults for option in default.when}
    return bool(defaults) and all(
        set(when.get(option, fields[option].choices)) <= {v for d in defaults for v in d.when.get(option, ())}
        for option in options)


def _options_required(calculation: Calculation, when) -> list[str]:
    """The options an alternative's values ask for that their own defaults do not give."""
    fields = calculation._case_schema.fields
    return [option for option, values in when.items() if fields[option].load_default not in values]


def _option_marker(calculation: Calculation, alternative: Alternative) -> dict:
    """The schema of the cases whose option values pick ``alternative`` (empty if it has none)."""
    if not alternative.when:
        return {}
    marker = {"properties": {option: {"enum": list(values)} for option, values in alternative.when.items()}}
    required = _options_required(calculation, alternative.when)
    return {**marker, "required": required} if required else marker


def _disjoint(when: dict, other: dict) -> bool:
    return any(not set(values) & set(other[option]) for option, values in when.items() if option in other)


def _none_of(names: list[str]) -> dict:
    """The schema ``not`` takes to keep every one of ``names`` out of an object."""
    return _any_of([{"required": [name]} for name in names]) if names else {}


def _any_of(schemas: list[dict]) -> dict:
    return schemas[0] if len(schemas) == 1 else {"anyOf": schemas}


def _needs_schemas(calculation: Calculation, alternative: Alternative) -> list[dict]:
    """One of the alternatives of another choice that ``alternative`` needs, for each such choice."""
    schemas = []
    for other_name, values in alternative.needs.items():
        other = calculation.choice(other_name)
        wanted = [{"required": _required(calculation, other.alternative(v))} for v in values]
        schemas.append({"description": f"{alternative.value} needs {other_name} " + " or ".join(values) + ".",
                        **_any_of(wanted)})
    return schemas


def assumed_schema(calculation: Calculation, columns: bool = False) -> dict:
    """The ``assumed`` member of a calculation that declares defaults: each default a case took."""
    if not calculation.defaults:
        return {}
    value = {"type": ["number", "string"]}
    if columns:
        # The defaults are listed once, in the one-case result.
        return {"assumed": {"type": "object", "additionalProperties": {"oneOf": [value, {
            "type": "array", "items": {"type": ["number", "string", "null"]}}]}, "description": (
            "The one-case result's `assumed` of the cases: each default one value where every case took the same, "
            "else one per case (null where a case gave the field).")}}
    return {"assumed": {"type": "object", "additionalProperties": value, "description": (
        "Every default the case took for a field it left out: the declared ones (" + ", ".join(calculation.defaults)
        + "; each common practice, its value in the field's description), the fields' own defaults and the "
        "options'.")}}
