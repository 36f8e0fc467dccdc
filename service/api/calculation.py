"""The one mechanism that every calculation endpoint runs through.

A :class:`Calculation` declares its input schema, its input modes, its outputs and the core
function that computes a batch. :func:`run_calculation` then handles the three request
shapes (one case, rows, columns), validation with JSON Pointers, grouping of cases that share
options and a mode, the vectorised core call per group, per-case failures and the response
layout, identically for every endpoint.
"""

from __future__ import annotations

import gc
import math
from collections.abc import Callable, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from itertools import chain
from operator import itemgetter
from typing import Any

import numpy as np
import orjson
from marshmallow import Schema, ValidationError, missing

from service.api import memory, outputs
from service.api.fields import CaseSchema, Option, Quantity, QuantityList
from service.api.problems import MAX_LISTED_ERRORS, PHYSICALLY_IMPOSSIBLE, Problem, invalid_input, unlisted
from service.api.rowstext import RowsText
from service.core.cases import CaseResults, reason_texts
from service.core.checks import STATUSES

NOT_FINITE = "the result is not a finite number (overflow): check the magnitudes of the inputs"
MAX_WHOLE_OUTPUT = 2**53 - 1
#: At most this many resolved input forms are remembered per calculation.
_MAX_RESOLVED = 1024


@dataclass(frozen=True)
class Mode:
    """One way of specifying a case: the fields it needs and the options it applies to.

    Parameters
    ----------
    name : str
        Short name, used in the OpenAPI component names.
    description : str
        What the caller gives in this mode, in words.
    required, optional : tuple of str
        Fields this mode needs, and fields only this mode accepts.
    when : mapping of str to tuple of str
        Option values this mode applies to, e.g. ``{"machine": ("compressor",)}``.
    """

    name: str
    description: str
    required: tuple[str, ...]
    optional: tuple[str, ...] = ()
    when: Mapping[str, tuple[str, ...]] = field(default_factory=dict)

    def applies(self, options: Mapping[str, str]) -> bool:
        return all(options.get(name) in values for name, values in self.when.items())

    def includes(self, part: str) -> bool:
        """Whether this mode is, or was combined from, the mode named ``part``."""
        return part in self.name.split("With")


def combine_modes(*dimensions: tuple[Mode, ...]) -> tuple[Mode, ...]:
    """Every combination of one mode from each dimension, e.g. (how the pitch is given) x
    (how the chord is given) x (which definition), as single modes named ``AWithBWithC``."""
    combined = [Mode("", "", ())]
    for dimension in dimensions:
        combined = [
            Mode(
                name=f"{a.name}With{b.name}" if a.name else b.name,
                description=f"{a.description}, with {b.description}" if a.description else b.description,
                required=a.required + b.required,
                optional=a.optional + b.optional,
                when={**a.when, **b.when},
            )
            for a in combined for b in dimension
            if all(a.when.get(k, v) == v for k, v in b.when.items())
        ]
    return tuple(combined)


@dataclass(frozen=True)
class Calculation:
    """A calculation endpoint, ``POST /v1/<name>``.

    Parameters
    ----------
    name : str
        URL segment and OpenAPI tag.
    summary, description : str
        For the OpenAPI document.
    schema : type of CaseSchema
        Every input field.
    outputs : type of Schema
        Every output field, for the documentation and for integer formatting.
    modes : tuple of Mode
        The ways of specifying a case; fields named by no mode are accepted in every mode.
    compute : callable
        ``compute(mode, options, inputs) -> CaseResults`` with ``inputs`` arrays of one length.
    together : tuple of tuple of str
        Fields that are given all together or not at all.
    requires : tuple of (str, str)
        ``(field, needed)``: ``field`` may be given only with ``needed`` (not the other way round).
    """

    name: str
    summary: str
    description: str
    schema: type[CaseSchema]
    outputs: type[Schema]
    modes: tuple[Mode, ...]
    compute: Callable[[Mode, dict[str, str], dict[str, Any]], CaseResults]
    together: tuple[tuple[str, ...], ...] = ()
    requires: tuple[tuple[str, str], ...] = ()
    columns: bool = True  # whether the columns request shape is offered
    # ``render_svg(payload, body) -> str``: a drawing of one case, answered for ``Accept: image/svg+xml``.
    render_svg: Callable[[dict, dict], str] | None = None

    def __post_init__(self):
        declared = set(self.schema().fields)
        for mode in self.modes:
            unknown = (set(mode.required) | set(mode.optional) | set(mode.when)) - declared
            if unknown:
                raise ValueError(f"mode {mode.name!r} of {self.name!r} names undeclared fields {sorted(unknown)}")
        # Built once: schema instances, field lookups and mode sets serve every request.
        case_schema, columns_schema = self.schema(), self.schema(columns=True)
        mode_fields = frozenset(f for mode in self.modes for f in (*mode.required, *mode.optional))
        built = {
            "_case_schema": case_schema,
            "_columns_schema": columns_schema,
            "_integer_outputs": frozenset(
                name for name, f in self.outputs().fields.items() if type(f).__name__ == "Integer"),
            "_mode_fields": mode_fields,
            "_option_fields": tuple(name for name, f in case_schema.fields.items() if isinstance(f, Option)),
            "_allowed": {mode.name: frozenset((set(case_schema.fields) - mode_fields) | set(mode.required)
                                              | set(mode.optional)) for mode in self.modes},
            "_plans": {id(case_schema): _load_plan(case_schema), id(columns_schema): _load_plan(columns_schema)},
            "_resolved": {},  # (fields given, option values) -> the one mode they resolve to
        }
        for name, value in built.items():
            object.__setattr__(self, name, value)

    @property
    def path(self) -> str:
        return f"/v1/{self.name}"

    @property
    def mode_fields(self) -> frozenset[str]:
        return self._mode_fields

    @property
    def option_fields(self) -> tuple[str, ...]:
        return self._option_fields

    def allowed_fields(self, mode: Mode) -> frozenset[str]:
        allowed = self._allowed.get(mode.name)
        if allowed is None:  # a mode that is not one of this calculation's
            allowed = frozenset((set(self._case_schema.fields) - self._mode_fields) | set(mode.required)
                                | set(mode.optional))
        return allowed


