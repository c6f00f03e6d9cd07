"""Poll tables packed into bytes: how the store keeps polls compactly, and readably for ever.

A pack holds some rows of one device's poll table (in practice one answer to one poll):
port names, times, operational status, the counters the rows report, their presence bits,
the state and optics readings the rows carry, the far end's names where some row names
one, and the fields of words or lists of format 1.2 some row carries (a JSON list at the end
of the body; a pack without them is byte for byte what earlier releases wrote). Each pack
names its columns: counters by their snapshot-format (MIB) names, readings by
their poll-table field names. A reader maps every column by its name, so a pack written by
any release reads exactly after counters are added to the catalogue, removed or reordered;
a column the reader does not know is skipped and named in the log, never shifted onto
another.

Only counter columns some row reports are kept, a column whose values all fit 32 bits in 4
bytes, and only readings some row carries. Each array's bytes are shuffled (byte planes
together, so the zero high bytes of counters run together) before the whole is compressed
with zlib: about 150 bytes per port per poll, where a JSON line took about 1 KB. A pack
unpacks to the very table it was made from; many packs (a digest reads thousands) unpack at
once to the table of each in turn (:func:`unpack_many`).

Formats 1 and 2 (the first releases) named nothing: bit ``i`` of their header meant the
``i``-th counter of the catalogue as it stood then. They are read through that catalogue,
frozen below, and store migration 4 rewrites them as format 3 (:func:`upgraded`).
"""

from __future__ import annotations

import json
import logging
import struct
import zlib
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from functools import cache, lru_cache
from itertools import chain, repeat
from typing import Any

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.counters import COLUMN_INDEX, COLUMNS
from linktriage.engine.format.poll_table import (
    EXTRA_FIELDS,
    OPTICS_FIELDS,
    STATE_FIELDS,
    PollTable,
    unread_column,
)

log = logging.getLogger(__name__)

#: Packs that name their columns (a directory at the start of the compressed body).
FORMAT = 3
#: The first releases' packs: format 1 without neighbors, format 2 with them.
LEGACY_FORMATS = (1, 2)
_NONE = 2**32 - 1  # the length that stands for "no name"
#: format, rows, bytes of the column directory at the start of the body
_HEADER = struct.Struct("<BII")
#: format, rows, counters reported (bit i: LEGACY_COUNTERS[i]), counters kept in 32 bits
_LEGACY_HEADER = struct.Struct("<BIQQ")
#: The snapshot format's operational statuses, by code (the codes are part of the format).
STATUSES: tuple[str, ...] = (
    "up",
    "down",
    "testing",
    "dormant",
    "notPresent",
    "lowerLayerDown",
    "unknown",
)
_STATUS_CODE = {status: code for code, status in enumerate(STATUSES)}
_U32_MAX = np.uint64(2**32 - 1)

#: The counter catalogue formats 1 and 2 were written against, in its order then. Frozen:
#: these packs mean bit i is this i-th name, whatever the catalogue holds today.
LEGACY_COUNTERS: tuple[str, ...] = (
    "ifHCInOctets", "ifInOctets", "ifHCOutOctets", "ifOutOctets",
    "ifHCInUcastPkts", "ifInUcastPkts", "ifHCInMulticastPkts", "ifInMulticastPkts",
    "ifHCInBroadcastPkts", "ifInBroadcastPkts", "ifHCOutUcastPkts", "ifOutUcastPkts",
    "ifHCOutMulticastPkts", "ifOutMulticastPkts", "ifHCOutBroadcastPkts", "ifOutBroadcastPkts",
    "ifInErrors", "ifOutErrors", "ifInDiscards", "ifOutDiscards",
    "dot3HCStatsFCSErrors", "dot3StatsFCSErrors",
    "dot3HCStatsAlignmentErrors", "dot3StatsAlignmentErrors",
    "dot3HCStatsSymbolErrors", "dot3StatsSymbolErrors",
    "dot3StatsLateCollisions", "dot3StatsSingleCollisionFrames",
    "dot3StatsMultipleCollisionFrames", "dot3StatsExcessiveCollisions",
    "dot3HCStatsFrameTooLongs", "dot3StatsFrameTooLongs",
    "dot3HCStatsInternalMacReceiveErrors", "dot3StatsInternalMacReceiveErrors",
    "etherStatsUndersizePkts", "etherStatsFragments", "etherStatsOversizePkts",
    "etherStatsJabbers",
)  # fmt: skip
#: The readings formats 1 and 2 hold, every one, in this order.
LEGACY_READINGS: tuple[str, ...] = (
    "state.speed_bps", "state.max_speed_bps", "state.mtu", "state.link_changes",
    "state.discontinuity", "state.half_duplex", "state.fiber", "state.poe",
    "optics.rx_power_dbm", "optics.tx_power_dbm", "optics.rx_power_low_alarm_dbm",
    "optics.rx_power_low_warn_dbm", "optics.tx_power_low_alarm_dbm", "optics.temperature_c",
    "optics.bias_ma",
)  # fmt: skip


