"""A Prometheus server on loopback scraping an exporter of the simulated fleet.

The exporter answers ``/snmp?target=DEVICE`` the way an SNMP exporter with the IF-MIB and
EtherLike-MIB modules does: one metric per MIB object, named as the object, with ifIndex,
ifName and ifDescr labels, and sysUpTime. It keeps what it served, so a test can compare
what the collector reads back through Prometheus with what was scraped. A device can be
told to fail (its scrape answers 500, as the exporter does when the device is silent),
given more series to publish (``lldp``: the exposition of its LLDP tables; ``more``: any
other tables, such as those of format 1.2), and told to leave counters out (``skip``: a
device whose exporter module does not look ifName up onto them).

:class:`Prometheus` runs Debian's ``prometheus`` binary with a configuration of our own:
the exporter's targets relabelled into ``instance`` as SNMP exporter setups do.
"""

from __future__ import annotations

import json
import math
import re
import socket
import subprocess
import threading
import time
import urllib.parse
import urllib.request
from collections.abc import Callable
from dataclasses import dataclass, field
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from pathlib import Path
from typing import Any
from urllib.parse import parse_qs, urlparse

import numpy as np

from linktriage.engine.format.counters import COLUMNS
from linktriage.engine.format.poll_table import PollTable

from agents.fleet import Fleet
from agents.snmp import require, stop

UPTIME_TICKS_AT_START = 8_640_000  # the agent has been up one day when the exporter starts


def serve(answer: Callable[[str], tuple[int, str, bytes]]) -> ThreadingHTTPServer:
    """An HTTP server on a free loopback port, in a thread, answering every GET with
    ``answer(path)``: (status, content type, body)."""

    class Handler(BaseHTTPRequestHandler):
        def do_GET(self) -> None:
            status, kind, body = answer(self.path)
            self.send_response(status)
            self.send_header("Content-Type", kind)
            self.send_header("Content-Length", str(len(body)))
            self.end_headers()
            self.wfile.write(body)

        def log_message(self, *args: Any) -> None:
            pass

    server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
    threading.Thread(target=server.serve_forever, daemon=True).start()
    return server


@dataclass
class Served:
    """One scrape as the exporter answered it."""

    at: float
    table: PollTable
    uptime_ticks: int


def exposition(table: PollTable, uptime_ticks: int, skip: tuple[str, ...] = ()) -> str:
    """Prometheus text exposition of one device, in the SNMP exporter's naming; counters
    whose names start with one of ``skip`` are left out."""
    lines = ["# TYPE sysUpTime gauge", f"sysUpTime {uptime_ticks}"]

    def labels(row: int) -> str:
        name = str(table.port[row])
        return f'{{ifDescr="{name}",ifIndex="{row + 1}",ifName="{name}"}}'

    for column_index, column in enumerate(COLUMNS):
        rows = np.flatnonzero(table.present[:, column_index])
        if not len(rows) or column.name.startswith(skip):
            continue
        lines.append(f"# TYPE {column.name} counter")
        for row in rows:
            value = int(table.counters[row, column_index])
            if column.bits == 32:
                value %= 2**32
            lines.append(f"{column.name}{labels(row)} {value}")
    gauges = {
        "ifOperStatus": lambda r: 1 if table.oper_status[r] == "up" else 2,
        "ifHighSpeed": lambda r: int(table.state["speed_bps"][r]) // 1_000_000,
        "ifMtu": lambda r: 1500,
        "dot3StatsDuplexStatus": lambda r: 2 if table.state["half_duplex"][r] == 1 else 3,
        "ifCounterDiscontinuityTime": lambda r: 0,
    }
    for name, value_of in gauges.items():
        lines.append(f"# TYPE {name} gauge")
        lines += [f"{name}{labels(r)} {value_of(r)}" for r in range(len(table))]
    return "\n".join(lines) + "\n"


