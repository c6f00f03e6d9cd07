"""The counter snapshot format, version 1.2: pydantic models and JSON Lines reading and writing.

One JSON object per port per poll (see SNAPSHOT-FORMAT in the developer docs). A line that
does not parse or fails validation is reported with its line number and skipped; it never
stops the rest of the file. Lines may come in any order: the window groups and sorts them.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from itertools import chain
from operator import attrgetter
from pathlib import Path
from typing import IO, Annotated, BinaryIO, Literal

import msgspec
import numpy as np
import numpy.typing as npt
from pydantic import AwareDatetime, BaseModel, ConfigDict, Field, ValidationError

from linktriage import invalid
from linktriage.engine.format.counters import COLUMN_INDEX, COLUMNS, COUNTER32_MAX, COUNTER64_MAX
from linktriage.engine.format.poll_table import (
    ADMIN_DOWN,
    FEC_MODES,
    OPTICS_FIELDS,
    OPTICS_READ,
    POE_DETECTIONS,
    PollTable,
)
from linktriage.errors import SnapshotFileError
from linktriage.gc_pause import gc_paused

OperStatus = Literal["up", "down", "testing", "dormant", "notPresent", "lowerLayerDown", "unknown"]
AdminStatus = Literal["up", "down", "testing"]
FecMode = Literal["none", "base_r", "rs528", "rs544", "rs"]
Detection = Literal["disabled", "searching", "deliveringPower", "fault", "test", "otherFault"]
CounterValue = Annotated[int, Field(ge=0, le=COUNTER64_MAX)]
Finite = Annotated[float, Field(allow_inf_nan=False)]


class Lane(BaseModel):
    """One lane of a module of several (SFF-8636, CMIS): its light and bias. Since 1.2."""

    model_config = ConfigDict(extra="ignore", frozen=True)

    rx_power_dbm: Finite | None = None
    tx_power_dbm: Finite | None = None
    bias_ma: Finite | None = None


class Optics(BaseModel):
    """Transceiver readings (SFF-8472 digital diagnostics, converted to dBm, degrees C, mA),
    the module's own thresholds, and since 1.2 its lanes and PMD."""

    model_config = ConfigDict(extra="ignore", frozen=True)

    rx_power_dbm: Finite | None = None
    tx_power_dbm: Finite | None = None
    rx_power_low_alarm_dbm: Finite | None = None
    rx_power_low_warn_dbm: Finite | None = None
    tx_power_low_alarm_dbm: Finite | None = None
    temperature_c: Finite | None = None
    bias_ma: Finite | None = None
    rx_power_high_alarm_dbm: Finite | None = None
    rx_power_high_warn_dbm: Finite | None = None
    tx_power_high_alarm_dbm: Finite | None = None
    tx_power_low_warn_dbm: Finite | None = None
    temperature_high_alarm_c: Finite | None = None
    bias_high_alarm_ma: Finite | None = None
    bias_low_alarm_ma: Finite | None = None
    lanes: list[Lane] | None = None
    pmd: Annotated[str, Field(min_length=1)] | None = None


class PoeStatus(BaseModel):
    """Power over Ethernet as the switch sources it (RFC 3621 POWER-ETHERNET-MIB). Since
    1.2."""

    model_config = ConfigDict(extra="ignore", frozen=True)

    detection: Detection | None = None
    power_class: Annotated[int, Field(ge=0, le=8)] | None = None
    power_w: Annotated[float, Field(ge=0, allow_inf_nan=False)] | None = None
    budget_left_w: Finite | None = None


class Neighbor(BaseModel):
    """The far end of the link as LLDP reports it (IEEE 802.1AB; LLDP-MIB lldpRemTable):
    its system name (lldpRemSysName) and port (lldpRemPortId, or lldpRemPortDesc where the
    id is a MAC address). Since version 1.1 of the format."""

    model_config = ConfigDict(extra="ignore", frozen=True)

    device: Annotated[str, Field(min_length=1)]
    port: Annotated[str, Field(min_length=1)]
    speeds_bps: list[Annotated[int, Field(gt=0)]] | None = None  # since 1.2


