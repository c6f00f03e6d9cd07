"""Polls for a question: stored history where it is recent enough, fresh polls where it is
not, a wait where the window is still too short; and the poll job's round over everything."""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.links import lldp_key
from linktriage.network.watched import Network, PortRef
from linktriage.settings import Settings
from linktriage.store import Store


@dataclass(frozen=True, slots=True)
class PollRound:
    """What one poll of the whole network stored, and which devices did not answer."""

    stored: int
    failed: dict[str, str]  # device -> why
    forgotten: int = 0  # polls older than [store] keep_polls_h, forgotten after this round


#: Polls are forgotten a thousand packs per transaction, as many transactions as the
#: store is behind: each is short, so readers and writers are never held up for long, and
#: the store never grows by what one round could not forget.
PRUNE_BATCH = 1000
#: Up to this many devices, their stored polls are read by the device index; beyond, one
#: read of every poll of the window costs less than as many lookups.
FEW_DEVICES = 200


@dataclass
class Poller:
    """Reads one network into one store, on a clock and a sleep given from outside (tests
    and the demo run it on a simulated clock)."""

    network: Network
    store: Store
    settings: Settings
    clock: Callable[[], float] = time.time
    sleep: Callable[[float], None] = time.sleep
    #: Which port each polled port's LLDP last named, and the reverse: an end that hears
    #: nothing of its far end hears no LLDP either and names nobody, so its far end is
    #: found from the side that still hears it.
    names: dict[tuple[str, str], tuple[str, str]] = field(default_factory=dict)
    named_by: dict[tuple[str, str], tuple[str, str]] = field(default_factory=dict)

    def poll_round(self) -> PollRound:
        """Poll every device once and keep the answers: the poll job."""
        gathered = self.network.poll_many(dict.fromkeys(self.network.device_names()))
        polled = PollTable.concat(list(gathered.tables.values()))
        self.heard(polled)
        stored = self.store.add_polls(polled)
        cutoff = self.clock() - self.settings.store.keep_polls_h * 3600.0
        forgotten = self.store.prune_polls(cutoff, batch=PRUNE_BATCH)
        return PollRound(stored, gathered.failed, forgotten)

    def polls_for(
        self, refs: list[PortRef], *, fresh: bool = True
    ) -> tuple[PollTable, dict[str, str]]:
        """Polls for these ports, never spanning less than ``quick_window_s``: stored recent
        ones plus one fresh poll each, or, where the stored history is younger than that
        (right after start) or absent, a second fresh poll once the first reaches back
        ``quick_window_s``. A device whose source keeps history (Prometheus) is asked for
        its recent window instead, and asked again after the wait when that is too short.
        Without ``fresh`` (the digest) a device whose stored polls already span the quick
        window for every port asked about is not polled again: the poll job's are enough."""
        wanted: dict[str, list[str]] = {}
        for ref in refs:
            wanted.setdefault(ref.device, []).append(ref.port)
        now = self.clock()
        quick = self.settings.chat.quick_window_s
        since = now - self.settings.chat.recent_poll_s
        tables: list[PollTable] = []
        short: dict[str, dict[str, float]] = {}  # device -> port -> seconds still to wait
        recalled = self.network.history(wanted, since)
        failed = dict(recalled.failed)
        for device, table in recalled.tables.items():
            reach = _Reach.of(table, {device: wanted[device]}, now, quick, absent=False)
            short[device] = reach.short.get(device, {})
            if not short[device]:
                tables.append(table)
        others = {
            d: ports for d, ports in wanted.items() if d not in recalled.tables and d not in failed
        }
        stored = self._stored(list(others), since)
        reach = _Reach.of(stored, others, now, quick, absent=True)
        tables.append(stored if len(reach.rows) == len(stored) else stored.take(reach.rows))
        to_poll: dict[str, list[str] | None] = {}
        for device, ports in others.items():
            if not fresh and device in reach.spanning:
                continue
            short[device] = reach.short.get(device, {})
            to_poll[device] = ports
        failed.update(self._poll_into(tables, to_poll))
        young = {d: list(waits) for d, waits in short.items() if waits and d not in failed}
        if young:
            self.sleep(max(max(short[d].values()) for d in young))
            again = self.network.history(
                {d: ps for d, ps in young.items() if d in recalled.tables}, since
            )
            tables += again.tables.values()
            failed.update(again.failed)
            retry = {d: ps for d, ps in young.items() if d not in recalled.tables}
            failed.update(self._poll_into(tables, dict(retry)))
        answered = [table for table in tables if len(table)]
        # One table (a digest's stored polls, as a rule) is handed on as it is, not copied.
        return (answered[0] if len(answered) == 1 else PollTable.concat(answered)), failed

    def _stored(self, devices: list[str], since: float) -> PollTable:
        """The stored polls of these devices since ``since`` (maybe of others too): a few
        devices' found by their index, many devices' in one read of every poll since
        then."""
        if not devices:
            return PollTable.empty()
        if len(devices) <= FEW_DEVICES:
            return self.store.polls_since(since, devices=devices)
        return self.store.polls_since(since)

    def _poll_into(
        self, tables: list[PollTable], wanted: dict[str, list[str] | None]
    ) -> dict[str, str]:
        """Poll these devices now, keeping their answers (one transaction) and adding them
        to ``tables``; returns the devices that did not answer, with why."""
        if not wanted:
            return {}
        gathered = self.network.poll_many(wanted)
        answered = list(gathered.tables.values())
        if answered:
            polled = PollTable.concat(answered)
            self.heard(polled)
            self.store.add_polls(polled)
            tables += answered
        return dict(gathered.failed)

    def heard(self, polls: PollTable) -> None:
        """Remember what each port of ``polls`` names as its LLDP neighbor, latest last; a
        port that now names another far end, or none, no longer stands for the old one."""
        for device, port, far, far_port in zip(
            polls.device.tolist(), polls.port.tolist(), polls.neighbor_device.tolist(),
            polls.neighbor_port.tolist(), strict=True,
        ):  # fmt: skip
            me = (device, port)
            old = self.names.pop(me, None)
            if old is not None and self.named_by.get(old) == me:
                del self.named_by[old]
            if far is not None and far_port is not None:
                key = lldp_key(far, far_port)
                self.names[me] = key
                self.named_by[key] = me

    def last_said(self) -> PollTable:
        """What each port last said, as stored (which LLDP neighbor it hears): every
        device's polls over two poll job rounds back from its newest, which hold each of
        its ports where the job runs."""
        return self.store.last_said(2 * self.settings.schedule.poll_minutes * 60.0)

    def naming(self, device: str, port: str) -> tuple[str, str] | None:
        """The port whose LLDP last named ``device`` ``port`` as its neighbor, if any."""
        return self.named_by.get(lldp_key(device, port))


