"""Readiness: GET /readyz answers 200 only while the service computes a known case correctly.

The known case is worked by hand: a compressor stage at flow coefficient 0.5, loading 0.4 and
reaction 0.5 has Vtheta1 = U (1 - R - psi/2) = 0.3 U and Vx = 0.5 U, so alpha1 = atan(0.6)
= 30.9638 deg (the repeating-stage relations of the design brief, derived from Euler's work
equation). A wrong answer, an exception or a broken encoder must give 503, never a 500.
"""

from __future__ import annotations

import logging

import pytest

from service import create_app
from service.api import app as app_module
from service.core import triangles


@pytest.fixture
def client(monkeypatch):
    monkeypatch.delenv("MEANLINE_API_KEYS", raising=False)
    monkeypatch.delenv("MEANLINE_API_KEYS_FILE", raising=False)
    return create_app({"API_KEYS": "readiness-key-0123456789"}).test_client()


def test_ready_without_a_key(client):
    response = client.get("/readyz")
    assert response.status_code == 200
    assert response.json == {"status": "ready"}
    assert client.head("/readyz").status_code == 200


def test_a_wrong_answer_is_not_ready(client, monkeypatch, caplog):
    real = triangles.evaluate_stage_from_duty

    def off_by_a_little(*args, **kwargs):
        result = real(*args, **kwargs)
        result.values["alpha1"] = result.values["alpha1"] * (1 + 1e-9)
        return result

    monkeypatch.setattr(triangles, "evaluate_stage_from_duty", off_by_a_little)
    response = client.get("/readyz")
    assert response.status_code == 503
    assert response.mimetype == "application/problem+json"
    assert response.headers["Cache-Control"] == "no-store"
    monkeypatch.undo()
    assert client.get("/readyz").status_code == 200  # stateless: ready again once it computes right


@pytest.mark.parametrize("failure", [RuntimeError("core broke"), MemoryError(), KeyError("alpha1")],
                         ids=["runtime-error", "memory-error", "key-error"])
def test_an_exception_in_the_self_test_is_not_ready(client, monkeypatch, caplog, failure):
    def broken(*args, **kwargs):
        raise failure

    monkeypatch.setattr(triangles, "evaluate_stage_from_duty", broken)
    caplog.set_level(logging.ERROR)
    response = client.get("/readyz")
    assert response.status_code == 503
    assert response.json["title"] == "Not ready"
    assert "Traceback" not in response.get_data(as_text=True)
    assert any("readiness self test failed" in record.getMessage() for record in caplog.records)


def test_a_broken_encoder_is_not_ready(client, monkeypatch):
    def unencodable(body):
        raise TypeError("Integer exceeds 64-bit range")

    monkeypatch.setattr(app_module, "_json", unencodable)
    assert client.get("/readyz").status_code == 503


def test_liveness_does_not_depend_on_the_calculation(client, monkeypatch):
    monkeypatch.setattr(triangles, "evaluate_stage_from_duty", lambda *a, **k: 1 / 0)
    assert client.get("/healthz").status_code == 200
    assert client.get("/readyz").status_code == 503