@dataclass
class _Group:
    """Cases that were given the same fields: loaded columns and where they came from."""

    data: dict[str, Any]
    present: frozenset[str]
    index: np.ndarray  # positions of these cases in the whole request
    pointer: Callable[[str, tuple], str]  # (field, path below it) -> JSON Pointer
    case_pointers: Callable[[str, np.ndarray], list[str]]  # (field, positions) -> pointers


@dataclass
class _Outcome:
    index: np.ndarray
    values: dict[str, np.ndarray]
    checks: dict[str, Any]
    reason: np.ndarray  # per case: 0 where it succeeded, else 1 + its position in ``reasons``
    reasons: list[str | None]  # None for a reason with a number per case: its texts come later in the list

    def errors(self) -> list[dict]:
        """``{"index", "detail"}`` of every failed case, found with numpy rather than a loop."""
        failed = np.flatnonzero(self.reason)
        return [{"index": i, "detail": self.reasons[k - 1]}
                for i, k in zip(self.index[failed].tolist(), self.reason[failed].tolist(), strict=True)]


class ErrorsText:
    """The ``errors`` of a batch answer, written as JSON text a slice of cases at a time.

    The same bytes as ``orjson.dumps`` of the list of ``{"index", "detail"}`` of every failed
    case in index order (see :meth:`_Outcome.errors`), without a dict per case: the indices are
    an array, each detail is written once, and a slice of cases is one join.
    """

    CASES_PER_PIECE = 4_096

    def __init__(self, outcomes: list[_Outcome]):
        indices, details, texts = [], [], []
        for outcome in outcomes:
            failed = np.flatnonzero(outcome.reason)
            indices.append(outcome.index[failed])
            details.append(outcome.reason[failed] - 1 + len(texts))
            texts += outcome.reasons
        self.index = np.concatenate(indices) if indices else np.zeros(0, dtype=np.intp)
        self.detail = np.concatenate(details) if details else np.zeros(0, dtype=np.intp)
        if len(outcomes) > 1:
            order = np.argsort(self.index, kind="stable")
            self.index, self.detail = self.index[order], self.detail[order]
        # Each detail's JSON text (a reason that no case reports has none).
        self.texts = [orjson.dumps(text) if text is not None else None for text in texts]

    def __len__(self) -> int:
        return len(self.index)

    def json_pieces(self):
        if not len(self):
            yield b"[]"
            return
        for start in range(0, len(self), self.CASES_PER_PIECE):
            stop = min(start + self.CASES_PER_PIECE, len(self))
            # Each case's texts in one list, the index and the detail filled in by slice.
            parts = [b'{"index":', b"", b',"detail":', b"", b"},"] * (stop - start)
            parts[1::5] = orjson.dumps(self.index[start:stop], option=orjson.OPT_SERIALIZE_NUMPY)[1:-1].split(b",")
            parts[3::5] = map(self.texts.__getitem__, self.detail[start:stop].tolist())
            parts[-1] = b"}]" if stop == len(self) else b"}"
            yield (b"[" if start == 0 else b",") + b"".join(parts)


def run_calculation(calculation: Calculation, payload: Any, max_cases: int, stream: bool = False,
                    max_memory: int | None = None, select: outputs.Selection | None = None):
    """Validate, compute and lay out the response body of one request.

    With ``select`` (see :mod:`service.api.outputs`), the answer holds only the selected outputs
    and checks: every case is computed and judged in full first, so the answer is the full one
    restricted.

    With ``stream``, the ``results`` of a rows answer may be a :class:`RowsText`, and the
    ``errors`` of a columns answer are an :class:`ErrorsText`, which :mod:`service.api.jsonwrite`
    writes piece by piece (without a dict per case); otherwise the body is plain data that
    ``orjson.dumps(body, option=OPT_SERIALIZE_NUMPY)`` writes.

    Returns
    -------
    (dict, int)
        The response body and the number of cases computed.

    Raises
    ------
    Problem
        422 for invalid input (every offending field named), 413 above ``max_cases`` or where the
        cases would take more than ``max_memory`` bytes (see :mod:`service.api.memory`), and
        422 for a single case that is physically impossible.
    """
    if not isinstance(payload, dict):
        raise invalid_input([("", "The request body must be a JSON object: one case, {\"cases\": [...]} "
                                  "or {\"columns\": {...}}.")])
    if "cases" in payload:
        shape = "rows"
        groups, size, errors = _rows_groups(calculation, payload, max_cases, max_memory)
    elif "columns" in payload and not calculation.columns:
        raise invalid_input([("/columns", "This calculation takes one case or rows ({\"cases\": [...]}), "
                                          "not columns.")])
    elif "columns" in payload:
        shape = "columns"
        groups, size, errors = _columns_groups(calculation, payload, max_cases, max_memory)
    else:
        shape = "single"
        groups, size, errors = _single_group(calculation, payload)
    # The groups hold the inputs as arrays now. Dropping the parsed request here (the caller keeps
    # no reference to it) frees its lists of Python numbers before the core allocates its own.
    del payload

    outcomes = []
    for group in groups:
        for sub_index, options, data in _split_by_options(calculation, group):
            mode, mode_errors = _resolve_mode(calculation, group, options, sub_index)
            errors.extend(mode_errors)
            if mode is not None and not errors:
                index = group.index[sub_index]
                if shape == "single":
                    outcomes.append(_evaluate(calculation, mode, options, data, len(index)))
                    continue
                # A chunk of cases at a time where the core's intermediates are large per case: only
                # one chunk's are alive at once, and each chunk is one outcome (as a group is).
                for start, stop in _chunks(len(index), memory.chunk_cases(calculation.name)):
                    part = _sliced(data, len(index), start, stop) if stop - start < len(index) else data
                    result = _evaluate(calculation, mode, options, part, stop - start)
                    outcomes.append(_outcome(result, index[start:stop], calculation._integer_outputs))
                    del result, part
    if errors:
        raise invalid_input(errors)

    if shape == "single":
        body = _single_body(calculation, outcomes[0])
        return (body if select is None else outputs.restrict_case(calculation, select, body)), size
    if select is not None:
        outputs.restrict_outcomes(calculation, select, outcomes)
    if shape == "columns" and stream:
        case_errors = ErrorsText(outcomes)
    else:
        case_errors = [error for outcome in outcomes for error in outcome.errors()]
        if len(outcomes) > 1:
            case_errors.sort(key=lambda e: e["index"])
    if shape == "rows":
        if stream and RowsText.takes(outcomes):
            results = RowsText(calculation, outcomes, size)
        elif stream:
            results = CaseRows(calculation, outcomes, size)
        else:
            results = _rows_body(calculation, outcomes, size)
        body = {"results": results, "errors": case_errors}
    else:
        with _collection_paused():
            body = {"columns": _columns_body(calculation, outcomes, size), "errors": case_errors}
    return body, size


