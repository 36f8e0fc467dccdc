"""The bad-input corpus (tests/corpus/bad_input.json) sent to every calculation endpoint.

Each case breaks a request in one way: not JSON, not UTF-8, not application/json, not an object,
unknown, missing or mistyped fields, non-finite and extreme numbers, meaningless physical
values, bad batches. Whatever comes in, the answer must be the documented problem document
(RFC 9457) with the JSON Pointer of the field at fault, or a computed answer where the input is
valid: never a 500, a traceback, a hang, or a non-finite number in a 200.

The calculations come from service.api.registry.CALCULATIONS. Each is broken from a valid case:
its own in tests/corpus/valid_cases.json, or, for a calculation that has none there, the valid
cases of its entry in tests/api/examples.py (every input mode, the variants and the good case).
A case built from the schema alone (every required field inside its documented range) is only
checked to be schema-valid: it may be physically impossible.
"""

from __future__ import annotations

import json
import math
import re
import signal
import urllib.parse
from pathlib import Path

import numpy as np
import pytest

from service import create_app
from service.api.fields import Option, Quantity, QuantityList
from service.api.problems import INVALID_INPUT, PHYSICALLY_IMPOSSIBLE
from service.api.registry import CALCULATIONS
from tests.api import examples

CORPUS_DIR = Path(__file__).resolve().parents[1] / "corpus"
CORPUS = json.loads((CORPUS_DIR / "bad_input.json").read_text())
VALID_CASES = json.loads((CORPUS_DIR / "valid_cases.json").read_text())["cases"]
MIN_CORPUS_SIZE = 40

#: Small limits, so that "over the limit" costs little; the long strings stay under the body limit.
MAX_BODY_BYTES = 1024 * 1024
MAX_CASES = 8
APP = create_app({"MAX_BODY_BYTES": MAX_BODY_BYTES, "MAX_CASES": MAX_CASES, "API_KEYS": None})
#: A request that takes longer than this is a hang (a bound for the test, not a timing check).
HANG_SECONDS = 20

SELECTOR = re.compile(r"\{([a-z]+)(?::(\d+))?\}")
UNITS = {"temperature": "K", "pressure": "Pa", "length": "m", "angle": "deg"}


class NotApplicable(LookupError):
    """The endpoint's valid case has no field of the kind a case selects."""


# -- a valid case for every calculation -----------------------------------------------------------


def _inside(field: Quantity, alternate: bool = False):
    """A value inside the field's documented range: a quarter (alternately three quarters) of the way
    through a bounded range, so that two angles differ; one above a lower bound otherwise."""
    low, high = field.minimum, field.maximum
    if low is not None and high is not None and high - low < 1e6:
        value = low + (high - low) * (0.75 if alternate else 0.25)
    elif low is not None:
        value = low + 1
    elif high is not None:
        value = high - 1
    else:
        value = 1.0
    return int(math.ceil(value)) if field.integer else float(value)


def _schema_case(calculation) -> dict:
    """The first input mode's required fields, each at a value inside its range."""
    schema = calculation._case_schema
    mode = calculation.forms[0]
    case = {}
    for name, field in schema.fields.items():
        required = field.required or name in mode.required or name in mode.when
        if not required:
            continue
        if isinstance(field, Option):
            case[name] = mode.when[name][0] if name in mode.when else field.choices[0]
        elif isinstance(field, QuantityList):
            case[name] = [_inside(field.item)] * 2
        elif isinstance(field, Quantity):
            case[name] = _inside(field, alternate=len(case) % 2 == 1)
    for group in calculation.together:
        if any(name in case for name in group):
            for name in group:
                case.setdefault(name, _inside(schema.fields[name]))
    for name, needed in calculation.requires:
        if name in case:
            case.setdefault(needed, _inside(schema.fields[needed]))
    return case


def valid_cases(calculation) -> list[dict]:
    if calculation.name in VALID_CASES:
        cases = VALID_CASES[calculation.name]
    elif calculation.name in examples.EXAMPLES:
        cases = examples.valid_cases(calculation.name)
    else:  # no example yet: tests/api/test_shapes.py::test_every_calculation_has_examples says so
        cases = [_schema_case(calculation)]
    return [dict(case) for case in cases]


# -- selectors: {number}, {angle}, ... resolved against a calculation's valid case --------------------


