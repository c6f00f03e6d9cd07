"""A RESTCONF agent on loopback serving RFC 8343 interface statistics as RFC 7951 JSON.

Each device answers under its own root, ``/<device>/restconf``; a device given an LLDP
document (``lldp``) serves it as ``ieee802-dot1ab-lldp:lldp``, the others answer 404 for
it, as a server without that module does. Devices can be told to
misbehave: ``auth`` (basic credentials required), ``error`` (500), ``slow`` (answers after
``slow_s``), ``garbage`` (not JSON), ``bad-types`` (a counter that is not a number).
Every answer can be delayed by ``latency_s``, as a busy switch's agent would be. A device
given ``more`` (port -> members) answers those members beside each port's own (the leaves
of format 1.2, and the augmentations of IEEE 802.3.2), and a port named there that the
device lacks is added as an interface of its own (an aggregate).
"""

from __future__ import annotations

import base64
import json
import threading
import time
from datetime import UTC, datetime
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any

import numpy as np

from linktriage.engine.format.counters import COLUMN_INDEX
from linktriage.engine.format.poll_table import PollTable

from agents.fleet import Fleet

#: RFC 8343 statistics leaves: (IF-MIB counter, 64-bit so a JSON string per RFC 7951).
LEAVES = {
    "in-octets": ("ifHCInOctets", True),
    "in-unicast-pkts": ("ifHCInUcastPkts", True),
    "in-broadcast-pkts": ("ifHCInBroadcastPkts", True),
    "in-multicast-pkts": ("ifHCInMulticastPkts", True),
    "in-discards": ("ifInDiscards", False),
    "in-errors": ("ifInErrors", False),
    "out-octets": ("ifHCOutOctets", True),
    "out-unicast-pkts": ("ifHCOutUcastPkts", True),
    "out-broadcast-pkts": ("ifHCOutBroadcastPkts", True),
    "out-multicast-pkts": ("ifHCOutMulticastPkts", True),
    "out-discards": ("ifOutDiscards", False),
    "out-errors": ("ifOutErrors", False),
}
STATUS = {"up": "up", "down": "down"}


def document(table: PollTable) -> dict[str, Any]:
    """An ietf-interfaces document for the rows of a poll table."""
    interfaces = []
    for i in range(len(table)):
        stats: dict[str, Any] = {
            "discontinuity-time": datetime.fromtimestamp(
                float(table.state["discontinuity"][i]), UTC
            ).isoformat()
            if table.state["discontinuity"][i] == table.state["discontinuity"][i]
            else "2026-01-01T00:00:00+00:00"
        }
        for leaf, (name, wide) in LEAVES.items():
            value = int(table.counters[i, COLUMN_INDEX[name]])
            stats[leaf] = str(value) if wide else value % 2**32
        interfaces.append(
            {
                "name": str(table.port[i]),
                "type": "iana-if-type:ethernetCsmacd",
                "oper-status": STATUS.get(str(table.oper_status[i]), "unknown"),
                "speed": str(int(table.state["speed_bps"][i])),
                "statistics": stats,
            }
        )
    return {"ietf-interfaces:interfaces": {"interface": interfaces}}


