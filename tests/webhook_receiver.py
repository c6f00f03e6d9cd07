"""A webhook on loopback that takes POSTs: it records every one (its path, content type and
body, the refused ones too) and answers each with the status it is told to, in turn, then
204 No Content (RFC 9110 15.3.5: taken, nothing to say). Runs on an ephemeral port in a
thread of its own."""

from __future__ import annotations

import json
import threading
from dataclasses import dataclass, field
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any

#: The path the tests post to: a webhook's path often is its secret, and must not be shown.
SECRET_PATH = "/hooks/T0LARK/B0DIGEST/s3cr3t-t0ken"


@dataclass(frozen=True)
class Post:
    path: str
    content_type: str
    body: bytes
    status: int

    def json(self) -> Any:
        return json.loads(self.body)


@dataclass
class WebhookReceiver:
    answers: list[int] = field(default_factory=list)  # statuses to answer with, in turn
    posts: list[Post] = field(default_factory=list)
    _server: ThreadingHTTPServer | None = None
    _lock: threading.Lock = field(default_factory=threading.Lock)

    def start(self) -> WebhookReceiver:
        receiver = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self) -> None:
                body = self.rfile.read(int(self.headers.get("Content-Length") or 0))
                with receiver._lock:
                    status = receiver.answers.pop(0) if receiver.answers else 204
                    receiver.posts.append(
                        Post(self.path, self.headers.get("Content-Type", ""), body, status)
                    )
                self.send_response(status)
                self.send_header("Content-Length", "0")
                self.end_headers()

            def log_message(self, format: str, *args: Any) -> None:
                pass

        self._server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        threading.Thread(target=self._server.serve_forever, daemon=True).start()
        return self

    def stop(self) -> None:
        if self._server is not None:
            self._server.shutdown()
            self._server.server_close()

    @property
    def url(self) -> str:
        assert self._server is not None
        return f"http://127.0.0.1:{self._server.server_address[1]}{SECRET_PATH}"

    def taken(self) -> list[Any]:
        """The digests taken (answered 2xx), decoded, in the order they came."""
        return [post.json() for post in self.posts if 200 <= post.status < 300]