@contextmanager
def _collection_paused():
    """The cyclic garbage collector paused while an answer's lists are made: they hold numbers,
    strings and other such lists, no reference cycles, but a batch of whole machines makes millions
    of them, and a collection every few hundred new ones took about a third of the layout's time."""
    enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if enabled:
            gc.enable()


def _chunks(size: int, chunk: int | None):
    """(start, stop) of each chunk of ``size`` cases: one chunk without a chunk size."""
    if not chunk or size <= chunk:
        return [(0, size)]
    return [(start, min(start + chunk, size)) for start in range(0, size, chunk)]


def _sliced(data: dict, size: int, start: int, stop: int) -> dict:
    """The inputs of cases ``start`` to ``stop``: every per-case array sliced (a view), the rest as is."""
    return {name: (value[start:stop] if isinstance(value, np.ndarray) and value.ndim and len(value) == size
                   else value)
            for name, value in data.items()}


class CaseRows:
    """The ``results`` of a rows answer whose cases hold lists (per-stage outputs and checks),
    written a slice of cases at a time: the same bytes as ``orjson.dumps`` of the list that
    :func:`_rows_body` makes, without holding a dict of every case at once."""

    ROWS_PER_PIECE = 256

    def __init__(self, calculation: Calculation, outcomes: list[_Outcome], size: int):
        self.calculation, self.outcomes, self.size = calculation, outcomes, size
        # For each case of the request: its outcome, and its position in that outcome.
        self.owner = np.zeros(size, dtype=np.intp)
        self.position = np.zeros(size, dtype=np.intp)
        for number, outcome in enumerate(outcomes):
            self.owner[outcome.index] = number
            self.position[outcome.index] = np.arange(len(outcome.index))

    def __len__(self) -> int:
        return self.size

    def json_pieces(self):
        if not self.size:
            yield b"[]"
            return
        for start in range(0, self.size, self.ROWS_PER_PIECE):
            stop = min(start + self.ROWS_PER_PIECE, self.size)
            cases = [_case_body(self.calculation, self.outcomes[o], p) for o, p in
                     zip(self.owner[start:stop].tolist(), self.position[start:stop].tolist(), strict=True)]
            text = orjson.dumps(cases, option=orjson.OPT_SERIALIZE_NUMPY)
            yield (b"[" if start == 0 else b",") + text[1:-1] + (b"]" if stop == self.size else b"")


def run_drawing(calculation: Calculation, payload: Any, max_cases: int) -> str:
    """The SVG drawing of one case: validated and computed as :func:`run_calculation`, then drawn.

    Raises
    ------
    Problem
        406 for rows or columns (a drawing shows one case), and as :func:`run_calculation`.
    """
    if not isinstance(payload, dict) or "cases" in payload or "columns" in payload:
        raise Problem(406, "Not Acceptable", "An image/svg+xml drawing is made for one case: send one case, or "
                                             "accept application/json for rows or columns.")
    body, _ = run_calculation(calculation, payload, max_cases)
    return calculation.render_svg(payload, body)


# -- request shapes -> groups -------------------------------------------------------------------


def _load_plan(schema: CaseSchema):
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


def _load(schema: CaseSchema, raw: dict, pointer, plan=None, listed: int = MAX_LISTED_ERRORS):
    """Loaded fields and errors; where loading fails, the valid option values still come back so
    that the input mode can be judged too and every offending field is named at once. Unknown
    fields beyond the first ``listed`` are counted, not named."""
    if plan is not None:
        loaded = _load_valid(plan, raw)
        if loaded is not None:
            return loaded, []
    unknown_errors = []
    known = {f.data_key or name for name, f in schema.load_fields.items()}
    if not known >= raw.keys():
        # Unknown fields are reported here rather than by marshmallow, which builds a message for
        # each through several layers (thousands of them took seconds); past ``listed`` they are
        # only counted, so that refusing them costs one pass over the keys.
        unknown = [name for name in raw if name not in known]
        raw = {name: value for name, value in raw.items() if name in known}
        for name in unknown[:listed]:
            pointers = pointer(name if name != "" else _EMPTY_NAME, ())
            pointers = [pointers] if isinstance(pointers, str) else pointers
            unknown_errors += [(one, "Unknown field.") for one in pointers]
        if len(unknown) > listed:
            unknown_errors.append(unlisted((len(unknown) - listed) * _pointer_count(pointer)))
    try:
        loaded = schema.load(raw)
    except ValidationError as error:
        options = {}
        for name, f in schema.fields.items():
            if isinstance(f, Option) and name not in error.messages:
                value = raw.get(name, f.load_default)
                if isinstance(value, str) or (isinstance(value, list) and all(isinstance(v, str) for v in value)):
                    options[name] = value if isinstance(value, str) else np.asarray(value, dtype=str)
        return options, list(_flatten(error.messages, pointer)) + unknown_errors
    if unknown_errors:
        options = {name: loaded[name] for name in loaded if isinstance(schema.fields.get(name), Option)}
        return options, unknown_errors
    return loaded, []