def _fields_of_kind(calculation, base: dict, kind: str) -> list[str]:
    fields = calculation._case_schema.fields
    names = [name for name in base if name in fields]
    if kind == "number":
        return [n for n in names if isinstance(fields[n], Quantity) and not fields[n].integer]
    if kind == "positive":
        return [n for n in names if isinstance(fields[n], Quantity) and fields[n].minimum == 0
                and fields[n].exclusive_minimum and fields[n].maximum is None]
    if kind in UNITS:
        return [n for n in names if isinstance(fields[n], Quantity) and fields[n].unit == UNITS[kind]]
    if kind == "optional":  # a number with no default value of its own (cp, gamma: the gas's)
        return [n for n in names if isinstance(fields[n], Quantity) and fields[n].load_default is None]
    if kind == "option":
        return [n for n in names if isinstance(fields[n], Option)]
    if kind == "required":
        mode_required = set.intersection(*(set(m.required) for m in calculation.forms))
        return [n for n in names if fields[n].required or n in mode_required] or _fields_of_kind(
            calculation, base, "number")
    raise ValueError(f"unknown selector kind {kind!r}")


def resolve(text: str, calculation, base: dict) -> str:
    def one(match):
        kind, position = match.group(1), int(match.group(2) or 1)
        names = _fields_of_kind(calculation, base, kind)
        if len(names) < position:
            raise NotApplicable(f"the valid case of {calculation.name} has no field for {match.group(0)}")
        return names[position - 1]

    return SELECTOR.sub(one, text)


# -- building the request ------------------------------------------------------------------------------


def _text(value) -> str:
    """A string, or [text, count] parts (count may be "max_body_bytes")."""
    if isinstance(value, str):
        return value
    return "".join(part * (MAX_BODY_BYTES if count == "max_body_bytes" else count) for part, count in value)


def _value(value):
    if isinstance(value, dict) and set(value) == {"$repeat"}:
        text, count = value["$repeat"]
        return text * count
    return value


def _with_base(value, base):
    if value == "$base":
        return dict(base)
    if isinstance(value, list):
        return [_with_base(v, base) for v in value]
    if isinstance(value, dict):
        return {k: _with_base(v, base) for k, v in value.items()}
    return value


def _dumps_with_raw(document, raw_tokens: dict[str, str]) -> str:
    """JSON text of document, with each placeholder string replaced by its raw token."""
    text = json.dumps(document)
    for placeholder, token in raw_tokens.items():
        text = text.replace(json.dumps(placeholder), token)
    return text


def build_query(case: dict, calculation) -> tuple[str, dict]:
    """The GET form's URL (path and query) and valid case (base) of a corpus case with ``get``."""
    last = NotApplicable(f"{calculation.name} has no valid case")
    for base in valid_cases(calculation):
        try:
            edit, edited = case["get"], dict(base)
            for selector, value in edit.get("set", {}).items():
                edited[resolve(selector, calculation, base)] = value
            for selector in edit.get("delete", []):
                edited.pop(resolve(selector, calculation, base))
            pairs = [(name, ",".join(map(str, value)) if isinstance(value, list) else str(value))
                     for name, value in edited.items()]
            extra = resolve(edit.get("extra", ""), calculation, base)
            return f"{calculation.path}?{urllib.parse.urlencode(pairs)}{extra}", base
        except NotApplicable as reason:
            last = reason
    raise last


def build_request(case: dict, calculation) -> tuple[bytes, str | None, dict]:
    """The body bytes, Content-Type and valid case (base) of a corpus case for one calculation."""
    for base in valid_cases(calculation):
        try:
            return (*_build(case, calculation, base), base)
        except NotApplicable as reason:
            last = reason
    raise last


