"""The Flask application factory and the service's own endpoints."""

from __future__ import annotations

import json
import logging
import math
import os
from collections.abc import Mapping

from flask import Blueprint, Flask, Response, current_app, request
from werkzeug.exceptions import RequestEntityTooLarge

from service.api import access, csvio, memory, observability, outputs, query, units
from service.api.calculation import run_calculation, run_drawing
from service.api.declarations import Calculation
from service.api.jsonprovider import ServiceJSONProvider
from service.api.problem_responses import problem_response, register_error_handlers
from service.api.problems import (
    MALFORMED,
    STOPPED,
    TOO_LARGE,
    Problem,
)
from service.api.registry import CALCULATIONS
from service.api.spec import build_spec
from service.version import __version__

JSON, SVG = "application/json", "image/svg+xml"
log = logging.getLogger(__name__)

DEFAULTS = {
    "MAX_BODY_BYTES": 16 * 1024 * 1024,
    "MAX_CASES": 1_000_000,
    "MAX_MEMORY": memory.DEFAULT_MAX_MEMORY,
    "API_KEYS": None,
    "API_KEYS_FILE": None,
    "API_KEYS_IN_QUERY": False,
}
#: Configuration keys read from ``MEANLINE_<KEY>`` environment variables, with their parsers.
ENVIRONMENT = {
    "MAX_BODY_BYTES": int,
    "MAX_CASES": int,
    "MAX_MEMORY": int,
    "API_KEYS": str,
    "API_KEYS_FILE": str,
    "API_KEYS_IN_QUERY": lambda raw: _flag(raw),
}


def _flag(raw: str) -> bool:
    if raw.strip().lower() not in ("0", "1", "true", "false", "yes", "no", ""):
        raise ValueError("give 1 or 0")
    return raw.strip().lower() in ("1", "true", "yes")


def load_config(config: Mapping | None = None) -> dict:
    """Defaults, then ``MEANLINE_*`` environment variables, then the given mapping."""
    settings = dict(DEFAULTS)
    for key, parse in ENVIRONMENT.items():
        raw = os.environ.get(f"MEANLINE_{key}")
        if raw is not None:
            try:
                settings[key] = parse(raw)
            except ValueError as error:
                raise ValueError(f"MEANLINE_{key}={raw!r} is not valid: {error}") from None
    settings.update(config or {})
    return settings


def create_app(config: Mapping | None = None) -> Flask:
    """Create the service.

    Parameters
    ----------
    config : mapping, optional
        Settings that override the defaults and the ``MEANLINE_*`` environment variables:
        ``MAX_BODY_BYTES`` (request body limit, 413 above it), ``MAX_CASES`` (cases per
        request, 413 above it), ``MAX_MEMORY`` (memory one request may take [bytes], 413 for a
        batch whose cases would take more; see :mod:`service.api.memory`), ``LOG_LEVEL`` (else
        ``MEANLINE_LOG_LEVEL``; see :mod:`service.api.observability`), ``API_KEYS`` and ``API_KEYS_FILE`` (see
        :mod:`service.api.access`).
    """
    app = Flask(__name__)
    # The one JSON boundary: request bodies read and answers written by current_app.json.
    app.json = ServiceJSONProvider(app)
    app.config.update(load_config(config))
    # Werkzeug refuses a declared Content-Length above this; a chunked body is cut at it,
    # which read_json() treats as too large.
    app.config["MAX_CONTENT_LENGTH"] = app.config["MAX_BODY_BYTES"]
    register_error_handlers(app)
    app.register_error_handler(RequestEntityTooLarge, _too_large)
    # Middleware from the inside out: the answer to a stopped request, then request ids, logs and
    # metrics (which so see every answer), then the security headers.
    app.wsgi_app = _answer_when_stopped(app.wsgi_app)
    # Before access: its logging is set up for access's start-up notes.
    observability.init_app(app, [calculation.path for calculation in CALCULATIONS])
    app.before_request(query.check_api_key_parameter)  # before access: a refused query key is a 400, not a 401
    access.init_app(app, configured=bool({"API_KEYS", "API_KEYS_FILE"} & set(config or {})))

    spec_bytes = app.json.dumps(build_spec(list(CALCULATIONS), __version__)).encode("utf-8")
    blueprint = Blueprint("calculations", __name__)
    for calculation in CALCULATIONS:
        blueprint.add_url_rule(calculation.path, endpoint=calculation.name,
                               view_func=_calculation_view(calculation), methods=["POST"])
        blueprint.add_url_rule(calculation.path, endpoint=f"{calculation.name}-get",
                               view_func=_query_view(calculation), methods=["GET"])
    app.register_blueprint(blueprint)

    @app.get("/healthz")
    def healthz():
        return _json({"status": "ok"})

    @app.get("/readyz")
    def readyz():
        return _json({"status": "ready"}) if _computes_known_case() else _not_ready()

    @app.get("/v1/openapi.json")
    def openapi():
        return Response(spec_bytes, mimetype="application/json")

    return app


