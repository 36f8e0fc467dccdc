"""The service's one JSON boundary: Flask's JSON provider (``app.json``), with orjson behind it.

Every JSON request body is read by :meth:`ServiceJSONProvider.loads` and every JSON answer
written by :meth:`ServiceJSONProvider.response` (or :meth:`~ServiceJSONProvider.dumps`), reached
as ``current_app.json`` (``app.json`` before a request). Problem documents, which are also written
outside a request (a request stopped by the server), use :func:`dumps_bytes`, the provider's own
writer.

Reading is orjson's with the standard library's strictness (:mod:`service.api.jsonparse`): a key
given twice in one object is a 400, ``NaN`` and integers beyond 64 bits are read as the standard
library reads them, and a large columns body is read a column at a time. Writing is orjson's with
``OPT_SERIALIZE_NUMPY``: numpy arrays are written as lists, NaN and the infinities as ``null``.
An answer of many cases is written and sent in pieces (:mod:`service.api.jsonwrite`, the rows of
a batch by :mod:`service.api.rowstext`), with the same bytes as one ``orjson.dumps``.

The hand-written pieces stay for measured reasons (``python -m tests.benchmarks``, figures in
DEVELOPERS.md, "Libraries and why"): the column-at-a-time reader for the worker's peak memory over
the body size, the rows text writer for the time of a rows answer.
"""

from __future__ import annotations

import json
from collections import Counter
from typing import Any

import orjson
from flask import Response
from flask.json.provider import JSONProvider

from service.api import jsonparse, jsonwrite
from service.api.problems import MALFORMED, Problem

OPTION = jsonwrite.OPTION
#: Integer literals up to this many digits are read as ``int``; longer ones as the nearest float.
INT_DIGITS = 18


def dumps_bytes(value: Any) -> bytes:
    """``value`` as JSON text (UTF-8): orjson's, numpy arrays as lists, NaN and infinities as null."""
    return orjson.dumps(value, option=OPTION)


def parse_strictly(body: bytes | bytearray) -> Any:
    """The standard library's reading of ``body``: a key given twice in one object refused (a 400
    problem), ``NaN`` and ``Infinity`` read, an integer literal of more than :data:`INT_DIGITS`
    digits read as the nearest float (infinity beyond the double range)."""
    return json.loads(body.decode("utf-8"), object_pairs_hook=_reject_duplicate_keys, parse_int=_parse_int)


def _reject_duplicate_keys(pairs):
    result = dict(pairs)
    if len(result) != len(pairs):
        counts = Counter(name for name, _ in pairs)  # linear: one count per name, not a scan per name
        duplicates = sorted(name for name, count in counts.items() if count > 1)
        shown = ", ".join(duplicates[:20]) + (f" and {len(duplicates) - 20} more" if len(duplicates) > 20 else "")
        raise Problem(400, "Malformed JSON", f"Duplicate keys in one object: {shown}.", MALFORMED)
    return result


def _parse_int(text: str):
    # An integer literal beyond int64 becomes a float (inf beyond the double range), so the fields
    # report it as out of range or not finite; as a Python int it would overflow float() (a 500),
    # or past 4300 digits fail inside the parser.
    return int(text) if len(text) <= INT_DIGITS else float(text)


class ServiceJSONProvider(JSONProvider):
    """Flask's JSON operations done the service's way (see the module note). Keyword arguments of
    the standard library's ``json`` functions are not taken: the text is always orjson's."""

    mimetype = "application/json"

    def loads(self, s: str | bytes | bytearray, **kwargs: Any) -> Any:
        """The JSON value of a text or UTF-8 bytes, as :func:`parse_strictly` reads it (orjson
        first; a large columns body a column at a time, its lists of numbers as float64 arrays).

        Raises
        ------
        Problem
            400 for a key given twice in one object.
        json.JSONDecodeError, UnicodeDecodeError, RecursionError
            For text that is not JSON, bytes that are not UTF-8, nesting too deep to read.
        """
        body = s.encode("utf-8") if isinstance(s, str) else s
        return jsonparse.loads(body, strict=parse_strictly)

    def dumps(self, obj: Any, **kwargs: Any) -> str:
        return dumps_bytes(obj).decode("utf-8")

    def response(self, *args: Any, **kwargs: Any) -> Response:
        """The value as a JSON answer; a large batch answer written and sent in pieces."""
        return jsonwrite.response(self._prepare_response_obj(args, kwargs), mimetype=self.mimetype)
