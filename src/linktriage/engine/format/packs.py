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
unpacks to the very table it was made from.

Formats 1 and 2 (the first releases) named nothing: bit ``i`` of their header meant the
``i``-th counter of the catalogue as it stood then. They are read through that catalogue,
frozen below, and store migration 4 rewrites them as format 3 (:func:`upgraded`).
"""

from __future__ import annotations

import json
import logging
import struct
import zlib
from dataclasses import dataclass
from functools import cache, lru_cache
from typing import Any

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.counters import COLUMN_INDEX, COLUMNS
from linktriage.engine.format.poll_table import (
    EXTRA_FIELDS,
    OPTICS_FIELDS,
    STATE_FIELDS,
    PollTable,
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


def _unshuffled(data: memoryview, dtype: type[np.generic], count: int) -> npt.NDArray[Any]:
    size = np.dtype(dtype).itemsize
    planes = np.frombuffer(data, np.uint8, count * size)
    if size == 1:
        return planes.view(dtype)
    return np.ascontiguousarray(planes.reshape(size, count).T).view(dtype).reshape(count)


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
def _counter_places(names: tuple[str, ...]) -> tuple[list[int], list[int]]:
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
    return kept, columns


def unpack(blob: bytes, device: str) -> PollTable:
    """The poll table a pack was made from, its rows all of ``device``; every column is
    placed by its name, and one this release does not know is left out (and logged)."""
    rows, directory, body = _opened(blob)
    at = 0

    def take(dtype: type[np.generic], count: int) -> npt.NDArray[Any]:
        nonlocal at
        size = np.dtype(dtype).itemsize * count
        if at + size > len(body):
            raise PackError("a pack shorter than its header says")
        array = _unshuffled(body[at : at + size], dtype, count)
        at += size
        return array

    lengths = take(np.uint32, rows)
    time = take(np.float64, rows)
    status = take(np.uint8, rows)
    if status.size and int(status.max()) >= len(STATUSES):
        raise PackError("an operational status code the format does not have")
    counters = np.zeros((rows, len(COLUMNS)), np.uint64)
    present = np.zeros((rows, len(COLUMNS)), np.bool_)
    for names, dtype in ((directory.wide, np.uint64), (directory.narrow, np.uint32)):
        block = take(dtype, rows * len(names)).reshape(rows, len(names))
        kept, columns = _counter_places(names)
        counters[:, columns] = block[:, kept]
    bits = rows * len(directory.present)
    unpacked = np.unpackbits(take(np.uint8, (bits + 7) // 8), count=bits)
    flags = unpacked.reshape(rows, len(directory.present))
    kept, columns = _counter_places(directory.present)
    present[:, columns] = flags[:, kept].astype(np.bool_)
    state = {k: np.full(rows, np.nan) for k in STATE_FIELDS}
    optics = {k: np.full(rows, np.nan) for k in OPTICS_FIELDS}
    places = {f"state.{k}": (state, k) for k in STATE_FIELDS}
    places.update({f"optics.{k}": (optics, k) for k in OPTICS_FIELDS})
    for name in directory.readings:
        values = take(np.float64, rows)
        place = places.get(name)
        if place is None:
            _tell_unknown(name)
            continue
        place[0][place[1]] = values
    names_end = at + int(lengths.sum())
    names_bytes = bytes(body[at:names_end])
    if len(names_bytes) != int(lengths.sum()):
        raise PackError("port names of another length than the pack says")
    far: list[str | None] | None = None
    far_port: list[str | None] | None = None
    if directory.neighbors:
        far, at = _read_strings(body, names_end, rows)
        far_port, at = _read_strings(body, at, rows)
        names_end = at
    extra = _read_extra(directory.extra, bytes(body[names_end:]), rows) if directory.extra else {}
    if not directory.extra and names_end != len(body):
        raise PackError("a pack longer than its header says")
    ends = np.cumsum(lengths)
    starts = ends - lengths
    try:
        ports = [
            names_bytes[s:e].decode() for s, e in zip(starts.tolist(), ends.tolist(), strict=True)
        ]
    except UnicodeDecodeError as exc:
        raise PackError(f"port names that are not UTF-8: {exc}") from None
    return PollTable.from_columns(
        device=np.full(rows, device, dtype=object),
        port=ports,
        time=time.astype(np.float64),
        oper_status=np.array(STATUSES, dtype=object)[status],
        state=state,
        optics=optics,
        counters=counters,
        present=present,
        neighbor_device=far,
        neighbor_port=far_port,
        extra=extra,
    )


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
