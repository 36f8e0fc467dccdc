"""The gunicorn worker of the service: sync, with bounded waits for slow clients.

A sync worker serves one connection at a time, which suits CPU-bound requests, but gunicorn's
own sync worker waits on a slow client without limit and without telling the master that it is
alive: two connections sending a byte a second held both workers until the master killed them as
stuck (``timeout``), and a client reading a large answer slowly had its worker killed in the
middle of the answer (a truncated 200). This worker keeps the sync model and changes only how it
waits on the client's socket:

- **Receiving** (request line, headers and body, whether gunicorn or the app reads it): the time
  spent waiting for the client's bytes adds up to at most ``MEANLINE_RECEIVE_TIMEOUT`` seconds
  per request. Past it the request is answered ``408`` with a problem document (by the app if it
  was reading the body, else by the worker) and the connection is closed.
- **Sending** the answer: the time spent waiting for the client to take the bytes adds up to at
  most ``MEANLINE_SEND_TIMEOUT`` seconds per answer; past it the connection is closed and a
  warning logged with the request id (the answer is cut because the client did not read it).
- While it waits on the client, the worker tells the master it is alive, so it is never killed
  for being slow to receive or send: the master's ``timeout`` (``MEANLINE_TIMEOUT``) limits the
  time a request computes, not the time its client takes.

So a slow client holds a worker for at most the receive plus the send timeout (plus gunicorn's
two-second graceful close), and a complete answer is never cut by the master. Many slow clients
at once can still hold every worker for that long; in front of untrusted clients, a buffering
proxy (ingress, load balancer) remains the place that absorbs them (README, "Limits").
"""

from __future__ import annotations

import re
import socket
import time

from gunicorn.workers.sync import SyncWorker

#: At most this long [s] between two heartbeats while waiting on a client.
HEARTBEAT_SECONDS = 1.0
_REQUEST_ID = re.compile(rb"\r\nX-Request-ID: ([^\r\n]{1,128})\r\n", re.IGNORECASE)


class ReceiveTimeout(Exception):
    """The client did not send its request within the receive timeout.

    Not an OSError, so that gunicorn hands it to :meth:`PacedSyncWorker.handle_error` (408)
    rather than logging it as a broken socket; the app answers it 408 while reading the body.
    """


class SendTimeout(OSError):
    """The client did not take the answer within the send timeout (the connection is closed)."""


class _PacedSocket:
    """A client socket whose waits are bounded in total and keep the worker's heartbeat going.

    Every other attribute is the socket's own.
    """

    def __init__(self, sock: socket.socket, notify, receive_seconds: float, send_seconds: float):
        self._sock = sock
        self._notify = notify
        self._receive_left = receive_seconds
        self._send_left = send_seconds
        self._beat = time.monotonic()
        self.sent = 0
        self.request_id = None

    def __getattr__(self, name):
        return getattr(self._sock, name)

    def shutdown(self, how):
        # gunicorn's graceful close drains the socket with its own short timeout: from here on
        # the waits are the plain socket's.
        self.recv, self.sendall = self._sock.recv, self._sock.sendall
        return self._sock.shutdown(how)

    def _heartbeat(self) -> None:
        now = time.monotonic()
        if now - self._beat >= HEARTBEAT_SECONDS / 2:
            self._notify()
            self._beat = now

    def recv(self, size, *flags):
        while True:
            if self._receive_left <= 0:
                raise ReceiveTimeout("the request did not arrive within the receive timeout")
            self._sock.settimeout(min(self._receive_left, HEARTBEAT_SECONDS))
            started = time.monotonic()
            try:
                return self._sock.recv(size, *flags)
            except TimeoutError:  # socket.timeout: no byte this second
                pass
            finally:
                self._receive_left -= time.monotonic() - started
                self._sock.settimeout(None)
                self._heartbeat()

    def sendall(self, data, *flags):
        if self.request_id is None:
            found = _REQUEST_ID.search(bytes(memoryview(data)[:8192]))
            self.request_id = found.group(1).decode("latin-1") if found else ""
        view = memoryview(data).cast("B")
        done = 0
        while done < len(view):
            if self._send_left <= 0:
                raise SendTimeout(f"the client took {self.sent} bytes of the answer within the send timeout")
            self._sock.settimeout(min(self._send_left, HEARTBEAT_SECONDS))
            started = time.monotonic()
            try:
                count = self._sock.send(view[done:done + (1 << 20)], *flags)
                done += count
                self.sent += count
            except TimeoutError:
                pass
            finally:
                self._send_left -= time.monotonic() - started
                self._sock.settimeout(None)
                self._heartbeat()

    def send(self, data, *flags):
        self.sendall(data, *flags)
        return len(data)


class PacedSyncWorker(SyncWorker):
    """gunicorn's sync worker with the bounded, heartbeating waits of :class:`_PacedSocket`."""

    def init_process(self):
        from service import gunicorn_conf

        self.receive_seconds = gunicorn_conf.RECEIVE_TIMEOUT
        self.send_seconds = gunicorn_conf.SEND_TIMEOUT
        super().init_process()

    def handle(self, listener, client, addr):
        paced = _PacedSocket(client, self.notify, self.receive_seconds, self.send_seconds)
        try:
            super().handle(listener, paced, addr)
        finally:
            client.close()  # closed already through the paced socket; a second close does nothing

    def handle_request(self, listener, req, client, addr):
        try:
            super().handle_request(listener, req, client, addr)
        except SendTimeout:
            self.log.warning("answer to request %s cut after %d bytes: the client did not read it within "
                             "MEANLINE_SEND_TIMEOUT=%ss", getattr(client, "request_id", "") or "-",
                             getattr(client, "sent", 0), self.send_seconds)

    def handle_error(self, req, client, addr, exc):
        if isinstance(exc, ReceiveTimeout):
            self.log.warning("request not received within MEANLINE_RECEIVE_TIMEOUT=%ss from %s: answered 408",
                             self.receive_seconds, addr[0] if addr else "")
            from gunicorn import util

            try:
                util.write_error(client, 408, "Request Timeout",
                                 f"The request did not arrive within {self.receive_seconds:g} s.")
            except OSError:
                pass
            return
        super().handle_error(req, client, addr, exc)