class PackError(ValueError):
    """Bytes that are not a pack of this format (a damaged or foreign row in the store)."""


@dataclass(frozen=True, slots=True)
class Directory:
    """What a pack holds, by name, in the order its body holds it."""

    wide: tuple[str, ...]  # counters kept in 8 bytes
    narrow: tuple[str, ...]  # counters kept in 4 bytes
    present: tuple[str, ...]  # the counters the presence bits are for, in their order
    readings: tuple[str, ...]  # float64 columns: ``state.<field>`` or ``optics.<field>``
    neighbors: bool  # the far end's device and port names follow the port names
    #: Fields of words or lists (format 1.2's EXTRA_FIELDS) some row carries: one JSON
    #: object of a list per field ends the body.
    extra: tuple[str, ...] = ()

    @property
    def names(self) -> tuple[str, ...]:
        """Every column the pack names."""
        return (*self.wide, *self.narrow, *self.readings)

    def encoded(self) -> bytes:
        heading: dict[str, object] = {"wide": self.wide, "narrow": self.narrow}
        if self.present != (*self.wide, *self.narrow):  # else implied (formats 1-2 differ)
            heading["present"] = self.present
        heading.update(readings=self.readings, neighbors=self.neighbors)
        if self.extra:
            heading["extra"] = self.extra
        return json.dumps(heading, separators=(",", ":")).encode()

    @classmethod
    def decoded(cls, data: bytes) -> Directory:
        try:
            raw = json.loads(data)
            wide = tuple(str(n) for n in raw["wide"])
            narrow = tuple(str(n) for n in raw["narrow"])
            readings = tuple(str(n) for n in raw["readings"])
            neighbors = bool(raw["neighbors"])
            present = tuple(str(n) for n in raw.get("present", (*wide, *narrow)))
            extra = tuple(str(n) for n in raw.get("extra", ()))
        except (ValueError, KeyError, TypeError, AttributeError) as exc:
            raise PackError(f"a pack whose column directory does not read: {exc}") from None
        names = (*wide, *narrow, *readings)
        if len(set(names)) != len(names):
            raise PackError("a pack that names one column twice")
        if sorted(present) != sorted((*wide, *narrow)):
            raise PackError("a pack whose presence bits are for other counters than it holds")
        return cls(wide, narrow, present, readings, neighbors, extra)

    @classmethod
    def legacy(cls, version: int, reported: int, narrow: int) -> Directory:
        """A format 1 or 2 header's bit masks as the names they meant then."""
        if reported >> len(LEGACY_COUNTERS) or narrow & ~reported:
            raise PackError("a pack header with counters its format does not have")
        bits = [i for i in range(len(LEGACY_COUNTERS)) if reported >> i & 1]
        return cls(
            wide=tuple(LEGACY_COUNTERS[i] for i in bits if not narrow >> i & 1),
            narrow=tuple(LEGACY_COUNTERS[i] for i in bits if narrow >> i & 1),
            present=tuple(LEGACY_COUNTERS[i] for i in bits),
            readings=LEGACY_READINGS,
            neighbors=version == 2,
        )


@lru_cache(maxsize=4096)
def _directory(heading: bytes) -> Directory:
    """A pack's directory, read once per distinct one (a device's packs share theirs)."""
    return Directory.decoded(heading)


def _shuffled(array: npt.NDArray[np.generic]) -> bytes:
    a = np.ascontiguousarray(array)
    if a.dtype.itemsize == 1:
        return a.tobytes()
    return a.view(np.uint8).reshape(-1, a.dtype.itemsize).T.tobytes()


def _readings(table: PollTable) -> dict[str, npt.NDArray[np.float64]]:
    """Every reading column of a table by its pack name."""
    return {
        **{f"state.{k}": table.state[k] for k in STATE_FIELDS},
        **{f"optics.{k}": table.optics[k] for k in OPTICS_FIELDS},
    }


