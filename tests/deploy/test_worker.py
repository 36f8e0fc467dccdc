"""The service's gunicorn worker (service/worker.py): the waits on a client's socket are bounded in
total and keep the heartbeat going. Over a local socket pair whose other end stays silent or
never reads; the real server's behaviour is the slow-clients drill (tests/drills)."""

from __future__ import annotations

import socket

import pytest

from service.worker import ReceiveTimeout, SendTimeout, _PacedSocket


@pytest.fixture
def pair():
    ours, theirs = socket.socketpair()
    yield ours, theirs
    ours.close()
    theirs.close()


def test_a_silent_client_exhausts_the_receive_budget_with_heartbeats(pair, monkeypatch):
    monkeypatch.setattr("service.worker.HEARTBEAT_SECONDS", 0.05)
    ours, theirs = pair
    beats = []
    paced = _PacedSocket(ours, lambda: beats.append(1), receive_seconds=0.3, send_seconds=1)
    theirs.sendall(b"GET")
    assert paced.recv(10) == b"GET"  # bytes that are there come at once
    with pytest.raises(ReceiveTimeout):
        paced.recv(10)
    assert len(beats) >= 2  # the master was told the worker is alive while it waited
    assert ours.gettimeout() is None  # the socket is left as gunicorn set it


def test_a_client_that_does_not_read_exhausts_the_send_budget(pair, monkeypatch):
    monkeypatch.setattr("service.worker.HEARTBEAT_SECONDS", 0.05)
    ours, theirs = pair
    ours.setsockopt(socket.SOL_SOCKET, socket.SO_SNDBUF, 4096)
    beats = []
    paced = _PacedSocket(ours, lambda: beats.append(1), receive_seconds=1, send_seconds=0.3)
    answer = b"HTTP/1.1 200 OK\r\nX-Request-ID: abc-123\r\n\r\n" + b"x" * (8 << 20)
    with pytest.raises(SendTimeout):
        paced.sendall(answer)
    assert 0 < paced.sent < len(answer)
    assert paced.request_id == "abc-123"
    assert beats


def test_a_closing_socket_waits_as_gunicorn_asks(pair):
    ours, theirs = pair
    paced = _PacedSocket(ours, lambda: None, receive_seconds=0.01, send_seconds=0.01)
    paced.shutdown(socket.SHUT_WR)
    theirs.close()
    assert paced.recv(10) == b""  # gunicorn's drain after the answer is not bounded by the request's budget
