"""Request bodies parsed at orjson's speed with the standard library's strictness.

orjson parses a 100,000-case batch about ten times faster than :func:`json.loads` with an
``object_pairs_hook``, but it keeps the last of two equal keys in an object silently, and it
refuses some texts that the standard library reads (``NaN``, ``1e400``, lone surrogates), which
the service has so far answered with a 422 that names the field. So orjson parses first, and the
strict parser (the caller's) runs again whenever orjson refuses the text or a cheap exact test
cannot rule out a repeated key: the answer is the strict parser's answer, with one difference
that no field can see: an integer beyond 64 bits comes back as the nearest float (orjson's
reading) rather than as an exact ``int``; every numeric field converts it to that float anyway.

A large columns batch is read a column at a time (:func:`loads`): parsed whole, its lists of
Python floats, orjson's own copy of the text and the text itself are all alive at once, about
4.5 times the body. Each list in ``columns`` is parsed alone instead (a piece at a time) and,
if it holds only numbers, kept as the float64 array that the fields make of it anyway, so only a
piece of a column is ever a list. This is the second difference no field can see: an integer in
such a list comes back as the nearest float, as every numeric field reads it.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
import orjson

#: Bodies from this size on are read a column at a time where they can be.
COLUMNS_BYTES = 1 << 20
#: Quotes, brackets and braces up to which a body is looked at for columns: a columns batch has
#: a few per field, rows have several per case.
_MAX_MARKS = 1_024
_MARKS = tuple(ord(c) for c in '"[]{}\\')
_QUOTE, _OPEN_LIST, _CLOSE_LIST, _OPEN_OBJECT, _CLOSE_OBJECT, _BACKSLASH = _MARKS
#: The text is searched for marks, and a list parsed, about this many bytes at a time (a piece
#: stays in the processor's cache, and its Python floats in memory the allocator reuses).
_PIECE_BYTES = 1 << 20


def loads(body: bytes | bytearray, strict: Callable[[bytes], Any]) -> Any:
    """The JSON value of ``body``: ``strict(body)``'s value or exception (see the module note).

    In a large body, a list of numbers that is a value of the top-level ``columns`` object comes
    back as the float64 array ``numpy.asarray(list, dtype=float)`` instead of the list.
    """
    value = by_columns(body) if len(body) >= COLUMNS_BYTES else None
    if value is not None:  # a key given twice has been ruled out
        return value
    try:
        value = orjson.loads(body)
    except orjson.JSONDecodeError:
        return strict(body)
    if may_repeat_keys(body, value):
        return strict(body)
    return value


def by_columns(body: bytes | bytearray) -> dict | None:
    """``orjson.loads(body)`` with every list of numbers in its ``columns`` object as a float64
    array, parsed one list at a time; None where the body is not read so (then the caller parses
    it whole, which also gives the error of a malformed body).

    The text is cut at the lists that are values of an object inside the top-level object and
    hold no quote, bracket or brace: without a backslash anywhere, every quote opens or closes a
    string, so these marks are found by counting. The rest (every key, every other value, each
    list written as ``[]``) is parsed as one small text, and each list is parsed alone: the whole
    is valid JSON exactly when all of these parts are, and holds the same values. A key given
    twice is left to the caller (the cut lists could not be put back by position).
    """
    marks = _marks(body)
    lists = _flat_lists(body, marks) if marks is not None else None
    cut = [span for span in lists or () if span is not None]
    if not cut:
        return None
    view = memoryview(body)
    try:
        value = orjson.loads(_without_lists(view, cut))
    except orjson.JSONDecodeError:
        return None
    if type(value) is not dict or may_repeat_keys(body, value):
        return None
    return value if _put_back(body, view, value, lists) else None


def _marks(body: bytes | bytearray) -> list[int] | None:
    """The sorted positions of the quotes, brackets and braces in ``body``; None for a body with a
    backslash (a quote may then be escaped) or more than :data:`_MAX_MARKS` marks (rows)."""
    marks = []
    for start in range(0, len(body), _PIECE_BYTES):
        stop = start + _PIECE_BYTES
        for mark in _MARKS:
            i = body.find(mark, start, stop)
            while i >= 0:
                if mark == _BACKSLASH or len(marks) == _MAX_MARKS:
                    return None
                marks.append(i)
                i = body.find(mark, i + 1, stop)
    marks.sort()
    return marks


def _flat_lists(body: bytes | bytearray, marks: list[int]) -> list[tuple[int, int] | None] | None:
    """Each list that is a value of an object inside the top-level object, in order: the
    positions of its brackets if nothing is nested in it, else None. None for marks that do not
    balance (a malformed body)."""
    lists, stack, in_string = [], [], False
    for k, i in enumerate(marks):
        mark = body[i]
        if mark == _QUOTE:
            in_string = not in_string
        elif in_string:
            continue
        elif mark in (_OPEN_LIST, _OPEN_OBJECT):
            if mark == _OPEN_LIST and stack == [_OPEN_OBJECT, _OPEN_OBJECT]:
                # A value of an object in the top-level object; cut out if nothing is nested in it.
                flat = k + 1 < len(marks) and body[marks[k + 1]] == _CLOSE_LIST
                lists.append((i, marks[k + 1]) if flat else None)
            stack.append(mark)
        elif not stack or stack.pop() != (_OPEN_LIST if mark == _CLOSE_LIST else _OPEN_OBJECT):
            return None  # unbalanced: malformed
    return None if in_string or stack else lists


def _without_lists(view: memoryview, cut: list[tuple[int, int]]) -> bytes:
    """The text with each cut list written as ``[]``."""
    pieces, start = [], 0
    for first, last in cut:
        pieces += [view[start:first + 1], b"]"]
        start = last + 1
    pieces.append(view[start:])
    return b"".join(pieces)


def _put_back(body, view: memoryview, value: dict, lists: list[tuple[int, int] | None]) -> bool:
    """Each cut list parsed alone and put in its place in ``value`` (those of ``columns`` as float64
    arrays where they hold numbers only); False where the text does not match the value's lists or
    a list does not parse."""
    # Keys are unique, so each object keeps the order of the text: the lists found above, in order.
    places = [(inner, key) for inner in value.values() if type(inner) is dict
              for key, item in inner.items() if type(item) is list]
    if len(places) != len(lists):
        return False
    columns = value.get("columns")
    for (inner, key), span in zip(places, lists, strict=True):
        if span is not None:
            items = _list(body, view, *span, floats=inner is columns)
            if items is None:
                return False
            inner[key] = items
    return True


def _list(body, view: memoryview, first: int, last: int, floats: bool) -> list | np.ndarray | None:
    """The flat list ``body[first:last + 1]`` (``[`` to ``]``), parsed a piece at a time: cut at
    a comma every :data:`_PIECE_BYTES` or so, each piece written as a list of its own. With
    ``floats``, a list of numbers only comes back as a float64 array. None if the text is not a
    list (a piece that is not one, or is empty: a comma too many)."""
    cuts = [first]
    while last - cuts[-1] > _PIECE_BYTES:
        comma = body.find(b",", cuts[-1] + _PIECE_BYTES, last)
        if comma < 0:
            break
        cuts.append(comma)
    cuts.append(last)
    if len(cuts) > 2:
        return _pieces(body, view, cuts, floats)
    try:
        items = orjson.loads(view[first:last + 1])
    except orjson.JSONDecodeError:
        return None
    if items and floats and _numbers_only(body, first, last):
        return np.asarray(items, dtype=float)
    return items  # the list as written (also where it is empty)


def _pieces(body, view: memoryview, cuts: list[int], floats: bool) -> list | np.ndarray | None:
    """The list cut at the commas ``cuts[1:-1]``, each piece parsed as a list of its own."""
    arrays, items = [], None
    for start, stop in zip(cuts, cuts[1:], strict=False):
        try:
            part = orjson.loads(b"".join((b"[", view[start + 1:stop], b"]")))
        except orjson.JSONDecodeError:
            return None
        if not part:  # an empty piece: a comma too many
            return None
        if items is None and floats and _numbers_only(body, start, stop):
            arrays.append(np.asarray(part, dtype=float))
            continue
        if items is None:  # not numbers only after all: the list as it is written
            items = [number for array in arrays for number in array.tolist()]
            arrays = []
        items += part
    return items if items is not None else np.concatenate(arrays) if len(arrays) > 1 else arrays[0]


def _numbers_only(body, start: int, stop: int) -> bool:
    """Whether a piece of a flat list holds numbers only: a literal (true, false, null) is the
    only other value without a quote, and each has a ``t``, ``f`` or ``n``."""
    return all(body.find(letter, start, stop) < 0 for letter in (b"t", b"f", b"n"))


def may_repeat_keys(body: bytes, value: Any) -> bool:
    """Whether some object in the JSON text ``body`` (parsed as ``value``) may hold a key twice.

    Exact when it says no. Every ``:`` outside a string separates a key from its value, so the
    text holds at most ``body.count(b":")`` key-value pairs, while the parsed objects hold one
    pair per distinct key; when the two counts are equal, no key can be repeated. A colon
    inside a string only makes the answer a cautious yes. Each parsed object comes from one
    ``{`` of the text, so the walk through the parsed value stops once it has found as many
    objects as there are braces: a columns batch is settled after two objects, without a look
    at its lists of numbers.
    """
    colons, braces = _count(body, ord(":")), _count(body, ord("{"))
    found = pairs = 0
    if type(value) is dict:
        found, pairs = 1, len(value)
    pending = [value]
    while pending and found < braces:
        node = pending.pop()
        if type(node) is dict:
            children = list(node.values())
        elif type(node) is list:
            children = node
        else:
            continue
        kinds = set(map(type, children))
        if kinds == {dict}:  # rows: a list of case objects, counted at C speed
            found += len(children)
            pairs += sum(map(len, children))
            pending.extend(children)
        elif dict in kinds or list in kinds:
            for child in children:
                if type(child) is dict:
                    found += 1
                    pairs += len(child)
                    pending.append(child)
                elif type(child) is list:
                    pending.append(child)
    return pairs != colons


def _count(body: bytes, byte: int, block: int = 1 << 20) -> int:
    """How many times ``byte`` occurs in ``body``: numpy compares a block at a time (the block's
    mask stays in cache), a few times faster than ``bytes.count``."""
    if len(body) <= block:  # one case: bytes.count costs less than setting numpy up
        return body.count(bytes((byte,)))
    text = np.frombuffer(body, dtype=np.uint8)
    return sum(int(np.count_nonzero(text[start:start + block] == byte)) for start in range(0, len(text), block))