def _pointer_count(pointer) -> int:
    """How many cases a message about a whole field concerns (rows: every row of a block)."""
    pointers = pointer("", ())
    return 1 if isinstance(pointers, str) else len(pointers)


class _EmptyName:
    """A field named "" (pointer "/"), which _join would otherwise drop as "no field" (pointer "")."""

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


def _single_group(calculation: Calculation, payload: dict):
    schema = calculation._case_schema
    data, errors = _load(schema, payload, lambda f, rest: _join("", f, *rest), calculation._plans[id(schema)])
    return [_Group(data, frozenset(payload), np.zeros(1, dtype=int),
                   lambda f, rest: _join("", f, *rest), lambda f, positions: [_join("", f)])], 1, errors


def _columns_groups(calculation: Calculation, payload: dict, max_cases: int, max_memory: int | None = None):
    extra = _unknown_top_level(payload, "columns")
    columns = payload["columns"]
    if not isinstance(columns, dict):
        raise invalid_input([("/columns", "Must be an object of field names to values or lists of values.")])
    lengths = {name: _column_length(calculation, name, value) for name, value in columns.items()}
    lengths = {name: n for name, n in lengths.items() if n is not None}
    size = 1
    if lengths:
        values, counts = np.unique(list(lengths.values()), return_counts=True)
        size = int(values[np.argmax(counts)])
        extra += [(f"/columns/{name}", f"All lists must have the same length: most have {size}, this has {n}.")
                  for name, n in lengths.items() if n != size]
    if size > max_cases:
        raise _too_many(size, max_cases)
    _check_memory(calculation, "columns", size, max_memory)

    def pointer(f, rest):
        return _join("/columns", f, *rest)

    schema = calculation._columns_schema
    blocks = None if extra else _list_length_blocks(calculation, columns, lengths)
    if blocks is None:
        data, errors = _load(schema, columns, pointer, calculation._plans[id(schema)])
        if extra:
            return [], size, extra + errors
        return [_Group(data, frozenset(columns), np.arange(size), pointer,
                       lambda f, positions: [_join("/columns", f)])], size, errors
    # Lists of different lengths (one case's stages each): a group of cases per combination of
    # lengths, as rows are grouped, each loaded alone; an error is named once, at the whole request's
    # case index.
    groups, errors = [], []
    for positions, part in blocks:
        def part_pointer(f, rest, positions=positions):
            if rest and isinstance(rest[0], int) and f in lengths:
                return _join("/columns", f, int(positions[rest[0]]), *rest[1:])
            return _join("/columns", f, *rest)

        data, part_errors = _load(schema, part, part_pointer, calculation._plans[id(schema)])
        errors += [error for error in part_errors if error not in errors]
        groups.append(_Group(data, frozenset(columns), positions, part_pointer,
                             lambda f, positions: [_join("/columns", f)]))
    return groups, size, errors


def _column_length(calculation: Calculation, name: str, value) -> int | None:
    """How many cases a column holds (None: one value for every case), as its field counts them."""
    field_ = calculation._case_schema.fields.get(name)
    if field_ is not None:
        return field_.column_length(value)
    return len(value) if isinstance(value, list | np.ndarray) else None


def _list_length_blocks(calculation: Calculation, columns: dict, lengths: dict) -> list | None:
    """Columns whose per-case lists differ in length, split into blocks of cases whose lists have
    the same lengths: ``[(positions, columns of those cases)]``; None where every case's lists have
    one length (the whole request is one block)."""
    keys = []
    for name, value in columns.items():
        entry_lengths = getattr(calculation._case_schema.fields.get(name), "entry_lengths", None)
        found = entry_lengths(value) if entry_lengths is not None else None
        if found is not None and len(set(found)) > 1:
            keys.append(found)
    if not keys:
        return None
    codes, inverse = np.unique(np.array(keys, dtype=np.int64).T, axis=0, return_inverse=True)
    inverse = inverse.reshape(-1)
    blocks = []
    for code in range(len(codes)):
        positions = np.flatnonzero(inverse == code)
        picked = positions.tolist()
        blocks.append((positions, {
            name: (value[positions] if isinstance(value, np.ndarray) else [value[p] for p in picked])
            if name in lengths else value
            for name, value in columns.items()}))
    return blocks


def _rows_groups(calculation: Calculation, payload: dict, max_cases: int, max_memory: int | None = None):
    extra = _unknown_top_level(payload, "cases")
    cases = payload["cases"]
    if not isinstance(cases, list):
        raise invalid_input([("/cases", "Must be a list of case objects.")])
    if not cases:
        raise invalid_input([("/cases", "A batch must hold at least one case.")])
    if len(cases) > max_cases:
        raise _too_many(len(cases), max_cases)
    _check_memory(calculation, "rows", len(cases), max_memory)
    if set(map(type, cases)) != {dict}:
        extra += [(f"/cases/{i}", "Each case must be a JSON object.") for i, case in enumerate(cases)
                  if not isinstance(case, dict)]
    if extra:
        raise invalid_input(extra)

    groups, errors = [], []
    for rows, raw in _row_blocks(cases, calculation._columns_schema.load_fields):
        names = list(raw)
        index = np.arange(rows.start, rows.stop, rows.step) if isinstance(rows, range) else np.asarray(rows)

        def pointer(f, rest, rows=rows):
            if rest and isinstance(rest[0], int):
                return _join(f"/cases/{rows[rest[0]]}", f, *rest[1:])
            # A message about the whole column block concerns every row in it.
            return [_join(f"/cases/{row}", f, *rest) for row in rows[: MAX_LISTED_ERRORS + 1]]

        def case_pointers(f, positions, rows=rows):
            return [_join(f"/cases/{rows[p]}", f) for p in positions[: MAX_LISTED_ERRORS + 1]]

        schema = calculation._columns_schema
        # Once a response's worth of errors is named, further unknown fields are only counted.
        data, group_errors = _load(schema, raw, pointer, calculation._plans[id(schema)],
                                   max(MAX_LISTED_ERRORS - len(errors), 0))
        errors.extend(group_errors)
        groups.append(_Group(data, frozenset(names), index, pointer, case_pointers))
    return groups, len(cases), errors


