"""The app's JSON provider reads and writes as the standard library's strict json does.

Reference: Python's own :mod:`json`: :func:`json.loads` with an ``object_pairs_hook`` that refuses
a key given twice in one object, and :func:`json.dumps` with ``allow_nan=False`` (JSON has no NaN:
the service writes it as null). The corpus holds repeated keys, ``NaN`` and ``Infinity`` texts,
integers beyond 64 bits and beyond the double range, nested lists, and a columns batch large
enough to be read a column at a time.
"""

import json
import math

import numpy as np
import orjson
import pytest

from service.api import jsonparse
from service.api.app import create_app
from service.api.jsonprovider import ServiceJSONProvider
from service.api.problems import MALFORMED, Problem

APP = create_app({"API_KEYS": None})
PROVIDER = APP.json


class RepeatedKey(ValueError):
    pass


def _refuse_repeats(pairs):
    if len({name for name, _ in pairs}) != len(pairs):
        raise RepeatedKey([name for name, _ in pairs])
    return dict(pairs)


def stdlib_strict(text: bytes):
    return json.loads(text.decode("utf-8"), object_pairs_hook=_refuse_repeats)


def _as_read(value):
    """The value as the numeric fields read it: an integer of more than 18 digits as the nearest
    float (the service's documented reading, either parser's), a numpy array as its list."""
    if isinstance(value, np.ndarray):
        return [_as_read(v) for v in value.tolist()]
    if type(value) is int and abs(value) >= 10**18:
        try:
            return float(value)
        except OverflowError:
            return math.inf if value > 0 else -math.inf
    if isinstance(value, list):
        return [_as_read(v) for v in value]
    if isinstance(value, dict):
        return {k: _as_read(v) for k, v in value.items()}
    return value


def _outcome(parse, text: bytes):
    """What a parser makes of a text, comparable (NaN included): ``("value", its JSON)`` or the kind of refusal."""
    try:
        value = parse(text)
    except (RepeatedKey, Problem) as error:
        assert not isinstance(error, Problem) or (error.status, error.type) == (400, MALFORMED)
        return ("repeated key", None)
    except (ValueError, RecursionError):
        return ("error", None)
    return ("value", json.dumps(_as_read(value), allow_nan=True))


LARGE = jsonparse.COLUMNS_BYTES
_column = np.random.default_rng(7).uniform(-1e3, 1e3, LARGE // 16).tolist()

CORPUS = [
    b'{"a": 1, "a": 2}',
    b'{"a": {"b": [1, {"c": 1, "c": 1}]}}',
    b'[{"x": 1}, {"x": 2, "y": 3, "x": 4}]',
    b'{"a:b": 1, "a": 2}',
    b'{"a": NaN, "b": Infinity, "c": -Infinity}',
    b'[NaN, [NaN, [1.5]]]',
    b'{"a": NaN, "a": 1}',
    b'{"big": 123456789012345678901234567890, "edge": 18446744073709551615, "neg": -9223372036854775808}',
    b'{"huge": 1' + b"0" * 400 + b', "small": 1e-400, "over": 1e400}',
    b'[[[[[[1, [2, [3, []]]]]]]], {}, [], [{}], [[]], null, true, false, "\\u00e9", "\xc3\xa9"]',
    b'{"columns": {"a": [1.0, 2.5, -3e5], "b": [[1, 2], [3]]}, "units": "si"}',
    b'{"a": 1,}',
    b'[1, 2',
    b'\xff\xfe',
    b'{"a": "\\ud800"}',
    b"[" * 100_000 + b"]" * 100_000,
    orjson.dumps({"columns": {"a": _column, "b": _column[::-1], "machine": "compressor"}}),
    orjson.dumps({"columns": {"a": _column, "b": [*_column[:-1], None]}, "units": "us"}),
    orjson.dumps({"columns": {"a": _column, "a2": _column}})[:-2] + b', "a": [1.0]}}',
    orjson.dumps({"columns": {"a": _column}})[:-3] + b', NaN]}}',
]


@pytest.mark.parametrize("text", CORPUS, ids=lambda t: t[:40].decode("utf-8", "replace"))
def test_loads_gives_the_strict_standard_librarys_answer(text):
    assert _outcome(PROVIDER.loads, text) == _outcome(stdlib_strict, text)
    if len(text) < 1000 and text.isascii():  # a text given as str reads as its UTF-8 bytes
        assert _outcome(lambda t: PROVIDER.loads(t.decode()), text) == _outcome(stdlib_strict, text)


def test_the_app_reads_and_writes_through_its_provider():
    assert isinstance(PROVIDER, ServiceJSONProvider)
    problem = APP.test_client().post("/v1/triangles", data=b'{"machine": "compressor", "machine": "turbine"}',
                                     content_type="application/json")
    assert problem.status_code == 400 and problem.get_json()["type"] == MALFORMED
    assert "Duplicate keys in one object: machine." in problem.get_json()["detail"]


def _nan_as_null(value):
    if isinstance(value, np.ndarray):
        return [_nan_as_null(v) for v in value.tolist()]
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, list):
        return [_nan_as_null(v) for v in value]
    if isinstance(value, dict):
        return {k: _nan_as_null(v) for k, v in value.items()}
    return value


VALUES = [
    {"a": math.nan, "b": [math.inf, -math.inf, 1.5, 1e16, 1e-5, -0.0], "c": "é\u2028", "d": None, "e": True},
    [[1, [2, [3, [18446744073709551615, -9223372036854775808]]]], {}, []],
    {"columns": {"x": np.array([1.0, np.nan, 3.0]), "n": np.arange(3)}, "errors": []},
    {"columns": {"x": np.linspace(0.0, 1.0, 70_000), "y": np.full(70_000, np.nan)}, "errors": []},
    {"results": [{"a": float(i), "b": [i, math.nan]} for i in range(6_000)], "errors": []},
]


@pytest.mark.parametrize("value", VALUES, ids=lambda v: type(v).__name__ + str(len(v)))
def test_dumps_and_response_write_the_strict_standard_librarys_json(value):
    expected = _nan_as_null(value)
    json.dumps(expected, allow_nan=False)  # the reference itself is strict JSON
    refuse = {"parse_constant": lambda token: pytest.fail(f"{token} in the text")}
    assert json.loads(PROVIDER.dumps(value), **refuse) == expected
    with APP.app_context():
        answer = PROVIDER.response(value)
    assert answer.mimetype == "application/json"
    assert answer.get_data() == PROVIDER.dumps(value).encode() == orjson.dumps(value, option=orjson.OPT_SERIALIZE_NUMPY)
    assert json.loads(answer.get_data(), **refuse) == expected
