"""Poll tables packed into bytes: how the store keeps polls compactly.

A pack holds some rows of one device's poll table (in practice one answer to one poll):
port names, times, operational status, the counters the rows report, their presence
bits, and the state and optics floats. Only counter columns some row reports are kept,
and a column whose values all fit 32 bits is kept in 4 bytes. Each array's bytes are
shuffled (byte planes together, so the zero high bytes of counters run together) before
the whole is compressed with zlib: about 140 bytes per port per poll on the demo network,
where a JSON line took about 1 KB. A pack unpacks to the very table it was made from.
"""

from __future__ import annotations

import struct
import zlib
from typing import Any

import numpy as np
import numpy.typing as npt

from linktriage.counters import COLUMNS
from linktriage.polls import OPTICS_FIELDS, STATE_FIELDS, PollTable

#: Format 1 holds no neighbors; format 2 (written only when some row names one) adds the
#: far end's names after the port names. Both are read.
FORMAT = 1
FORMAT_NEIGHBORS = 2
_NONE = 2**32 - 1  # the length that stands for "no name"
#: format, rows, columns reported (bit i: COLUMNS[i]), columns kept in 32 bits
_HEADER = struct.Struct("<BIQQ")
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
_FLOATS = len(STATE_FIELDS) + len(OPTICS_FIELDS)
_U32_MAX = np.uint64(2**32 - 1)


class PackError(ValueError):
    """Bytes that are not a pack of this format (a damaged or foreign row in the store)."""


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


def _mask(columns: npt.NDArray[np.bool_]) -> int:
    return sum(1 << int(i) for i in np.flatnonzero(columns))


def _columns(mask: int) -> npt.NDArray[np.bool_]:
    return np.array([bool(mask >> i & 1) for i in range(len(COLUMNS))])


def pack(table: PollTable) -> bytes:
    """Rows of one device's poll table as bytes (``table.line`` is not kept)."""
    rows = len(table)
    reported: npt.NDArray[np.bool_] = np.asarray(table.present.any(axis=0), dtype=np.bool_)
    counters = np.where(table.present, table.counters, np.uint64(0))
    narrow: npt.NDArray[np.bool_] = reported & (counters.max(axis=0, initial=0) <= _U32_MAX)
    wide = reported & ~narrow
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
        np.packbits(table.present[:, reported]),
        *(table.state[k] for k in STATE_FIELDS),
        *(table.optics[k] for k in OPTICS_FIELDS),
    ]
    body = b"".join(_shuffled(a) for a in arrays) + b"".join(names)
    version = FORMAT
    if any(d is not None for d in table.neighbor_device):
        version = FORMAT_NEIGHBORS
        body += _strings(table.neighbor_device) + _strings(table.neighbor_port)
    return _HEADER.pack(version, rows, _mask(reported), _mask(narrow)) + zlib.compress(body, 6)


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


def unpack(blob: bytes, device: str) -> PollTable:
    """The poll table a pack was made from, its rows all of ``device``."""
    try:
        version, rows, reported_mask, narrow_mask = _HEADER.unpack_from(blob)
        if version not in (FORMAT, FORMAT_NEIGHBORS):
            raise PackError(
                f"pack format {version}, this version reads {FORMAT} and {FORMAT_NEIGHBORS}"
            )
        body = memoryview(zlib.decompress(blob[_HEADER.size :]))
    except (struct.error, zlib.error) as exc:
        raise PackError(f"not a pack of polls: {exc}") from None
    reported, narrow = _columns(reported_mask), _columns(narrow_mask)
    wide = reported & ~narrow
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
    counters = np.zeros((rows, len(COLUMNS)), np.uint64)
    counters[:, wide] = take(np.uint64, rows * int(wide.sum())).reshape(rows, -1)
    counters[:, narrow] = take(np.uint32, rows * int(narrow.sum())).reshape(rows, -1)
    bits = rows * int(reported.sum())
    present = np.zeros((rows, len(COLUMNS)), np.bool_)
    packed_bits = take(np.uint8, (bits + 7) // 8)
    present[:, reported] = np.unpackbits(packed_bits, count=bits).reshape(rows, -1).astype(bool)
    floats = [take(np.float64, rows) for _ in range(_FLOATS)]
    names_end = at + int(lengths.sum())
    names_bytes = bytes(body[at:names_end])
    if len(names_bytes) != int(lengths.sum()):
        raise PackError("port names of another length than the pack says")
    far: list[str | None] | None = None
    far_port: list[str | None] | None = None
    if version == FORMAT_NEIGHBORS:
        far, at = _read_strings(body, names_end, rows)
        far_port, at = _read_strings(body, at, rows)
        names_end = at
    if names_end != len(body):
        raise PackError("a pack longer than its header says")
    ends = np.cumsum(lengths)
    starts = ends - lengths
    ports = [names_bytes[s:e].decode() for s, e in zip(starts.tolist(), ends.tolist(), strict=True)]
    return PollTable.from_columns(
        device=np.full(rows, device, dtype=object),
        port=ports,
        time=time.astype(np.float64),
        oper_status=np.array(STATUSES, dtype=object)[status],
        state=dict(zip(STATE_FIELDS, floats[: len(STATE_FIELDS)], strict=True)),
        optics=dict(zip(OPTICS_FIELDS, floats[len(STATE_FIELDS) :], strict=True)),
        counters=counters,
        present=present,
        neighbor_device=far,
        neighbor_port=far_port,
    )
