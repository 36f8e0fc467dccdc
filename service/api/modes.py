"""Which input mode a group of cases is in: the option values split it, the fields given pick the mode."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from service.api.declarations import Calculation
    from service.api.shapes import Group


#: At most this many resolved input forms are remembered per calculation.
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
        data = {name: (value[positions] if isinstance(value, np.ndarray) and value.ndim and
                       len(value) == size else value)
                for name, value in group.data.items()}
        data.update(options)
        yield positions, options, data


def resolve_mode(calculation: Calculation, group: Group, options: dict, positions: np.ndarray):
    # A resolution depends only on the fields given and the option values: each one that
    # succeeds is kept, so that a case of a known form is not scored against every mode again.
    key = (group.present, tuple(sorted(options.items()))) if all(
        type(v) is str for v in options.values()) else None
    known = calculation._resolved.get(key) if key is not None else None
    if known is not None:
        return known, []
    present = group.present
    errors = []
    for fields in calculation.together:
        given = [f for f in fields if f in present]
        if given and len(given) < len(fields):
            errors += [(p, f"Required together with {', '.join(given)}.")
                       for f in fields if f not in present for p in group.case_pointers(f, positions)]
    for field_name, needed in calculation.requires:
        if field_name in present and needed not in present:
            errors += [(p, f"Required with {field_name}.") for p in group.case_pointers(needed, positions)]
    if any(name not in options for mode in calculation.modes for name in mode.when):
        return None, errors  # an option is missing or invalid: its own error says so, modes cannot be judged
    candidates = [m for m in calculation.modes if m.applies(options)]
    scored = []
    for mode in candidates:
        missing = [f for f in mode.required if f not in present]
        extra = sorted((present & calculation.mode_fields) - calculation.allowed_fields(mode))
        scored.append((len(missing) + len(extra), mode, missing, extra))
    matches = [mode for score, mode, _, _ in scored if score == 0]
    if len(matches) == 1 and not errors:
        if key is not None and len(calculation._resolved) < MAX_RESOLVED:
            calculation._resolved[key] = matches[0]
        return matches[0], []
    if len(matches) == 1:
        return None, errors
    if not scored:
        if {name for m in calculation.modes for name in m.when} - set(options):
            return None, errors  # an option that failed to load; its own error names it
        # The options themselves are valid but no input form takes them together: name them.
        restricting = sorted({name for m in calculation.modes for name in m.when} & set(options))
        detail = ("No way to compute this case with these options together: "
                  + ", ".join(f"{name} {options[name]!r}" for name in restricting) + ".")
        return None, errors + [(p, detail) for name in (restricting or [""])
                               for p in group.case_pointers(name, positions)]
    # Among the nearest modes, the one that takes the fields given: a field given shows the intent.
    _, best, missing, extra = min(scored, key=lambda item: (item[0], len(item[3])))
    fewest = min(score for score, *_ in scored)
    nearest = [mode for score, mode, _, _ in scored if score == fewest]
    alternatives = "; or ".join(m.description for m in nearest)
    errors += [(p, f"Missing data for required field. Give {alternatives}.")
               for f in missing for p in group.case_pointers(f, positions)]
    errors += [(p, f"Does not apply here. Give {alternatives}.")
               for f in extra for p in group.case_pointers(f, positions)]
    return None, errors
