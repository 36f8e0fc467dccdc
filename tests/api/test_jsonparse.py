"""The fast request parser answers exactly as the standard library's strict parser does.

Reference: Python's own :func:`json.loads` with an ``object_pairs_hook`` that refuses a key
given twice in one object (the service's strict parser), on texts built here with keys that
repeat often, colons and braces inside strings, and the texts orjson refuses but the standard
library reads.
"""

import json
import math

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