class Snapshot(BaseModel):
    """The counters and state of one port at one instant, as one line of the format."""

    # Unknown fields are ignored so that files from newer pollers still read.
    model_config = ConfigDict(extra="ignore", frozen=True)

    device: Annotated[str, Field(min_length=1)]
    port: Annotated[str, Field(min_length=1)]
    time: AwareDatetime
    oper_status: OperStatus
    counters: dict[str, CounterValue]
    speed_bps: Annotated[int, Field(ge=0)] | None = None
    max_speed_bps: Annotated[int, Field(ge=0)] | None = None
    duplex: Literal["full", "half", "unknown"] | None = None
    media: Literal["copper", "fiber"] | None = None
    mtu: Annotated[int, Field(ge=0)] | None = None
    link_changes: Annotated[int, Field(ge=0)] | None = None
    discontinuity_time: AwareDatetime | None = None
    poe: bool | None = None
    optics: Optics | None = None
    neighbor: Neighbor | None = None
    # since 1.2
    admin_status: AdminStatus | None = None
    last_change: AwareDatetime | None = None
    disabled_reason: Annotated[str, Field(min_length=1)] | None = None
    module_max_speed_bps: Annotated[int, Field(ge=0)] | None = None
    fec_mode: FecMode | None = None
    poe_status: PoeStatus | None = None
    aggregate: Annotated[str, Field(min_length=1)] | None = None


class _FastLane(msgspec.Struct):
    """:class:`Lane`, for the fast reader."""

    rx_power_dbm: float | None = None
    tx_power_dbm: float | None = None
    bias_ma: float | None = None


class _FastOptics(msgspec.Struct):
    """:class:`Optics`, for the fast reader."""

    rx_power_dbm: float | None = None
    tx_power_dbm: float | None = None
    rx_power_low_alarm_dbm: float | None = None
    rx_power_low_warn_dbm: float | None = None
    tx_power_low_alarm_dbm: float | None = None
    temperature_c: float | None = None
    bias_ma: float | None = None
    rx_power_high_alarm_dbm: float | None = None
    rx_power_high_warn_dbm: float | None = None
    tx_power_high_alarm_dbm: float | None = None
    tx_power_low_warn_dbm: float | None = None
    temperature_high_alarm_c: float | None = None
    bias_high_alarm_ma: float | None = None
    bias_low_alarm_ma: float | None = None
    lanes: list[_FastLane] | None = None
    pmd: Annotated[str, msgspec.Meta(min_length=1)] | None = None


class _FastPoeStatus(msgspec.Struct):
    """:class:`PoeStatus`, for the fast reader."""

    detection: Detection | None = None
    power_class: Annotated[int, msgspec.Meta(ge=0, le=8)] | None = None
    power_w: Annotated[float, msgspec.Meta(ge=0)] | None = None
    budget_left_w: float | None = None


class _FastNeighbor(msgspec.Struct):
    """:class:`Neighbor`, for the fast reader."""

    device: Annotated[str, msgspec.Meta(min_length=1)]
    port: Annotated[str, msgspec.Meta(min_length=1)]
    speeds_bps: list[Annotated[int, msgspec.Meta(gt=0)]] | None = None


_Aware = Annotated[datetime, msgspec.Meta(tz=True)]
_Whole = Annotated[int, msgspec.Meta(ge=0)]


class _FastSnapshot(msgspec.Struct):
    """:class:`Snapshot` as msgspec decodes it in C: the same fields, stricter types (no
    numbers in strings, no floats for integers). A line it refuses is validated again by
    the pydantic model, which decides and words the problem, so this changes only speed."""

    device: Annotated[str, msgspec.Meta(min_length=1)]
    port: Annotated[str, msgspec.Meta(min_length=1)]
    time: _Aware
    oper_status: OperStatus
    counters: dict[str, _Whole]
    speed_bps: _Whole | None = None
    max_speed_bps: _Whole | None = None
    duplex: Literal["full", "half", "unknown"] | None = None
    media: Literal["copper", "fiber"] | None = None
    mtu: _Whole | None = None
    link_changes: _Whole | None = None
    discontinuity_time: _Aware | None = None
    poe: bool | None = None
    optics: _FastOptics | None = None
    neighbor: _FastNeighbor | None = None
    admin_status: AdminStatus | None = None
    last_change: _Aware | None = None
    disabled_reason: Annotated[str, msgspec.Meta(min_length=1)] | None = None
    module_max_speed_bps: _Whole | None = None
    fec_mode: FecMode | None = None
    poe_status: _FastPoeStatus | None = None
    aggregate: Annotated[str, msgspec.Meta(min_length=1)] | None = None


