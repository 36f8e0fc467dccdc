"""CSV in and out, with the standard library's csv module.

In: a body sent as ``text/csv`` is rows: a header line of field names, then one case a line
(RFC 4180: commas, double quotes around a value that holds a comma, a quote or a line break).
An empty cell leaves the field out (its default applies). A list (``weights``) is one quoted cell
of comma-separated numbers (``"1,2,1"``). Cells are typed as the GET form's parameters are
(:func:`service.api.query.typed_value`), then the rows go through the one mechanism as
``{"cases": [...]}``: case ``i`` of a problem's pointer (``/cases/i/field``) is data line ``i + 1``,
line ``i + 2`` of the file.

Out: with ``Accept: text/csv`` any shape is answered as CSV: a header line, then one line per case
in request order. The columns are ``case`` (the index), each output (a list output as ``NAME.0``,
``NAME.1``, ... one column per entry), each check's status as ``checks.NAME.status`` (a list of
statuses as ``checks.NAME.status.0``, ...), and ``error``: empty for a computed case, else why it
failed (its outputs and statuses are then empty). Numbers are written as the shortest text that
reads back as the same double.
"""

from __future__ import annotations

import csv
import io
import math

import numpy as np
from flask import Response

from service.api.problems import Problem, invalid_input
from service.api.query import typed_value

CSV = "text/csv"
MALFORMED_CSV = "urn:meanline:problem:malformed-csv"


def rows_payload(calculation, body: bytes | bytearray) -> dict:
    """The ``{"cases": [...]}`` request that a CSV body stands for.

    Raises
    ------
    Problem
        400 for text that is not UTF-8 or not CSV; 422 for a header that is empty or repeats a
        name, and for a line with more or fewer values than the header names.
    """
    lines = _lines(body)
    if not lines:
        raise invalid_input([("", "The CSV body is empty: send a header line of field names and one case a line.")])
    header = [name.strip() for name in lines[0][1]]
    errors = _header_errors(header)
    fields = calculation._case_schema.fields
    cases = []
    for index, (line, row) in enumerate(lines[1:]):
        if len(row) != len(header):
            errors.append((f"/cases/{index}", f"Line {line} has {len(row)} values; the header names {len(header)}."))
            continue
        cases.append({name: typed_value(fields.get(name), [cell]) for name, cell in zip(header, row, strict=True)
                      if cell.strip() != ""})
    if errors:
        raise invalid_input(errors)
    return {"cases": cases}


def _lines(body: bytes | bytearray) -> list[tuple[int, list[str]]]:
    """The non-empty lines of a CSV body, each with its line number (400 for text that is not
    UTF-8 or not CSV)."""
    try:
        text = bytes(body).decode("utf-8-sig")
    except UnicodeDecodeError:
        raise Problem(400, "Malformed CSV", "The body is not UTF-8 text.", MALFORMED_CSV) from None
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    try:
        return [(reader.line_num, row) for row in reader if row]
    except csv.Error as error:
        raise Problem(400, "Malformed CSV", f"The body is not valid CSV: line {reader.line_num}: {error}.",
                      MALFORMED_CSV) from None


def _header_errors(header: list[str]) -> list[tuple[str, str]]:
    """The problems of a header line: an empty name, a name given twice."""
    errors = [("/cases", f"Header column {column + 1} is empty: name a field.")
              for column, name in enumerate(header) if not name]
    repeated = sorted({name for name in header if name and header.count(name) > 1})
    return errors + [("/cases", f"The header names {name} more than once.") for name in repeated]


def wants_csv(request) -> bool:
    """Whether the Accept header ranks CSV above JSON."""
    accept = request.environ.get("HTTP_ACCEPT", "")
    if CSV not in accept:
        return False
    return request.accept_mimetypes.best_match(["application/json", CSV]) == CSV


def case_rows(body: dict) -> tuple[list[dict], dict[int, str]]:
    """The cases of an answer of any shape as one dict each, and the failed cases' reasons."""
    errors = {error["index"]: error["detail"] for error in body.get("errors", [])}
    if "results" in body:
        return body["results"], errors
    if "columns" not in body:
        return [body], errors
    columns = body["columns"]
    checks = columns.get("checks", {})
    outputs = {name: _as_list(value) for name, value in columns.items() if name != "checks"}
    statuses = {name: _as_list(check["status"]) for name, check in checks.items()}
    size = max((len(v) for v in (*outputs.values(), *statuses.values())), default=0)
    return [{**{name: values[i] for name, values in outputs.items()},
             "checks": {name: {"status": values[i]} for name, values in statuses.items()}}
            for i in range(size)], errors


def _as_list(value) -> list:
    return value.tolist() if isinstance(value, np.ndarray) else list(value)


def _flat(prefix: str, value, into: dict) -> None:
    if isinstance(value, list):
        for position, item in enumerate(value):
            _flat(f"{prefix}.{position}", item, into)
    elif isinstance(value, dict):  # the defaults a case took: assumed.NAME
        for name, item in value.items():
            _flat(f"{prefix}.{name}", item, into)
    else:
        into[prefix] = value


def _cell(value) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return ""
    return repr(value) if isinstance(value, float) else str(value)


def csv_text(calculation, body: dict) -> str:
    """The answer ``body`` (of any shape) as CSV text."""
    rows, errors = case_rows(body)
    flat_rows = []
    for case in rows:
        flat: dict = {}
        for name, value in case.items():
            if name != "checks":
                _flat(name, value, flat)
        for name, check in (case.get("checks") or {}).items():
            _flat(f"checks.{name}.status", check["status"], flat)
        flat_rows.append(flat)
    columns = list(dict.fromkeys(name for flat in flat_rows for name in flat))
    # A failed case's list output is one null: no column of its own beside the entries' columns.
    listed = {name.rsplit(".", 1)[0] for name in columns if name.rsplit(".", 1)[-1].isdigit()}
    columns = [name for name in columns if name not in listed]
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\r\n")
    writer.writerow(["case", *columns, "error"])
    for index, flat in enumerate(flat_rows):
        writer.writerow([index, *(_cell(flat.get(name)) for name in columns), errors.get(index, "")])
    return out.getvalue()


def response(calculation, body: dict) -> Response:
    return Response(csv_text(calculation, body), mimetype=CSV, content_type=f"{CSV}; charset=utf-8; header=present")