def _answer_when_stopped(wsgi_app):
    """503 with a problem for a request that gunicorn stops in the middle.

    Over the time limit (MEANLINE_TIMEOUT) gunicorn sends the worker SIGABRT, and on SIGINT or
    SIGQUIT it quits at once; both raise SystemExit inside the request, which gunicorn then
    answered with a bare HTML 500. The worker is already marked to stop, so it exits after this
    answer (and the master replaces it), as it would have without it.
    """

    def app(environ, start_response):
        try:
            return wsgi_app(environ, start_response)
        except SystemExit:
            log.error("request stopped by the server (time limit or shutdown): %s %s",
                      environ.get("REQUEST_METHOD"), environ.get("PATH_INFO"))
            response = problem_response(Problem(
                503, "Request stopped", "The server stopped this request: it ran over the time limit, or the "
                "server is shutting down. Split the batch, or retry.", STOPPED),
                identifier=environ.get(observability.ENVIRON_REQUEST_ID))
            return response(environ, start_response)

    return app


def _calculation_view(calculation: Calculation):
    def view():
        if calculation.render_svg is not None and _prefers_svg():
            svg = run_drawing(calculation, read_json(), current_app.config["MAX_CASES"])
            observability.record_cases(1, {})
            return Response(svg, mimetype=SVG)
        payload = (csvio.rows_payload(calculation, read_csv()) if request.mimetype == csvio.CSV
                   else read_json())
        names, payload = outputs.take(payload)
        system, payload = _unit_system(payload)
        select = _selection(calculation, names, request.args.getlist(query.OUTPUT))
        limits = {"max_memory": current_app.config["MAX_MEMORY"], "select": select}
        if csvio.wants_csv(request) or system == "us":
            body, size = run_calculation(calculation, payload, current_app.config["MAX_CASES"], **limits)
            observability.record_cases(size, body)
            body = units.answer_in_us(calculation, body) if system == "us" else body
            return csvio.response(calculation, body) if csvio.wants_csv(request) else _json(body)
        body, size = run_calculation(calculation, payload, current_app.config["MAX_CASES"], stream=True, **limits)
        observability.record_cases(size, body)
        return _json(body)

    view.__name__ = f"calculate_{calculation.name.replace('-', '_')}"
    return view


def _unit_system(payload):
    """The unit system of the answer (the body's ``units`` or the query's ``units``), and the
    request without it."""
    in_query = _query_system()  # judged where given, also beside the body's
    if isinstance(payload, dict) and "units" in payload:
        payload = dict(payload)
        return units.system(payload.pop("units")), payload
    return in_query, payload


def _query_system() -> str:
    given = request.args.get("units")
    return units.system(*([given] if given is not None else []), parameter="units")


def _selection(calculation: Calculation, names, parameters: list[str]):
    """The outputs selected by the body's ``outputs`` and the query's ``output`` (both: all of them,
    each list judged where it was given)."""
    body = outputs.parse(calculation, names) if names is not outputs.ABSENT else None
    if not parameters:
        return body
    query_selection = outputs.parse(calculation, [n for p in parameters for n in p.split(",")], query.OUTPUT)
    if body is None:
        return query_selection
    return outputs.Selection(body.items + query_selection.items, body.parameter)


def _query_view(calculation: Calculation):
    """``GET /v1/<name>?field=value&...``: one case from the query (see :mod:`service.api.query`)."""

    def view():
        try:
            payload, names = query.case_from_query(calculation, request.args)
            select = outputs.parse(calculation, names, query.OUTPUT) if names is not None else None
            system = _query_system()
            body, size = run_calculation(calculation, payload, current_app.config["MAX_CASES"], select=select)
            body = units.answer_in_us(calculation, body) if system == "us" else body
            text = outputs.one_value(calculation, select, body) if select and len(select.items) == 1 else None
        except Problem as problem:
            raise query.with_parameters(problem) from None
        observability.record_cases(size, body)
        if select is not None and len(select.items) == 1 and not csvio.wants_csv(request):
            return Response(query.text_of(text), mimetype="text/plain")
        if csvio.wants_csv(request):
            return csvio.response(calculation, body)
        return _json(body)

    view.__name__ = f"query_{calculation.name.replace('-', '_')}"
    return view

#: Accept headers that ask for JSON (or anything) without any quality weights.
_PLAIN_ACCEPT = frozenset({"", "*/*", JSON, f"{JSON}, */*", "*/*, application/json"})


def _prefers_svg() -> bool:
    """Whether the Accept header ranks an SVG drawing above JSON (absent or */* means JSON)."""
    accept = request.environ.get("HTTP_ACCEPT", "")
    if accept in _PLAIN_ACCEPT:  # what programs send: no need to parse it
        return False
    return request.accept_mimetypes.best_match([JSON, SVG]) == SVG


def _json(body) -> Response:
    return current_app.json.response(body)


def _body_too_large() -> Problem:
    limit = current_app.config["MAX_BODY_BYTES"]
    return Problem(413, "Content Too Large", f"The body reaches the limit of {limit} bytes. Split the batch.",
                   TOO_LARGE)