def pack(table: PollTable) -> bytes:
    """Rows of one device's poll table as bytes (``table.line`` is not kept)."""
    rows = len(table)
    reported: npt.NDArray[np.bool_] = np.asarray(table.present.any(axis=0), dtype=np.bool_)
    counters = np.where(table.present, table.counters, np.uint64(0))
    narrow: npt.NDArray[np.bool_] = reported & (counters.max(axis=0, initial=0) <= _U32_MAX)
    wide = reported & ~narrow
    readings = {k: v for k, v in _readings(table).items() if not np.isnan(v).all()}
    neighbors = any(d is not None for d in table.neighbor_device)
    extra = {k: v.tolist() for k, v in table.extra.items() if any(x is not None for x in v)}
    order = np.concatenate([np.flatnonzero(wide), np.flatnonzero(narrow)])
    directory = Directory(
        wide=tuple(COLUMNS[j].name for j in np.flatnonzero(wide)),
        narrow=tuple(COLUMNS[j].name for j in np.flatnonzero(narrow)),
        present=tuple(COLUMNS[j].name for j in order),  # wide, then narrow
        readings=tuple(readings),
        neighbors=neighbors,
        extra=tuple(extra),
    )
    names = [str(port).encode() for port in table.port]
    try:
        status = np.array([_STATUS_CODE[s] for s in table.oper_status], np.uint8)
    except KeyError as exc:
        raise PackError(f"an operational status the format does not have: {exc}") from None
    arrays: list[npt.NDArray[np.generic]] = [
        np.array([len(name) for name in names], np.uint32),
        np.asarray(table.time, np.float64),
        status,
        counters[:, wide],
        counters[:, narrow].astype(np.uint32),
        np.packbits(table.present[:, order]),
        *readings.values(),
    ]
    heading = directory.encoded()
    body = heading + b"".join(_shuffled(a) for a in arrays) + b"".join(names)
    if neighbors:
        body += _strings(table.neighbor_device) + _strings(table.neighbor_port)
    if extra:
        body += json.dumps(list(extra.values()), separators=(",", ":")).encode()
    return _HEADER.pack(FORMAT, rows, len(heading)) + zlib.compress(body, 6)


def _strings(values: npt.NDArray[np.object_]) -> bytes:
    """Names (or None) as their lengths, then their UTF-8 bytes."""
    encoded = [b"" if v is None else str(v).encode() for v in values]
    lengths = np.array(
        [_NONE if v is None else len(e) for v, e in zip(values, encoded, strict=True)], np.uint32
    )
    return lengths.tobytes() + b"".join(encoded)


def _read_strings(body: memoryview, at: int, rows: int) -> tuple[list[str | None], int]:
    """Names written by :func:`_strings` from ``at``, and where they end."""
    if at + 4 * rows > len(body):
        raise PackError("a pack shorter than its header says")
    lengths = np.frombuffer(body[at : at + 4 * rows], np.uint32).tolist()
    at += 4 * rows
    names: list[str | None] = []
    for length in lengths:
        if length == _NONE:
            names.append(None)
            continue
        if at + length > len(body):
            raise PackError("a pack shorter than its header says")
        names.append(bytes(body[at : at + length]).decode())
        at += length
    return names, at


def _opened(blob: bytes) -> tuple[int, Directory, memoryview]:
    """A pack's rows, its directory and the body after the directory."""
    try:
        version = blob[0]
        if version == FORMAT:
            _, rows, heading = _HEADER.unpack_from(blob)
            body = memoryview(zlib.decompress(blob[_HEADER.size :]))
            return rows, _directory(bytes(body[:heading])), body[heading:]
        if version in LEGACY_FORMATS:
            _, rows, reported, narrow = _LEGACY_HEADER.unpack_from(blob)
            body = memoryview(zlib.decompress(blob[_LEGACY_HEADER.size :]))
            return rows, Directory.legacy(version, reported, narrow), body
    except (struct.error, zlib.error, IndexError) as exc:
        raise PackError(f"not a pack of polls: {exc}") from None
    readable = ", ".join(str(v) for v in (*LEGACY_FORMATS, FORMAT))
    raise PackError(f"pack format {version}, this version reads formats {readable}")


def upgraded(blob: bytes) -> bytes:
    """A pack of an earlier format as format 3, holding the very same bytes: the body of
    formats 1 and 2 is a format 3 body without its directory, so the names their header's
    bits meant are written in front of it. Nothing passes through today's catalogue, so
    nothing is lost, whatever this release knows."""
    if blob[:1] == bytes([FORMAT]):
        return blob
    rows, directory, body = _opened(blob)
    heading = directory.encoded()
    return _HEADER.pack(FORMAT, rows, len(heading)) + zlib.compress(heading + body, 6)


