"""A third party's collectors, installed for tests as a package of their own would be.

``install(tmp_path, monkeypatch)`` writes a ``dist-info`` folder declaring these classes in
the ``linktriage.collectors`` entry-point group and puts it on ``sys.path``: exactly how
``importlib.metadata`` finds a package installed with pip.
"""

from __future__ import annotations

import asyncio
import sys
from collections.abc import Sequence
from pathlib import Path

import pytest

from linktriage.engine.format.snapshot import Snapshot
from linktriage.errors import DeviceRefusedError
from linktriage.network.collectors.base import Collector, Options, Reading

ENTRY_POINTS = """[linktriage.collectors]
hang = plugins:HangingCollector
refuse = plugins:RefusingCollector
garbage = plugins:GarbageCollector
broken = plugins:BrokenCollector
notone = plugins:NotACollector
"""


class SlowOptions(Options):
    seconds: float = 3600.0


class HangingCollector(Collector[SlowOptions]):
    """A device that never answers. It counts its tries, how many were cut short (given up
    on at their deadline rather than waited out) and the most in flight at once, so tests
    hold how waiting behaves without timing it."""

    needs_address = False
    calls: int = 0
    cut_short: int = 0
    in_flight: int = 0
    most_in_flight: int = 0

    @classmethod
    def reset(cls) -> None:
        cls.calls = cls.cut_short = cls.in_flight = cls.most_in_flight = 0

    async def ports(self) -> list[str]:
        await asyncio.sleep(3600)
        return []

    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        async def attempt() -> Reading:
            counts = type(self)
            counts.calls += 1
            counts.in_flight += 1
            counts.most_in_flight = max(counts.most_in_flight, counts.in_flight)
            try:
                await asyncio.sleep(self.options.seconds)
            except asyncio.CancelledError:
                counts.cut_short += 1
                raise
            finally:
                counts.in_flight -= 1
            return Reading([])

        return await self.retrying(attempt, "a read")


class RefusingCollector(Collector):
    """A device that refuses the credentials."""

    needs_address = False

    async def ports(self) -> list[str]:
        raise self.error(DeviceRefusedError, "refused the credentials (401)")

    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        raise self.error(DeviceRefusedError, "refused the credentials (401)")


class GarbageCollector(Collector):
    """A device whose second port answers with an impossible Counter32."""

    needs_address = False

    async def ports(self) -> list[str]:
        return ["p1", "p2"]

    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        def snap(port: str, value: int) -> Snapshot:
            return Snapshot(
                device=self.target.name,
                port=port,
                time="2026-03-02T08:00:00Z",  # type: ignore[arg-type]
                oper_status="up",
                counters={"ifInErrors": value},
            )

        return Reading([snap("p1", 5), snap("p2", 2**40)], {"p3": "missing ifName"})


class BrokenCollector(Collector):
    """A collector with a bug: it fails with an error of Python's, not of linktriage's."""

    needs_address = False

    async def ports(self) -> list[str]:
        return ["p1"]

    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        raise ValueError("invalid literal for int() with base 10: b''")


class NotACollector:
    pass


def install(folder: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Install this module as the third-party package ``linktriage-test-plugins``."""
    info = folder / "linktriage_test_plugins-1.0.dist-info"
    info.mkdir(parents=True)
    (info / "METADATA").write_text(
        "Metadata-Version: 2.1\nName: linktriage-test-plugins\nVersion: 1.0\n"
    )
    (info / "entry_points.txt").write_text(ENTRY_POINTS)
    monkeypatch.syspath_prepend(str(folder))
    monkeypatch.setitem(sys.modules, "plugins", sys.modules[__name__])


def dead_inventory(folder: Path, names: list[str], *, with_demo: bool) -> Path:
    """An inventory of devices that never answer (``names``, each given up after 0.2 s), and
    with ``with_demo`` the demo network's annex switch beside them."""
    devices = "".join(
        f'[[devices]]\nname = "{name}"\nsite = "annex"\ncollector = "hang"\n'
        "timeout_s = 0.2\nretries = 0\n"
        for name in names
    )
    if with_demo:
        devices += '[[devices]]\nname = "lark-annex-sw1"\nsite = "annex"\ncollector = "demo"\n'
    path = folder / "inventory.toml"
    path.write_text(devices)
    return path