_fast_decoder = msgspec.json.Decoder(_FastSnapshot)
_Parsed = Snapshot | _FastSnapshot


@dataclass(frozen=True, slots=True)
class LineProblem:
    """A line that was skipped, with its number (1-based) and what was wrong with it."""

    line: int
    message: str

    def __str__(self) -> str:
        return f"line {self.line}: {self.message}"


@dataclass(frozen=True, slots=True)
class ReadResult:
    """The usable snapshots of a source as a poll table, and every line that was skipped."""

    polls: PollTable
    problems: list[LineProblem]


def describe_validation_error(exc: ValidationError) -> str:
    """One short sentence per failed field, which field and what was expected, e.g.
    ``time: expected a time with its zone (Z, or an offset such as +01:00), got '...'``."""
    return "; ".join(invalid.problems(exc))


_DUPLEX = {"half": 1.0, "full": 0.0}
_MEDIA = {"fiber": 1.0, "copper": 0.0}


_CHUNK = 4096


def read_snapshots(lines: Iterable[bytes | str]) -> ReadResult:
    """Parse snapshot lines into a poll table, reporting and skipping every bad line."""
    return _read(_line_by_line(lines))


def read_snapshot_stream(stream: BinaryIO) -> ReadResult:
    """:func:`read_snapshots` of a whole file or stream, decoded a block of lines at a time
    (in C, with no work per line in Python) wherever every line of the block is good."""
    return _read(_by_blocks(stream))


#: Bytes read at a time by :func:`read_snapshot_stream`: about a thousand lines.
_BLOCK = 1 << 20

#: What a reader hands on: validated snapshots, their line numbers, and skipped lines.
_Decoded = tuple[list[_Parsed], list[int], list[LineProblem]]


def _read(decoded: Iterator[_Decoded]) -> ReadResult:
    problems: list[LineProblem] = []
    # Lines are validated and turned into columns a chunk at a time, so few snapshot objects
    # are alive at once; they hold no reference cycles (see linktriage.gc_pause).
    with gc_paused():
        table = PollTable.grown(_tables(decoded, problems))
    problems.sort(key=lambda p: p.line)
    return ReadResult(table, problems)


def _tables(decoded: Iterator[_Decoded], problems: list[LineProblem]) -> Iterator[PollTable]:
    """The usable lines as poll tables of :data:`_CHUNK` rows or so."""
    strings: dict[str, str] = {}
    snaps: list[_Parsed] = []
    numbers: list[int] = []
    for more, lines, skipped in decoded:
        snaps += more
        numbers += lines
        problems += skipped
        if len(snaps) >= _CHUNK:
            yield _table_of_lines(snaps, numbers, strings, problems)
            snaps, numbers = [], []
    if snaps:
        yield _table_of_lines(snaps, numbers, strings, problems)


def _line_by_line(lines: Iterable[bytes | str]) -> Iterator[_Decoded]:
    """Each line decoded on its own, handed on a few at a time."""
    batch: _Decoded = ([], [], [])
    for number, raw in enumerate(lines, start=1):
        if number == 1:
            raw = _without_bom(raw)
        _decode_one(raw, number, batch)
        if len(batch[1]) >= _CHUNK:
            yield batch
            batch = ([], [], [])
    yield batch


def _by_blocks(stream: BinaryIO) -> Iterator[_Decoded]:
    """Whole lines a block at a time: a block whose every line is a good snapshot is
    decoded at once; any other (a bad or blank line in it) line by line."""
    number, rest = 1, b""
    decode_lines = _fast_decoder.decode_lines
    while True:
        data = stream.read(_BLOCK)
        block = rest + data
        if number == 1:
            block = block.removeprefix(b"\xef\xbb\xbf")
        cut = block.rfind(b"\n") + 1 if data else len(block)
        block, rest = block[:cut], block[cut:]
        if block:
            count = block.count(b"\n") + (not block.endswith(b"\n"))
            try:
                snaps: list[_Parsed] = list(decode_lines(block))
            except msgspec.MsgspecError:
                snaps = []
            if len(snaps) == count:  # no line refused, none blank
                yield snaps, list(range(number, number + count)), []
            else:
                batch: _Decoded = ([], [], [])
                lines = block.split(b"\n")
                if block.endswith(b"\n"):
                    lines.pop()
                for k, raw in enumerate(lines, start=number):
                    _decode_one(raw, k, batch)
                yield batch
            number += count
        if not data:
            return