def pack_columns(blob: bytes) -> tuple[str, ...]:
    """The names of every column a pack holds (counters, then readings)."""
    return _opened(blob)[1].names


@cache
def _tell_unknown(name: str) -> None:
    """Say once per process that stored packs hold a column this release does not know."""
    log.warning(
        "stored polls hold a column this release does not know, %r: it is left out "
        "(the rest of each pack reads as stored)",
        name,
    )


@lru_cache(maxsize=4096)
def _counter_places(names: tuple[str, ...]) -> tuple[npt.NDArray[np.intp], npt.NDArray[np.intp]]:
    """For counter ``names``: the positions known to today's catalogue, and their columns
    (worked out once per set of names: a device's packs name the same ones)."""
    kept, columns = [], []
    for k, name in enumerate(names):
        j = COLUMN_INDEX.get(name)
        if j is None:
            _tell_unknown(name)
            continue
        kept.append(k)
        columns.append(j)
    return np.array(kept, np.intp), np.array(columns, np.intp)


def unpack(blob: bytes, device: str) -> PollTable:
    """The poll table a pack was made from, its rows all of ``device``; every column is
    placed by its name, and one this release does not know is left out (and logged)."""
    return unpack_many([blob], [device])


def unpack_many(blobs: Sequence[bytes], devices: Sequence[str]) -> PollTable:
    """The rows of many packs as one table, in their order, the rows of ``blobs[k]`` all of
    ``devices[k]``: what :func:`unpack` of each, concatenated, gives. A store's digest reads
    thousands of packs; those that share a directory and a row count (a device's polls, as
    a rule) are laid out alike, so each of their columns is read for all of them at once,
    and names are decoded once per distinct bytes (a device's polls name the same ports)."""
    opened = [_opened(blob) for blob in blobs]
    counts = np.array([rows for rows, _, _ in opened], np.intp)
    ends = np.cumsum(counts)
    starts = ends - counts
    out = _Columns.sized(int(ends[-1]) if len(ends) else 0)
    fixed = [0] * len(opened)  # where each body's port names begin
    alike: dict[tuple[Directory, int], list[int]] = {}
    for k, (rows, directory, _) in enumerate(opened):
        alike.setdefault((directory, rows), []).append(k)
    for (directory, rows), members in alike.items():
        rows_at = (starts[members][:, None] + np.arange(rows)).ravel()
        size = out.read_alike(directory, rows, [opened[k][2] for k in members], rows_at)
        for k in members:
            fixed[k] = size
    if out.status.size and int(out.status.max()) >= len(STATUSES):
        raise PackError("an operational status code the format does not have")
    csum = np.concatenate([[0], np.cumsum(out.lengths, dtype=np.int64)])
    name_bytes = (csum[ends] - csum[starts]).tolist()
    words = _Words()
    for k, (rows, directory, body) in enumerate(opened):
        lengths = out.lengths[starts[k] : ends[k]]
        at = words.ports(body, fixed[k], fixed[k] + name_bytes[k], lengths)
        if directory.neighbors:
            at = words.far_ends(body, at, rows)
        else:
            words.no_far_ends(rows)
        if directory.extra:
            words.extra(directory.extra, bytes(body[at:]), rows)
        elif at != len(body):
            raise PackError("a pack longer than its header says")
        else:
            words.no_extra(rows)
    total = len(out.time)
    neighbors = any(directory.neighbors for _, directory, _ in opened)
    return PollTable.from_columns(
        device=np.repeat(np.array(devices, dtype=object), counts),
        port=np.fromiter(chain.from_iterable(words.port), dtype=object, count=total),
        time=out.time,
        oper_status=np.array(STATUSES, dtype=object)[out.status],
        state={k: out.reading(f"state.{k}") for k in STATE_FIELDS},
        optics={k: out.reading(f"optics.{k}") for k in OPTICS_FIELDS},
        counters=out.counters,
        present=out.present,
        neighbor_device=words.column(words.far_device, total) if neighbors else None,
        neighbor_port=words.column(words.far_port, total) if neighbors else None,
        extra={name: words.column(parts, total) for name, parts in words.extras.items()},
    )


