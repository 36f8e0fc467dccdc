"""CSV in and out: CSV answers, parsed with the csv module and with pandas, equal the JSON answers;
CSV rows give the answers of the same rows sent as JSON; malformed CSV is a problem naming where."""

from __future__ import annotations

import csv
import io
import math

import pytest

from tests.api.examples import COLUMN_NAMES, EXAMPLES, INVALID_INPUT, strict_json, valid_cases

CSV_HEADERS = {"Accept": "text/csv"}


def _flat(case: dict) -> dict:
    """A JSON case as the columns the CSV answer documents: outputs (lists as NAME.0, NAME.1, ...),
    the defaults taken as assumed.NAME, and each check's status as checks.NAME.status."""
    flat = {}

    def put(prefix, value):
        if isinstance(value, list):
            for i, item in enumerate(value):
                put(f"{prefix}.{i}", item)
        elif isinstance(value, dict):
            for name, item in value.items():
                put(f"{prefix}.{name}", item)
        else:
            flat[prefix] = value

    for name, value in case.items():
        if name != "checks":
            put(name, value)
    for name, check in case.get("checks", {}).items():
        put(f"checks.{name}.status", check["status"])
    return flat


def _same(cell: str, value) -> bool:
    if value is None:
        return cell == ""
    if isinstance(value, str):
        return cell == value
    return float(cell) == value


def _rows_of(body: dict) -> list[dict]:
    if "results" in body:
        return body["results"]
    columns = body["columns"]
    size = len(next(v for k, v in columns.items() if k != "checks"))
    return [{**{k: v[i] for k, v in columns.items() if k != "checks"},
             "checks": {k: {"status": c["status"][i]} for k, c in columns["checks"].items()}} for i in range(size)]


def _assert_csv_equals_json(text: str, body: dict) -> None:
    rows = list(csv.DictReader(io.StringIO(text, newline="")))
    expected = [_flat(case) for case in _rows_of(body)]
    errors = {e["index"]: e["detail"] for e in body["errors"]}
    assert len(rows) == len(expected)
    for index, (row, case) in enumerate(zip(rows, expected, strict=True)):
        assert row["case"] == str(index) and row["error"] == errors.get(index, "")
        for name, value in case.items():
            if value is None and name not in row:  # a failed case's list output: no entries to write
                continue
            assert _same(row[name], value), (index, name, row[name], value)
        assert {k for k, v in row.items() if v} <= set(case) | {"case", "error"}, index


def _batches(name: str):
    example = EXAMPLES[name]
    yield {"cases": [example.good, example.bad, *valid_cases(name)]}
    if name in COLUMN_NAMES:
        keys = list(dict.fromkeys([*example.good, *example.bad]))
        if all(key in example.good and key in example.bad for key in keys):
            yield {"columns": {key: [example.good[key], example.bad[key]] for key in keys}}


@pytest.mark.parametrize("name", list(EXAMPLES))
def test_csv_answers_equal_the_json_answers(client, name):
    for body in _batches(name):
        as_json = strict_json(client.post(f"/v1/{name}", json=body).get_data(as_text=True))
        response = client.post(f"/v1/{name}", json=body, headers=CSV_HEADERS)
        assert response.status_code == 200 and response.mimetype == "text/csv"
        assert as_json["errors"], "the batch holds a physically impossible case"
        _assert_csv_equals_json(response.get_data(as_text=True), as_json)


def test_csv_answers_parse_with_pandas_to_the_json_numbers(client):
    pandas = pytest.importorskip("pandas")
    example = EXAMPLES["triangles"]
    body = {"columns": {key: [example.good[key], example.bad[key], example.good[key]] for key in example.good}}
    as_json = strict_json(client.post("/v1/triangles", json=body).get_data(as_text=True))
    text = client.post("/v1/triangles", json=body, headers=CSV_HEADERS).get_data(as_text=True)
    frame = pandas.read_csv(io.StringIO(text))
    for name, values in as_json["columns"].items():
        if name == "checks":
            for check, entry in values.items():
                got = frame[f"checks.{check}.status"].tolist()
                assert [None if isinstance(v, float) and math.isnan(v) else v for v in got] == entry["status"]
            continue
        got = frame[name].tolist()
        assert [None if math.isnan(v) else v for v in got] == values, name
    assert frame["error"].fillna("").tolist() == [""] + [as_json["errors"][0]["detail"]] + [""]


def _csv(rows: list[dict]) -> str:
    out = io.StringIO()
    names = list(dict.fromkeys(name for row in rows for name in row))
    writer = csv.DictWriter(out, names)
    writer.writeheader()
    for row in rows:
        writer.writerow({k: ",".join(map(str, v)) if isinstance(v, list) else v for k, v in row.items()})
    return out.getvalue()


@pytest.mark.parametrize("name", list(EXAMPLES))
def test_csv_rows_give_the_answers_of_the_same_rows_as_json(client, name):
    example = EXAMPLES[name]
    for rows in ([example.good, example.bad], *([case] for case in example.variants[:1])):
        as_json = client.post(f"/v1/{name}", json={"cases": rows})
        as_csv = client.post(f"/v1/{name}", data=_csv(rows), headers={"Content-Type": "text/csv"})
        assert as_csv.status_code == as_json.status_code == 200, as_csv.get_data(as_text=True)
        assert strict_json(as_csv.get_data(as_text=True)) == strict_json(as_json.get_data(as_text=True))


@pytest.mark.parametrize(("text", "status", "pointers"), [
    ("machine,flow_coefficient\ncompressor,0.5,1\n", 422, ["/cases/0"]),
    ("machine,machine\ncompressor,compressor\n", 422, ["/cases"]),
    ("machine,\ncompressor,1\n", 422, ["/cases"]),
    ("", 422, [""]),
    ('machine,flow_coefficient\n"compressor,0.5\n', 400, []),
    ("machine,no_such_field\ncompressor,1\n", 422, ["/cases/0/no_such_field"]),
])
def test_malformed_csv_is_a_problem_naming_where(client, text, status, pointers):
    response = client.post("/v1/triangles", data=text.encode(), headers={"Content-Type": "text/csv"})
    problem = strict_json(response.get_data(as_text=True))
    assert response.status_code == status and response.mimetype == "application/problem+json", problem
    assert pointers == [] or (problem["type"] == INVALID_INPUT and
                              set(pointers) <= {e["pointer"] for e in problem["errors"]}), problem


def test_csv_that_is_not_utf8_is_a_400(client):
    response = client.post("/v1/triangles", data=b"machine\n\xe9\n", headers={"Content-Type": "text/csv"})
    assert response.status_code == 400