def _decode_one(raw: bytes | str, number: int, batch: _Decoded) -> None:
    """One line into ``batch``: its snapshot and number, or why it was skipped."""
    try:
        snap: _Parsed = _fast_decoder.decode(raw)
    except msgspec.MsgspecError:
        checked = _validated(raw, number, batch[2])
        if checked is None:
            return
        snap = checked
    batch[0].append(snap)
    batch[1].append(number)


def _validated(raw: bytes | str, number: int, problems: list[LineProblem]) -> Snapshot | None:
    """A line the fast reader refused, validated by the pydantic model, which decides and
    words the problem (in ``problems``); None where it is not a usable line."""
    try:
        return Snapshot.model_validate_json(raw)
    except ValidationError as exc:
        if raw.strip():  # blank lines are allowed and skipped silently
            problems.append(LineProblem(number, describe_validation_error(exc)))
        return None


def _table_of_lines(
    snaps: list[_Parsed], numbers: list[int], strings: dict[str, str], problems: list[LineProblem]
) -> PollTable:
    """One chunk's poll table, without lines whose counters cannot exist (a Counter64 past
    2^64 - 1, a Counter32 past 2^32 - 1; RFC 2578 section 7.1.6), each named in
    ``problems``."""
    try:
        table = _table_of(snaps, np.asarray(numbers, np.int64), strings)
    except OverflowError:  # some value past 2^64 - 1: rare, so found line by line
        keep = []
        for snap, number in zip(snaps, numbers, strict=True):
            over = [k for k, v in snap.counters.items() if v > COUNTER64_MAX]
            if over:
                said = f"expected at most {COUNTER64_MAX} (a Counter64, RFC 2578)"
                problems.append(LineProblem(number, f"counters.{over[0]}: {said}"))
            else:
                keep.append((snap, number))
        if not keep:
            return PollTable.empty()
        table = _table_of([k[0] for k in keep], np.asarray([k[1] for k in keep], np.int64), strings)
    return _without_counter32_overflows(table, problems)


def _without_bom(raw: bytes | str) -> bytes | str:
    """A first line without the UTF-8 byte-order mark some editors put at a file's start."""
    if isinstance(raw, bytes):
        return raw.removeprefix(b"\xef\xbb\xbf")
    return raw.removeprefix("\ufeff")


def polls_of(snapshots: list[Snapshot]) -> ReadResult:
    """Snapshot models (from a collector) as a poll table; ``line`` numbers count from 1."""
    table = _table_of(snapshots, np.arange(1, len(snapshots) + 1, dtype=np.int64))
    problems: list[LineProblem] = []
    return ReadResult(_without_counter32_overflows(table, problems), problems)


def _floats(values: Sequence[float | bool | None]) -> np.ndarray:
    """A column of readings; numpy reads None as NaN, "not reported"."""
    return np.array(values, np.float64)


def _counter_columns(
    maps: Sequence[dict[str, int]],
) -> tuple[npt.NDArray[np.uint64], npt.NDArray[np.bool_]]:
    """The counters of every line as the poll table's matrix and presence mask. Lines from
    one poller name the same counters in the same order: each distinct order is placed
    once, and where a chunk has one order only, its values fill the matrix as a block.
    Names outside the format are ignored, like unknown fields."""
    n = len(maps)
    counters = np.zeros((n, len(COLUMNS)), np.uint64)
    present = np.zeros((n, len(COLUMNS)), np.bool_)
    orders = list(map(tuple, maps))
    number: dict[tuple[str, ...], int] = {}
    ids = [number.setdefault(order, len(number)) for order in orders]  # one hash per line
    total = sum(map(len, orders))
    values = np.fromiter(chain.from_iterable(map(dict.values, maps)), np.uint64, total)
    places = [np.array([COLUMN_INDEX.get(name, -1) for name in order], np.intp) for order in number]
    if len(places) == 1:
        (cols,) = places
        known = cols >= 0
        block = values.reshape(n, len(cols))
        counters[:, cols[known]] = block[:, known]
        present[:, cols[known]] = True
        return counters, present
    cols = np.concatenate([places[k] for k in ids])
    rows = np.repeat(np.arange(n), [len(places[k]) for k in ids])
    known = cols >= 0
    counters[rows[known], cols[known]] = values[known]
    present[rows[known], cols[known]] = True
    return counters, present


