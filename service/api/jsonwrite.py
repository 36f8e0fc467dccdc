"""Response bodies written as JSON, a large batch in pieces as it is sent.

A 100,000-case columns answer of the triangles is about 90 MB of JSON: written at once it would
sit in the worker beside the arrays it came from, several times the request's size. Written
piece by piece (one numpy column, one slice of rows at a time, each by orjson), a worker holds
one piece at a time and the first bytes leave while the rest is written. The text is the same,
byte for byte, as ``orjson.dumps(body, option=OPT_SERIALIZE_NUMPY)``.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import numpy as np
import orjson
from flask import Response

OPTION = orjson.OPT_SERIALIZE_NUMPY
#: Answers of at least this many cases are sent in pieces (below it, with a Content-Length).
STREAM_CASES = 5_000
#: Pieces are gathered up to about this size before they are handed to the server.
PIECE_BYTES = 1 << 18
#: A long list of objects (rows) is written this many items at a time.
ROWS_PER_PIECE = 1_000
#: A long array (a column) is written this many numbers at a time: the text of a slice stays in
#: the processor's cache and the allocator's reused memory, where the text of a whole column of
#: a million cases (about 20 MB) would be new memory every time.
NUMBERS_PER_PIECE = 1 << 16


def response(body: Any, mimetype: str = "application/json") -> Response:
    """``body`` as a JSON response; a large batch answer streamed in pieces."""
    if _cases(body) >= STREAM_CASES:
        return Response(pieces(body), mimetype=mimetype)
    if isinstance(body, dict) and any(hasattr(body.get(key), "json_pieces") for key in ("results", "errors")):
        return Response(b"".join(pieces(body)), mimetype=mimetype)
    return Response(orjson.dumps(body, option=OPTION), mimetype=mimetype)


def _cases(body: Any) -> int:
    if not isinstance(body, dict):
        return 0
    results = body.get("results")
    if isinstance(results, list) or hasattr(results, "json_pieces"):
        return len(results)
    columns = body.get("columns")
    if isinstance(columns, dict):
        return max((len(v) for v in columns.values() if isinstance(v, np.ndarray | list)), default=0)
    return 0


def pieces(value: Any) -> Iterator[bytes]:
    """The JSON text of ``value`` in pieces of about :data:`PIECE_BYTES` or more."""
    buffer: list[bytes] = []
    size = 0
    for part in _parts(value):
        buffer.append(part)
        size += len(part)
        if size >= PIECE_BYTES:
            yield b"".join(buffer)
            buffer, size = [], 0
    if buffer:
        yield b"".join(buffer)


def _parts(value: Any) -> Iterator[bytes]:
    if type(value) is dict:
        separator = b"{"
        for key, item in value.items():
            if type(key) is not str:  # as orjson.dumps(value) would refuse it
                raise TypeError("Dict key must be str")
            yield separator + orjson.dumps(key) + b":"
            yield from _parts(item)
            separator = b","
        yield b"}" if separator == b"," else b"{}"
    elif hasattr(value, "json_pieces"):  # text that writes itself in pieces (rows of a batch)
        yield from value.json_pieces()
    elif (type(value) is np.ndarray and value.ndim == 1 and len(value) > NUMBERS_PER_PIECE
          and value.flags.c_contiguous):
        separator = b"["
        for start in range(0, len(value), NUMBERS_PER_PIECE):
            yield separator + orjson.dumps(value[start:start + NUMBERS_PER_PIECE], option=OPTION)[1:-1]
            separator = b","
        yield b"]"
    elif type(value) is list and len(value) > ROWS_PER_PIECE:
        separator = b"["
        for start in range(0, len(value), ROWS_PER_PIECE):
            yield separator + orjson.dumps(value[start:start + ROWS_PER_PIECE], option=OPTION)[1:-1]
            separator = b","
        yield b"]"
    else:
        yield orjson.dumps(value, option=OPTION)
