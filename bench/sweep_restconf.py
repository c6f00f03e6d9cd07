"""Sweep bench: 500 RESTCONF devices x 48 ports on loopback, concurrent against sequential.

    .venv/bin/python bench/sweep_restconf.py [--devices N] [--ports N] [--latency S]

A local RESTCONF agent (tests/agents/restconf.py), in a process of its own as real devices
would be, serves RFC 8343 statistics for a simulated fleet; every answer is delayed by
``--latency`` seconds (default 0.05), the time a switch's management agent takes to
answer, which is what concurrency hides. Both loops fetch the same devices and parse the
same JSON into snapshots:

* sequential: a naive loop, one device after another, one httpx client;
* linktriage: the inventory's collectors through InventoryNetwork.poll_many.

Then the sweep is run again with one device that never answers, to show what it costs.
Targets: the concurrent sweep at least 8x faster per port; one dead device adds no more
than its own deadline (timeout, no retries here, plus a margin).
"""

from __future__ import annotations

import argparse
import multiprocessing
import statistics
import sys
import time
from datetime import UTC, datetime
from pathlib import Path

import httpx

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from linktriage.network.collectors.restconf import interfaces_to_snapshots
from linktriage.network.inventory import Defaults, DeviceEntry, Inventory
from linktriage.network.inventory_network import InventoryNetwork, deadline_s

from agents.restconf import serve_in_process

TARGET_SPEEDUP = 8.0


class Agent:
    """The RESTCONF agent running in a child process."""

    def __init__(self, devices: int, ports: int, latency_s: float) -> None:
        ready: multiprocessing.Queue[int] = multiprocessing.Queue()
        self.process = multiprocessing.Process(
            target=serve_in_process, args=(devices, ports, latency_s, ready), daemon=True
        )
        self.process.start()
        self.port = ready.get(timeout=120)

    def misbehave(self, device: str, mode: str) -> None:
        httpx.get(f"http://127.0.0.1:{self.port}/_behave?device={device}&mode={mode}")

    def stop(self) -> None:
        self.process.kill()
        self.process.join()


def inventory(agent: Agent, names: list[str], timeout_s: float) -> Inventory:
    devices = [
        DeviceEntry(
            name=name,
            site="bench",
            collector="restconf",
            address="127.0.0.1",
            options={"scheme": "http", "port": agent.port, "root": f"/{name}/restconf"},
        )
        for name in names
    ]
    return Inventory(defaults=Defaults(timeout_s=timeout_s, retries=0), devices=devices)


def sequential(agent: Agent, names: list[str]) -> tuple[float, int]:
    start = time.perf_counter()
    ports = 0
    with httpx.Client(headers={"Accept": "application/yang-data+json"}, timeout=10) as client:
        for name in names:
            url = f"http://127.0.0.1:{agent.port}/{name}/restconf/data/ietf-interfaces:interfaces"
            answer = client.get(url, params={"content": "nonconfig"})
            snapshots, _ = interfaces_to_snapshots(answer.json(), name, datetime.now(UTC))
            ports += len(snapshots)
    return time.perf_counter() - start, ports


def concurrent(network: InventoryNetwork, names: list[str]) -> tuple[float, int, dict[str, str]]:
    start = time.perf_counter()
    gathered = network.poll_many(dict.fromkeys(names))
    took = time.perf_counter() - start
    return took, sum(len(t) for t in gathered.tables.values()), gathered.failed


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--devices", type=int, default=500)
    parser.add_argument("--ports", type=int, default=48)
    parser.add_argument("--latency", type=float, default=0.05)
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args()
    agent = Agent(args.devices, args.ports, args.latency)
    names = [f"sw{d + 1:04d}" for d in range(args.devices)]
    timeout_s = 1.0
    network = InventoryNetwork(inventory(agent, names, timeout_s))
    print(f"{args.devices} devices x {args.ports} ports, {args.latency * 1000:.0f} ms per answer")
    header = ("round", "sequential", "linktriage", "per port, seq", "per port, lt", "speedup")
    print(" ".join(f"{h:>{w}}" for h, w in zip(header, (5, 11, 11, 14, 13, 8), strict=True)))
    speedups, clean = [], []
    try:
        for n in range(1, args.rounds + 1):
            seq_s, seq_ports = sequential(agent, names)
            con_s, con_ports, failed = concurrent(network, names)
            assert seq_ports == con_ports == args.devices * args.ports and not failed
            speedups.append(seq_s / con_s)
            clean.append(con_s)
            print(
                f"{n:>5} {seq_s:>10.2f}s {con_s:>10.2f}s {seq_s / seq_ports * 1e3:>12.3f}ms "
                f"{con_s / con_ports * 1e3:>11.3f}ms {seq_s / con_s:>7.1f}x"
            )
        agent.misbehave(names[-1], "slow")
        dead_s, _, failed = concurrent(network, names)
    finally:
        network.close()
        agent.stop()
    speedup = statistics.median(speedups)
    extra = dead_s - statistics.median(clean)
    allowed = deadline_s(timeout_s, 0)
    verdict = "meets" if speedup >= TARGET_SPEEDUP else "MISSES"
    print(f"median speedup: {speedup:.1f}x ({verdict} the {TARGET_SPEEDUP:.0f}x target)")
    print(
        f"with {names[-1]} never answering: {dead_s:.2f}s, {extra:+.2f}s against a clean sweep; "
        f"named: {failed.get(names[-1])!r}"
    )
    within = extra <= allowed
    verdict = "meets" if within else "MISSES"
    print(f"  {verdict}: one dead device costs at most its deadline ({allowed:.2f}s)")
    return 0 if speedup >= TARGET_SPEEDUP and within else 1


if __name__ == "__main__":
    sys.exit(main())