#: The scalar fields of a snapshot, read for every line at once.
_SCALARS = attrgetter(
    "device", "port", "time", "oper_status", "counters", "speed_bps", "max_speed_bps", "mtu",
    "link_changes", "discontinuity_time", "duplex", "media", "poe", "optics", "neighbor",
)  # fmt: skip
#: The fields of format 1.2, read only where a chunk has any of them.
_SINCE_1_2 = attrgetter(
    "admin_status", "last_change", "disabled_reason", "module_max_speed_bps", "fec_mode",
    "poe_status", "aggregate",
)  # fmt: skip
_OPTICS = attrgetter(*OPTICS_READ)
_NEIGHBOR = attrgetter("device", "port")
_FEC_CODE = {mode: float(code) for code, mode in enumerate(FEC_MODES)}
_DETECTION_CODE = {status: float(code) for code, status in enumerate(POE_DETECTIONS)}
_LANE = attrgetter("rx_power_dbm", "tx_power_dbm", "bias_ma")
_Lanes = tuple[tuple[float | None, float | None, float | None], ...]


def _table_of(
    snaps: Sequence[_Parsed], numbers: np.ndarray, strings: dict[str, str] | None = None
) -> PollTable:
    """Columns of validated snapshots, every field read for all lines at once (in C, by
    map and zip), so the per-line cost is the decoding alone. Device and port names go
    through ``strings``, so a name repeated on many lines (of a large file, read a chunk at
    a time) is held once. Raises OverflowError where a counter is past 2^64 - 1."""
    n = len(snaps)
    if n == 0:
        return PollTable.empty()
    one = ({} if strings is None else strings).setdefault
    fields = zip(*map(_SCALARS, snaps), strict=True)
    (device, port, time, status, counter_maps, speed, top, mtu, changes, discontinuity,
     duplex, media, poe, optics_objects, neighbors) = fields  # fmt: skip
    counters, present = _counter_columns(counter_maps)
    optics = {k: np.full(n, np.nan) for k in OPTICS_FIELDS}
    extra: dict[str, list[object]] = {}
    with_optics = [i for i, o in enumerate(optics_objects) if o is not None]
    if with_optics:
        read = zip(*(_OPTICS(optics_objects[i]) for i in with_optics), strict=True)
        for k, column in zip(OPTICS_READ, read, strict=True):
            optics[k][with_optics] = _floats(column)
        _read_module(optics_objects, with_optics, optics, extra, one)
    far = [None if m is None else _NEIGHBOR(m) for m in neighbors]
    state = {
        "speed_bps": _floats(speed),
        "max_speed_bps": _floats(top),
        "mtu": _floats(mtu),
        "link_changes": _floats(changes),
        "discontinuity": _floats([None if d is None else d.timestamp() for d in discontinuity]),
        "half_duplex": _floats(list(map(_DUPLEX.get, duplex))),
        "fiber": _floats(list(map(_MEDIA.get, media))),
        "poe": _floats(poe),
    }
    speeds = [None if m is None else m.speeds_bps for m in neighbors]
    if any(speeds):
        extra["neighbor_speeds"] = [tuple(v) if v else None for v in speeds]
        state["neighbor_max_speed_bps"] = _floats([max(v) if v else None for v in speeds])
    _read_since_1_2(snaps, state, extra, one)
    return PollTable.from_columns(
        device=list(map(one, device, device)),
        port=list(map(one, port, port)),
        time=list(map(datetime.timestamp, time)),
        oper_status=list(status),
        state=state,
        optics=optics,
        counters=counters,
        present=present,
        line=numbers,
        neighbor_device=[None if f is None else one(f[0], f[0]) for f in far],
        neighbor_port=[None if f is None else one(f[1], f[1]) for f in far],
        extra=extra,
    )


