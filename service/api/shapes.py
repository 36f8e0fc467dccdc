"""The three request shapes (one case, rows, columns) read into groups of column arrays.

Rows are gathered into blocks of rows that name the same fields, so that rows and columns share
one path from here on: a :class:`Group` holds loaded columns, where its cases sit in the request,
and how to point at each of its fields.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from itertools import chain
from operator import itemgetter
from typing import TYPE_CHECKING, Any

import numpy as np

from service.api import memory
from service.api.fields import QuantityList
from service.api.loading import join_pointer, load
from service.api.problems import MAX_LISTED_ERRORS, Problem, invalid_input, unlisted

if TYPE_CHECKING:
    from service.api.declarations import Calculation


@dataclass
class Group:
    """Cases that were given the same fields: loaded columns and where they came from."""

    data: dict[str, Any]
    present: frozenset[str]
    index: np.ndarray  # positions of these cases in the whole request
    pointer: Callable[[str, tuple], str]  # (field, path below it) -> JSON Pointer
    case_pointers: Callable[[str, np.ndarray], list[str]]  # (field, positions) -> pointers


def single_group(calculation: Calculation, payload: dict):
    schema = calculation._case_schema
    data, errors = load(schema, payload, lambda f, rest: join_pointer("", f, *rest), calculation._plans[id(schema)])
    return [Group(data, frozenset(payload), np.zeros(1, dtype=int),
                   lambda f, rest: join_pointer("", f, *rest), lambda f, positions: [join_pointer("", f)])], 1, errors


def columns_groups(calculation: Calculation, payload: dict, max_cases: int, max_memory: int | None = None):
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
        return join_pointer("/columns", f, *rest)

    schema = calculation._columns_schema
    data, errors = load(schema, columns, pointer, calculation._plans[id(schema)])
    if extra:
        return [], size, extra + errors
    return [Group(data, frozenset(columns), np.arange(size), pointer,
                   lambda f, positions: [join_pointer("/columns", f)])], size, errors


def _column_length(calculation: Calculation, name: str, value) -> int | None:
    if isinstance(value, np.ndarray):  # a list of numbers, read by the parser as an array
        return None if isinstance(calculation._case_schema.fields.get(name), QuantityList) else len(value)
    if not isinstance(value, list):
        return None
    if isinstance(calculation._case_schema.fields.get(name), QuantityList):
        return len(value) if value and isinstance(value[0], list) else None
    return len(value)


def rows_groups(calculation: Calculation, payload: dict, max_cases: int, max_memory: int | None = None):
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
    for rows, raw in row_blocks(cases, calculation._columns_schema.load_fields):
        names = list(raw)
        index = np.arange(rows.start, rows.stop, rows.step) if isinstance(rows, range) else np.asarray(rows)

        def pointer(f, rest, rows=rows):
            if rest and isinstance(rest[0], int):
                return join_pointer(f"/cases/{rows[rest[0]]}", f, *rest[1:])
            # A message about the whole column block concerns every row in it.
            return [join_pointer(f"/cases/{row}", f, *rest) for row in rows[: MAX_LISTED_ERRORS + 1]]

        def case_pointers(f, positions, rows=rows):
            return [join_pointer(f"/cases/{rows[p]}", f) for p in positions[: MAX_LISTED_ERRORS + 1]]

        schema = calculation._columns_schema
        # Once a response's worth of errors is named, further unknown fields are only counted.
        data, group_errors = load(schema, raw, pointer, calculation._plans[id(schema)],
                                   max(MAX_LISTED_ERRORS - len(errors), 0))
        errors.extend(group_errors)
        groups.append(Group(data, frozenset(names), index, pointer, case_pointers))
    return groups, len(cases), errors


def row_blocks(cases: list[dict], known=None) -> list[tuple[Sequence[int], dict[str, list]]]:
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
    return [block for rows, columns in blocks for block in _by_list_lengths(rows, columns, known)]


def _by_list_lengths(rows: Sequence[int], columns: dict[str, list], known=None) -> list:
    """A block split into blocks whose cases give lists of the same lengths in every listed field."""
    listed = [name for name, column in columns.items() if (known is None or name in known) and _holds_lists(column)]
    if not listed:
        return [(rows, columns)]
    lengths = zip(*([len(v) if isinstance(v, list) else -1 for v in columns[name]] for name in listed), strict=True)
    by_length: dict[tuple, list[int]] = {}
    for position, key in enumerate(lengths):
        by_length.setdefault(key, []).append(position)
    return [([rows[p] for p in positions], {name: [column[p] for p in positions] for name, column in columns.items()})
            for positions in by_length.values()]


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
    errors = [(join_pointer("", key), "Unknown field: give one of 'cases' or 'columns'.")
              for key in unknown[:MAX_LISTED_ERRORS]]
    if len(unknown) > MAX_LISTED_ERRORS:
        errors.append(unlisted(len(unknown) - MAX_LISTED_ERRORS))
    return errors


def _too_many(size: int, max_cases: int) -> Problem:
    return Problem(413, "Too many cases",
                   f"The request holds {size} cases; this service takes at most {max_cases} per request. "
                   "Split the batch.", "urn:meanline:problem:too-large")
