"""Access control by API key (service/api/access.py) and the security headers of every response.

The expected behaviour is the issue's contract: with keys configured every calculation requires
one (401 with WWW-Authenticate without, 403 with a wrong one), compared in constant time against
every key; probes, metrics and the document stay open; without keys the service is open; keys
never appear in logs or bodies. The status codes and the header follow RFC 9110 (sections 15.5.2,
15.5.4 and 11.6.1) and the bearer scheme RFC 6750.
"""

from __future__ import annotations

import hashlib
import hmac
import json
import logging

import pytest

from service import create_app
from service.api import access
from service.api.registry import CALCULATIONS

KEY_ONE = "k1-7d0c6f1e9a2b4c3d8e5f"
KEY_TWO = "k2-0a9b8c7d6e5f4a3b2c1d"
WRONG = "k1-7d0c6f1e9a2b4c3d8e5e"  # differs from KEY_ONE in the last character only
OPEN_PATHS = ("/healthz", "/readyz", "/metrics", "/v1/openapi.json")
# A body is not needed: the key is checked before the body is read.
BODY = {"any": "thing"}


@pytest.fixture
def clean_environment(monkeypatch):
    for name in ("MEANLINE_API_KEYS", "MEANLINE_API_KEYS_FILE"):
        monkeypatch.delenv(name, raising=False)
    return monkeypatch


@pytest.fixture
def keyed(clean_environment):
    return create_app({"API_KEYS": [KEY_ONE, KEY_TWO]}).test_client()


def _calculation_paths():
    return [calculation.path for calculation in CALCULATIONS]


@pytest.mark.parametrize("path", _calculation_paths())
def test_no_key_is_401_with_www_authenticate(keyed, path):
    response = keyed.post(path, json=BODY)
    assert response.status_code == 401
    assert response.mimetype == "application/problem+json"
    assert response.headers["WWW-Authenticate"] == 'Bearer realm="meanline-service"'
    assert response.json["status"] == 401 and response.json["type"] == "urn:meanline:problem:unauthorized"


@pytest.mark.parametrize("path", _calculation_paths())
@pytest.mark.parametrize("headers", [
    {"X-API-Key": WRONG},
    {"Authorization": f"Bearer {WRONG}"},
    {"X-API-Key": KEY_ONE + KEY_TWO},
    {"X-API-Key": KEY_ONE[:-1]},
    {"X-API-Key": WRONG, "Authorization": f"Bearer {KEY_ONE}"},
    {"X-API-Key": KEY_ONE, "Authorization": f"Bearer {WRONG}"},
], ids=["header", "bearer", "two-keys-joined", "prefix", "wrong-header-right-bearer", "right-header-wrong-bearer"])
def test_a_wrong_key_is_403(keyed, path, headers):
    response = keyed.post(path, json=BODY, headers=headers)
    assert response.status_code == 403
    assert response.mimetype == "application/problem+json"
    assert "WWW-Authenticate" not in response.headers


@pytest.mark.parametrize("path", _calculation_paths())
@pytest.mark.parametrize("headers", [
    {"X-API-Key": KEY_ONE},
    {"X-API-Key": f"  {KEY_TWO} "},
    {"Authorization": f"Bearer {KEY_TWO}"},
    {"Authorization": f"bearer {KEY_ONE}"},  # the scheme is case-insensitive (RFC 9110, 11.1)
    {"X-API-Key": KEY_TWO, "Authorization": f"Bearer {KEY_ONE}"},
], ids=["header", "header-padded", "bearer", "bearer-lower-case", "both-right"])
def test_a_right_key_reaches_the_calculation(keyed, path, headers):
    response = keyed.post(path, json=BODY, headers=headers)
    # Past access control, the body is judged: 422 for this one, not 401 or 403.
    assert response.status_code == 422
    assert response.json["type"] == "urn:meanline:problem:invalid-input"


@pytest.mark.parametrize("headers", [
    {"Authorization": f"Basic {KEY_ONE}"},
    {"Authorization": "Bearer"},
    {"Authorization": "Bearer    "},
    {"X-API-Key": ""},
    {"X-API-Key": "   "},
], ids=["basic", "bearer-without-token", "bearer-blank", "empty-header", "blank-header"])
def test_no_usable_key_counts_as_none(keyed, headers):
    response = keyed.post(CALCULATIONS[0].path, json=BODY, headers=headers)
    assert response.status_code == 401