def _read_module(
    objects: Sequence[Optics | _FastOptics | None],
    rows: list[int],
    optics: dict[str, np.ndarray],
    extra: dict[str, list[object]],
    one: Callable[[str, str], str],
) -> None:
    """An optic's PMD and lanes (format 1.2). Where lanes are given, a module reading the
    line leaves out is taken from them as the format defines it (the weakest light, the
    highest bias), and the strongest light and lowest bias are kept beside."""
    pmd = [objects[i].pmd for i in rows]  # type: ignore[union-attr]
    if any(pmd):
        column: list[object] = [None] * len(objects)
        for i, name in zip(rows, pmd, strict=True):
            column[i] = None if name is None else one(name, name)
        extra["pmd"] = column
    laned = [i for i in rows if objects[i].lanes]  # type: ignore[union-attr]
    if not laned:
        return
    lanes_column: list[object] = [None] * len(objects)
    for i in laned:
        lanes: _Lanes = tuple(map(_LANE, objects[i].lanes))  # type: ignore[union-attr, arg-type]
        lanes_column[i] = lanes
        rx, tx, bias = (np.array(v, np.float64) for v in zip(*lanes, strict=True))
        for key, values, pick in (
            ("rx_power_dbm", rx, np.nanmin),
            ("tx_power_dbm", tx, np.nanmin),
            ("bias_ma", bias, np.nanmax),
            ("rx_power_max_dbm", rx, np.nanmax),
            ("bias_min_ma", bias, np.nanmin),
        ):
            if np.isnan(optics[key][i]) and not np.isnan(values).all():
                optics[key][i] = pick(values)
    extra["lanes"] = lanes_column


def _read_since_1_2(
    snaps: Sequence[_Parsed],
    state: dict[str, np.ndarray],
    extra: dict[str, list[object]],
    one: Callable[[str, str], str],
) -> None:
    """The scalar fields of format 1.2, into ``state`` and ``extra``; nothing where no line
    of the chunk carries one (a 1.1 file costs one pass of attribute reads)."""
    columns = list(zip(*map(_SINCE_1_2, snaps), strict=True))
    if not any(any(c) for c in columns):
        return
    admin, changed, reason, module, fec, poe_status, aggregate = columns
    # Each field only where some line of the chunk carries it: the rest stay "not reported".
    if any(admin):
        state["admin_down"] = _floats([None if a is None else ADMIN_DOWN[a] for a in admin])
    if any(changed):
        state["last_change"] = _floats([None if t is None else t.timestamp() for t in changed])
    if any(module):
        state["module_max_speed_bps"] = _floats(module)
    if any(fec):
        state["fec_mode"] = _floats(list(map(_FEC_CODE.get, fec)))
    if any(poe_status):
        read = [(None,) * 4 if s is None else _POE(s) for s in poe_status]
        detection, power_class, watts, left = zip(*read, strict=True)
        state["poe_detection"] = _floats(list(map(_DETECTION_CODE.get, detection)))
        state["poe_class"] = _floats(power_class)
        state["poe_power_w"] = _floats(watts)
        state["poe_budget_left_w"] = _floats(left)
    if any(reason):
        extra["disabled_reason"] = [None if r is None else one(r, r) for r in reason]
    if any(aggregate):
        extra["aggregate"] = [None if a is None else one(a, a) for a in aggregate]


_POE = attrgetter("detection", "power_class", "power_w", "budget_left_w")


def _without_counter32_overflows(table: PollTable, problems: list[LineProblem]) -> PollTable:
    """A Counter32 above 2^32-1 cannot exist (RFC 2578 section 7.1.6): the table without
    such lines, each reported in ``problems``."""
    over = table.present[:, _NARROW] & (table.counters[:, _NARROW] > COUNTER32_MAX)
    bad = over.any(axis=1)
    if not bad.any():
        return table
    for r in np.flatnonzero(bad):
        name = _NARROW_NAMES[int(np.argmax(over[r]))]
        problems.append(
            LineProblem(
                int(table.line[r]),
                f"counters.{name}: a Counter32 cannot exceed {COUNTER32_MAX} (RFC 2578)",
            )
        )
    return table.take(np.flatnonzero(~bad))


_NARROW = np.array([c.bits == 32 for c in COLUMNS])
_NARROW_NAMES = [c.name for c in COLUMNS if c.bits == 32]


def read_snapshot_file(path: str | Path) -> ReadResult:
    """Read a snapshot file (``-`` for standard input); bad lines are reported, not raised."""
    import sys

    if str(path) == "-":
        return read_snapshot_stream(sys.stdin.buffer)
    try:
        with open(path, "rb") as fp:
            return read_snapshot_stream(fp)
    except OSError as exc:
        raise SnapshotFileError(
            f"Cannot read snapshot file {path}: {exc.strerror or exc}",
            hint="Give the path of a JSON Lines file in the snapshot format.",
        ) from exc


