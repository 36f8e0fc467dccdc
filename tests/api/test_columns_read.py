"""A large columns batch read a column at a time answers byte for byte as the batch read whole.

``service.api.jsonparse`` reads a body of at least ``COLUMNS_BYTES`` a list at a time and keeps
each list of numbers in ``columns`` as a float64 array (a fraction of the memory of the list);
the fields then load the array instead of the list. Here every body is read both ways (the
threshold lowered to 0 or raised past any body) and the two answers are compared as bytes:
valid batches with impossible cases, and invalid ones (a number out of range, a boolean, whole
numbers, numbers for an option, an unknown field, a list of another length).
"""

from __future__ import annotations

import json
import re

import pytest

from service import create_app
from service.api import jsonparse
from tests.api.examples import COLUMN_NAMES, EXAMPLES, calculation, mode_case

REQUEST_ID = re.compile(rb'"request_id":"[^"]*"')


@pytest.fixture(scope="module")
def client():
    return create_app({"LOG_LEVEL": "warning"}).test_client()


def _answer(client, name: str, body: bytes, by_columns: bool) -> tuple[int, bytes]:
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(jsonparse, "COLUMNS_BYTES", 0 if by_columns else 1 << 62)
        response = client.post(f"/v1/{name}", data=body, content_type="application/json")
    return response.status_code, REQUEST_ID.sub(b"", response.get_data())


def _columns(cases: list[dict]) -> dict:
    """Rows as columns; every number written as a float (1.0, not 1), as a batch from numpy is."""
    names = list(dict.fromkeys(name for case in cases for name in case))
    return {name: [float(case[name]) if isinstance(case[name], int | float) and not isinstance(case[name], bool)
                   else case[name] for case in cases] for name in names}


def _batches(name: str) -> list[tuple[str, dict]]:
    calc, example = calculation(name), EXAMPLES[name]
    batches = []
    for mode in calc.forms:
        case = mode_case(calc, mode)
        scaled = [{k: v * factor if isinstance(v, float) else v for k, v in case.items()}
                  for factor in (1.0, 1.01, 0.99, 1.02)]
        batches.append((mode.name, {"columns": _columns(scaled)}))
    pair = [example.good, example.bad, example.good]
    if set(example.good) == set(example.bad):
        batches.append(("good and bad", {"columns": _columns(pair)}))
    numeric = [k for k, v in example.good.items() if isinstance(v, int | float) and not isinstance(v, bool)]
    columns = _columns([example.good] * 3)
    first = numeric[0]
    for label, change in [
        ("out of range", {first: [columns[first][0], -1.0e9, columns[first][2]]}),
        ("boolean", {first: [columns[first][0], True, columns[first][2]]}),
        ("whole numbers", {first: [int(v) if float(v).is_integer() else v for v in columns[first]]}),
        ("numbers for an option", {o: [1.0, 2.0, 3.0] for o in example.good if isinstance(example.good[o], str)}),
        ("unknown field", {"not_a_field": [1.0, 2.0, 3.0]}),
        ("another length", {first: columns[first] + [columns[first][0]]}),
        ("one value for all", {first: columns[first][0]}),
    ]:
        batches.append((label, {"columns": {**columns, **change}}))
    return batches


@pytest.mark.parametrize("name", COLUMN_NAMES)
def test_columns_read_a_list_at_a_time_answer_as_read_whole(client, name):
    for label, batch in _batches(name):
        body = json.dumps(batch).encode()
        assert jsonparse.by_columns(body) is not None, label  # the column-at-a-time path is taken
        whole = _answer(client, name, body, by_columns=False)
        assert _answer(client, name, body, by_columns=True) == whole, label