@dataclass
class Exporter:
    """The fleet published for scraping, with a record of every answer."""

    fleet: Fleet
    failing: set[str] = field(default_factory=set)
    served: dict[str, list[Served]] = field(default_factory=dict)
    lldp: dict[str, str] = field(default_factory=dict)  # device -> exposition lines
    more: dict[str, str] = field(default_factory=dict)  # device -> exposition lines
    skip: dict[str, tuple[str, ...]] = field(default_factory=dict)  # device -> name prefixes

    def __post_init__(self) -> None:
        self.started = time.time()
        self._lock = threading.Lock()
        self.server = serve(self._answer)
        self.port = self.server.server_address[1]

    def _answer(self, path: str) -> tuple[int, str, bytes]:
        asked = urlparse(path)
        device = parse_qs(asked.query).get("target", [""])[0]
        if asked.path != "/snmp" or device not in self.fleet.names:
            return 404, "text/plain", b"no such target"
        if device in self.failing:
            return 500, "text/plain", b"the device did not answer"
        now = time.time()
        table = self.fleet.read(device, now)
        ticks = UPTIME_TICKS_AT_START + int((now - self.started) * 100)
        with self._lock:
            self.served.setdefault(device, []).append(Served(now, table, ticks))
        text = exposition(table, ticks, self.skip.get(device, ()))
        text += self.lldp.get(device, "") + self.more.get(device, "")
        return 200, "text/plain; version=0.0.4", text.encode()

    def scrape_near(self, device: str, at: float) -> Served:
        """The answer to the scrape Prometheus stamped ``at`` (it stamps the scrape's start)."""
        with self._lock:
            answers = list(self.served[device])
        return min(answers, key=lambda s: abs(s.at - at))

    def close(self) -> None:
        self.server.shutdown()
        self.server.server_close()


def free_tcp_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return int(probe.getsockname()[1])


class Prometheus:
    """Debian's Prometheus, scraping the exporter every second, on a loopback port."""

    def __init__(self, folder: Path, exporter: Exporter, devices: list[str]) -> None:
        binary = require("prometheus")
        self.started = time.time()  # no scrape is older than this
        config = folder / "prometheus.yml"
        config.write_text(
            json.dumps(  # YAML is a superset of JSON
                {
                    "global": {"scrape_interval": "1s", "scrape_timeout": "900ms"},
                    "scrape_configs": [
                        {
                            "job_name": "snmp",
                            "metrics_path": "/snmp",
                            "params": {"module": ["if_mib,etherlike"]},
                            "static_configs": [{"targets": devices}],
                            "relabel_configs": [
                                {"source_labels": ["__address__"],
                                 "target_label": "__param_target"},
                                {"source_labels": ["__param_target"], "target_label": "instance"},
                                {"target_label": "__address__",
                                 "replacement": f"127.0.0.1:{exporter.port}"},
                            ],
                        }
                    ],
                }
            )
        )  # fmt: skip
        self.port = free_tcp_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.log = folder / "prometheus.log"
        with open(self.log, "wb") as log:
            self.process = subprocess.Popen(
                [binary, f"--config.file={config}", f"--storage.tsdb.path={folder / 'data'}",
                 f"--web.listen-address=127.0.0.1:{self.port}"],
                stdout=log, stderr=subprocess.STDOUT,
            )  # fmt: skip
        try:
            self._wait_ready()
        except RuntimeError:
            self.stop()
            raise

    def _wait_ready(self) -> None:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            if self.process.poll() is not None:
                raise RuntimeError(f"prometheus exited: {self.log.read_text(errors='replace')}")
            try:
                with urllib.request.urlopen(f"{self.url}/-/ready", timeout=1) as answer:
                    if answer.status == 200:
                        return
            except OSError:
                pass
            time.sleep(0.2)
        raise RuntimeError("prometheus was not ready within 60 s")

    def query(self, promql: str) -> list[dict[str, Any]]:
        url = f"{self.url}/api/v1/query?" + urllib.parse.urlencode({"query": promql})
        with urllib.request.urlopen(url, timeout=5) as answer:
            return list(json.load(answer)["data"]["result"])

    def wait_for_scrapes(self, device: str, count: int, *, up: int = 1) -> None:
        """Until Prometheus holds ``count`` scrapes of ``device`` with ``up`` at that value."""
        deadline = time.monotonic() + 60
        promql = f'count_over_time(up{{instance="{device}"}}[10m])'
        while time.monotonic() < deadline:
            latest = self.query(f'up{{instance="{device}"}}')
            held = self.query(promql)
            if (
                latest
                and held
                and int(float(latest[0]["value"][1])) == up
                and int(float(held[0]["value"][1])) >= count
            ):
                return
            time.sleep(0.25)
        raise RuntimeError(f"prometheus did not scrape {device} {count} times within 60 s")

    def stop(self) -> None:
        stop(self.process)


class CannedApi:
    """An HTTP server answering ``/api/v1/query`` with a fixed status and body, keeping
    every query it was sent: the malformed answers a real server would rarely give."""

    def __init__(self) -> None:
        self.status = 200
        self.body: Any = {"status": "success", "data": {"resultType": "matrix", "result": []}}
        self.queries: list[dict[str, list[str]]] = []
        self.server = serve(self._answer)
        self.url = f"http://127.0.0.1:{self.server.server_address[1]}"

    def _answer(self, path: str) -> tuple[int, str, bytes]:
        self.queries.append(parse_qs(urlparse(path).query))
        body = self.body if isinstance(self.body, bytes) else json.dumps(self.body).encode()
        return self.status, "application/json", body

    def close(self) -> None:
        self.server.shutdown()
        self.server.server_close()