@dataclass(slots=True)
class _Columns:
    """The fixed-size columns of many packs, filled a group of packs laid out alike at a
    time."""

    lengths: npt.NDArray[np.uint32]
    time: npt.NDArray[np.float64]
    status: npt.NDArray[np.uint8]
    counters: npt.NDArray[np.uint64]
    present: npt.NDArray[np.bool_]
    readings: dict[str, npt.NDArray[np.float64]]  # by pack name, only those some pack holds

    @classmethod
    def sized(cls, rows: int) -> _Columns:
        return cls(
            lengths=np.empty(rows, np.uint32),
            time=np.empty(rows, np.float64),
            status=np.empty(rows, np.uint8),
            counters=np.zeros((rows, len(COLUMNS)), np.uint64),
            present=np.zeros((rows, len(COLUMNS)), np.bool_),
            readings={},
        )

    def reading(self, name: str) -> npt.NDArray[np.float64]:
        """A reading column; one no pack holds is "not reported" throughout, at no cost."""
        column = self.readings.get(name)
        return unread_column(len(self.time)) if column is None else column

    def read_alike(
        self, directory: Directory, rows: int, bodies: list[memoryview], at: npt.NDArray[np.intp]
    ) -> int:
        """Read the packs ``bodies``, each of ``rows`` rows under ``directory``, into the
        rows ``at`` (theirs, one pack after the other); returns where their names begin."""
        planes = _Planes.of(bodies, directory, rows)
        self.lengths[at] = planes.take(np.uint32, rows).ravel()
        self.time[at] = planes.take(np.float64, rows).ravel()
        self.status[at] = planes.take(np.uint8, rows).ravel()
        for names, dtype in ((directory.wide, np.uint64), (directory.narrow, np.uint32)):
            block = planes.take(dtype, rows * len(names)).reshape(len(at), len(names))
            kept, columns = _counter_places(names)
            if columns.size:
                self.counters[np.ix_(at, columns)] = block[:, kept]
        bits = rows * len(directory.present)
        packed = planes.take(np.uint8, (bits + 7) // 8)
        flags = np.unpackbits(packed, axis=1, count=bits).reshape(len(at), len(directory.present))
        kept, columns = _counter_places(directory.present)
        if columns.size:
            self.present[np.ix_(at, columns)] = flags[:, kept].astype(np.bool_)
        for name in directory.readings:
            values = planes.take(np.float64, rows).ravel()
            if name not in _READING_NAMES:
                _tell_unknown(name)
                continue
            column = self.readings.get(name)
            if column is None:
                column = self.readings[name] = np.full(len(self.time), np.nan)
            column[at] = values
        return planes.at


#: Every reading column a pack may name that this release places.
_READING_NAMES = frozenset(
    [*(f"state.{k}" for k in STATE_FIELDS), *(f"optics.{k}" for k in OPTICS_FIELDS)]
)


@dataclass(slots=True)
class _Planes:
    """The fixed-size part of packs laid out alike (one directory, one row count), a pack
    a row, read an array at a time for every pack at once."""

    raw: npt.NDArray[np.uint8]  # shape (packs, bytes)
    at: int = 0

    @classmethod
    def of(cls, bodies: list[memoryview], directory: Directory, rows: int) -> _Planes:
        counters = 8 * len(directory.wide) + 4 * len(directory.narrow)
        bits = rows * len(directory.present)
        size = rows * (4 + 8 + 1 + counters + 8 * len(directory.readings)) + (bits + 7) // 8
        if any(len(body) < size for body in bodies):
            raise PackError("a pack shorter than its header says")
        raw = np.frombuffer(b"".join(body[:size] for body in bodies), np.uint8)
        return cls(raw.reshape(len(bodies), size))

    def take(self, dtype: type[np.generic], count: int) -> npt.NDArray[Any]:
        """The next array of ``count`` values of every pack, shape (packs, count): each
        pack's byte planes put back together (see :func:`_shuffled`)."""
        size = np.dtype(dtype).itemsize
        planes = self.raw[:, self.at : self.at + size * count]
        self.at += size * count
        if size == 1:
            return planes.view(dtype)
        packs = len(self.raw)
        values = np.ascontiguousarray(planes.reshape(packs, size, count).transpose(0, 2, 1))
        return values.view(dtype).reshape(packs, count)


@dataclass(slots=True)
class _Words:
    """The names and word columns of many packs, pack by pack; each distinct run of bytes
    is decoded once (a device's polls name the same ports and far ends)."""

    port: list[Sequence[str]] = field(default_factory=list)
    far_device: list[Iterable[str | None]] = field(default_factory=list)
    far_port: list[Iterable[str | None]] = field(default_factory=list)
    extras: dict[str, list[Iterable[object]]] = field(default_factory=dict)
    rows: list[int] = field(default_factory=list)  # each pack's rows, as its ports come
    packs: int = 0  # packs whose extra columns are in
    ports_of: dict[bytes, list[str]] = field(default_factory=dict)
    far_ends_of: dict[bytes, tuple[list[str | None], list[str | None]]] = field(
        default_factory=dict
    )
    extras_of: dict[tuple[tuple[str, ...], int, bytes], dict[str, list[object]]] = field(
        default_factory=dict
    )

    def ports(self, body: memoryview, at: int, end: int, lengths: npt.NDArray[np.uint32]) -> int:
        """A pack's port names, from ``at`` to ``end``; returns ``end``."""
        data = bytes(body[at:end])
        if len(data) != end - at:
            raise PackError("port names of another length than the pack says")
        key = lengths.tobytes() + data
        names = self.ports_of.get(key)
        if names is None:
            stops = np.cumsum(lengths).tolist()
            try:
                names = [data[a:b].decode() for a, b in zip([0, *stops][:-1], stops, strict=True)]
            except UnicodeDecodeError as exc:
                raise PackError(f"port names that are not UTF-8: {exc}") from None
            self.ports_of[key] = names
        self.port.append(names)
        self.rows.append(len(lengths))
        return end

    def far_ends(self, body: memoryview, at: int, rows: int) -> int:
        """A pack's far-end names from ``at`` (see :func:`_strings`); returns where they end."""
        end = _strings_end(body, _strings_end(body, at, rows), rows)
        key = bytes(body[at:end])
        names = self.far_ends_of.get(key)
        if names is None:
            device, middle = _read_strings(body, at, rows)
            port, _ = _read_strings(body, middle, rows)
            names = self.far_ends_of[key] = (device, port)
        self.far_device.append(names[0])
        self.far_port.append(names[1])
        return end

    def no_far_ends(self, rows: int) -> None:
        self.far_device.append(repeat(None, rows))
        self.far_port.append(repeat(None, rows))

    def extra(self, names: tuple[str, ...], data: bytes, rows: int) -> None:
        """A pack's word and list columns (the JSON that ends its body)."""
        key = (names, rows, data)
        columns = self.extras_of.get(key)
        if columns is None:
            columns = self.extras_of[key] = _read_extra(names, data, rows)
        for name, values in columns.items():
            parts = self.extras.get(name)
            if parts is None:  # not carried by the packs before
                parts = self.extras[name] = [repeat(None, r) for r in self.rows[: self.packs]]
            parts.append(values)
        self.no_extra(rows)

    def no_extra(self, rows: int) -> None:
        """Close a pack's extra columns: those it does not carry, "not carried"."""
        self.packs += 1
        for parts in self.extras.values():
            if len(parts) < self.packs:
                parts.append(repeat(None, rows))

    @staticmethod
    def column(parts: Sequence[Iterable[object]], rows: int) -> npt.NDArray[np.object_]:
        """Parts one after the other as an object column (tuples kept whole)."""
        return np.fromiter(chain.from_iterable(parts), dtype=object, count=rows)


def _strings_end(body: memoryview, at: int, rows: int) -> int:
    """Where names written by :func:`_strings` from ``at`` end."""
    if at + 4 * rows > len(body):
        raise PackError("a pack shorter than its header says")
    lengths = np.frombuffer(body[at : at + 4 * rows], np.uint32)
    return at + 4 * rows + int(lengths[lengths != _NONE].sum())


def _tupled(value: object) -> object:
    """JSON's lists as the tuples the poll table holds (speeds, lanes)."""
    return tuple(map(_tupled, value)) if isinstance(value, list) else value


def _read_extra(names: tuple[str, ...], data: bytes, rows: int) -> dict[str, list[object]]:
    """The word and list columns that end a pack, by name; one this release does not know
    is left out (and logged)."""
    try:
        columns = json.loads(data)
    except ValueError as exc:
        raise PackError(f"a pack whose last columns do not read: {exc}") from None
    if not isinstance(columns, list) or len(columns) != len(names):
        raise PackError("a pack with other last columns than its directory names")
    out: dict[str, list[object]] = {}
    for name, values in zip(names, columns, strict=True):
        if not isinstance(values, list) or len(values) != rows:
            raise PackError(f"a pack whose column {name!r} has another length than its rows")
        if name not in EXTRA_FIELDS:
            _tell_unknown(name)
            continue
        out[name] = [_tupled(v) for v in values]
    return out
