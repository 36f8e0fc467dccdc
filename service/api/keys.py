"""API keys: reading and checking the configured keys, and the keys the server's master read.

Free of Flask and of the metrics, so that the gunicorn master can import it: under gunicorn the
master reads the keys (at start, and again on SIGHUP) and every worker, forked from it, inherits
the same digests, whatever the key file says meanwhile. A key file that turns unreadable or empty
on a reload keeps the keys read before (logged as an error), so a bad file never turns a worker
restart into an outage or an open service. See :mod:`service.api.access` for how keys are checked.
"""

from __future__ import annotations

import hashlib
import logging
import os
from collections.abc import Iterable, Mapping
from pathlib import Path

log = logging.getLogger(__name__)

#: The header an API key comes in, and the realm named in a 401's WWW-Authenticate.
API_KEY_HEADER = "X-API-Key"
REALM = "meanline-service"

#: Digests of the keys that the server's master read last; None outside a server (tests, scripts),
#: where every app reads its own configuration.
_server_digests: tuple[bytes, ...] | None = None


def digest(key: str) -> bytes:
    return hashlib.sha256(key.encode("utf-8")).digest()


def digests(keys: Iterable[str]) -> tuple[bytes, ...]:
    """The digests of ``keys``, each key once."""
    return tuple(digest(key) for key in dict.fromkeys(keys))


def _checked(keys: Iterable[str], source: str) -> list[str]:
    checked = []
    for number, key in enumerate(keys, start=1):
        key = key.strip()
        if not key or key.startswith("#"):
            continue
        # A key travels in an HTTP header: visible ASCII only. The message names the position,
        # never the key.
        if not all("!" <= character <= "~" for character in key):
            raise ValueError(f"API key {number} of {source} holds characters other than visible ASCII "
                             "(no spaces, no control characters)")
        checked.append(key)
    return checked


def load_api_keys(config: Mapping) -> list[str]:
    """The configured API keys: ``API_KEYS`` (a comma-separated string or a list) and the lines
    of the file ``API_KEYS_FILE`` (blank lines and lines starting with ``#`` ignored).

    Raises
    ------
    ValueError
        A source that is set but unreadable or holds no key: the service refuses to start rather
        than run open by mistake.
    """
    keys = []
    listed = config.get("API_KEYS")
    if isinstance(listed, str):
        listed = listed.split(",") if listed.strip() else None
    if listed is not None:
        found = _checked(listed, "MEANLINE_API_KEYS (API_KEYS)")
        if not found:
            raise ValueError("MEANLINE_API_KEYS (API_KEYS) is set but holds no key")
        keys += found
    path = config.get("API_KEYS_FILE")
    if path is not None and str(path).strip():
        try:
            lines = Path(path).read_text(encoding="utf-8").splitlines()
        except (OSError, UnicodeDecodeError) as error:
            raise ValueError(f"MEANLINE_API_KEYS_FILE (API_KEYS_FILE) {str(path)!r} cannot be read: "
                             f"{type(error).__name__}") from None
        found = _checked(lines, f"MEANLINE_API_KEYS_FILE (API_KEYS_FILE) {str(path)!r}")
        if not found:
            raise ValueError(f"MEANLINE_API_KEYS_FILE (API_KEYS_FILE) {str(path)!r} holds no key")
        keys += found
    return keys


def environment_config(environ: Mapping = os.environ) -> dict:
    """The key sources of the environment, as ``create_app`` reads them."""
    return {"API_KEYS": environ.get("MEANLINE_API_KEYS"), "API_KEYS_FILE": environ.get("MEANLINE_API_KEYS_FILE")}


def server_digests() -> tuple[bytes, ...] | None:
    """The digests the server's master read last (inherited by its workers), or None."""
    return _server_digests


def read_for_server(environ: Mapping = os.environ) -> int:
    """Read the keys of the environment in the server's master, at start: the number of keys.

    Raises
    ------
    ValueError
        As :func:`load_api_keys`: the server does not start.
    """
    global _server_digests
    _server_digests = digests(load_api_keys(environment_config(environ)))
    return len(_server_digests)


def reload_for_server(environ: Mapping = os.environ, logger: logging.Logger | None = None) -> bool:
    """Read the keys again in the server's master (on SIGHUP, before the new workers start).

    A source that has turned unreadable or empty keeps the keys read before, and an error is
    logged: the workers started next get the last good keys, never none. Whether the keys were
    read.
    """
    global _server_digests
    logger = logger or log
    try:
        found = digests(load_api_keys(environment_config(environ)))
    except ValueError as error:
        kept = len(_server_digests or ())
        logger.error("API KEYS NOT RELOADED: %s. Keeping the %d key(s) read before; fix the key source and send "
                     "SIGHUP again.", error, kept)
        return False
    _server_digests = found
    logger.info("API keys reloaded: %d key(s) configured", len(found))
    return True
