"""The fast request parser answers exactly as the standard library's strict parser does.

Reference: Python's own :func:`json.loads` with an ``object_pairs_hook`` that refuses a key
given twice in one object (the service's strict parser), on texts built here with keys that
repeat often, colons and braces inside strings, and the texts orjson refuses but the standard
library reads.
"""

import json
import math

import numpy as np
import orjson
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from service.api import jsonparse


class RepeatedKey(ValueError):
    pass


def _strict_hook(pairs):
    names = [name for name, _ in pairs]
    if len(set(names)) != len(names):
        raise RepeatedKey(names)
    return dict(pairs)


def strict(body: bytes):
    return json.loads(body.decode("utf-8"), object_pairs_hook=_strict_hook)


def _as_read(value):
    """orjson reads an integer beyond 64 bits as the nearest float, as the numeric fields do."""
    if type(value) is int and not -(2**63) <= value < 2**64 and abs(value) < 2**1024:
        return float(value)
    if isinstance(value, list):
        return [_as_read(v) for v in value]
    if isinstance(value, dict):
        return {k: _as_read(v) for k, v in value.items()}
    return value


def outcome(parse, body: bytes):
    try:
        return ("value", _as_read(parse(body)))
    except RepeatedKey:
        return ("repeated key", None)
    except (ValueError, RecursionError) as error:  # the strict parser's own errors
        return ("error", type(error).__name__)


keys = st.sampled_from(["a", "b", "flow_coefficient", "x:y", "{", "é", ""])
leaves = (st.none() | st.booleans() | st.integers(min_value=-(2**70), max_value=2**70)
          | st.floats(allow_nan=False, allow_infinity=False) | st.text(alphabet="ab:{}\"\\é \n", max_size=6))


def _encode(tree) -> str:
    kind, content = tree
    if kind == "leaf":
        return json.dumps(content)
    if kind == "list":
        return "[" + ",".join(_encode(item) for item in content) + "]"
    return "{" + ", ".join(f"{json.dumps(key)}: {_encode(value)}" for key, value in content) + "}"


trees = st.recursive(
    leaves.map(lambda v: ("leaf", v)),
    lambda children: (st.lists(children, max_size=5).map(lambda items: ("list", items))
                      | st.lists(st.tuples(keys, children), max_size=5).map(lambda pairs: ("object", pairs))),
    max_leaves=30,
)


@settings(max_examples=300, deadline=None)
@given(trees)
def test_same_answer_as_the_strict_parser(tree):
    body = _encode(tree).encode()
    assert outcome(lambda b: jsonparse.loads(b, strict), body) == outcome(strict, body)


@pytest.mark.parametrize(
    "text",
    [
        '{"a": 1, "a": 2}',  # orjson keeps the last silently
        '{"columns": {"a": [1, 2, 3], "b": 4, "a": [5]}}',
        '{"cases": [{"a": 1}, {"a": 1, "b": 2, "b": 3}]}',
        '[[[{"z": [{"q": 1, "q": 1}]}]]]',
        '{"a:": 1, "a:": 2}',
    ],
)
def test_a_repeated_key_anywhere_is_refused(text):
    assert outcome(lambda b: jsonparse.loads(b, strict), text.encode()) == ("repeated key", None)


def test_colons_inside_strings_do_not_hide_a_repeated_key():
    # Two colons in strings and one missing pair: the counts alone cannot tell, the strict parser can.
    body = b'{"a": "1:2", "a": "3"}'
    assert outcome(lambda b: jsonparse.loads(b, strict), body) == ("repeated key", None)
    assert jsonparse.may_repeat_keys(b'{"a": "x:y"}', {"a": "x:y"}) is True  # cautious, not wrong
    assert jsonparse.loads(b'{"a": "x:y"}', strict) == {"a": "x:y"}


def test_a_batch_without_repeated_keys_needs_no_strict_parse():
    columns = b'{"columns": {"a": [1.0, 2.0], "b": 3}}'
    rows = b'{"cases": [{"a": 1.0, "b": 2}, {"a": 2.0, "b": 2}]}'
    assert not jsonparse.may_repeat_keys(columns, json.loads(columns))
    assert not jsonparse.may_repeat_keys(rows, json.loads(rows))


@pytest.mark.parametrize(
    "text", ['{"a": NaN}', '{"a": 1e400}', '{"a": -Infinity}', '"\\ud800"', '{"a": 1' + '0' * 400 + '}'])