def _build(case: dict, calculation, base: dict) -> tuple[bytes, str | None]:
    content_type = case.get("content_type", CORPUS["content_type_default"])
    if "raw" in case:
        return _text(case["raw"]).encode("utf-8"), content_type
    if "raw_hex" in case:
        return bytes.fromhex(case["raw_hex"]), content_type
    if "json" in case:
        document = case["json"]
        if isinstance(document, dict) and "columns" in document and not calculation.columns and document["columns"]:
            raise NotApplicable(f"{calculation.name} takes no columns (its refusal is tested in tests/api)")
        if document == {"columns": {}} and not calculation.columns:
            raise NotApplicable(f"{calculation.name} takes no columns (its refusal is tested in tests/api)")
        return json.dumps(_with_base(document, base)).encode("utf-8"), content_type

    edit, shape = case["edit"], case.get("shape", "single")
    edited, raw_tokens = dict(base), {}
    for selector, value in edit.get("set", {}).items():
        edited[resolve(selector, calculation, base)] = _value(value)
    for number, (selector, token) in enumerate(edit.get("set_raw", {}).items()):
        placeholder = f"@@raw-token-{number}@@"
        edited[resolve(selector, calculation, base)] = placeholder
        raw_tokens[placeholder] = _text(token)
    for selector in edit.get("delete", []):
        edited.pop(resolve(selector, calculation, base))
    changed = [name for name in edited if name not in base or not _same_json(edited[name], base[name])]

    if shape.startswith("columns") and not calculation.columns:
        raise NotApplicable(f"{calculation.name} takes no columns (its refusal is tested in tests/api)")
    if shape == "single":
        document = edited
    elif shape == "rows":
        document = {"cases": [base, edited]}
    elif shape == "columns":
        columns = dict(base)
        for name in changed:
            columns[name] = [base[name], edited[name]] if name in base else edited[name]
        for selector, length in edit.get("lists", {}).items():
            name = resolve(selector, calculation, base)
            columns[name] = [base[name]] * length
        document = {"columns": columns}
    elif shape == "rows_over_limit":
        document = {"cases": [base] * (MAX_CASES + 1)}
    elif shape == "columns_over_limit":
        name = resolve("{number}", calculation, base)
        document = {"columns": {**base, name: [base[name]] * (MAX_CASES + 1)}}
    else:
        raise ValueError(f"unknown shape {shape!r}")

    text = _dumps_with_raw(document, raw_tokens)
    if "duplicate" in edit or "raw_member" in edit:
        if "duplicate" in edit:
            name = resolve(edit["duplicate"], calculation, base)
            member = f"{json.dumps(name)}: {json.dumps(base[name])}"
        else:
            member = _text(edit["raw_member"])
        # Into the last case object: the single case, or the second row.
        text = text[: text.rindex("}") - (1 if shape == "rows" else 0)] + ", " + member + text[
            text.rindex("}") - (1 if shape == "rows" else 0):]
    return text.encode("utf-8"), content_type


def _same_json(a, b) -> bool:
    """Whether two values are written as the same JSON. Python's ``==`` takes ``True`` for ``1`` and
    ``1.0``, and ``1`` for ``1.0``: an edit of that kind would be dropped from a columns request."""
    return type(a) is type(b) and json.dumps(a) == json.dumps(b)


def _edited_field(case: dict, calculation, base: dict) -> tuple[str, float]:
    (selector, token), = case["edit"]["set_raw"].items()
    return resolve(selector, calculation, base), float(_text(token))


# -- what every answer must satisfy ----------------------------------------------------------------------


def _no_constants(name):
    raise AssertionError(f"non-finite number {name} in a response body")


def _strict_json(data: bytes):
    return json.loads(data, parse_constant=_no_constants)


def _check_problem(response, status: int) -> dict:
    assert response.status_code == status, response.get_data(as_text=True)[:500]
    assert response.mimetype == "application/problem+json"
    assert response.headers["Cache-Control"] == "no-store"
    problem = _strict_json(response.get_data())
    assert {"type", "title", "status", "detail"} <= set(problem)
    assert problem["status"] == status
    return problem


def _check_computed(response, shape: str) -> None:
    """A computed answer: 200 (a physically impossible single case: the documented 422)."""
    body = _strict_json(response.get_data())
    if shape == "single":
        if response.status_code == 422:
            assert _check_problem(response, 422)["type"] == PHYSICALLY_IMPOSSIBLE
            return
        assert response.status_code == 200, body
        # No finite wrong number, and no missing one: every single output of a 200 is a number.
        missing = [name for name, value in body.items() if name not in ("checks", "assumed") and value is None]
        assert missing == [], (missing, body)
        return
    assert response.status_code == 200, body
    failed = {error["index"] for error in body["errors"]}
    assert failed <= {0, 1}
    if shape == "rows":
        for index in failed:  # a failed case has no numbers, only the reason in errors
            result = body["results"][index]
            assert all(v is None for k, v in result.items() if k not in ("checks", "assumed")), result
    else:
        for name, column in body["columns"].items():
            if name not in ("checks", "assumed"):
                assert all(column[index] is None for index in failed), name


def _pointers(problem: dict) -> list[str]:
    return [error["pointer"] for error in problem.get("errors", [])]


# -- the test --------------------------------------------------------------------------------------------


def _applicable(case, calculation) -> bool:
    if "each_numeric_field" in case:
        return bool(_extreme_parameters(case, calculation))
    try:
        build_query(case, calculation) if "get" in case else build_request(case, calculation)
    except NotApplicable:
        return False
    return True


def _parameters():
    """Every corpus case with every calculation whose valid cases have the fields it selects."""
    return [pytest.param(case, calculation, id=f"{case['id']}-{calculation.name}")
            for case in CORPUS["cases"] if "each_numeric_field" not in case
            for calculation in CALCULATIONS if _applicable(case, calculation)]


