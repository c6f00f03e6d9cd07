"""The network of an inventory, read through its collectors, many devices at once.

Collectors are asynchronous; the service is not. One event loop runs in a thread of its
own, and every collector lives on it for the life of the process (an SNMP engine or an
HTTP connection pool belongs to the loop it first ran on). A sweep reads up to
``concurrency`` devices at once, and each device gets a deadline of its timeout times its
tries plus the backoff between them: one device that never answers costs the sweep no
more than that, and is named in the answer while the others are read.
"""

from __future__ import annotations

import asyncio
import logging
import threading
import time
from collections.abc import Awaitable, Callable, Coroutine, Sequence
from typing import Any, TypeVar

from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.format.snapshot import polls_of
from linktriage.errors import (
    CollectorError,
    DeviceSetupError,
    LinktriageError,
    PollError,
    UnknownPortError,
)
from linktriage.network.collectors.base import Collector, HistoryCollector, Reading
from linktriage.network.inventory import DeviceEntry, Inventory
from linktriage.network.watched import Gathered, Network, PortRef

_log = logging.getLogger(__name__)


def _collector_failed(device: str, collector: str, exc: Exception) -> str:
    """Name a collector's unexpected failure for the device's line, and log its traceback."""
    _log.error("%s: the %s collector failed", device, collector, exc_info=exc)
    first = str(exc).splitlines()[0] if str(exc) else ""
    return f"the {collector} collector failed: {type(exc).__name__}: {first}".rstrip(": ")


T = TypeVar("T")


class LoopThread:
    """An asyncio loop in a daemon thread; coroutines are handed to it from any thread."""

    def __init__(self) -> None:
        self.loop = asyncio.new_event_loop()
        self._thread = threading.Thread(target=self.loop.run_forever, daemon=True)
        self._thread.start()

    def run(self, work: Coroutine[Any, Any, T]) -> T:
        return asyncio.run_coroutine_threadsafe(work, self.loop).result()

    def close(self) -> None:
        """Cancel what is still running, stop the loop and close it."""

        async def cancel_rest() -> None:
            rest = [t for t in asyncio.all_tasks() if t is not asyncio.current_task()]
            for task in rest:
                task.cancel()
            await asyncio.gather(*rest, return_exceptions=True)

        self.run(cancel_rest())
        self.loop.call_soon_threadsafe(self.loop.stop)
        self._thread.join(timeout=5)
        self.loop.close()


def deadline_s(timeout_s: float, retries: int) -> float:
    """The most one device may take: every try, the backoff between them, and a margin."""
    backoff = sum(0.15 * 2**n for n in range(retries))
    return float(timeout_s * (retries + 1) + backoff + 0.5)