def test_texts_that_orjson_refuses_are_read_as_the_standard_library_reads_them(text):
    fast = jsonparse.loads(text.encode(), strict)
    reference = strict(text.encode())
    if isinstance(reference, dict) and isinstance(reference["a"], float) and math.isnan(reference["a"]):
        assert math.isnan(fast["a"])
    else:
        assert _as_read(fast) == _as_read(reference)


# --- a large columns batch read a column at a time -------------------------------------------------


def _numbers_as_floats(value):
    """A value as the columns reading gives it: in a top-level "columns" object, each list of
    numbers (no literal) as floats, an integer as the nearest float (as every numeric field reads it)."""
    if isinstance(value, dict) and isinstance(value.get("columns"), dict):
        columns = {k: [float(n) for n in v] if isinstance(v, list) and v and all(type(n) in (int, float) for n in v)
                   else v for k, v in value["columns"].items()}
        return {**value, "columns": columns}
    return value


def _as_lists(value):
    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, list):
        return [_as_lists(v) for v in value]
    if isinstance(value, dict):
        return {k: _as_lists(v) for k, v in value.items()}
    return value


def _encode_text(tree) -> str:
    """As _encode, with the strings written as they are (no backslash escapes for non-ASCII)."""
    kind, content = tree
    if kind == "leaf":
        return json.dumps(content, ensure_ascii=False)
    if kind == "list":
        return "[" + ",".join(_encode_text(item) for item in content) + "]"
    pairs = (f"{json.dumps(key, ensure_ascii=False)}: {_encode_text(value)}" for key, value in content)
    return "{" + ", ".join(pairs) + "}"


# Texts without a backslash (the ones read a column at a time), with brackets and braces inside
# strings; lists of floats, of integers, mixed, nested; keys unique or, now and then, not. (A colon
# inside a string sends the text to the strict parser, as the tests above check.)
plain_keys = st.sampled_from(["a", "b", "flow_coefficient", "{", "[", "]}", "é", "", "columns"])
plain_leaves = (st.none() | st.booleans() | st.integers(min_value=-(2**70), max_value=2**70)
                | st.floats(allow_nan=False, allow_infinity=False) | st.text(alphabet="ab{}[], é", max_size=6))
plain_trees = st.recursive(
    plain_leaves.map(lambda v: ("leaf", v)),
    lambda children: (st.lists(children, max_size=4).map(lambda items: ("list", items))
                      | st.lists(st.tuples(plain_keys, children), max_size=4, unique_by=lambda pair: pair[0])
                      .map(lambda pairs: ("object", pairs))),
    max_leaves=20,
)
floats = st.lists(st.floats(allow_nan=False, allow_infinity=False), max_size=6).map(lambda v: ("leaf", v))
numbers = st.lists(st.floats(allow_nan=False, allow_infinity=False) | st.integers(-(2**70), 2**70),
                   max_size=6).map(lambda v: ("leaf", v))
column_objects = st.lists(st.tuples(plain_keys, floats | floats | numbers | plain_trees), min_size=1, max_size=6,
                          unique_by=lambda pair: pair[0]).map(lambda pairs: ("object", pairs))
others = st.lists(st.tuples(st.sampled_from(["cases", "x"]), column_objects | plain_trees), max_size=2,
                  unique_by=lambda pair: pair[0])
batches = st.tuples(column_objects | column_objects | plain_trees, others).map(
    lambda parts: ("object", [("columns", parts[0]), *parts[1]]))


def _read_by_columns(body: bytes, piece: int = 1 << 20):
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(jsonparse, "COLUMNS_BYTES", 0)  # every body, not only large ones
        patch.setattr(jsonparse, "_PIECE_BYTES", piece)  # small: lists parsed in many pieces
        return jsonparse.loads(body, strict)


def _by_columns(body: bytes, piece: int):
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(jsonparse, "_PIECE_BYTES", piece)
        return jsonparse.by_columns(body)


pieces = st.sampled_from([1, 5, 16, 1 << 20])


