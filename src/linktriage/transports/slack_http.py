"""HTTP mode's listener: the one route Slack calls, and everything else kept out.

Before bolt sees a request its body must arrive whole within ``READ_TIMEOUT_S`` and be no
larger than ``MAX_BODY``; its timestamp must be a number within ``MAX_AGE_S`` of now, its
signature right (Slack's "verifying requests" scheme: HMAC-SHA256 of ``v0:timestamp:body``
under the signing secret), and the signature not one seen before: a captured request
replayed within its five minutes runs nothing. Requests are served by a bounded pool of
workers with a bounded queue; beyond that the answer is 503 at once, so slow or half-sent
requests cannot pile up threads. Nothing of a body is ever logged: a slash command carries
a ``response_url`` that lets whoever holds it post into the channel for half an hour.
"""

from __future__ import annotations

import contextlib
import hashlib
import hmac
import logging
import threading
import time
from collections.abc import Callable, Sequence
from concurrent.futures import ThreadPoolExecutor
from http.server import BaseHTTPRequestHandler, HTTPServer
from socket import socket
from typing import Any

from slack_bolt import App
from slack_bolt.request import BoltRequest

log = logging.getLogger("linktriage.slack.http")

EVENTS_PATH = "/slack/events"
HEALTH_PATH = "/healthz"
MAX_AGE_S = 300  # Slack's advice: refuse requests more than five minutes old
READ_TIMEOUT_S = 10.0  # a request not wholly received by then is dropped
MAX_BODY = 1 << 20  # Slack's payloads are a few kilobytes
WORKERS = 16
QUEUED = 64  # accepted connections waiting for a worker, beyond which 503
LISTEN_BACKLOG = 256  # connections not yet accepted (see BoundedServer)
BUSY = b"HTTP/1.1 503 Service Unavailable\r\nContent-Length: 4\r\nConnection: close\r\n\r\nbusy"


#: Where a gate records the signatures it let in: ``first_sight(signature, expires_at, now)``
#: is True the first time, False for a replay (the store's, shared by every replica).
FirstSight = Callable[[str, float, float], bool]


class SignatureGate:
    """Slack's request signatures checked, each accepted only once within its lifetime:
    by every replica that shares ``first_sight`` (the store), else by this process."""

    def __init__(
        self,
        secret: str,
        *,
        clock: Callable[[], float] = time.time,
        first_sight: FirstSight | None = None,
    ) -> None:
        self._key = secret.encode()
        self._clock = clock
        self._seen: dict[str, float] = {}  # signature -> when it expires
        self._lock = threading.Lock()
        self._first_sight = first_sight or self._first_here

    def refuse(self, timestamp: str, signature: str, body: bytes) -> str | None:
        """Why the request is refused ("repeated" for a replay), or None to let it in."""
        if not (timestamp.isascii() and timestamp.isdigit()):
            return "no valid X-Slack-Request-Timestamp"
        now = self._clock()
        if abs(now - int(timestamp)) > MAX_AGE_S:
            return "timestamp more than five minutes from now"
        base = b"v0:" + timestamp.encode() + b":" + body
        expected = "v0=" + hmac.new(self._key, base, hashlib.sha256).hexdigest()
        if not hmac.compare_digest(expected, signature):
            return "signature does not match"
        if not self._first_sight(signature, int(timestamp) + MAX_AGE_S, now):
            return "repeated"
        return None

    def _first_here(self, signature: str, expires_at: float, now: float) -> bool:
        """Seen by this process before? (One process, no store shared.)"""
        with self._lock:
            self._seen = {s: until for s, until in self._seen.items() if until >= now}
            if signature in self._seen:
                return False
            self._seen[signature] = expires_at
        return True