def test_every_route_but_the_open_ones_requires_a_key(keyed):
    """Routes the app has now or gets later (a new calculation) are closed unless listed as open."""
    app = keyed.application
    for rule in app.url_map.iter_rules():
        if rule.endpoint == "static":
            continue
        method = "POST" if "POST" in rule.methods else "GET"
        response = keyed.open(rule.rule, method=method, json=BODY if method == "POST" else None)
        if rule.rule in access.OPEN_ROUTES:
            assert response.status_code not in (401, 403), rule.rule
        else:
            assert response.status_code == 401, rule.rule


@pytest.mark.parametrize("path", OPEN_PATHS)
def test_probes_and_the_document_stay_open(keyed, path):
    assert keyed.get(path).status_code == 200


def test_metrics_is_listed_as_open():
    assert "/metrics" in access.OPEN_ROUTES


def test_not_found_and_method_not_allowed_need_no_key(keyed):
    assert keyed.get("/v1/no-such-thing").status_code == 404
    response = keyed.patch(CALCULATIONS[0].path)  # GET and POST are routes of a calculation
    assert response.status_code == 405
    assert {"GET", "POST"} <= {m.strip() for m in response.headers["Allow"].split(",")}
    # A preflight carries no credentials; what a route allows is in the open document anyway.
    assert keyed.options(CALCULATIONS[0].path).status_code == 200


def test_without_keys_the_service_is_open(clean_environment):
    client = create_app().test_client()
    response = client.post(CALCULATIONS[0].path, json=BODY)
    assert response.status_code == 422  # judged on its body, no key asked for
    # A key sent to an open service is ignored, not refused.
    assert client.post(CALCULATIONS[0].path, json=BODY, headers={"X-API-Key": WRONG}).status_code == 422


# -- where the keys come from ------------------------------------------------------------------------


def _status(app, key):
    return app.test_client().post(CALCULATIONS[0].path, json=BODY, headers={"X-API-Key": key}).status_code


def test_keys_from_the_environment(clean_environment):
    clean_environment.setenv("MEANLINE_API_KEYS", f" {KEY_ONE} ,{KEY_TWO},")
    app = create_app()
    assert _status(app, KEY_ONE) == 422
    assert _status(app, KEY_TWO) == 422
    assert _status(app, WRONG) == 403


def test_keys_from_a_file_with_comments_and_blank_lines(clean_environment, tmp_path):
    path = tmp_path / "api-keys"
    path.write_text(f"# rotated 2026-11\n\n  {KEY_ONE}  \n{KEY_TWO}\n\n")
    clean_environment.setenv("MEANLINE_API_KEYS_FILE", str(path))
    app = create_app()
    assert _status(app, KEY_ONE) == 422
    assert _status(app, KEY_TWO) == 422
    assert _status(app, "# rotated 2026-11") == 403


def test_keys_of_the_environment_and_the_file_both_count(clean_environment, tmp_path):
    path = tmp_path / "api-keys"
    path.write_text(KEY_TWO + "\n")
    clean_environment.setenv("MEANLINE_API_KEYS", KEY_ONE)
    clean_environment.setenv("MEANLINE_API_KEYS_FILE", str(path))
    app = create_app()
    assert _status(app, KEY_ONE) == 422
    assert _status(app, KEY_TWO) == 422


def test_configuration_overrides_the_environment(clean_environment):
    clean_environment.setenv("MEANLINE_API_KEYS", KEY_ONE)
    app = create_app({"API_KEYS": KEY_TWO})
    assert _status(app, KEY_TWO) == 422
    assert _status(app, KEY_ONE) == 403
    assert _status(create_app({"API_KEYS": None}), "") == 422  # explicitly none: open


@pytest.mark.parametrize(("config", "match"), [
    ({"API_KEYS": ","}, "holds no key"),
    ({"API_KEYS": []}, "holds no key"),
    ({"API_KEYS": "good-key-0123,bad key 4567"}, "API key 2 of MEANLINE_API_KEYS"),
    ({"API_KEYS": ["tab\tkey-0123"]}, "visible ASCII"),
    ({"API_KEYS": ["clé-0123456789"]}, "visible ASCII"),
])
def test_unusable_keys_stop_the_start(clean_environment, config, match):
    with pytest.raises(ValueError, match=match) as error:
        create_app(config)
    for key in ("bad key 4567", "tab\tkey-0123", "clé-0123456789", "good-key-0123"):
        assert key not in str(error.value)


