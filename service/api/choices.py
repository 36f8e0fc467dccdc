"""Which alternative of each choice a group of cases takes: option values split the group, the
fields given pick the alternatives, one choice at a time."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from service.api.declarations import Alternative, Calculation, Choice
    from service.api.shapes import Group


#: At most this many resolutions (fields given, option values) are remembered per calculation.
MAX_RESOLVED = 1024


def split_by_options(calculation: Calculation, group: Group):
    """Yield (positions, options, data) for each combination of option values in a group."""
    size = len(group.index)
    per_case = {name: group.data[name] for name in calculation.option_fields
                if isinstance(group.data.get(name), np.ndarray) and len(group.data[name]) == size}
    fixed = {name: group.data[name] for name in calculation.option_fields
             if name in group.data and name not in per_case}
    if not per_case:
        yield np.arange(size), fixed, group.data
        return
    if all((v == v[0]).all() for v in per_case.values()):  # one value for every case: no sort needed
        options = {**fixed, **{name: str(v[0]) for name, v in per_case.items()}}
        yield np.arange(size), options, {**group.data, **options}
        return
    combined = np.stack([np.broadcast_to(v, (size,)) for v in per_case.values()], axis=1)
    keys, inverse = np.unique(combined, axis=0, return_inverse=True)
    for code, key in enumerate(keys):
        positions = np.flatnonzero(inverse.ravel() == code)
        options = {**fixed, **dict(zip(per_case, (str(k) for k in key), strict=True))}
        yield positions, options, {**_cases_at(group.data, positions, size), **options}


def _cases_at(data: dict, positions: np.ndarray, size: int) -> dict:
    """Every per-case array of ``data`` at ``positions``; values shared by all cases as they are."""
    return {name: (value[positions] if isinstance(value, np.ndarray) and value.ndim and len(value) == size
                   else value)
            for name, value in data.items()}


def resolve_choices(calculation: Calculation, group: Group, options: dict, positions: np.ndarray):
    """The alternative taken in every choice, as ``({choice: Alternative}, [])``, or ``(None, errors)``
    with every missing or inapplicable field named by JSON Pointer.

    A resolution depends only on the fields given and the option values: each one that succeeds is
    kept, so that a case of a known form is not judged again.
    """
    key = (group.present, tuple(sorted(options.items()))) if all(
        type(v) is str for v in options.values()) else None
    known = calculation._resolved.get(key) if key is not None else None
    if known is not None:
        return known, []
    errors = _pairing_errors(calculation, group, positions)
    if not calculation.restricting_options <= set(options):
        return None, errors  # an option is missing or invalid: its own error says so
    taken, choice_errors = _taken(calculation, group, options, positions)
    errors += choice_errors or _unmet_needs(calculation, taken, group, options, positions)
    if errors:
        return None, errors
    if key is not None and len(calculation._resolved) < MAX_RESOLVED:
        calculation._resolved[key] = taken
    return taken, []


def _taken(calculation: Calculation, group: Group, options: dict, positions: np.ndarray) -> tuple[dict, list]:
    """The alternative each choice takes (None where it takes none), and the errors of those that don't."""
    taken, errors = {}, []
    defaulted = frozenset(name for name in calculation.defaults if calculation.default(name, options))
    for choice in calculation.choices:
        taken[choice.name], choice_errors = _resolve(choice, group.present, defaulted, options, group, positions)
        errors += choice_errors
    return taken, errors


def _pairing_errors(calculation: Calculation, group: Group, positions: np.ndarray) -> list:
    """Fields declared to come together, or one only with another, where the request breaks that."""
    present, errors = group.present, []
    for fields in calculation.together:
        given = [f for f in fields if f in present]
        if given and len(given) < len(fields):
            errors += [(p, f"Required together with {', '.join(given)}.")
                       for f in fields if f not in present for p in group.case_pointers(f, positions)]
    for field_name, needed in calculation.requires:
        if field_name in present and needed not in present:
            errors += [(p, f"Required with {field_name}.") for p in group.case_pointers(needed, positions)]
    return errors