@pytest.fixture
def no_hang():
    """Fail, rather than wait for ever, if one request takes more than HANG_SECONDS."""

    def alarm(signum, frame):
        raise TimeoutError(f"the request did not finish within {HANG_SECONDS} s")

    previous = signal.signal(signal.SIGALRM, alarm)
    signal.alarm(HANG_SECONDS)
    yield
    signal.alarm(0)
    signal.signal(signal.SIGALRM, previous)


@pytest.mark.parametrize(("case", "calculation"), _parameters())
def test_bad_input_gets_the_documented_answer(case, calculation, no_hang, caplog):
    if "get" in case:
        url, base = build_query(case, calculation)
        response = APP.test_client().get(url)
    else:
        data, content_type, base = build_request(case, calculation)
        headers = {"Content-Type": content_type} if content_type else {}
        query = f"?{case['query']}" if "query" in case else ""
        response = APP.test_client().post(calculation.path + query, data=data, headers=headers)

    text = response.get_data(as_text=True)
    assert response.status_code < 500, text[:500]
    assert "Traceback" not in text and 'File "' not in text
    assert response.headers["X-Content-Type-Options"] == "nosniff"
    assert not [r for r in caplog.records if r.levelname in ("ERROR", "CRITICAL")]

    expect = case["expect"]
    shape = case.get("shape", "single")
    if expect == "by_range":
        name, value = _edited_field(case, calculation, base)
        field = calculation._case_schema.fields[name]
        if field._out_of_range(np.asarray(value)):
            pointer = {"single": f"/{name}", "rows": f"/cases/1/{name}", "columns": f"/columns/{name}/1"}[shape]
            problem = _check_problem(response, 422)
            assert problem["type"] == INVALID_INPUT
            assert set(_pointers(problem)) == {pointer}, problem
        else:
            _check_computed(response, shape)
        return

    problem = _check_problem(response, expect["status"])
    if "type" in expect:
        assert problem["type"] == expect["type"]
    if "pointer" in expect:
        pointer = resolve(_text(expect["pointer"]), calculation, base)
        pointers = _pointers(problem)
        assert pointer in pointers, (pointer[:200], [p[:200] for p in pointers])
        if expect.get("only"):
            assert set(pointers) == {pointer}, [p[:200] for p in pointers]
    if "parameter" in expect:  # the GET form's (or the query's) parameter at fault
        parameter = resolve(expect["parameter"], calculation, base)
        assert parameter in [error.get("parameter") for error in problem.get("errors", [])], problem


@pytest.mark.parametrize(("edit", "written"), [(True, "true"), (False, "false"), (1, "1")])
def test_an_edit_equal_in_python_but_not_in_json_is_sent(edit, written):
    """A field holding 1.0 (or 0.0) set to true, 1 (or false): the columns request carries the edit."""
    calculation = next(c for c in CALCULATIONS if c.name == "triangles")
    base = {**VALID_CASES["triangles"][0], "reaction": 0.0 if edit is False else 1.0}
    assert APP.test_client().post(calculation.path, json=base).status_code == 200
    data, _ = _build({"edit": {"set": {"reaction": edit}}, "shape": "columns"}, calculation, base)
    assert f'"reaction": [{json.dumps(base["reaction"])}, {written}]' in data.decode()
    response = APP.test_client().post(calculation.path, data=data, headers={"Content-Type": "application/json"})
    if isinstance(edit, bool):  # a boolean is no number: refused where it stands
        assert _pointers(_check_problem(response, 422)) == ["/columns/reaction/1"]
    else:
        _check_computed(response, "columns")


@pytest.mark.parametrize("calculation", CALCULATIONS, ids=lambda c: c.name)
def test_every_valid_case_is_valid(calculation):
    """The bases themselves: a 200 each, so that every 4xx above is the edit's doing."""
    for case in valid_cases(calculation):
        response = APP.test_client().post(calculation.path, json=case)
        assert response.status_code == 200, response.get_data(as_text=True)[:500]


def test_the_corpus_is_large_and_every_case_applies_somewhere(report_figure):
    applies = {case["id"]: [calculation.name for calculation in CALCULATIONS if _applicable(case, calculation)]
               for case in CORPUS["cases"]}
    sent = sum(len(names) for names in applies.values())
    report_figure("bad-input corpus", f"{len(applies)} distinct cases, {sent} requests over "
                                      f"{len(CALCULATIONS)} calculation endpoints")
    assert len(applies) >= MIN_CORPUS_SIZE
    assert [case for case, names in applies.items() if not names] == []


