"""The request schemas of the OpenAPI document, written from the calculations' choices, and the
``assumed`` member of an answer, written from their defaults (see :mod:`service.api.declarations`).

One object of every field; each choice one small ``oneOf`` of its alternatives, each alternative
saying which fields it requires, which it keeps out, and the option values it applies to.
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
    constraints += [need for choice in calculation.choices for alternative in choice.alternatives
                    for need in _needs_schemas(calculation, choice, alternative)]
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
    """The alternative's own fields required, the other alternatives' fields absent and the option
    values it applies to."""
    schema = {"title": alternative.value}
    required = list(alternative.required)
    if alternative.when:
        fields = calculation._case_schema.fields
        schema["properties"] = {option: {"enum": list(values)} for option, values in alternative.when.items()}
        required += [option for option, values in alternative.when.items() if fields[option].load_default not in values]
    if required:
        schema["required"] = required
    absent = _none_of(sorted(choice.fields - set(alternative.fields)))
    if absent:
        schema["not"] = absent
    return schema


def _none_of(names: list[str]) -> dict:
    """The schema ``not`` takes to keep every one of ``names`` out of an object."""
    if len(names) == 1:
        return {"required": names}
    return {"anyOf": [{"required": [name]} for name in names]} if names else {}


def _needs_schemas(calculation: Calculation, choice: Choice, alternative: Alternative) -> list[dict]:
    """Where an alternative is taken, one of the alternatives it needs of another choice is too."""
    schemas = []
    for other_name, values in alternative.needs.items():
        other = calculation.choice(other_name)
        condition = {"required": list(alternative.required)}
        absent = _none_of(sorted(choice.fields - set(alternative.fields)))
        if absent:
            condition["not"] = absent
        wanted = [{"required": list(other.alternative(v).required)} for v in values]
        schemas.append({"if": condition, "then": {
            "description": f"{alternative.value} needs {other_name} " + " or ".join(values) + ".",
            **(wanted[0] if len(wanted) == 1 else {"anyOf": wanted})}})
    return schemas


def assumed_schema(calculation: Calculation, columns: bool = False) -> dict:
    """The ``assumed`` member of a calculation that declares defaults: each default a case took."""
    if not calculation.defaults:
        return {}
    value = {"type": ["number", "string"]}
    described = "; ".join(
        f"{name}: " + ", ".join(f"{d.value:g}" + (f" ({', '.join(v for vs in d.when.values() for v in vs)})"
                                                   if d.when else "") for d in defaults)
        for name, defaults in calculation.defaults.items())
    return {"assumed": {
        "type": "object", "additionalProperties": {"oneOf": [value, {"type": "array", "items": {
            "type": ["number", "string", "null"]}}]}
        if columns else value,
        "description": ("Every default the case took for a field it left out: the declared ones (" + described
                        + "; each common practice, see the field's description), the fields' own defaults and "
                        "the options'. In columns: one value where every case took the same, else one per case "
                        "(null where a case gave the field).")}}