def _resolve(choice: Choice, present: frozenset, defaulted: frozenset, options: dict, group: Group,
             positions: np.ndarray):
    """The one alternative of ``choice`` that the fields given and the options pick, or the errors.
    A field with a default counts as given; among alternatives so complete, the one that needs the
    fewest defaults is taken."""
    scored = _scored(choice, present, defaulted, options)
    matches = [(assumed, alternative) for score, alternative, _, _, assumed in scored if score == 0]
    fewest_assumed = min((assumed for assumed, _ in matches), default=0)
    matches = [alternative for assumed, alternative in matches if assumed == fewest_assumed]
    if len(matches) == 1:
        return matches[0], []
    if matches:  # a declaration whose alternatives overlap: a bug of this service, not of the request
        raise ValueError(f"alternatives {[a.value for a in matches]} of {choice.name!r} both take {sorted(present)}")
    if not scored:
        return None, _no_alternative(choice, options, group, positions)
    # Among the nearest alternatives, the one that takes the fields given: a field given shows the intent.
    fewest = min(item[0] for item in scored)
    _, _, missing, extra, _ = min(scored, key=lambda item: (item[0], len(item[3])))
    alternatives = "; or ".join(item[1].description for item in scored if item[0] == fewest)
    errors = _pointed(missing, f"Missing data for required field. Give {alternatives}.", group, positions)
    errors += _pointed(extra, f"Does not apply here. Give {alternatives}.", group, positions)
    return None, errors


def _scored(choice: Choice, present: frozenset, defaulted: frozenset, options: dict) -> list[tuple]:
    """(missing + surplus fields, alternative, missing, surplus, defaults it needs) of every
    alternative the options allow."""
    given = present & choice.fields
    scored = []
    for alternative in (a for a in choice.alternatives if a.applies(options)):
        absent = [f for f in alternative.required if f not in present]
        missing = [f for f in absent if f not in defaulted]
        extra = sorted(given - set(alternative.fields))
        scored.append((len(missing) + len(extra), alternative, missing, extra, len(absent) - len(missing)))
    return scored


def _no_alternative(choice: Choice, options: dict, group: Group, positions: np.ndarray) -> list:
    restricting = sorted({name for a in choice.alternatives for name in a.when})
    detail = ("No way to give the " + choice.description + " with these options together: "
              + ", ".join(f"{name} {options[name]!r}" for name in restricting) + ".")
    return _pointed(restricting or [""], detail, group, positions)


def _pointed(fields, detail: str, group: Group, positions: np.ndarray) -> list:
    """``(pointer, detail)`` for each field at each case of the group."""
    return [(p, detail) for f in fields for p in group.case_pointers(f, positions)]


def _unmet_needs(calculation: Calculation, taken: dict[str, Alternative], group: Group, options: dict,
                 positions: np.ndarray) -> list:
    """Errors where an alternative needs an alternative of another choice that was not taken. The
    nearest way out is named: the missing fields of a needed alternative, or of another alternative
    of the same choice that takes the fields given and needs nothing missing."""
    errors = []
    for choice in calculation.choices:
        alternative = taken[choice.name]
        unmet = {other: values for other, values in alternative.needs.items() if taken[other].value not in values}
        if not unmet:
            continue
        ways = [a for a in _ways_out(calculation, choice, alternative, unmet, taken, group.present)
                if a.applies(options)]
        nearest = min(ways, key=lambda a: sum(f not in group.present for f in a.required))
        detail = ("Missing data for required field. Give " + "; or ".join(a.description for a in ways)
                  + f" (with {alternative.description}).")
        errors += _pointed([f for f in nearest.required if f not in group.present], detail, group, positions)
    return errors


def _ways_out(calculation: Calculation, choice: Choice, alternative: Alternative, unmet: dict,
              taken: dict[str, Alternative], present: frozenset) -> list[Alternative]:
    """The alternatives that would meet an unmet need: those needed, or a sibling that takes the
    fields given and has its own needs met."""
    ways = [calculation.choice(other).alternative(v) for other, values in unmet.items() for v in values]
    given = present & choice.fields
    for sibling in choice.alternatives:
        if sibling is not alternative and given <= set(sibling.fields) and all(
                taken[other].value in values for other, values in sibling.needs.items()):
            ways.append(sibling)
    return ways




def assumed_values(calculation: Calculation, taken: dict[str, Alternative], options: dict, present: frozenset,
                   data: dict) -> tuple[dict, dict]:
    """The inputs with the declared defaults filled in, and every default the cases take: the
    declared ones, and the fields' own (options included) where the taken alternatives allow them.
    Nothing is assumed for a calculation that declares no defaults."""
    if not calculation.defaults:
        return data, {}
    allowed = calculation.allowed_fields_of(taken)
    assumed, filled = {}, dict(data)
    for name in calculation._case_schema.fields:
        if name in present or name not in allowed:
            continue
        default = calculation.default(name, options)
        if default is not None:
            assumed[name] = filled[name] = default.value
        elif data.get(name) is not None:
            assumed[name] = data[name]  # the field's own default, loaded with the case
    return filled, assumed
