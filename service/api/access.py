"""Access control by API key, and the security headers of every response.

Without configured keys the service is open, as on a developer's machine. When the operator
configures one or more keys (``MEANLINE_API_KEYS``, comma-separated; ``MEANLINE_API_KEYS_FILE``,
one per line; or ``API_KEYS`` and ``API_KEYS_FILE`` in ``create_app(config)``; the keys of all
sources count), every endpoint except the open ones below requires a key, sent as
``X-API-Key: <key>`` or ``Authorization: Bearer <key>``:

- no key: 401 with ``WWW-Authenticate: Bearer realm="meanline-service"``;
- a key that matches none: 403; so does a request that presents both headers with one of them
  wrong (every key presented must be right).

Under gunicorn the master reads the keys at start and on SIGHUP, and every worker inherits them
(:mod:`service.api.keys`), so all workers agree and a bad key file never leaves one without keys.

A presented key is hashed (SHA-256) and compared with the hash of every configured key by
``hmac.compare_digest``, without stopping at the first match, so neither the time taken nor
its variation tells how much of a key was right, or which key matched. Only the hashes are kept
after start; keys are never logged nor echoed in a response.
"""

from __future__ import annotations

import hmac
import logging
from collections.abc import Iterable

from flask import Flask, Response, current_app, request

from service.api import keys
from service.api.keys import API_KEY_HEADER, REALM
from service.api.problem_responses import problem_response
from service.api.problems import FORBIDDEN, UNAUTHORIZED, Problem
from service.api.query import query_keys

#: Routes that stay open when keys are configured: probes, metrics and the API document.
OPEN_ROUTES = frozenset({"/healthz", "/readyz", "/metrics", "/v1/openapi.json"})
#: Headers of every response. The service answers JSON to programs: a browser that is made to
#: load a response anyway must not sniff it into HTML, run or frame anything from it, or leak
#: the calling page's address.
SECURITY_HEADERS = {
    "X-Content-Type-Options": "nosniff",
    "Content-Security-Policy": "default-src 'none'; frame-ancestors 'none'",
    "X-Frame-Options": "DENY",
    "Referrer-Policy": "no-referrer",
}
_EXTENSION = "meanline_access"

log = logging.getLogger(__name__)


_digest = keys.digest
_checked = keys._checked
load_api_keys = keys.load_api_keys


def presented_keys(headers) -> list[str]:
    """The keys a request presents: ``X-API-Key`` and an ``Authorization: Bearer`` token."""
    presented = []
    value = headers.get(API_KEY_HEADER, "").strip()
    if value:
        presented.append(value)
    scheme, _, token = headers.get("Authorization", "").strip().partition(" ")
    if scheme.lower() == "bearer" and token.strip():
        presented.append(token.strip())
    return presented


def key_matches(presented: str, digests: Iterable[bytes]) -> bool:
    """Whether ``presented`` is one of the keys, in time independent of which and how much matched."""
    candidate = _digest(presented)
    matched = False
    for digest in digests:
        matched |= hmac.compare_digest(candidate, digest)
    return matched


def _require_key() -> Response | None:
    digests = current_app.extensions[_EXTENSION]
    # No keys: open. No matched route: 404 and 405 reveal nothing the open API document does not.
    if not digests or request.url_rule is None or request.url_rule.rule in OPEN_ROUTES:
        return None
    if request.method == "OPTIONS":  # what a route allows is public too; preflights carry no key
        return None
    presented = presented_keys(request.headers) + query_keys()
    if not presented:
        return problem_response(
            Problem(401, "Unauthorized", f"This service requires an API key: send it in the {API_KEY_HEADER} "
                    "header or as Authorization: Bearer <key>.", UNAUTHORIZED),
            {"WWW-Authenticate": f'Bearer realm="{REALM}"'},
        )
    # Every key presented must be right: a wrong X-API-Key beside a right Bearer token (or the
    # other way round) is refused. Each is compared in full, whatever the other gave.
    matched = True
    for key in presented:
        matched &= key_matches(key, digests)
    if not matched:
        return problem_response(Problem(403, "Forbidden", "The API key is not valid.", FORBIDDEN))
    return None


def _with_security_headers(wsgi_app):
    """WSGI middleware: the security headers on every answer, including one made outside Flask's
    handling (a request the server stops), and ``Cache-Control: no-store`` on every error."""
    missing_after = [(name.lower(), (name, value)) for name, value in SECURITY_HEADERS.items()]

    def app(environ, start_response):
        def start(status, headers, exc_info=None):
            present = {name.lower() for name, _ in headers}
            headers.extend(header for lowered, header in missing_after if lowered not in present)
            if status[:1] in "45":
                headers[:] = [header for header in headers if header[0].lower() != "cache-control"]
                headers.append(("Cache-Control", "no-store"))
            return start_response(status, headers, exc_info)

        return wsgi_app(environ, start)

    return app


def init_app(app: Flask, configured: bool = False) -> None:
    """Read the keys, require them where they apply, add the security headers.

    Under gunicorn the keys are the ones the master read (at start or on its last SIGHUP), the
    same in every worker, unless ``configured`` (the app's own configuration names a key source,
    which then wins); elsewhere they are read from ``app.config``.
    """
    inherited = keys.server_digests()
    if inherited is not None and not configured:
        digests, source = inherited, "read by the server's master"
    else:
        digests, source = keys.digests(load_api_keys(app.config)), "configured"
    app.extensions[_EXTENSION] = digests
    if digests:
        log.info("API key required on every endpoint but %s (%d keys %s)",
                 ", ".join(sorted(OPEN_ROUTES)), len(digests), source)
    else:
        log.warning("no API keys configured: the calculation endpoints are open to every caller")
    app.before_request(_require_key)
    app.wsgi_app = _with_security_headers(app.wsgi_app)
