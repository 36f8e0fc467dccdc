"""Problems written as HTTP answers (``application/problem+json``), and the app's error handlers."""

from __future__ import annotations

import logging

from flask import Flask, Response, has_request_context
from werkzeug.exceptions import HTTPException

from service.api.jsonprovider import dumps_bytes
from service.api.observability import request_id
from service.api.problems import INTERNAL, MAX_LISTED_ERRORS, PROBLEM_TYPE, TOO_LARGE, Problem

log = logging.getLogger(__name__)


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
    response = Response(dumps_bytes(body), status=problem.status, mimetype=PROBLEM_TYPE)
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
