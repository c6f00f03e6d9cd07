"""A local stand-in for Slack's Web API, so the bot's real client talks to something real.

It answers the methods the bot calls (auth.test, chat.postMessage, usergroups.users.list,
the external file upload: files.getUploadURLExternal, the upload URL it hands out, and
files.completeUploadExternal) and response_url webhooks, and records every call for tests
to assert on (an upload's bytes as they arrived). Runs on an ephemeral loopback port in a
thread of its own. A method can be rate-limited until a moment on the emulator's clock:
it answers HTTP 429 with ``Retry-After``, as Slack's Web API does ("Rate limits",
api.slack.com/apis/rate-limits), and records the refused call apart.
"""

from __future__ import annotations

import json
import math
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any
from urllib.parse import parse_qs

BOT_USER = "U0LTBOT"


@dataclass
class Call:
    method: str
    params: dict[str, Any]
    token: str | None


@dataclass
class SlackEmulator:
    usergroups: dict[str, list[str]] = field(default_factory=dict)
    failures: dict[str, str] = field(default_factory=dict)  # method -> Slack error code
    calls: list[Call] = field(default_factory=list)
    limited_until: dict[str, float] = field(default_factory=dict)  # method -> clock time
    refused: list[Call] = field(default_factory=list)  # calls answered 429
    clock: Callable[[], float] = time.time
    _server: ThreadingHTTPServer | None = None
    _ts: int = 0
    _lock: threading.Lock = field(default_factory=threading.Lock)

    def start(self) -> SlackEmulator:
        emulator = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self) -> None:
                body = self.rfile.read(int(self.headers.get("Content-Length") or 0))
                if self.path.startswith("/upload/"):  # the bytes of a file, as sent
                    emulator.calls.append(Call("upload", {"path": self.path, "data": body}, None))
                    self._reply(b"OK")
                    return
                raw = body.decode()
                if "json" in (self.headers.get("Content-Type") or ""):
                    params = json.loads(raw or "{}")
                else:
                    params = {k: v[0] for k, v in parse_qs(raw).items()}
                auth = self.headers.get("Authorization", "")
                token = auth.removeprefix("Bearer ") if auth else params.get("token")
                method = self.path.removeprefix("/api/")
                wait = emulator.limited_until.get(method, 0.0) - emulator.clock()
                if wait > 0:
                    emulator.refused.append(Call(method, params, token))
                    body = json.dumps({"ok": False, "error": "ratelimited"}).encode()
                    self._reply(body, status=429, retry_after=math.ceil(wait))
                    return
                answer = emulator._answer(self.path, params, token)
                self._reply((answer if isinstance(answer, str) else json.dumps(answer)).encode())

            def _reply(self, body: bytes, *, status: int = 200, retry_after: int = 0) -> None:
                self.send_response(status)
                if retry_after:
                    self.send_header("Retry-After", str(retry_after))
                self.send_header("Content-Type", "application/json")
                self.send_header("Content-Length", str(len(body)))
                self.end_headers()
                self.wfile.write(body)

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
    def port(self) -> int:
        assert self._server is not None
        return int(self._server.server_address[1])

    @property
    def api_url(self) -> str:
        return f"http://127.0.0.1:{self.port}/api/"

    @property
    def response_url(self) -> str:
        return f"http://127.0.0.1:{self.port}/hooks/respond"

    def _answer(self, path: str, params: dict[str, Any], token: str | None) -> dict[str, Any] | str:
        method = path.removeprefix("/api/") if path.startswith("/api/") else "response_url"
        self.calls.append(Call(method, params, token))
        if method == "response_url":
            return "ok"
        if method in self.failures:
            return {"ok": False, "error": self.failures[method]}
        if method == "auth.test":
            return {"ok": True, "team_id": "T0LARK", "user_id": BOT_USER, "bot_id": "B0LTBOT",
                    "team": "Larkmoor Civic Library", "user": "linktriage"}  # fmt: skip
        if method == "chat.postMessage":
            with self._lock:
                self._ts += 1
                ts = f"{1772438400 + self._ts}.000100"
            return {"ok": True, "channel": params.get("channel"), "ts": ts, "message": params}
        if method == "chat.update":
            return {"ok": True, "channel": params.get("channel"), "ts": params.get("ts")}
        if method == "chat.postEphemeral":
            return {"ok": True, "message_ts": f"{1772438400 + self._ts}.000200"}
        if method == "files.getUploadURLExternal":
            file_id = f"F0LT{len(self.called(method)):04d}"
            upload_url = f"http://127.0.0.1:{self.port}/upload/v1/{file_id}"
            return {"ok": True, "upload_url": upload_url, "file_id": file_id}
        if method == "files.completeUploadExternal":
            files = json.loads(params.get("files", "[]"))
            return {"ok": True, "files": [{"id": f["id"], "title": f.get("title")} for f in files]}
        if method == "usergroups.users.list":
            return {"ok": True, "users": self.usergroups.get(str(params.get("usergroup")), [])}
        return {"ok": False, "error": "unknown_method"}

    def called(self, method: str) -> list[Call]:
        return [c for c in self.calls if c.method == method]

    def wait_for(self, method: str, count: int = 1, timeout: float = 10.0) -> list[Call]:
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            found = self.called(method)
            if len(found) >= count:
                return found
            time.sleep(0.02)
        raise AssertionError(f"expected {count} {method} calls, got {len(self.called(method))}")