def _row_blocks(cases: list[dict], known=None) -> list[tuple[Sequence[int], dict[str, list]]]:
    """The rows as blocks of columns: rows that name the same fields (and give lists of the same
    lengths) form one block, as ``(positions, {field: values})`` with the fields sorted by name.

    Found with a few passes at C speed rather than a sort and a key per row: when every row names
    the same fields in the same order (the usual batch), all values are taken at once and each
    column is a slice of them; otherwise the rows are keyed by their key order, the orders by their
    sorted names, and each field is gathered once per block.
    """
    uniform = _uniform_columns(cases)
    if uniform is not None:
        blocks = [(range(len(cases)), uniform)]
    else:
        blocks = _blocks_by_names(cases)
    # A field given as lists splits a block by list length (one case's stages each); an unknown
    # field (``known``: the schema's) is refused whatever it holds, so it is not looked at.
    split = []
    for rows, columns in blocks:
        listed = [name for name, column in columns.items()
                  if (known is None or name in known) and _holds_lists(column)]
        if not listed:
            split.append((rows, columns))
            continue
        lengths = list(zip(*([len(v) if isinstance(v, list) else -1 for v in columns[name]] for name in listed),
                           strict=True))
        by_length: dict[tuple, list[int]] = {}
        for position, key in enumerate(lengths):
            by_length.setdefault(key, []).append(position)
        for positions in by_length.values():
            split.append(([rows[p] for p in positions],
                          {name: [column[p] for p in positions] for name, column in columns.items()}))
    return split


def _uniform_columns(cases: list[dict]) -> dict[str, list] | None:
    """The columns of rows that all name the same fields in the same order (the usual batch), with
    the fields sorted by name: every key and every value taken in one pass at C speed, each column
    then a slice of the values; None if the rows differ."""
    order = list(cases[0])
    width = len(order)
    # The keys of all rows, one after the other, are ``order`` repeated only if every row's keys are
    # ``order``: a row with more keys than ``order`` would hold one of them twice (any ``width + 1``
    # keys in a row of that sequence do), which a JSON object parsed into a dict cannot, so no row
    # has more, and then none has fewer.
    if not width or list(chain.from_iterable(cases)) != order * len(cases):
        return None
    values = list(chain.from_iterable(map(dict.values, cases)))
    position = {name: i for i, name in enumerate(order)}
    return {name: values[position[name]::width] for name in sorted(order)}


def _holds_lists(column: list) -> bool:
    """Whether some value of a column is a list. ``sum`` adds a column of numbers at C speed and
    refuses anything else, so it settles the usual column several times faster than a look at
    the type of each value; a column that repeats one string is settled by a count."""
    try:
        sum(column)
        return False
    except (TypeError, OverflowError):
        pass
    first = column[0]
    if type(first) is str and column[-1] == first and column.count(first) == len(column):
        return False
    return list in set(map(type, column))


def _blocks_by_names(cases: list[dict]) -> list[tuple[list[int], dict[str, list]]]:
    """The rows keyed by the sorted names of their fields: ``(positions, {field: values})``."""
    orders = list(map(tuple, cases))
    if orders.count(orders[0]) == len(orders):
        by_order = {orders[0]: range(len(cases))}
    else:
        by_order = {}
        for i, order in enumerate(orders):
            by_order.setdefault(order, []).append(i)
    by_names: dict[tuple, list] = {}
    for order, rows in by_order.items():
        by_names.setdefault(tuple(sorted(order)), []).append(rows)
    blocks = []
    for names, parts in by_names.items():
        rows = list(parts[0]) if len(parts) == 1 else sorted(chain.from_iterable(parts))
        block = cases if len(rows) == len(cases) else [cases[i] for i in rows]
        blocks.append((rows, {name: list(map(itemgetter(name), block)) for name in names}))
    return blocks


def _check_memory(calculation: Calculation, shape: str, size: int, max_memory: int | None) -> None:
    """413 for a batch whose cases would take more memory than ``max_memory`` (before any is loaded)."""
    if max_memory is None:
        return
    per_case = memory.bytes_per_case(calculation.name, shape)
    if memory.request_bytes(calculation.name, shape, size) <= max_memory:
        return
    fit = memory.cases_that_fit(calculation.name, shape, max_memory)
    raise Problem(413, "Too many cases for the memory limit",
                  f"The request holds {size} cases of {calculation.name} as {shape}, about "
                  f"{memory.describe_bytes(per_case)} each; at most {fit} fit in the memory limit of "
                  f"{memory.describe_bytes(max_memory)} per request. Split the batch into requests of at most "
                  f"{fit} cases.", "urn:meanline:problem:too-large")


def _unknown_top_level(payload: dict, shape: str) -> list:
    """Errors for the keys of a batch body beside ``shape``: the first ones named, the rest counted."""
    if len(payload) == 1:
        return []
    unknown = [key for key in payload if key != shape]
    errors = [(_join("", key), "Unknown field: give one of 'cases' or 'columns'.")
              for key in unknown[:MAX_LISTED_ERRORS]]
    if len(unknown) > MAX_LISTED_ERRORS:
        errors.append(unlisted(len(unknown) - MAX_LISTED_ERRORS))
    return errors


def _too_many(size: int, max_cases: int) -> Problem:
    return Problem(413, "Too many cases",
                   f"The request holds {size} cases; this service takes at most {max_cases} per request. "
                   "Split the batch.", "urn:meanline:problem:too-large")


