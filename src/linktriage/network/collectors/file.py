"""The ``file`` collector: replays a recorded snapshot file, one recorded poll per read.

Each read answers with the device's next recorded instant, in time order, starting over
after the last: a recording becomes a device that can be polled, for dry runs and tests.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np

from linktriage.engine.format.snapshot import Snapshot, iter_snapshots, read_snapshot_file
from linktriage.errors import BadAnswerError, SnapshotFileError
from linktriage.network.collectors.base import Collector, Options, Reading, Target


class FileOptions(Options):
    path: Path


class FileCollector(Collector[FileOptions]):
    """A recorded device: the lines of ``path`` whose ``device`` is this one's name."""

    needs_address = False

    def __init__(self, target: Target) -> None:
        super().__init__(target)
        self.path = self.options.path
        self._instants: list[list[Snapshot]] | None = None
        self._next = 0

    def _load(self) -> list[list[Snapshot]]:
        if self._instants is None:
            try:
                result = read_snapshot_file(self.path)
            except SnapshotFileError as exc:
                raise self.error(BadAnswerError, exc.message) from exc
            table = result.polls.take(np.flatnonzero(result.polls.device == self.target.name))
            if len(table) == 0:
                raise self.error(BadAnswerError, f"is not recorded in {self.path}")
            by_time: dict[float, list[Snapshot]] = {}
            for snap in iter_snapshots(table):
                by_time.setdefault(snap.time.timestamp(), []).append(snap)
            self._instants = [by_time[t] for t in sorted(by_time)]
        return self._instants

    async def ports(self) -> list[str]:
        return sorted({s.port for instant in self._load() for s in instant})

    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        instants = self._load()
        instant = instants[self._next % len(instants)]
        self._next += 1
        return Reading(instant).only(ports)
