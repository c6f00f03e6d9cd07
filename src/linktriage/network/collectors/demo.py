"""The ``demo`` collector: one switch of the built-in demo network, read like a real one."""

from __future__ import annotations

from collections.abc import Sequence

from linktriage.engine.format.snapshot import iter_snapshots
from linktriage.errors import CollectorError, PollError
from linktriage.network.collectors.base import Collector, Options, Reading, Target
from linktriage.network.demo import DEFAULT_SEED, DemoNetwork


class DemoOptions(Options):
    seed: int = DEFAULT_SEED


class DemoCollector(Collector[DemoOptions]):
    """Reads a demo switch (its name in the inventory is the demo device's name)."""

    needs_address = False

    def __init__(self, target: Target) -> None:
        super().__init__(target)
        self.network = DemoNetwork(seed=self.options.seed)

    async def ports(self) -> list[str]:
        refs = self.network.devices().get(self.target.name)
        if refs is None:
            raise self.error(CollectorError, "is not a switch of the demo network")
        return [r.port for r in refs]

    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        try:
            table = self.network.poll(self.target.name, ports)
        except PollError as exc:
            raise self.error(CollectorError, exc.reason) from exc
        return Reading(list(iter_snapshots(table)))
