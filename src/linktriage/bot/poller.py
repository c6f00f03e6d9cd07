"""Polls for a question: stored history where it is recent enough, fresh polls where it is
not, a wait where the window is still too short; and the poll job's round over everything."""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

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
            short[device] = _short_of(table, wanted[device], now, quick, absent=False)
            if not short[device]:
                tables.append(table)
        others = [d for d in wanted if d not in recalled.tables and d not in failed]
        stored = self._stored(others, since)
        to_poll: dict[str, list[str] | None] = {}
        for device in others:
            kept = stored.get(device, PollTable.empty())
            kept = kept.take(np.flatnonzero(np.isin(kept.port, wanted[device])))
            tables.append(kept)
            if not fresh and _spans(kept, wanted[device], quick):
                continue
            short[device] = _short_of(kept, wanted[device], now, quick, absent=True)
            to_poll[device] = wanted[device]
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
        return PollTable.concat(tables), failed

    def _stored(self, devices: list[str], since: float) -> dict[str, PollTable]:
        """The stored polls of these devices since ``since``, by device: a few devices'
        found by their index, many devices' in one read of every poll since then."""
        if not devices:
            return {}
        wanted = set(devices)
        if len(devices) <= FEW_DEVICES:
            found = self.store.polls_since(since, devices=devices)
        else:
            found = self.store.polls_since(since)
        return {name: rows for name, rows in found.by_device() if name in wanted}

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

    def naming(self, device: str, port: str) -> tuple[str, str] | None:
        """The port whose LLDP last named ``device`` ``port`` as its neighbor, if any."""
        return self.named_by.get(lldp_key(device, port))


@dataclass(frozen=True, slots=True)
class _History:
    """Each port's polls in a table: how many, the oldest and the newest time."""

    counts: dict[str, int]
    oldest: dict[str, float]
    newest: dict[str, float]

    @classmethod
    def of(cls, table: PollTable) -> _History:
        names, which = np.unique(table.port.astype(str), return_inverse=True)
        oldest = np.full(len(names), np.inf)
        newest = np.full(len(names), -np.inf)
        np.minimum.at(oldest, which, table.time)
        np.maximum.at(newest, which, table.time)
        counts = np.bincount(which, minlength=len(names))
        keys = names.tolist()
        return cls(
            dict(zip(keys, counts.tolist(), strict=True)),
            dict(zip(keys, oldest.tolist(), strict=True)),
            dict(zip(keys, newest.tolist(), strict=True)),
        )


def _spans(table: PollTable, ports: list[str], quick: float) -> bool:
    """Whether every port has two polls or more in ``table``, spanning ``quick`` seconds."""
    seen = _History.of(table)
    return all(
        seen.counts.get(port, 0) >= 2 and seen.newest[port] - seen.oldest[port] >= quick
        for port in ports
    )


def _short_of(
    table: PollTable, ports: list[str], now: float, quick: float, *, absent: bool
) -> dict[str, float]:
    """Ports whose history in ``table`` reaches back less than ``quick`` seconds from
    ``now``, with how long to wait until it does; ports with none count only if
    ``absent`` (a source that keeps history and has none for a port will not after a
    wait either)."""
    oldest = _History.of(table).oldest
    short: dict[str, float] = {}
    for port in ports:
        if port in oldest and now - oldest[port] < quick:
            short[port] = quick - (now - oldest[port])
        elif port not in oldest and absent:
            short[port] = quick
    return short