@pytest.mark.parametrize("calculation", CALCULATIONS, ids=lambda c: c.name)
def test_a_case_built_from_the_schema_is_schema_valid(calculation):
    """A case of the first input mode built from the schema alone is accepted as input."""
    response = APP.test_client().post(calculation.path, json=_schema_case(calculation))
    assert response.status_code == 200 or _strict_json(response.get_data())["type"] == PHYSICALLY_IMPOSSIBLE


# -- the extreme magnitudes of every numeric field (corpus cases with each_numeric_field) ----------------


def _numeric_fields(calculation) -> dict:
    return {name: field for name, field in calculation._case_schema.fields.items()
            if isinstance(field, Quantity | QuantityList)}


def _extreme_tokens(case: dict, field) -> list[str]:
    """The case's extreme JSON numbers and, with bounds, each bound of the field and the floats either side."""
    spec = case["each_numeric_field"]
    tokens = list(spec["values"])
    number = field.item if isinstance(field, QuantityList) else field
    if spec.get("bounds"):
        for bound in (number.minimum, number.maximum):
            if bound is not None:
                bound = float(bound)
                tokens += [repr(bound), repr(float(np.nextafter(bound, -np.inf))),
                           repr(float(np.nextafter(bound, np.inf)))]
    return list(dict.fromkeys(tokens))


def _extreme_parameters(case: dict, calculation) -> list[tuple[str, str, str]]:
    """(field, token, shape) of every numeric field of the calculation that some valid case gives."""
    spec = case["each_numeric_field"]
    given = {name for base in valid_cases(calculation) for name in base}
    out = []
    for name, field in _numeric_fields(calculation).items():
        if name not in given:
            continue
        for token in _extreme_tokens(case, field):
            for shape, tokens in spec["shapes"].items():
                if tokens == "all" or token in tokens:
                    out.append((name, token, shape))
    return out


def _extreme_request(calculation, name: str, token: str, shape: str) -> tuple[bytes, dict, str]:
    """Body, the valid case it breaks, and the JSON Pointer of the value set to ``token``."""
    base = next(case for case in valid_cases(calculation) if name in case)
    field = calculation._case_schema.fields[name]
    placeholder = "@@extreme@@"
    edited, suffix = dict(base), ""
    if isinstance(field, QuantityList) and isinstance(base[name], list):
        edited[name] = [placeholder, *base[name][1:]]
        suffix = "/0"
    else:
        edited[name] = placeholder
    document = edited if shape == "single" else {"cases": [base, edited]}
    prefix = "" if shape == "single" else "/cases/1"
    return _dumps_with_raw(document, {placeholder: token}).encode(), base, f"{prefix}/{name}{suffix}"


def _extreme_cases():
    return [pytest.param(calculation, name, token, shape, id=f"{calculation.name}-{name}-{token}-{shape}")
            for case in CORPUS["cases"] if "each_numeric_field" in case
            for calculation in CALCULATIONS for name, token, shape in _extreme_parameters(case, calculation)]


@pytest.mark.parametrize(("calculation", "name", "token", "shape"), _extreme_cases())
def test_extreme_magnitudes_of_every_numeric_field(calculation, name, token, shape, no_hang, caplog):
    """Each numeric field at the extremes of the float range and at its documented bounds: refused at
    that field if outside its range, else computed (a 200 of numbers, a per-case error in a batch,
    or the physically-impossible 422 for one case). Never a 500 or a null in a 200."""
    data, base, pointer = _extreme_request(calculation, name, token, shape)
    response = APP.test_client().post(calculation.path, data=data, headers={"Content-Type": "application/json"})
    text = response.get_data(as_text=True)
    assert response.status_code < 500, text[:500]
    assert not [r for r in caplog.records if r.levelname in ("ERROR", "CRITICAL")]
    field = calculation._case_schema.fields[name]
    number = field.item if isinstance(field, QuantityList) else field
    if number._out_of_range(np.asarray(float(token))):
        problem = _check_problem(response, 422)
        assert problem["type"] == INVALID_INPUT
        assert set(_pointers(problem)) == {pointer}, problem
    else:
        _check_computed(response, shape)
        if shape == "rows":  # the unchanged valid case beside it is computed as ever
            assert 0 not in {error["index"] for error in _strict_json(response.get_data())["errors"]}


@pytest.mark.parametrize("calculation", CALCULATIONS, ids=lambda c: c.name)
def test_every_numeric_field_is_given_by_a_valid_case(calculation):
    """So that the extreme magnitudes reach every numeric field of every endpoint."""
    given = {name for base in valid_cases(calculation) for name in base}
    assert set(_numeric_fields(calculation)) - given == set()
