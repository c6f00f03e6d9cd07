"""A simulated fleet of switches whose counters grow with time, for the agents to serve."""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.prior import sample_mix, sample_parameters
from linktriage.engine.simulate.polled import LiveCounters
from linktriage.engine.verdicts import TREE_VERDICTS
from linktriage.network.watched import Gathered, Network, PortRef


class Fleet:
    """``devices`` switches of ``ports`` ports each, named sw0001.. and port1..; the ports'
    verdicts drawn in the proportions of ``mix`` (default: the training prior's), which
    names only verdicts the simulator draws (the tree's): a port drawn as another would be
    left out, and the network would list a port the fleet never answers for."""

    def __init__(
        self, devices: int, ports: int, *, seed: int = 11, mix: dict[Verdict, float] | None = None
    ) -> None:
        undrawn = sorted(set(mix or ()) - set(TREE_VERDICTS))
        if undrawn:
            raise ValueError(f"the simulator does not draw {undrawn} as such")
        rng = np.random.default_rng(seed)
        n = devices * ports
        params = sample_parameters(sample_mix(n, rng, mix), rng)
        params["hc"] = True
        self.names = [f"sw{d + 1:04d}" for d in range(devices)]
        self.ports = [f"port{p + 1}" for p in range(ports)]
        self.live = LiveCounters(
            params,
            rng,
            device=[name for name in self.names for _ in range(ports)],
            port=self.ports * devices,
            epoch=time.time() - 86_400,
            seed=seed,
        )
        self.per_device = ports

    def read_all(self, when: float | None = None) -> PollTable:
        """Every port of every switch, read at once."""
        return self.live.at(np.arange(len(self.live)), time.time() if when is None else when)

    def read(self, device: str, when: float | None = None) -> PollTable:
        d = self.names.index(device)
        rows = np.arange(d * self.per_device, (d + 1) * self.per_device)
        return self.live.at(rows, time.time() if when is None else when)


class FleetNetwork(Network):
    """The fleet as the bot's network, read at once and on a clock given from outside
    (benches run it on simulated time)."""

    def __init__(self, fleet: Fleet, clock: Callable[[], float] = time.time) -> None:
        self.fleet = fleet
        self.clock = clock
        self._refs = [
            PortRef("fleet", device, port) for device in fleet.names for port in fleet.ports
        ]

    def ports(self) -> list[PortRef]:
        return self._refs

    def device_names(self) -> list[str]:
        return list(self.fleet.names)

    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        table = self.fleet.read(device, self.clock())
        if ports is None:
            return table
        return table.take(np.flatnonzero(np.isin(table.port, list(ports))))

    def poll_many(self, wanted: dict[str, list[str] | None]) -> Gathered:
        """Every wanted device in one read of the fleet."""
        whole = self.fleet.read_all(self.clock())
        tables = {name: rows for name, rows in whole.by_device() if name in wanted}
        return Gathered(tables, {}, {})