def _int_or_none(value: float) -> int | None:
    return None if value != value else int(value)  # value != value: NaN


def iter_snapshots(table: PollTable) -> Iterator[Snapshot]:
    """The rows of a poll table as snapshot models, e.g. to record them to a file."""
    duplex: dict[float, Literal["half", "full"]] = {1.0: "half", 0.0: "full"}
    media: dict[float, Literal["fiber", "copper"]] = {1.0: "fiber", 0.0: "copper"}
    admin = {code: status for status, code in ADMIN_DOWN.items()}
    state = {k: v.tolist() for k, v in table.state.items()}
    optics = {k: v.tolist() for k, v in table.optics.items() if k in OPTICS_READ}
    extra = {k: v.tolist() for k, v in table.extra.items()}
    for i in range(len(table)):
        far, far_port = table.neighbor_device[i], table.neighbor_port[i]
        disc = state["discontinuity"][i]
        poe = state["poe"][i]
        changed = state["last_change"][i]
        speeds = extra["neighbor_speeds"][i]
        yield Snapshot(
            device=str(table.device[i]),
            port=str(table.port[i]),
            time=datetime.fromtimestamp(float(table.time[i]), UTC),
            oper_status=table.oper_status[i],
            counters={
                c.name: int(table.counters[i, j])
                for j, c in enumerate(COLUMNS)
                if table.present[i, j]
            },
            speed_bps=_int_or_none(state["speed_bps"][i]),
            max_speed_bps=_int_or_none(state["max_speed_bps"][i]),
            duplex=duplex.get(state["half_duplex"][i]),
            media=media.get(state["fiber"][i]),
            mtu=_int_or_none(state["mtu"][i]),
            link_changes=_int_or_none(state["link_changes"][i]),
            discontinuity_time=None if disc != disc else datetime.fromtimestamp(disc, UTC),
            poe=None if poe != poe else bool(poe),
            optics=_optics_of(optics, extra, i),
            neighbor=None
            if far is None or far_port is None
            else Neighbor(device=far, port=far_port, speeds_bps=list(speeds) if speeds else None),
            admin_status=admin.get(state["admin_down"][i]),
            last_change=None if changed != changed else datetime.fromtimestamp(changed, UTC),
            disabled_reason=extra["disabled_reason"][i],
            module_max_speed_bps=_int_or_none(state["module_max_speed_bps"][i]),
            fec_mode=_code(FEC_MODES, state["fec_mode"][i]),
            poe_status=_poe_status_of(state, i),
            aggregate=extra["aggregate"][i],
        )


def _code(names: tuple[str, ...], code: float) -> str | None:
    return None if code != code else names[int(code)]


def _optics_of(
    optics: dict[str, list[float]], extra: dict[str, list[object]], i: int
) -> Optics | None:
    readings = {k: v[i] for k, v in optics.items() if v[i] == v[i]}
    lanes: _Lanes | None = extra["lanes"][i]  # type: ignore[assignment]
    pmd = extra["pmd"][i]
    if not (readings or lanes or pmd):
        return None
    return Optics(
        **readings,
        lanes=None
        if lanes is None
        else [Lane(rx_power_dbm=r, tx_power_dbm=t, bias_ma=b) for r, t, b in lanes],
        pmd=pmd,
    )


def _poe_status_of(state: dict[str, list[float]], i: int) -> PoeStatus | None:
    detection = _code(POE_DETECTIONS, state["poe_detection"][i])
    power_class = _int_or_none(state["poe_class"][i])
    watts, left = state["poe_power_w"][i], state["poe_budget_left_w"][i]
    if detection is None and power_class is None and watts != watts and left != left:
        return None
    return PoeStatus(
        detection=detection,
        power_class=power_class,
        power_w=None if watts != watts else watts,
        budget_left_w=None if left != left else left,
    )


def write_snapshots(snapshots: Iterable[Snapshot], fp: IO[str]) -> int:
    """Write snapshots as JSON Lines, leaving out fields that are not reported; returns lines."""
    count = 0
    for snap in snapshots:
        fp.write(snap.model_dump_json(exclude_none=True))
        fp.write("\n")
        count += 1
    return count