def _too_large(error: RequestEntityTooLarge) -> Response:
    # A declared Content-Length over the limit gets the same answer as a chunked body cut at it
    # (werkzeug's own 413 came out as an about:blank problem).
    return problem_response(_body_too_large())


def _read_body(kind: str) -> bytes | bytearray:
    """The request body, with the rules every body shares: no Content-Encoding, the receive timeout,
    chunked framing and the size limit. ``kind`` names the format in the messages (``JSON``, ``CSV``)."""
    encoding = request.headers.get("Content-Encoding", "").strip().lower()
    if encoding not in ("", "identity"):
        # Read as it is, a compressed body would fail as malformed (or, decoded, outgrow the body
        # limit that was checked on its compressed size): say what is wrong instead.
        raise Problem(415, "Unsupported Media Type",
                      f"The service does not decode Content-Encoding {encoding!r}: send the {kind} uncompressed.")
    try:
        body = _request_body()
    except ReceiveTimeout:
        raise Problem(408, "Request Timeout", "The body did not arrive within the receive timeout "
                      "(MEANLINE_RECEIVE_TIMEOUT). Send it faster, or through a buffering proxy.") from None
    except _FRAMING_ERRORS as error:
        # The server found the body's framing broken while the app read it (a chunk size that is
        # not hexadecimal, a chunk without its CRLF, a body that ends early): the client's fault.
        raise Problem(400, "Malformed request body",
                      f"The body could not be read: {type(error).__name__}. Check its chunked framing.",
                      MALFORMED) from None
    # Werkzeug refuses a declared length above the limit itself; a chunked body is cut at the
    # limit instead, so one that reaches it may have been longer.
    limit = current_app.config["MAX_BODY_BYTES"]
    if len(body) > limit or (request.content_length is None and len(body) >= limit):
        raise _body_too_large()
    return body


def read_csv() -> bytes | bytearray:
    """The request body of a ``text/csv`` request, read with the rules of :func:`read_json`."""
    return _read_body("CSV")


def read_json():
    """The request body as JSON, with the statuses of the design brief for every way it can fail."""
    mimetype = request.mimetype or ""
    if not (mimetype == "application/json" or mimetype.endswith("+json")):
        raise Problem(415, "Unsupported Media Type",
                      f"Send the body as application/json, not {mimetype or 'no Content-Type'}.")
    body = _read_body("JSON")
    try:
        return current_app.json.loads(body)
    except UnicodeDecodeError:
        raise Problem(400, "Malformed JSON", "The body is not UTF-8 text.", MALFORMED) from None
    except json.JSONDecodeError as error:
        raise Problem(400, "Malformed JSON", f"The body is not valid JSON: {error}.", MALFORMED) from None
    except RecursionError:
        raise Problem(400, "Malformed JSON", "The body is nested too deeply.", MALFORMED) from None


try:  # the server's errors for a body whose framing is broken, raised where the app reads it
    from gunicorn.http.errors import NoMoreData, ParseException

    _FRAMING_ERRORS: tuple = (ParseException, NoMoreData)
except ImportError:  # another WSGI server
    _FRAMING_ERRORS = ()
try:  # the service's worker: a body that does not arrive within MEANLINE_RECEIVE_TIMEOUT
    from service.worker import ReceiveTimeout
except ImportError:
    ReceiveTimeout = ()

#: A body declared at least this long is read into one buffer of its length, this many bytes at a time.
LARGE_BODY_BYTES = 1 << 20
_READ_STEP = 1 << 20


def _request_body() -> bytes | bytearray:
    """The request body. A large body of declared length is read into one buffer of that length:
    werkzeug's ``get_data`` gathers it in a growing buffer and then copies it, two copies of a
    large body at once, and the grown buffer left behind in the allocator's heap holds memory
    through the parse that follows."""
    length = request.content_length
    if length is None or length < LARGE_BODY_BYTES:
        return request.get_data(cache=False)
    stream = request.stream  # refuses a declared length above the limit, as get_data does
    body = bytearray(length)
    done = 0
    with memoryview(body) as view:
        while done < length:
            count = stream.readinto(view[done:done + _READ_STEP])
            if not count:  # werkzeug reports a client that sends less than it declared
                break
            done += count
    del body[done:]
    return body


def _computes_known_case() -> bool:
    # A compressor stage at phi 0.5, psi 0.4, R 0.5: alpha1 = atan(0.6) by hand.
    try:
        calculation = next(c for c in CALCULATIONS if c.name == "triangles")
        body, _ = run_calculation(calculation, {"machine": "compressor", "flow_coefficient": 0.5,
                                                "loading_coefficient": 0.4, "reaction": 0.5, "blade_speed": 300.0}, 1)
        # Through the response encoder too, as a real answer goes.
        answer = current_app.json.loads(_json(body).get_data())["alpha1"]
        return math.isclose(answer, math.degrees(math.atan(0.6)), rel_tol=1e-12)
    except Exception:  # whatever breaks the self test means "not ready" (503), never a 500
        log.exception("readiness self test failed")
        return False


def _not_ready() -> Response:
    raise Problem(503, "Not ready", "The service failed its known-answer self test.")
