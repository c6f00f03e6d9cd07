"""The counter snapshot format, version 1.1: pydantic models and JSON Lines reading and writing.

One JSON object per port per poll (see SNAPSHOT-FORMAT in the developer docs). A line that
does not parse or fails validation is reported with its line number and skipped; it never
stops the rest of the file. Lines may come in any order: the window groups and sorts them.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import IO, Annotated, Literal

import msgspec
import numpy as np
from pydantic import AwareDatetime, BaseModel, ConfigDict, Field, ValidationError

from linktriage import invalid
from linktriage.engine.format.counters import COLUMN_INDEX, COLUMNS, COUNTER32_MAX, COUNTER64_MAX
from linktriage.engine.format.poll_table import OPTICS_FIELDS, PollTable
from linktriage.errors import SnapshotFileError
from linktriage.gc_pause import gc_paused

OperStatus = Literal["up", "down", "testing", "dormant", "notPresent", "lowerLayerDown", "unknown"]
CounterValue = Annotated[int, Field(ge=0, le=COUNTER64_MAX)]
Finite = Annotated[float, Field(allow_inf_nan=False)]


class Optics(BaseModel):
    """Transceiver readings (SFF-8472 digital diagnostics, converted to dBm, degrees C, mA)."""

    model_config = ConfigDict(extra="ignore", frozen=True)

    rx_power_dbm: Finite | None = None
    tx_power_dbm: Finite | None = None
    rx_power_low_alarm_dbm: Finite | None = None
    rx_power_low_warn_dbm: Finite | None = None
    tx_power_low_alarm_dbm: Finite | None = None
    temperature_c: Finite | None = None
    bias_ma: Finite | None = None


class Neighbor(BaseModel):
    """The far end of the link as LLDP reports it (IEEE 802.1AB; LLDP-MIB lldpRemTable):
    its system name (lldpRemSysName) and port (lldpRemPortId, or lldpRemPortDesc where the
    id is a MAC address). Since version 1.1 of the format."""

    model_config = ConfigDict(extra="ignore", frozen=True)

    device: Annotated[str, Field(min_length=1)]
    port: Annotated[str, Field(min_length=1)]


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


class _FastOptics(msgspec.Struct):
    """:class:`Optics`, for the fast reader."""

    rx_power_dbm: float | None = None
    tx_power_dbm: float | None = None
    rx_power_low_alarm_dbm: float | None = None
    rx_power_low_warn_dbm: float | None = None
    tx_power_low_alarm_dbm: float | None = None
    temperature_c: float | None = None
    bias_ma: float | None = None


class _FastNeighbor(msgspec.Struct):
    """:class:`Neighbor`, for the fast reader."""

    device: Annotated[str, msgspec.Meta(min_length=1)]
    port: Annotated[str, msgspec.Meta(min_length=1)]


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


_fast_decode = msgspec.json.Decoder(_FastSnapshot).decode
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
    problems: list[LineProblem] = []
    # Lines are validated and turned into columns a chunk at a time, so few snapshot objects
    # are alive at once; they hold no reference cycles (see linktriage.gc_pause).
    with gc_paused():
        table = PollTable.grown(_chunks(lines, problems))
    problems.sort(key=lambda p: p.line)
    return ReadResult(table, problems)


def _chunks(lines: Iterable[bytes | str], problems: list[LineProblem]) -> Iterator[PollTable]:
    """The usable lines as poll tables of up to :data:`_CHUNK` rows; bad lines go to
    ``problems``."""
    numbers: list[int] = []
    snaps: list[_Parsed] = []
    strings: dict[str, str] = {}
    validate = Snapshot.model_validate_json
    fast = _fast_decode
    for number, raw in enumerate(lines, start=1):
        if number == 1:
            raw = _without_bom(raw)
        try:
            snap = fast(raw)
            if snap.counters and max(snap.counters.values()) > COUNTER64_MAX:
                raise msgspec.ValidationError  # past a Counter64: pydantic words it
            snaps.append(snap)
        except msgspec.MsgspecError:
            try:
                snaps.append(validate(raw))
            except ValidationError as exc:
                if raw.strip():  # blank lines are allowed and skipped silently
                    problems.append(LineProblem(number, describe_validation_error(exc)))
                continue
        numbers.append(number)
        if len(snaps) == _CHUNK:
            table = _table_of(snaps, np.asarray(numbers, np.int64), strings)
            yield _without_counter32_overflows(table, problems)
            snaps, numbers = [], []
    if snaps:
        table = _table_of(snaps, np.asarray(numbers, np.int64), strings)
        yield _without_counter32_overflows(table, problems)


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


def _floats(values: list[float | None]) -> np.ndarray:
    return np.array([np.nan if v is None else v for v in values], np.float64)


def _table_of(
    snaps: Sequence[_Parsed], numbers: np.ndarray, strings: dict[str, str] | None = None
) -> PollTable:
    """Columns of validated snapshots; one pass per column keeps the per-line cost low.
    Device and port names go through ``strings``, so a name repeated on many lines (of a
    large file, read a chunk at a time) is held once."""
    n = len(snaps)
    one = ({} if strings is None else strings).setdefault
    values: list[int] = []
    col_parts: list[np.ndarray] = []
    # Lines from one poller name the same counters in the same order: map each distinct
    # sequence of names to column numbers once (-1 for names outside the format, ignored
    # like unknown fields).
    layouts: dict[tuple[str, ...], np.ndarray] = {}
    for s in snaps:
        names = tuple(s.counters)
        cols = layouts.get(names)
        if cols is None:
            cols = layouts[names] = np.array([COLUMN_INDEX.get(k, -1) for k in names], np.intp)
        col_parts.append(cols)
        values.extend(s.counters.values())
    counters = np.zeros((n, len(COLUMNS)), np.uint64)
    present = np.zeros((n, len(COLUMNS)), np.bool_)
    if values:
        cols_a = np.concatenate(col_parts)
        rows = np.repeat(np.arange(n), [len(c) for c in col_parts])
        known = cols_a >= 0
        r, c = rows[known], cols_a[known]
        counters[r, c] = np.asarray(values, np.uint64)[known]
        present[r, c] = True

    optics = {k: np.full(n, np.nan) for k in OPTICS_FIELDS}
    for row, s in enumerate(snaps):
        if s.optics is not None:
            for k in OPTICS_FIELDS:
                v = getattr(s.optics, k)
                if v is not None:
                    optics[k][row] = v
    disc = [
        None if s.discontinuity_time is None else s.discontinuity_time.timestamp() for s in snaps
    ]
    return PollTable.from_columns(
        device=[one(s.device, s.device) for s in snaps],
        port=[one(s.port, s.port) for s in snaps],
        time=[s.time.timestamp() for s in snaps],
        oper_status=[s.oper_status for s in snaps],
        state={
            "speed_bps": _floats([s.speed_bps for s in snaps]),
            "max_speed_bps": _floats([s.max_speed_bps for s in snaps]),
            "mtu": _floats([s.mtu for s in snaps]),
            "link_changes": _floats([s.link_changes for s in snaps]),
            "discontinuity": _floats(disc),
            "half_duplex": _floats([_DUPLEX.get(s.duplex or "") for s in snaps]),
            "fiber": _floats([_MEDIA.get(s.media or "") for s in snaps]),
            "poe": _floats([None if s.poe is None else float(s.poe) for s in snaps]),
        },
        optics=optics,
        counters=counters,
        present=present,
        line=numbers,
        neighbor_device=[
            None if s.neighbor is None else one(s.neighbor.device, s.neighbor.device) for s in snaps
        ],
        neighbor_port=[
            None if s.neighbor is None else one(s.neighbor.port, s.neighbor.port) for s in snaps
        ],
    )


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
        return read_snapshots(sys.stdin.buffer)
    try:
        with open(path, "rb") as fp:
            return read_snapshots(fp)
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
    state = {k: v.tolist() for k, v in table.state.items()}
    optics = {k: v.tolist() for k, v in table.optics.items()}
    for i in range(len(table)):
        readings = {k: v[i] for k, v in optics.items() if v[i] == v[i]}
        far, far_port = table.neighbor_device[i], table.neighbor_port[i]
        disc = state["discontinuity"][i]
        poe = state["poe"][i]
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
            optics=Optics(**readings) if readings else None,
            neighbor=None
            if far is None or far_port is None
            else Neighbor(device=far, port=far_port),
        )


def write_snapshots(snapshots: Iterable[Snapshot], fp: IO[str]) -> int:
    """Write snapshots as JSON Lines, leaving out fields that are not reported; returns lines."""
    count = 0
    for snap in snapshots:
        fp.write(snap.model_dump_json(exclude_none=True))
        fp.write("\n")
        count += 1
    return count
