"""Prometheus round: every device of a large fleet read through one server's HTTP API.

    .venv/bin/python bench/prometheus_round.py [--devices N] [--ports N] [--rounds R]

A local API of our own (tests/agents/prometheus.py FleetApi, in a process of its own)
answers range queries with the SNMP exporter's series of 2,000 switches of 48 ports, a
scrape a minute. Each round times, through InventoryNetwork.poll_many with the
``prometheus`` collector, reading every device once:

* baseline: the bare fetch of the same answers (the queries the collector sends, one for
  every 200 devices, reaching back two scrape intervals) and ``json.loads`` of each;
* linktriage: the round itself: the queries, and every port's newest scrape made a
  snapshot and a poll table;

and prints their wall times and ratio, and the samples fetched per port read against what
a query per device reaching back 300 s (how this collector read before) would fetch.
Target: the round under 30 s of wall time.
"""

from __future__ import annotations

import argparse
import json
import multiprocessing
import statistics
import sys
import time
from pathlib import Path
from typing import Any

import httpx

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from linktriage.engine.format.counters import COLUMN_INDEX
from linktriage.network.collectors import prometheus
from linktriage.network.inventory import Defaults, DeviceEntry, Inventory
from linktriage.network.inventory_network import InventoryNetwork

from agents.prometheus import serve_fleet_api

TARGET_S = 30.0
OBJECTS = [*COLUMN_INDEX, *prometheus.STATE_OBJECTS, *prometheus.DEVICE_OBJECTS]
SCRAPE_S = 60.0


def network(url: str, devices: int, **options: Any) -> InventoryNetwork:
    entries = [
        DeviceEntry(
            name=f"sw{d + 1:04d}",
            site="bench",
            collector="prometheus",
            options={"server": url, "scrape_interval_s": SCRAPE_S, **options},
        )
        for d in range(devices)
    ]
    defaults = Defaults(timeout_s=30.0, retries=0, concurrency=256)
    return InventoryNetwork(Inventory(defaults=defaults, devices=entries))


def one_round(net: InventoryNetwork, asked: Any) -> tuple[float, int, int, int]:
    """Wall time, ports read, queries sent and samples fetched for one read of everything."""
    start = time.perf_counter()
    gathered = net.poll_many(dict.fromkeys(net.device_names()))
    took = time.perf_counter() - start
    assert not gathered.failed, list(gathered.failed.items())[:3]
    return took, sum(len(t) for t in gathered.tables.values()), *served(asked)


def served(asked: Any) -> tuple[int, int]:
    """Queries the server answered since the last call, and the samples they carried."""
    time.sleep(0.5)  # the server reports its queries every 0.2 s
    queries = samples = 0
    while not asked.empty():
        _, fetched = asked.get()
        queries += 1
        samples += fetched
    return queries, samples


def bare_fetch(url: str, devices: int, asked: Any) -> tuple[float, int]:
    """The same answers fetched and parsed with json.loads, nothing else; and the samples a
    query per device reaching back 300 s would have fetched."""
    names = [f"sw{d + 1:04d}" for d in range(devices)]
    span = f"[{int(2 * SCRAPE_S * 1000)}ms]"
    start = time.perf_counter()
    with httpx.Client(timeout=120) as client:
        for first in range(0, devices, prometheus.BATCH_DEVICES):
            chosen = names[first : first + prometheus.BATCH_DEVICES]
            query = prometheus.selector(OBJECTS, {}, any_of=("instance", chosen)) + span
            answer = client.get(f"{url}/api/v1/query", params={"query": query, "time": "0"})
            json.loads(answer.content)
    took = time.perf_counter() - start
    served(asked)
    with httpx.Client(timeout=120) as client:  # one device at 300 s: samples per port then
        query = prometheus.selector(OBJECTS, {"instance": names[0]}) + "[300000ms]"
        client.get(f"{url}/api/v1/query", params={"query": query, "time": "0"})
    _, samples = served(asked)
    return took, samples


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--devices", type=int, default=2000)
    parser.add_argument("--ports", type=int, default=48)
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args()
    ready: multiprocessing.Queue[str] = multiprocessing.Queue()
    asked: multiprocessing.Queue[tuple[int, int]] = multiprocessing.Queue()
    server = multiprocessing.Process(
        target=serve_fleet_api,
        args=(args.devices, args.ports, SCRAPE_S, ready, asked),
        daemon=True,
    )
    server.start()
    url = ready.get(timeout=600)
    print(
        f"{args.devices:,} devices x {args.ports} ports on one API, a scrape every {SCRAPE_S:g} s"
    )
    net = network(url, args.devices)
    times: dict[str, list[float]] = {"baseline": [], "linktriage": []}
    try:
        for n in range(1, args.rounds + 1):
            base_s, per_device_300 = bare_fetch(url, args.devices, asked)
            took, ports, queries, samples = one_round(net, asked)
            times["baseline"].append(base_s)
            times["linktriage"].append(took)
            print(
                f"round {n}: {took:6.2f} s for {ports:,} ports in {queries:,} queries "
                f"({took / base_s:.1f}x the bare fetch and parse of the same answers, "
                f"{base_s:.2f} s); {samples / ports:.0f} samples fetched per port read, a "
                f"query per device reaching back 300 s fetched {per_device_300 / args.ports:.0f}"
            )
    finally:
        net.close()
        server.kill()
        server.join()
    ours_s, base_s = statistics.median(times["linktriage"]), statistics.median(times["baseline"])
    verdict = "met" if ours_s < TARGET_S else "NOT met"
    print(
        f"median round: {ours_s:.2f} s ({ours_s / base_s:.1f}x the bare fetch and parse, "
        f"{base_s:.2f} s); target < {TARGET_S:g} s: {verdict}"
    )
    return 0 if ours_s < TARGET_S else 1


if __name__ == "__main__":
    sys.exit(main())