class RestconfAgent:
    def __init__(
        self, fleet: Fleet, *, latency_s: float = 0.0, slow_s: float = 5.0, cache_s: float = 0.0
    ) -> None:
        self.fleet = fleet
        self.latency_s = latency_s
        self.slow_s = slow_s
        # Switches refresh their counters every second or so; the agent may do the same,
        # reading the whole fleet once per refresh, so that a bench measures the collector
        # rather than this stand-in's own arithmetic.
        self.cache_s = cache_s
        self._lock = threading.Lock()
        self._bucket = -1.0
        self._table: PollTable | None = None
        self._documents: dict[str, bytes] = {}
        self.behaviour: dict[str, str] = {}
        self.lldp: dict[str, dict[str, Any]] = {}  # device -> its ieee802-dot1ab-lldp document
        self.more: dict[str, dict[str, dict[str, Any]]] = {}  # device -> port -> members
        self.credentials = ("netops", "s3cret")
        self.requests: list[str] = []
        self._server: ThreadingHTTPServer | None = None

    def start(self) -> RestconfAgent:
        agent = self

        class Handler(BaseHTTPRequestHandler):
            protocol_version = "HTTP/1.1"
            disable_nagle_algorithm = True  # headers and body leave together

            def do_GET(self) -> None:
                if self.path.startswith("/_behave?"):  # control: a device starts misbehaving
                    query = dict(p.split("=", 1) for p in self.path.split("?", 1)[1].split("&"))
                    agent.behaviour[query["device"]] = query["mode"]
                    return self._send(200, b"ok")
                agent.requests.append(self.path)
                parts = self.path.split("?")[0].strip("/").split("/")
                device = parts[0]
                if agent.latency_s:
                    time.sleep(agent.latency_s)
                resource = parts[1:]
                lldp = resource == ["restconf", "data", "ieee802-dot1ab-lldp:lldp"]
                if device not in agent.fleet.names or not (
                    resource == ["restconf", "data", "ietf-interfaces:interfaces"]
                    or (lldp and device in agent.lldp)
                ):
                    return self._send(404, b'{"errors": "no such resource"}')
                mode = agent.behaviour.get(device, "normal")
                if mode == "auth" and not self._authorised():
                    return self._send(401, b"")
                if mode == "error":
                    return self._send(500, b"internal error")
                if mode == "slow":
                    time.sleep(agent.slow_s)
                if mode == "garbage":
                    return self._send(200, b"<html>not json</html>")
                body = (
                    json.dumps(agent.lldp[device]).encode() if lldp else agent.answer(device, mode)
                )
                self._send(200, body, "application/yang-data+json")

            def _authorised(self) -> bool:
                user, password = agent.credentials
                expected = base64.b64encode(f"{user}:{password}".encode()).decode()
                return self.headers.get("Authorization") == f"Basic {expected}"

            def _send(self, status: int, body: bytes, kind: str = "application/json") -> None:
                self.send_response(status)
                self.send_header("Content-Type", kind)
                self.send_header("Content-Length", str(len(body)))
                self.end_headers()
                self.wfile.write(body)

            def log_message(self, format: str, *args: Any) -> None:
                pass

        class Server(ThreadingHTTPServer):
            daemon_threads = True
            request_queue_size = 1024  # a sweep opens many connections at once

            def handle_error(self, request: Any, client_address: Any) -> None:
                pass  # a client that gave up (its timeout) is not the agent's problem

        self._server = Server(("127.0.0.1", 0), Handler)
        threading.Thread(target=self._server.serve_forever, daemon=True).start()
        return self

    def answer(self, device: str, mode: str) -> bytes:
        if not self.cache_s or mode != "normal" or device in self.more:
            body = document(self.fleet.read(device))
            interfaces = body["ietf-interfaces:interfaces"]["interface"]
            by_name = {entry["name"]: entry for entry in interfaces}
            for port, members in self.more.get(device, {}).items():
                if port in by_name:
                    by_name[port].update(members)
                else:
                    interfaces.append({"name": port, **members})
            if mode == "bad-types":
                body["ietf-interfaces:interfaces"]["interface"][1]["statistics"]["in-octets"] = (
                    "lots"
                )
            return json.dumps(body).encode()
        with self._lock:
            bucket = time.monotonic() // self.cache_s
            if bucket != self._bucket or self._table is None:
                self._table = self.fleet.read_all()
                self._bucket = bucket
                self._documents = {}
            cached = self._documents.get(device)
            if cached is None:
                rows = np.flatnonzero(self._table.device == device)
                cached = json.dumps(document(self._table.take(rows))).encode()
                self._documents[device] = cached
            return cached

    @property
    def port(self) -> int:
        assert self._server is not None
        return int(self._server.server_address[1])

    def stop(self) -> None:
        if self._server is not None:
            self._server.shutdown()
            self._server.server_close()


def serve_in_process(devices: int, ports: int, latency_s: float, ready: Any) -> None:
    """Run an agent in this (child) process until killed; its port goes to ``ready``."""
    agent = RestconfAgent(Fleet(devices, ports), latency_s=latency_s, slow_s=3600.0, cache_s=1.0)
    agent.start()
    ready.put(agent.port)
    threading.Event().wait()