class InventoryNetwork(Network):
    """The devices of an inventory; their ports as listed there, or as they list them."""

    def __init__(self, inventory: Inventory, *, clock: Callable[[], float] = time.time) -> None:
        self.inventory = inventory
        self.clock = clock
        self._loop = LoopThread()
        self._collectors: dict[str, Collector[Any]] = {}
        self._ports: dict[str, list[str]] = {}
        self._unlisted: dict[str, str] = {}  # device -> why its ports could not be listed

    def close(self) -> None:
        async def close_all() -> None:
            for collector in self._collectors.values():
                await collector.close()

        self._loop.run(close_all())
        self._loop.close()

    def _collector(self, device: DeviceEntry) -> Collector[Any]:
        collector = self._collectors.get(device.name)
        if collector is None:
            collector = self._collectors[device.name] = self.inventory.collector(device)
        return collector

    def _built(self, device: DeviceEntry) -> Collector[Any] | None:
        """The device's collector, or None where its entry cannot make one."""
        try:
            return self._collector(device)
        except DeviceSetupError:
            return None

    def unlisted(self) -> dict[str, str]:
        self.discover()
        return dict(self._unlisted)

    def site_of(self, device: str) -> str | None:
        entry = self.inventory.entry(device)
        return None if entry is None else entry.site

    def sites(self) -> list[str]:
        return sorted({d.site for d in self.inventory.devices})

    def _entry(self, device: str) -> DeviceEntry:
        entry = self.inventory.entry(device)
        if entry is None:  # only names from the inventory are ever read
            raise UnknownPortError(f"No device named {device!r} in the inventory.", suggestions=[])
        return entry

    def discover(self) -> None:
        """List the ports of every device whose inventory entry does not list them."""
        pending = [
            d for d in self.inventory.devices if d.ports is None and d.name not in self._ports
        ]

        async def list_one(device: DeviceEntry) -> tuple[str, list[str] | str]:
            try:
                collector = self._collector(device)
            except DeviceSetupError as exc:  # this device alone cannot be read
                return device.name, exc.problem
            limit = deadline_s(collector.target.timeout_s, collector.target.retries)
            try:
                return device.name, await asyncio.wait_for(collector.ports(), limit)
            except TimeoutError:
                return device.name, f"no answer within {limit:.3g} s"
            except LinktriageError as exc:
                return device.name, exc.message
            except Exception as exc:  # a collector's bug fails its device only
                return device.name, _collector_failed(device.name, device.collector, exc)

        async def list_all() -> list[tuple[str, list[str] | str]]:
            gate = asyncio.Semaphore(self.inventory.defaults.concurrency)

            async def gated(device: DeviceEntry) -> tuple[str, list[str] | str]:
                async with gate:
                    return await list_one(device)

            return await asyncio.gather(*(gated(d) for d in pending))

        for name, found in self._loop.run(list_all()):
            if isinstance(found, str):
                self._unlisted[name] = found
            else:
                self._ports[name] = found
                self._unlisted.pop(name, None)

    def ports(self) -> list[PortRef]:
        self.discover()
        refs = []
        for device in self.inventory.devices:
            refs += self._refs(device)
        return refs

    def _refs(self, device: DeviceEntry) -> list[PortRef]:
        names = device.ports if device.ports is not None else self._ports.get(device.name, [])
        return [PortRef(device.site, device.name, p, device.serves.get(p, "")) for p in names]

    def device_names(self) -> list[str]:
        return [d.name for d in self.inventory.devices]

    def addresses(self) -> dict[str, str]:
        return self.inventory.addresses()

    def ports_of(self, device: str) -> list[PortRef]:
        entry = self._entry(device)
        if entry.ports is None and device not in self._ports:
            self.discover()
            if device in self._unlisted:
                raise PollError(device, f"could not list its ports: {self._unlisted[device]}")
        return self._refs(entry)

    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        gathered = self.poll_many({device: list(ports) if ports is not None else None})
        if device in gathered.failed:
            raise PollError(device, gathered.failed[device])
        return gathered.tables[device]

    def poll_many(self, wanted: dict[str, list[str] | None]) -> Gathered:
        def read(collector: Collector[Any], ports: list[str] | None) -> Awaitable[Reading]:
            return collector.read(ports)

        return self._gather(wanted, read)

    def history(self, wanted: dict[str, list[str]], since: float) -> Gathered:
        keeping = {
            name: ports
            for name, ports in wanted.items()
            if isinstance(self._built(self._entry(name)), HistoryCollector)
        }
        now = self.clock()

        def recall(collector: Collector[Any], ports: list[str] | None) -> Awaitable[Reading]:
            assert isinstance(collector, HistoryCollector)
            return collector.history(ports, since, now)

        return self._gather(dict(keeping), recall)

    def _gather(
        self,
        wanted: dict[str, list[str] | None],
        read: Callable[[Collector[Any], list[str] | None], Awaitable[Reading]],
    ) -> Gathered:
        """Read several devices at once, each within its deadline, into poll tables."""
        entries = {name: self._entry(name) for name in wanted}

        gathered = Gathered({}, {}, {})

        async def read_one(name: str) -> None:
            entry = entries[name]
            try:
                collector = self._collector(entry)
            except DeviceSetupError as exc:  # this device alone cannot be read
                gathered.failed[name] = exc.problem
                return
            ports = wanted[name] if wanted[name] is not None else entry.ports
            limit = deadline_s(collector.target.timeout_s, collector.target.retries)
            try:
                reading = await asyncio.wait_for(read(collector, ports), limit)
            except TimeoutError:
                gathered.failed[name] = f"no answer within {limit:.3g} s"
                return
            except CollectorError as exc:
                gathered.failed[name] = exc.reason
                return
            except Exception as exc:  # a collector's bug fails its device only
                gathered.failed[name] = _collector_failed(name, entry.collector, exc)
                return
            result = polls_of(reading.snapshots)
            gathered.tables[name] = result.polls
            for port, why in reading.problems.items():
                gathered.problems[(name, port)] = why
            for skipped in result.problems:
                port = reading.snapshots[skipped.line - 1].port
                gathered.problems[(name, port)] = skipped.message

        async def read_all() -> None:
            gate = asyncio.Semaphore(self.inventory.defaults.concurrency)

            async def gated(name: str) -> None:
                async with gate:
                    await read_one(name)

            await asyncio.gather(*(gated(n) for n in wanted))

        self._loop.run(read_all())
        return gathered