def test_a_missing_or_empty_key_file_stops_the_start(clean_environment, tmp_path):
    """Fail closed: an operator who names a key file must not get an open service by mistake."""
    with pytest.raises(ValueError, match="cannot be read: FileNotFoundError"):
        create_app({"API_KEYS_FILE": str(tmp_path / "absent")})
    empty = tmp_path / "empty"
    empty.write_text("\n# no keys yet\n\n")
    with pytest.raises(ValueError, match="holds no key"):
        create_app({"API_KEYS_FILE": str(empty)})
    binary = tmp_path / "binary"
    binary.write_bytes(b"\xff\xfe\x00")
    with pytest.raises(ValueError, match="cannot be read: UnicodeDecodeError"):
        create_app({"API_KEYS_FILE": str(binary)})


# -- constant time -------------------------------------------------------------------------------


@pytest.mark.parametrize("presented", [KEY_ONE, KEY_TWO, WRONG, "x", "y" * 1000])
def test_every_key_is_compared_in_full_whatever_matches(monkeypatch, presented):
    """hmac.compare_digest against every configured key, on equal-length digests: no early exit
    at the first matching key, and nothing that depends on the presented key's length."""
    keys = [KEY_ONE, KEY_TWO, "k3-ffffffffffffffffffff"]
    digests = [hashlib.sha256(key.encode()).digest() for key in keys]
    calls = []
    real = hmac.compare_digest

    def counting(a, b):
        calls.append((len(a), len(b)))
        return real(a, b)

    monkeypatch.setattr(access.hmac, "compare_digest", counting)
    assert access.key_matches(presented, digests) == (presented in keys)
    assert calls == [(32, 32)] * len(keys)


# -- keys never leak ------------------------------------------------------------------------------


def test_keys_appear_in_no_log_and_no_body(clean_environment, caplog, tmp_path):
    path = tmp_path / "api-keys"
    path.write_text(KEY_TWO + "\n")
    caplog.set_level(logging.DEBUG)
    app = create_app({"API_KEYS": KEY_ONE, "API_KEYS_FILE": str(path)})
    client = app.test_client()
    bodies = []
    for headers in ({}, {"X-API-Key": WRONG}, {"X-API-Key": KEY_ONE}, {"Authorization": f"Bearer {KEY_TWO}"},
                    {"Authorization": f"Bearer {WRONG}"}):
        for path_ in (*_calculation_paths(), *OPEN_PATHS, "/v1/no-such-thing"):
            response = client.post(path_, json=BODY, headers=headers) if path_.startswith("/v1/") and \
                path_ != "/v1/openapi.json" else client.get(path_, headers=headers)
            bodies.append(response.get_data(as_text=True) + json.dumps(dict(response.headers)))
    logged = "\n".join(record.getMessage() for record in caplog.records)
    assert "API key required" in logged  # the start is logged, with the number of keys only
    for key in (KEY_ONE, KEY_TWO, WRONG):
        assert key not in logged
        assert not [body for body in bodies if key in body]
    assert KEY_ONE not in json.dumps({k: str(v) for k, v in app.config.items() if k != "API_KEYS"})


# -- the document -----------------------------------------------------------------------------------


def test_the_document_declares_the_schemes_on_every_calculation(clean_environment):
    document = create_app().test_client().get("/v1/openapi.json").json
    schemes = document["components"]["securitySchemes"]
    assert schemes["ApiKey"] == {**schemes["ApiKey"], "type": "apiKey", "in": "header", "name": "X-API-Key"}
    assert schemes["BearerKey"] == {**schemes["BearerKey"], "type": "http", "scheme": "bearer"}
    for path, item in document["paths"].items():
        for operation in item.values():
            if path in OPEN_PATHS:
                assert operation["security"] == [], path  # declared open
            else:
                # The document's own requirement, which an operation may not loosen.
                assert "security" not in operation, path
                assert document["security"] == [{"ApiKey": []}, {"BearerKey": []}], path
                assert {"401", "403"} <= set(operation["responses"]), path
                unauthorized = operation["responses"]["401"]
                if "$ref" in unauthorized:  # a response shared by the operations
                    unauthorized = document["components"]["responses"][unauthorized["$ref"].rsplit("/", 1)[-1]]
                assert "WWW-Authenticate" in unauthorized["headers"]