def _join(prefix: str, *parts) -> str:
    escaped = (str(p).replace("~", "~0").replace("/", "~1") for p in parts if p != "")
    return "/".join([prefix, *escaped]) if parts else prefix


# -- options, modes, compute -------------------------------------------------------------------


def _split_by_options(calculation: Calculation, group: _Group):
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


def _resolve_mode(calculation: Calculation, group: _Group, options: dict, positions: np.ndarray):
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
        if key is not None and len(calculation._resolved) < _MAX_RESOLVED:
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


#: Types of a JSON number as parsed: scalars, told apart without a numpy call.
_PLAIN_NUMBERS = (float, int)


def _evaluate(calculation: Calculation, mode: Mode, options: dict, data: dict, size: int) -> CaseResults:
    """The core's results for ``size`` cases, scalars broadcast (as views: no copy per case)."""
    inputs = {}
    for name, value in data.items():
        if name in options or value is None or isinstance(value, str):
            inputs[name] = value
        elif isinstance(value, np.ndarray) and value.ndim == 2:
            inputs[name] = value if len(value) == size else np.broadcast_to(value, (size, value.shape[-1]))
        elif type(value) in _PLAIN_NUMBERS or np.ndim(value) == 0:
            inputs[name] = np.array((value,)) if size == 1 else np.broadcast_to(np.asarray(value), (size,))
        else:
            inputs[name] = value
    with np.errstate(all="ignore"):
        return calculation.compute(mode, options, inputs)


def _outcome(result: CaseResults, index: np.ndarray, integer_outputs=frozenset()) -> _Outcome:
    """Failures as reason codes, failed cases masked to NaN, statuses as shared objects: all of it
    whole-array operations, none a loop over the cases."""
    size = len(index)
    # The first reason that applies to a case is the one reported, so the masks go in backwards.
    reasons: list = [reason for reason, _ in result.failures]
    reason = np.zeros(size, dtype=np.intp)
    for code in range(len(result.failures), 0, -1):
        reason[np.broadcast_to(result.failures[code - 1][1], (size,))] = code
    for code, entry in enumerate(reasons, start=1):
        if not isinstance(entry, str):
            # A reason with a number per case: a code per distinct text, for the cases that report it.
            reasons[code - 1] = None
            where = reason == code
            if where.any():
                texts, which = reason_texts(entry, where)
                reason[where] = len(reasons) + 1 + which
                reasons += texts
    reasons.append(NOT_FINITE)
    values, own = {}, set()
    for name, array in result.values.items():
        # An input passed through as an output can be a broadcast view; the writer needs it whole.
        whole = np.ascontiguousarray(array, dtype=float)
        if whole is not array and whole.flags.owndata:
            own.add(name)
        if name in result.absent:
            # Entries that do not apply are NaN by design, not a failure.
            finite = _finite_rows(np.where(result.absent[name], 0.0, whole))
        else:
            finite = np.isfinite(whole) if whole.ndim == 1 else _finite_rows(whole)
        if name in integer_outputs:
            # A count past 2**53 is not exact as a double, and past 2**63 orjson refuses it (a 500).
            too_big = np.abs(np.where(np.isfinite(whole), whole, 0.0)) > MAX_WHOLE_OUTPUT
            finite &= ~(too_big if too_big.ndim == 1 else too_big.any(axis=1))
        if not finite.all():
            reason[(~finite) & (reason == 0)] = len(reasons)
        values[name] = whole
    failed = reason != 0
    failed_cases = np.flatnonzero(failed)
    any_failed = failed_cases.size > 0
    if any_failed:
        values = {name: _blanked(a, failed_cases, name in own) for name, a in values.items()}
    checks = {}
    for name, check in result.checks.items():
        value = np.ascontiguousarray(check.value, dtype=float)
        if any_failed:
            value = _blanked(value, failed_cases, value is not check.value and value.flags.owndata)
        checks[name] = {
            "value": value,
            "status": (_status_objects(check.status_code, failed) if value.ndim == 1 else
                       np.where(failed.reshape((-1,) + (1,) * (value.ndim - 1)), None, check.status.astype(object))),
            "limit": check.limit,
            "fail_limit": check.fail_limit,
            "comparison": check.comparison,
            "basis": check.basis,
        }
    return _Outcome(index=index, values=values, checks=checks, reason=reason, reasons=reasons)


def _blanked(array: np.ndarray, failed_cases: np.ndarray, own: bool) -> np.ndarray:
    """``array`` with NaN in the failed cases (rows, by position): written in place into an
    array of this layer's own, kept as it is where the core has blanked them already (as it does
    for the cases it failed), else a copy, so that an array of the core's is never written to."""
    if own:
        array[failed_cases] = np.nan
        return array
    if np.isnan(array[failed_cases]).all():
        return array
    array = array.copy()
    array[failed_cases] = np.nan
    return array


#: Every status as one shared Python object, and None for a case that failed.
_STATUS_OBJECTS = np.array([*STATUSES, None], dtype=object)


def _status_objects(code: np.ndarray, failed: np.ndarray) -> np.ndarray:
    """The statuses (positions in STATUSES, as ``RuleCheck.status_code``) as an object array of
    the shared status strings, None where a case failed: a lookup into :data:`_STATUS_OBJECTS`
    rather than one new string per case."""
    code = np.array(code, dtype=np.uint8)
    code[failed] = len(STATUSES)
    return _STATUS_OBJECTS[code]


def _finite_rows(array: np.ndarray) -> np.ndarray:
    """Per-stage outputs are NaN-padded after the last stage; only inner NaN or inf is a failure."""
    finite = np.isfinite(array)
    has_value = finite.any(axis=1)
    # A padded row is finite up to its last finite entry and NaN after it.
    last = np.where(has_value, array.shape[1] - 1 - np.argmax(finite[:, ::-1], axis=1), -1)
    columns = np.arange(array.shape[1])
    return has_value & np.all(finite | (columns[None, :] > last[:, None]), axis=1) & ~np.isinf(array).any(axis=1)