@settings(max_examples=300, deadline=None)
@given(tree=batches, spaced=st.booleans(), piece=pieces)
def test_columns_read_a_list_at_a_time_give_the_strict_parsers_answer(tree, spaced, piece):
    body = _encode_text(tree).encode()
    if spaced:
        body = body.replace(b",", b" ,\n ").replace(b"[", b"[ ")
    assert outcome(lambda b: _as_lists(_read_by_columns(b, piece)), body) == outcome(
        lambda b: _numbers_as_floats(strict(b)), body)
    value = _by_columns(body, piece)
    if value is not None:
        assert _as_lists(value) == _numbers_as_floats(orjson.loads(body))
        # Arrays only where a list of numbers is a value in the top-level "columns" object, and
        # holding those numbers as floats.
        columns = value.get("columns") if isinstance(value.get("columns"), dict) else {}
        for outer, inner in value.items():
            for key, item in (inner.items() if isinstance(inner, dict) else ()):
                if isinstance(item, np.ndarray):
                    written = orjson.loads(body)[outer][key]
                    assert inner is columns and item.dtype == np.float64 and len(item) > 0
                    assert all(type(v) in (int, float) for v in written)
                    assert item.tolist() == [float(v) for v in written]


@settings(max_examples=200, deadline=None)
@given(position=st.floats(0.0, 1.0), damage=st.sampled_from(['', '[', ']', '{', '}', '"', ',', ':', 'x', ' ', '\\']),
       piece=pieces)
def test_damaged_columns_batches_give_the_strict_parsers_error(position, damage, piece):
    body = (b'{"columns": {"row": "rotor", "a": [1.5, 2.25, -3e-05], "b": [[1.0, 2.0], [3.0]], "c": [],'
            b' "d": [true, 1.0], "e": [1, 2.5], "f": {"g": [0.5]}}, "x": {"y": [4.5, 5.5]}}')
    cut = int(position * len(body))
    damaged = body[:cut] + damage.encode() + body[cut + 1:]
    assert outcome(lambda b: _as_lists(_read_by_columns(b, piece)), damaged) == outcome(
        lambda b: _numbers_as_floats(strict(b)), damaged)


def test_a_columns_batch_comes_back_with_its_float_lists_as_arrays():
    body = (b'{"columns": {"row": "rotor", "a": [1.5, 2.25, -3e-05], "b": [[1.0, 2.0], [3.0]], "c": [],'
            b' "d": [true, 1.0], "e": [1, 2.5], "f": {"g": [0.5]}}, "x": {"y": [4.5, 5.5]}}')
    value = _read_by_columns(body)
    columns = value["columns"]
    for key, numbers in (("a", [1.5, 2.25, -3e-05]), ("e", [1.0, 2.5])):
        assert isinstance(columns[key], np.ndarray) and columns[key].dtype == np.float64
        np.testing.assert_array_equal(columns[key], numbers)
    # Everything else as orjson reads it: nested, empty or with a literal lists, other objects.
    assert {k: v for k, v in columns.items() if k not in "ae"} == {
        "row": "rotor", "b": [[1.0, 2.0], [3.0]], "c": [], "d": [True, 1.0], "f": {"g": [0.5]}}
    assert value["x"] == {"y": [4.5, 5.5]}
    # A key given twice inside the columns is still refused.
    assert outcome(_read_by_columns, b'{"columns": {"a": [1.0], "a": [2.0]}}') == ("repeated key", None)


@pytest.mark.parametrize("piece", [1, 7, 1 << 20])
def test_a_long_list_read_in_pieces_is_the_list_as_written(piece):
    floats = [0.1 * k - 3.0 for k in range(200)]
    body = orjson.dumps({"columns": {"a": floats, "b": [*floats, None], "c": [True, *floats], "e": [7, *floats],
                                     "d": "x"}, "x": {"y": floats}})
    value = _by_columns(body, piece)
    np.testing.assert_array_equal(value["columns"]["a"], floats)  # the same floats, bit for bit
    np.testing.assert_array_equal(value["columns"]["e"], [7.0, *floats])
    assert value["columns"]["a"].dtype == np.float64
    # A literal anywhere keeps the list as orjson reads it, as does a list outside "columns".
    assert value["columns"]["b"] == [*floats, None]
    assert value["columns"]["c"] == [True, *floats] and value["columns"]["c"][0] is True
    assert value["x"] == {"y": floats}
    # A comma too many, at a cut or not, leaves the body to the parser that names the error.
    for broken in (body.replace(b",", b",,", 1), body.replace(b"]", b",]", 1)):
        assert _by_columns(broken, piece) is None
        assert outcome(lambda b, piece=piece: _read_by_columns(b, piece), broken) == outcome(strict, broken)
