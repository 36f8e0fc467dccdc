"""The one mechanism that every calculation endpoint runs through.

:func:`run_calculation` takes a :class:`~service.api.declarations.Calculation` and a parsed body
and handles, identically for every endpoint: the request shape (:mod:`service.api.shapes`),
validation with JSON Pointers (:mod:`service.api.loading`), the alternative of each choice a group of cases takes
(:mod:`service.api.choices`), the vectorised core call and per-case failures
(:mod:`service.api.outcome`) and the answer's layout (:mod:`service.api.layout`). Imports run one
way: loading <- declarations, shapes; choices, outcome <- layout <- this module.
"""

from __future__ import annotations

from typing import Any

from service.api import memory, outputs
from service.api.choices import assumed_values, resolve_choices, split_by_options
from service.api.declarations import Calculation
from service.api.layout import CaseRows, ErrorsText, assumed_columns, columns_body, rows_body, single_body
from service.api.outcome import chunks, evaluate, outcome_of, sliced
from service.api.problems import Problem, invalid_input
from service.api.rowstext import RowsText
from service.api.shapes import columns_groups, rows_groups, single_group


def run_calculation(calculation: Calculation, payload: Any, max_cases: int, stream: bool = False,
                    max_memory: int | None = None, select: outputs.Selection | None = None):
    """Validate, compute and lay out the response body of one request.

    With ``select`` (see :mod:`service.api.outputs`), the answer holds only the selected outputs
    and checks: every case is computed and judged in full first, so the answer is the full one
    restricted.

    With ``stream``, the ``results`` of a rows answer may be a :class:`RowsText`, the ``errors``
    of a columns answer are an :class:`ErrorsText` and its per-stage outputs and checks
    :class:`~service.api.liststext.RaggedColumn` and :class:`~service.api.liststext.RaggedCheck`,
    which :mod:`service.api.jsonwrite` writes piece by piece (without a dict or a list per
    case); otherwise the body is plain data that
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
    shape, groups, size, errors = _read(calculation, payload, max_cases, max_memory)
    # The groups hold the inputs as arrays now. Dropping the parsed request here (the caller keeps
    # no reference to it) frees its lists of Python numbers before the core allocates its own.
    del payload
    outcomes = _computed(calculation, shape, groups, errors)
    if shape == "single":
        body = single_body(calculation, *outcomes[0])
        return (body if select is None else outputs.restrict_case(calculation, select, body)), size
    if select is not None:
        outputs.restrict_outcomes(calculation, select, outcomes)
    return _batch_body(calculation, shape, outcomes, size, stream), size


def _read(calculation: Calculation, payload: Any, max_cases: int, max_memory: int | None):
    """The request's shape, its groups of loaded columns, its case count and its errors so far."""
    if not isinstance(payload, dict):
        raise invalid_input([("", "The request body must be a JSON object: one case, {\"cases\": [...]} "
                                  "or {\"columns\": {...}}.")])
    if "cases" in payload:
        return "rows", *rows_groups(calculation, payload, max_cases, max_memory)
    if "columns" not in payload:
        return "single", *single_group(calculation, payload)
    if not calculation.columns:
        raise invalid_input([("/columns", "This calculation takes one case or rows ({\"cases\": [...]}), "
                                          "not columns.")])
    return "columns", *columns_groups(calculation, payload, max_cases, max_memory)


def _computed(calculation: Calculation, shape: str, groups: list, errors: list) -> list:
    """The outcome of every group (a chunk of cases at a time where the calculation is chunked), or
    422 naming every invalid field of every group."""
    outcomes = []
    for group in groups:
        for sub_index, options, data in split_by_options(calculation, group):
            taken, choice_errors = resolve_choices(calculation, group, options, sub_index)
            errors.extend(choice_errors)
            if taken is None or errors:
                continue
            data, assumed = assumed_values(calculation, taken, options, group.present, data)
            index = group.index[sub_index]
            if shape == "single":
                outcomes.append((evaluate(calculation, options, data, len(index)), assumed))
                continue
            # A chunk of cases at a time where the core's intermediates are large per case: only
            # one chunk's are alive at once, and each chunk is one outcome (as a group is).
            for start, stop in chunks(len(index), memory.chunk_cases(calculation.name, group.present)):
                part = sliced(data, len(index), start, stop) if stop - start < len(index) else data
                result = evaluate(calculation, options, part, stop - start)
                outcomes.append(outcome_of(result, index[start:stop], calculation._integer_outputs, assumed))
                del result, part
    if errors:
        raise invalid_input(errors)
    return outcomes


def _batch_body(calculation: Calculation, shape: str, outcomes: list, size: int, stream: bool) -> dict:
    if shape == "columns" and stream:
        case_errors = ErrorsText(outcomes)
    else:
        case_errors = [error for outcome in outcomes for error in outcome.errors()]
        if len(outcomes) > 1:
            case_errors.sort(key=lambda e: e["index"])
    if shape == "columns":
        columns = columns_body(calculation, outcomes, size, stream)
        if calculation.defaults:
            columns["assumed"] = assumed_columns(outcomes, size)
        return {"columns": columns, "errors": case_errors}
    if stream and RowsText.takes(outcomes) and not calculation.defaults:
        results = RowsText(calculation, outcomes, size)
    elif stream:
        results = CaseRows(calculation, outcomes, size)
    else:
        results = rows_body(calculation, outcomes, size)
    return {"results": results, "errors": case_errors}


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