class _Handler(BaseHTTPRequestHandler):
    app: App
    gate: SignatureGate
    timeout = READ_TIMEOUT_S  # the socket's: a half-sent request is dropped, not waited on
    disable_nagle_algorithm = True  # headers and body leave together, no delayed-ACK stall

    def do_POST(self) -> None:
        if self.path.split("?", 1)[0] != EVENTS_PATH:
            self._send(404, b"not found")
            return
        length = self.headers.get("Content-Length", "")
        if not (length.isascii() and length.isdigit()):
            self._send(411, b"length required")
            return
        if int(length) > MAX_BODY:
            self._send(413, b"too large")
            return
        try:
            body = self.rfile.read(int(length))
        except TimeoutError:
            self.close_connection = True
            log.info("dropped a request from %s: body not received in time", self.client_address[0])
            return
        if len(body) < int(length):
            self.close_connection = True
            return
        refused = self.gate.refuse(
            self.headers.get("X-Slack-Request-Timestamp", ""),
            self.headers.get("X-Slack-Signature", ""),
            body,
        )
        if refused == "repeated" and self.headers.get("X-Slack-Retry-Num"):
            self._send(200, b"")  # a retry of what already ran: done, and nothing runs again
            return
        if refused is not None:
            log.warning("refused a request from %s: %s", self.client_address[0], refused)
            self._send(401, b"invalid request")
            return
        query = self.path.split("?", 1)[1] if "?" in self.path else None
        headers: dict[str, str | Sequence[str]] = {k.lower(): v for k, v in self.headers.items()}
        text = body.decode("utf-8", errors="replace")
        response = self.app.dispatch(BoltRequest(body=text, query=query, headers=headers))
        payload = response.body.encode("utf-8")
        self.send_response(response.status)
        for name, values in response.headers.items():
            for value in values:
                self.send_header(name, value)
        self.send_header("Content-Length", str(len(payload)))
        self.end_headers()
        self.wfile.write(payload)

    def do_GET(self) -> None:
        if self.path == HEALTH_PATH:
            self._send(200, b"ok")
        else:
            self._send(404, b"not found")

    def _send(self, status: int, payload: bytes) -> None:
        self.send_response(status)
        self.send_header("Content-Type", "text/plain; charset=utf-8")
        self.send_header("Content-Length", str(len(payload)))
        self.end_headers()
        self.wfile.write(payload)

    def log_message(self, format: str, *args: Any) -> None:
        log.debug("http %s", format % args)  # the request line only: never a body


class BoundedServer(HTTPServer):
    """An HTTP server whose requests run on a fixed pool with a bounded queue."""

    #: Connections the kernel holds for the listener before it accepts them: a burst of
    #: Slack's deliveries (ten commands and their retries at once) must wait there, not be
    #: refused (socketserver's default is 5; the kernel caps it at net.core.somaxconn).
    request_queue_size = LISTEN_BACKLOG

    def __init__(
        self,
        address: tuple[str, int],
        handler: type[BaseHTTPRequestHandler],
        *,
        workers: int = WORKERS,
        queued: int = QUEUED,
    ) -> None:
        self._pool = ThreadPoolExecutor(workers, thread_name_prefix="linktriage-http")
        self._slots = threading.BoundedSemaphore(workers + queued)
        super().__init__(address, handler)  # binds; on failure it closes, pool included

    def process_request(self, request: Any, client_address: Any) -> None:
        if not self._slots.acquire(blocking=False):
            log.warning("busy: refused a connection from %s", client_address[0])
            if isinstance(request, socket):
                with contextlib.suppress(OSError):
                    request.sendall(BUSY)
            self.shutdown_request(request)
            return
        self._pool.submit(self._serve, request, client_address)

    def _serve(self, request: Any, client_address: Any) -> None:
        try:
            self.finish_request(request, client_address)
        except OSError as exc:  # the client went away or stalled: nothing to answer
            log.debug("connection from %s ended: %s", client_address[0], exc)
        except Exception:
            log.exception("error serving a request from %s", client_address[0])
        finally:
            self.shutdown_request(request)
            self._slots.release()

    def server_close(self) -> None:
        super().server_close()
        self._pool.shutdown(wait=False, cancel_futures=True)


def http_server(
    app: App,
    *,
    secret: str,
    port: int,
    host: str = "127.0.0.1",
    workers: int = WORKERS,
    queued: int = QUEUED,
    read_timeout_s: float = READ_TIMEOUT_S,
    first_sight: FirstSight | None = None,
) -> BoundedServer:
    """The listener for ``/slack/events`` (and ``/healthz``), not yet serving. It binds
    loopback unless told otherwise: put a TLS-terminating proxy in front."""
    handler = type(
        "Handler",
        (_Handler,),
        {
            "app": app,
            "gate": SignatureGate(secret, first_sight=first_sight),
            "timeout": read_timeout_s,
        },
    )
    return BoundedServer((host, port), handler, workers=workers, queued=queued)