# -- response layouts ----------------------------------------------------------------------------


def _scalar(calculation: Calculation, name: str, value):
    if isinstance(value, np.ndarray):  # one case's per-stage list, NaN-padded; all NaN where it failed
        finite = np.flatnonzero(np.isfinite(value))
        # The padding after the last value is cut; a NaN before it is an entry that does not apply: null.
        return [_scalar(calculation, name, v) for v in value[: finite[-1] + 1]] if finite.size else None
    if not np.isfinite(value):
        return None
    return int(value) if name in calculation._integer_outputs else float(value)


def _check_entry(check: dict, i: int) -> dict:
    if check["value"].ndim == 1:  # a Python float straight away, rather than through a numpy scalar
        value = check["value"].item(i)
        return {"value": value if math.isfinite(value) else None, "limit": check["limit"],
                "fail_limit": check["fail_limit"], "comparison": check["comparison"], "status": check["status"][i],
                "basis": check["basis"]}
    value, status = check["value"][i], check["status"][i]
    if isinstance(value, np.ndarray):  # one value per stage or row, NaN-padded; all NaN where the case failed
        finite = np.isfinite(value)
        value, status = (value[finite].tolist(), status[finite].tolist()) if finite.any() else (None, None)
    else:
        value = float(value) if np.isfinite(value) else None
    return {
        "value": value,
        "limit": check["limit"],
        "fail_limit": check["fail_limit"],
        "comparison": check["comparison"],
        "status": status,
        "basis": check["basis"],
    }


def _case_body(calculation: Calculation, outcome: _Outcome, i: int) -> dict:
    body = {}
    for name, array in outcome.values.items():
        if array.ndim == 1:  # a Python float straight away, rather than through a numpy scalar
            value = array.item(i)
            body[name] = ((int(value) if name in calculation._integer_outputs else value)
                          if math.isfinite(value) else None)
        else:
            body[name] = _scalar(calculation, name, array[i])
    body["checks"] = {name: _check_entry(check, i) for name, check in outcome.checks.items()}
    return body


def _single_body(calculation: Calculation, result: CaseResults) -> dict:
    """The response to one case, from Python floats taken once out of the core's arrays.

    Raises
    ------
    Problem
        422 if the case is physically impossible, with the first reason that applies.
    """
    try:
        # Every output at once as Python floats: one numpy call rather than two per output.
        block = np.array(list(result.values.values()), dtype=float)
    except ValueError:  # outputs of different shapes
        block = None
    if block is None or block.shape != (len(result.values), 1):  # per-stage lists: the general layout
        return _single_body_of(calculation, _outcome(result, np.zeros(1, dtype=int), calculation._integer_outputs))
    values = dict(zip(result.values, block[:, 0].tolist(), strict=True))
    for reason, mask in result.failures:
        if np.asarray(mask).item(0):
            raise _impossible(reason_texts(reason, np.asarray(mask))[0][0])
    if not all(map(math.isfinite, values.values())) or any(
            abs(values[name]) > MAX_WHOLE_OUTPUT for name in calculation._integer_outputs if name in values):
        raise _impossible(NOT_FINITE)
    checks = {}
    for name, check in result.checks.items():
        value = np.asarray(check.value, dtype=float)
        if value.ndim != 1:
            return _single_body_of(calculation, _outcome(result, np.zeros(1, dtype=int), calculation._integer_outputs))
        value = value.item(0)
        checks[name] = {"value": value if math.isfinite(value) else None, "limit": check.limit,
                        "fail_limit": check.fail_limit, "comparison": check.comparison,
                        "status": STATUSES[check.status_code.item(0)], "basis": check.basis}
    integer = calculation._integer_outputs
    body = {name: int(value) if name in integer else value for name, value in values.items()}
    body["checks"] = checks
    return body


def _single_body_of(calculation: Calculation, outcome: _Outcome) -> dict:
    if outcome.reason[0]:
        raise _impossible(outcome.reasons[outcome.reason[0] - 1])
    return _case_body(calculation, outcome, 0)


def _impossible(reason: str) -> Problem:
    return Problem(422, "Physically impossible case", reason, PHYSICALLY_IMPOSSIBLE)


def _rows_body(calculation: Calculation, outcomes: list[_Outcome], size: int) -> list:
    results: list = [None] * size
    for outcome in outcomes:
        names = list(outcome.values)
        simple = all(a.ndim == 1 for a in outcome.values.values()) and not calculation._integer_outputs
        if simple:
            # Fast path: one tolist() per column instead of one numpy scalar per value.
            columns = [outcome.values[n].tolist() for n in names]
            check_rows = {name: _check_rows(check) for name, check in outcome.checks.items()}
            for j, (i, row) in enumerate(zip(outcome.index.tolist(), zip(*columns, strict=True), strict=True)):
                body = dict(zip(names, row, strict=True))
                body["checks"] = {name: rows[j] for name, rows in check_rows.items()}
                results[i] = body
        else:
            for j, i in enumerate(outcome.index.tolist()):
                results[i] = _case_body(calculation, outcome, j)
    return results


def _check_rows(check: dict) -> list[dict]:
    if check["value"].ndim != 1:
        return [_check_entry(check, j) for j in range(len(check["value"]))]
    limit, fail_limit, comparison, basis = (check[k] for k in ("limit", "fail_limit", "comparison", "basis"))
    return [{"value": v, "limit": limit, "fail_limit": fail_limit, "comparison": comparison, "status": s,
             "basis": basis}
            for v, s in zip(check["value"].tolist(), check["status"].tolist(), strict=True)]