@dataclass(frozen=True, slots=True)
class _Reach:
    """How far back a table's polls reach for the ports asked about, worked out for every
    port at once (a digest asks about every port of the network)."""

    rows: npt.NDArray[np.intp]  # the rows of the ports asked about
    #: Devices each of whose ports asked about has two polls or more, ``quick`` seconds apart.
    spanning: frozenset[str]
    #: The ports whose polls reach back less than ``quick`` seconds, with how long to wait
    #: until they do (device -> port -> seconds).
    short: dict[str, dict[str, float]]

    @classmethod
    def of(
        cls,
        table: PollTable,
        wanted: dict[str, list[str]],
        now: float,
        quick: float,
        *,
        absent: bool,
    ) -> _Reach:
        """The reach of ``table`` for the ports ``wanted`` (device -> ports) at ``now``;
        a port without polls is short only if ``absent`` (a source that keeps history and
        has none for a port will not after a wait either)."""
        numbers: dict[str, dict[str, int]] = {}  # device -> port -> its number
        keys: list[tuple[str, str]] = []  # by number: the port
        key_device: list[int] = []  # by number: its device's place in ``wanted``
        for k, (device, ports) in enumerate(wanted.items()):
            mine = numbers[device] = {}
            for port in ports:
                if port not in mine:
                    mine[port] = len(keys)
                    keys.append((device, port))
                    key_device.append(k)
        none: dict[str, int] = {}
        pairs = zip(table.device.tolist(), table.port.tolist(), strict=True)
        codes = np.fromiter(
            (numbers.get(d, none).get(p, -1) for d, p in pairs), np.intp, len(table)
        )
        rows = np.flatnonzero(codes >= 0)
        codes, times = codes[rows], table.time[rows]
        counts = np.bincount(codes, minlength=len(keys))
        oldest = np.full(len(keys), np.inf)
        newest = np.full(len(keys), -np.inf)
        np.minimum.at(oldest, codes, times)
        np.maximum.at(newest, codes, times)
        spans = (counts >= 2) & (newest - oldest >= quick)
        unspanned = np.bincount(np.array(key_device, np.intp)[~spans], minlength=len(wanted))
        seen = counts > 0
        waits = np.where(seen, quick - (now - oldest), quick)
        short: dict[str, dict[str, float]] = {}
        for k in np.flatnonzero(np.where(seen, waits > 0, absent)).tolist():
            device, port = keys[k]
            short.setdefault(device, {})[port] = float(waits[k])
        return cls(
            rows,
            frozenset(d for d, n in zip(wanted, unspanned.tolist(), strict=True) if not n),
            short,
        )