class FleetApi:
    """A Prometheus HTTP API of its own for a large fleet: ``/api/v1/query`` answers a range
    selector of one device (``instance="..."``) or several (``instance=~"a|b"``) with the
    SNMP exporter's series of those devices (counters, ifOperStatus, ifHighSpeed, ifMtu), a
    sample every ``scrape_s`` over the range asked, stamped at fixed times. Each device's
    answer is rendered once per range, so answering costs the server little and a bench
    times the client. Every query is counted, with the devices and samples it carried."""

    def __init__(self, fleet: Fleet, scrape_s: float = 60.0) -> None:
        self.fleet = fleet
        self.scrape_s = scrape_s
        self.at = fleet.live.epoch + 86_400.0
        self.queries: list[tuple[int, int]] = []  # (devices, samples) per query
        self._rendered: dict[tuple[str, int], tuple[bytes, int]] = {}
        self._lock = threading.Lock()
        self.server = serve(self._answer)
        self.url = f"http://127.0.0.1:{self.server.server_address[1]}"

    def _render(self, device: str, scrapes: int) -> tuple[bytes, int]:
        """The device's series over ``scrapes`` scrapes as JSON, and how many samples."""
        table = self.fleet.read(device, self.at)
        times = [self.at - k * self.scrape_s for k in range(scrapes - 1, -1, -1)]
        parts, samples = [], 0

        def one(name: str, port: str, values: list[int]) -> None:
            nonlocal samples
            labels = json.dumps({"__name__": name, "instance": device, "ifName": port})
            pairs = ",".join(f'[{t:.3f},"{v}"]' for t, v in zip(times, values, strict=True))
            parts.append(f'{{"metric":{labels},"values":[{pairs}]}}')
            samples += len(values)

        for row in range(len(table)):
            port = str(table.port[row])
            for i, column in enumerate(COLUMNS):
                if table.present[row, i]:
                    end = int(table.counters[row, i])
                    one(
                        column.name,
                        port,
                        [(end - 1000 * k) % 2**column.bits for k in range(scrapes - 1, -1, -1)],
                    )
            one("ifOperStatus", port, [1] * scrapes)
            one("ifHighSpeed", port, [1000] * scrapes)
            one("ifMtu", port, [1500] * scrapes)
        return ",".join(parts).encode(), samples

    def scrapes_in(self, span_s: float) -> int:
        """Scrapes in a range selector of ``span_s`` (left-open, as Prometheus 3 has it)."""
        return max(1, math.ceil(span_s / self.scrape_s - 1e-9))

    def rendered(self, device: str, scrapes: int) -> tuple[bytes, int]:
        key = (device, scrapes)
        with self._lock:
            if key not in self._rendered and device in self.fleet.names:
                self._rendered[key] = self._render(device, scrapes)
            return self._rendered.get(key, (b"", 0))

    def _answer(self, path: str) -> tuple[int, str, bytes]:
        asked = parse_qs(urlparse(path).query)
        query = asked["query"][0]
        one = re.search(r'instance="([^"]+)"', query)
        many = re.search(r'instance=~"([^"]+)"', query)
        names = [one.group(1)] if one else (many.group(1).split("|") if many else [])
        found = re.search(r"\[(\d+)ms\]$", query)
        span_s = int(found.group(1)) / 1000 if found else 0.0
        scrapes = self.scrapes_in(span_s)
        bodies, samples = [], 0
        for name in names:
            body, count = self.rendered(name, scrapes)
            if body:
                bodies.append(body)
                samples += count
        with self._lock:
            self.queries.append((len(names), samples))
        head = b'{"status":"success","data":{"resultType":"matrix","result":['
        return 200, "application/json", head + b",".join(bodies) + b"]}}"

    def close(self) -> None:
        self.server.shutdown()
        self.server.server_close()


def serve_fleet_api(devices: int, ports: int, scrape_s: float, ready: Any, asked: Any) -> None:
    """Run a FleetApi in this (child) process until killed; its URL goes to ``ready``, and
    each query's (devices, samples) to ``asked``, so the bench's client has the machine's
    other core to itself."""
    api = FleetApi(Fleet(devices, ports, seed=5), scrape_s)
    for name in api.fleet.names:  # rendered before the clock starts: both lookbacks
        for span_s in (2 * scrape_s, 300.0):
            api.rendered(name, api.scrapes_in(span_s))
    ready.put(api.url)
    reported = 0
    while True:
        time.sleep(0.2)
        with api._lock:
            fresh = api.queries[reported:]
        for query in fresh:
            asked.put(query)
        reported += len(fresh)