def _columns_body(calculation: Calculation, outcomes: list[_Outcome], size: int) -> dict:
    if len(outcomes) == 1 and len(outcomes[0].index) == size:
        outcome = outcomes[0]
        columns = {name: _column_out(calculation, name, array) for name, array in outcome.values.items()}
        columns["checks"] = {name: _check_column(check, size) for name, check in outcome.checks.items()}
        return columns
    columns: dict[str, Any] = {}
    checks: dict[str, dict] = {}
    for outcome in outcomes:
        for name, array in outcome.values.items():
            target = columns.get(name)
            if target is None:
                target = columns[name] = np.full((size,) + array.shape[1:], np.nan)
            if target.shape[1:] != array.shape[1:]:  # per-stage lists of different lengths
                width = max(target.shape[1], array.shape[1])
                target = columns[name] = _pad(target, width)
                array = _pad(array, width)
            target[outcome.index] = array
        for name, check in outcome.checks.items():
            merged = checks.setdefault(name, {k: np.full(size, None, dtype=object) for k in check})
            if check["value"].ndim != 1:  # each case's list (ragged), as an object per case
                value, status = _ragged_check(check["value"], check["status"])
                check = {**check, "value": _objects(value), "status": _objects(status)}
            for key, value in check.items():
                if isinstance(value, np.ndarray):
                    merged[key][outcome.index] = value if value.dtype == object else list(value)
                else:
                    merged[key][outcome.index] = value
    body = {name: _column_out(calculation, name, array) for name, array in columns.items()}
    body["checks"] = {
        name: {"value": _nan_to_none(merged["value"].tolist()), **_rule_constants(merged),
               "status": merged["status"].tolist()}
        for name, merged in checks.items()
    }
    return body


def _pad(array: np.ndarray, width: int) -> np.ndarray:
    return np.pad(array, [(0, 0), (0, width - array.shape[1])], constant_values=np.nan)


def _objects(values: list) -> np.ndarray:
    """A list of lists as an object array of one list per entry (numpy would make it 2-D)."""
    return np.fromiter(values, dtype=object, count=len(values))


def _list_lengths(finite: np.ndarray) -> np.ndarray:
    """Per row of a NaN-padded block: the entries up to its last finite one (0 where none is)."""
    return np.where(finite.any(axis=1), finite.shape[1] - np.argmax(finite[:, ::-1], axis=1), 0)


def _ragged(calculation: Calculation, name: str, array: np.ndarray) -> list:
    """Each case's list of a per-stage (per-station, per-row) output, at its own length: what
    :func:`_scalar` gives the case in a rows answer, null for a case without a value, converted a
    block at a time. A NaN inside a list (an entry that does not apply) is kept, which orjson
    writes as null, as :func:`_scalar` writes None."""
    finite = np.isfinite(array)
    length = _list_lengths(finite)
    integer = name in calculation._integer_outputs
    lists: list = [None] * len(array)
    # The cases of one length (one stage count) together: one conversion of their block each.
    for n in np.unique(length).tolist():
        if n == 0:
            continue
        cases = np.flatnonzero(length == n)
        block = array[cases, :n]
        if integer:
            block = np.where(finite[cases, :n], block, 0.0).astype(np.int64)
        for i, values in zip(cases.tolist(), block.tolist(), strict=True):
            lists[i] = values
    if integer:  # a whole number list with a gap inside: one by one, as rows give it
        for i in np.flatnonzero(finite.sum(axis=1) < length).tolist():
            lists[i] = _scalar(calculation, name, array[i])
    return lists


def _ragged_check(value: np.ndarray, status: np.ndarray) -> tuple[list, list]:
    """Each case's values and statuses of a per-stage (per-row) check: its finite entries, None where
    it has none, as :func:`_check_entry` gives them, converted a block at a time."""
    finite = np.isfinite(value)
    length = _list_lengths(finite)
    values, statuses = value.tolist(), status.tolist()
    lengths = length.tolist()
    out_values = [row[:n] if n else None for row, n in zip(values, lengths, strict=True)]
    out_statuses = [row[:n] if n else None for row, n in zip(statuses, lengths, strict=True)]
    for i in np.flatnonzero(finite.sum(axis=1) < length):  # a gap inside a list: its finite entries
        out_values[i], out_statuses[i] = value[i][finite[i]].tolist(), status[i][finite[i]].tolist()
    return out_values, out_statuses


def _column_out(calculation: Calculation, name: str, array: np.ndarray):
    if array.ndim == 2:
        return _ragged(calculation, name, array)
    if name in calculation._integer_outputs:
        return _whole_numbers(array)
    return array  # orjson writes numpy arrays directly; NaN becomes null


def _whole_numbers(array: np.ndarray):
    """``[int(v) if finite else None for v in array]``, converted by numpy rather than one by one."""
    finite = np.isfinite(array)
    if not (np.abs(array[finite]) < 2.0**63).all():
        return [int(v) if math.isfinite(v) else None for v in array.tolist()]
    if finite.all():
        return array.astype(np.int64)  # orjson writes it as the same whole numbers
    whole = np.full(len(array), None, dtype=object)
    whole[finite] = array[finite].astype(np.int64).astype(object)
    return whole.tolist()


def _check_column(check: dict, size: int) -> dict:
    if check["value"].ndim != 1:
        value, status = _ragged_check(check["value"], check["status"])
        return {"value": value, **_rule_constants(check), "status": status}
    return {"value": check["value"], **_rule_constants(check), "status": check["status"].tolist()}


def _rule_constants(check: dict) -> dict:
    """The rule's limit, comparison and basis: one value when the whole batch shares it (as a
    scalar in request columns broadcasts), otherwise one per case."""
    constants = {}
    for key in ("limit", "fail_limit", "comparison", "basis"):
        value = check[key]
        if isinstance(value, np.ndarray):
            # None is a value here too (a rule without a fail_limit), not a missing one.
            distinct = set(value.tolist())
            value = distinct.pop() if len(distinct) == 1 else _nan_to_none(value.tolist())
        constants[key] = value
    return constants


def _nan_to_none(values: list) -> list:
    return [None if isinstance(v, float) and not np.isfinite(v) else v for v in values]
