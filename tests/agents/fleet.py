"""A simulated fleet of switches whose counters grow with time, for the agents to serve."""

from __future__ import annotations

import time

import numpy as np

from linktriage.polls import PollTable
from linktriage.simulate import LiveCounters, sample_mix, sample_parameters


class Fleet:
    """``devices`` switches of ``ports`` ports each, named sw0001.. and port1.."""

    def __init__(self, devices: int, ports: int, *, seed: int = 11) -> None:
        rng = np.random.default_rng(seed)
        n = devices * ports
        params = sample_parameters(sample_mix(n, rng), rng)
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