# -- security headers --------------------------------------------------------------------------------


def _every_kind_of_response(client):
    good = {"machine": "compressor", "flow_coefficient": 0.5, "loading_coefficient": 0.4, "reaction": 0.5,
            "blade_speed": 300}
    key = {"X-API-Key": KEY_ONE}
    return {
        "200 calculation": client.post("/v1/triangles", json=good, headers=key),
        "200 health": client.get("/healthz"),
        "200 readiness": client.get("/readyz"),
        "200 document": client.get("/v1/openapi.json"),
        "400": client.post("/v1/triangles", data="{", content_type="application/json", headers=key),
        "401": client.post("/v1/triangles", json=good),
        "403": client.post("/v1/triangles", json=good, headers={"X-API-Key": WRONG}),
        "404": client.get("/nowhere"),
        "405": client.patch("/v1/triangles"),
        "413": client.post("/v1/triangles", data="x" * 2048, content_type="application/json", headers=key),
        "415": client.post("/v1/triangles", data="{}", content_type="text/plain", headers=key),
        "422": client.post("/v1/triangles", json={}, headers=key),
    }


def test_security_headers_on_every_response(clean_environment):
    client = create_app({"API_KEYS": KEY_ONE, "MAX_BODY_BYTES": 1024}).test_client()
    for kind, response in _every_kind_of_response(client).items():
        assert response.status_code == int(kind[:3]), kind
        assert response.headers["X-Content-Type-Options"] == "nosniff", kind
        assert response.headers["Content-Security-Policy"] == "default-src 'none'; frame-ancestors 'none'", kind
        assert response.headers["X-Frame-Options"] == "DENY", kind
        assert response.headers["Referrer-Policy"] == "no-referrer", kind
        if response.status_code >= 400:
            assert response.headers["Cache-Control"] == "no-store", kind
            assert response.mimetype == "application/problem+json", kind


# -- keys read by the server's master (service/api/keys.py) ----------------------------------------


@pytest.fixture
def server_keys(monkeypatch):
    """The module state a gunicorn master sets, reset after the test."""
    from service.api import keys

    monkeypatch.setattr(keys, "_server_digests", None)
    return keys


def test_an_app_under_the_server_takes_the_master_s_keys_not_the_file_s(server_keys, clean_environment, tmp_path):
    path = tmp_path / "api-keys"
    path.write_text(KEY_ONE + "\n")
    clean_environment.setenv("MEANLINE_API_KEYS_FILE", str(path))
    assert server_keys.read_for_server() == 1
    path.write_text(KEY_TWO + "\n")  # changed, but not reloaded: a new worker keeps to the master's keys
    client = create_app().test_client()
    assert client.post(CALCULATIONS[0].path, json=BODY, headers={"X-API-Key": KEY_ONE}).status_code == 422
    assert client.post(CALCULATIONS[0].path, json=BODY, headers={"X-API-Key": KEY_TWO}).status_code == 403
    # An app given its own key source keeps it.
    own = create_app({"API_KEYS": [KEY_TWO]}).test_client()
    assert own.post(CALCULATIONS[0].path, json=BODY, headers={"X-API-Key": KEY_TWO}).status_code == 422


def test_a_reload_takes_new_keys_and_keeps_the_last_good_ones_over_a_bad_file(
        server_keys, clean_environment, tmp_path, caplog):
    path = tmp_path / "api-keys"
    path.write_text(KEY_ONE + "\n")
    clean_environment.setenv("MEANLINE_API_KEYS_FILE", str(path))
    server_keys.read_for_server()
    path.write_text(KEY_TWO + "\n")
    assert server_keys.reload_for_server() is True
    assert server_keys.server_digests() == (hashlib.sha256(KEY_TWO.encode()).digest(),)
    for bad in ("", "# emptied\n", None):
        if bad is None:
            path.unlink()
        else:
            path.write_text(bad)
        caplog.clear()
        with caplog.at_level(logging.ERROR):
            assert server_keys.reload_for_server() is False
        assert server_keys.server_digests() == (hashlib.sha256(KEY_TWO.encode()).digest(),)
        assert "API KEYS NOT RELOADED" in caplog.text and KEY_TWO not in caplog.text
