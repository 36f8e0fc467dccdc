"""Every failure as one RFC 9457 problem document (``application/problem+json``)."""

from __future__ import annotations

import logging

import orjson
from flask import Flask, Response, has_request_context
from werkzeug.exceptions import HTTPException

from service.api.observability import request_id

PROBLEM_TYPE = "application/problem+json"
INVALID_INPUT = "urn:meanline:problem:invalid-input"
PHYSICALLY_IMPOSSIBLE = "urn:meanline:problem:physically-impossible"
TOO_LARGE = "urn:meanline:problem:too-large"
MALFORMED = "urn:meanline:problem:malformed-json"
UNAUTHORIZED = "urn:meanline:problem:unauthorized"
FORBIDDEN = "urn:meanline:problem:forbidden"
STOPPED = "urn:meanline:problem:request-stopped"
INTERNAL = "urn:meanline:problem:internal-error"

#: How many field errors one response lists at most; the rest are counted.
MAX_LISTED_ERRORS = 200

log = logging.getLogger(__name__)


class Problem(Exception):
    """A failure that the error handler turns into a problem document.

    Parameters
    ----------
    status : int
        HTTP status.
    title : str
        Short, fixed summary of the problem type.
    detail : str
        What went wrong in this request, in words the caller can act on.
    type_ : str
        URI of the problem type.
    errors : list of (str, str), optional
        JSON Pointers into the request body with what is wrong there.
    """

    def __init__(self, status: int, title: str, detail: str, type_: str = "about:blank", errors=None):
        super().__init__(detail)
        self.status = status
        self.title = title
        self.detail = detail
        self.type = type_
        self.errors = list(errors or [])
        self.not_listed = 0  # errors counted but not in ``errors``


def invalid_input(errors, detail: str | None = None) -> Problem:
    """422 naming every offending field by JSON Pointer.

    An entry ``(None, count)`` stands for ``count`` errors that were counted but not spelled out
    (see :func:`unlisted`): they add to the count and to ``errors_not_listed``.
    """
    errors = list(errors)
    not_listed = sum(error[1] for error in errors if error[0] is None)
    errors = sorted({error for error in errors if error[0] is not None},
                    key=lambda item: (_pointer_sort_key(item[0]), item[1]))
    problem = Problem(
        422,
        "Invalid input",
        detail or f"{len(errors) + not_listed} input value(s) are missing, unknown or out of range.",
        INVALID_INPUT,
        errors,
    )
    problem.not_listed = not_listed
    return problem


def unlisted(count: int) -> tuple[None, int]:
    """An entry of an error list for ``count`` errors beyond those listed (see :func:`invalid_input`)."""
    return (None, count)


def _pointer_sort_key(pointer: str):
    return [(0, int(part), "") if part.isdigit() else (1, 0, part) for part in pointer.split("/")]


def _utf8(text: str) -> str:
    # JSON may spell a lone surrogate (\ud800) in a key, which then comes back in a pointer or a
    # detail; UTF-8 cannot encode it (orjson raised, a 500), so it is shown as U+FFFD.
    return text.encode("utf-16", "surrogatepass").decode("utf-16", "replace")


def problem_response(problem: Problem, extra_headers=None, identifier: str | None = None) -> Response:
    """The problem document of ``problem``, with the request's id (``identifier`` outside a
    request's context)."""
    body = {"type": problem.type, "title": problem.title, "status": problem.status, "detail": _utf8(problem.detail)}
    if problem.errors:
        listed = problem.errors[:MAX_LISTED_ERRORS]
        # An entry may name a query parameter too: (pointer, detail, parameter).
        body["errors"] = [{"pointer": _utf8(pointer), "detail": _utf8(detail),
                           **({"parameter": _utf8(rest[0])} if rest else {})} for pointer, detail, *rest in listed]
        if len(problem.errors) + problem.not_listed > len(listed):
            body["errors_not_listed"] = len(problem.errors) - len(listed) + problem.not_listed
    if has_request_context():
        body["request_id"] = request_id()
    elif identifier is not None:
        body["request_id"] = identifier
    response = Response(orjson.dumps(body), status=problem.status, mimetype=PROBLEM_TYPE)
    response.headers["Cache-Control"] = "no-store"
    for name, value in (extra_headers or {}).items():
        response.headers[name] = value
    return response


def register_error_handlers(app: Flask) -> None:
    """Turn every exception, expected or not, into a problem document without a traceback."""

    @app.errorhandler(Problem)
    def _problem(problem: Problem):
        return problem_response(problem)

    @app.errorhandler(HTTPException)
    def _http(error: HTTPException):
        headers = {k: v for k, v in error.get_headers() if k.lower() in ("allow", "www-authenticate")}
        status = error.code or 500
        if status == 413:  # the same problem type as the service's own size limits
            return problem_response(Problem(413, "Content Too Large", "The body is over the size limit. Split the "
                                            "batch.", TOO_LARGE), headers)
        return problem_response(Problem(status, error.name, error.description or error.name), headers)

    @app.errorhandler(Exception)
    def _unexpected(error: Exception):
        log.exception("unhandled error")
        return problem_response(
            Problem(500, "Internal error", "The service failed to answer; this is a bug and has been logged.",
                    INTERNAL)
        )
