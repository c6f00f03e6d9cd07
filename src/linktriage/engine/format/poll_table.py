"""The poll table: many snapshots held as columns, the form every later stage computes on.

One row per snapshot line. Counters sit in one ``uint64`` matrix (one column per counter name of
:data:`linktriage.engine.format.counters.COLUMNS`) beside a boolean ``present`` matrix, because a
counter a device does not report is missing, never zero, and because unsigned arithmetic gives
Counter32 and Counter64 wrap-around for free. Everything else is ``float64`` with NaN for "not
reported", so numpy and the tree see one representation of "unknown", but for the few fields
that are words or lists (the far end's names, and since format 1.2 the device's reason for
shutting a port, the aggregate, the module's PMD, the far end's speeds and an optic's lanes):
object columns, None where a line does not carry them.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.counters import COLUMNS

#: Per-snapshot state fields held as float64 columns (NaN when the line does not carry them).
STATE_FIELDS: tuple[str, ...] = (
    "speed_bps",
    "max_speed_bps",
    "mtu",
    "link_changes",
    "discontinuity",
    "half_duplex",
    "fiber",
    "poe",
    # since format 1.2
    "admin_down",  # ifAdminStatus: 1 down, 0 up, 0.5 testing (RFC 2863)
    "last_change",  # ifLastChange as a time, seconds since the Unix epoch
    "module_max_speed_bps",
    "neighbor_max_speed_bps",  # the highest speed the far end advertises (neighbor.speeds_bps)
    "fec_mode",  # FEC_MODES code
    "poe_detection",  # POE_DETECTIONS code (RFC 3621 pethPsePortDetectionStatus)
    "poe_class",
    "poe_power_w",
    "poe_budget_left_w",
)
#: ``fec_mode`` of the snapshot format, by code (the codes are stored in packs: append only).
FEC_MODES: tuple[str, ...] = ("none", "base_r", "rs528", "rs544", "rs")
#: ``poe_status.detection`` (RFC 3621 pethPsePortDetectionStatus), by code (append only).
POE_DETECTIONS: tuple[str, ...] = (
    "disabled",
    "searching",
    "deliveringPower",
    "fault",
    "test",
    "otherFault",
)
#: ``admin_status`` as the ``admin_down`` column holds it.
ADMIN_DOWN: dict[str, float] = {"up": 0.0, "down": 1.0, "testing": 0.5}
#: Transceiver readings of the snapshot format's ``optics`` object, in dBm, degrees C and mA.
OPTICS_FIELDS: tuple[str, ...] = (
    "rx_power_dbm",
    "tx_power_dbm",
    "rx_power_low_alarm_dbm",
    "rx_power_low_warn_dbm",
    "tx_power_low_alarm_dbm",
    "temperature_c",
    "bias_ma",
    # since format 1.2
    "rx_power_high_alarm_dbm",
    "rx_power_high_warn_dbm",
    "tx_power_high_alarm_dbm",
    "tx_power_low_warn_dbm",
    "temperature_high_alarm_c",
    "bias_high_alarm_ma",
    "bias_low_alarm_ma",
    # Over a module's lanes: the strongest light received and the lowest bias (the module's
    # own readings hold the weakest light and the highest bias, as the format says).
    "rx_power_max_dbm",
    "bias_min_ma",
)
#: The optics columns worked out from a module's lanes rather than read as such.
OPTICS_FROM_LANES: tuple[str, ...] = ("rx_power_max_dbm", "bias_min_ma")
#: The optics columns read as the format's ``optics`` fields of the same name.
OPTICS_READ: tuple[str, ...] = tuple(k for k in OPTICS_FIELDS if k not in OPTICS_FROM_LANES)

#: The far end's name columns (object arrays, None where a line names no neighbor).
NEIGHBOR_FIELDS: tuple[str, ...] = ("neighbor_device", "neighbor_port")
#: Fields of format 1.2 that are words or lists, held as object columns (None: not
#: carried): the device's reason for shutting the port, the aggregate, the module's PMD,
#: the far end's advertised speeds (a tuple of bit/s) and an optic's lanes (a tuple of
#: (rx_power_dbm, tx_power_dbm, bias_ma), each None where not read).
EXTRA_FIELDS: tuple[str, ...] = (
    "disabled_reason",
    "aggregate",
    "pmd",
    "neighbor_speeds",
    "lanes",
)

FloatArray = npt.NDArray[np.float64]


_READINGS = ("state.", "optics.")


_NOT_REPORTED = np.full(1, np.nan)


def unread_column(n: int) -> FloatArray:
    """A read-only column of ``n`` readings "not reported" that takes no memory: one value
    seen ``n`` times (a stride of zero), for a column no row carries."""
    column: FloatArray = np.broadcast_to(_NOT_REPORTED, (n,))
    return column


def picked(column: FloatArray, rows: npt.NDArray[np.intp] | npt.NDArray[np.bool_]) -> FloatArray:
    """``column[rows]``; a column of "not reported" throughout stays one, at no cost."""
    if column.strides == (0,):
        n = int(np.count_nonzero(rows)) if rows.dtype == np.bool_ else len(rows)
        return unread_column(n)
    taken: FloatArray = column[rows]
    return taken


def _unread(name: str, part: npt.NDArray[Any]) -> bool:
    """Whether a reading column of a chunk holds nothing but "not reported"."""
    return name.startswith(_READINGS) and bool(np.isnan(part).all())


def _names(
    values: Sequence[object] | npt.NDArray[np.object_] | None, n: int
) -> npt.NDArray[np.object_]:
    """An object column of ``n`` names (or tuples), None throughout when none are given;
    filled element by element, so tuples stay whole."""
    if values is None:
        return np.full(n, None, dtype=object)
    if isinstance(values, np.ndarray):
        return values.astype(object, copy=False)
    return np.fromiter(values, dtype=object, count=n)


@dataclass(slots=True)
class PollTable:
    """Snapshots as columns; row ``i`` of every array belongs to the same snapshot."""

    device: npt.NDArray[np.object_]
    port: npt.NDArray[np.object_]
    time: FloatArray  # seconds since the Unix epoch
    oper_status: npt.NDArray[np.object_]
    state: dict[str, FloatArray]  # keys: STATE_FIELDS
    optics: dict[str, FloatArray]  # keys: OPTICS_FIELDS
    counters: npt.NDArray[np.uint64]  # shape (rows, len(COLUMNS))
    present: npt.NDArray[np.bool_]  # shape (rows, len(COLUMNS))
    line: npt.NDArray[np.int64]  # line number in the source file, 0 when not from a file
    # The far end of the link as LLDP reports it (system name, port id), None where unknown.
    neighbor_device: npt.NDArray[np.object_]
    neighbor_port: npt.NDArray[np.object_]
    extra: dict[str, npt.NDArray[np.object_]]  # keys: EXTRA_FIELDS

    def __len__(self) -> int:
        return len(self.time)

    @classmethod
    def empty(cls) -> PollTable:
        """A table with no rows, for a file with no usable lines."""
        return cls.from_columns(device=[], port=[], time=[], oper_status=[])

    @classmethod
    def from_columns(
        cls,
        *,
        device: Sequence[str] | npt.NDArray[np.object_],
        port: Sequence[str] | npt.NDArray[np.object_],
        time: Sequence[float] | FloatArray,
        oper_status: Sequence[str] | npt.NDArray[np.object_],
        state: dict[str, FloatArray] | None = None,
        optics: dict[str, FloatArray] | None = None,
        counters: npt.NDArray[np.uint64] | None = None,
        present: npt.NDArray[np.bool_] | None = None,
        line: npt.NDArray[np.int64] | None = None,
        neighbor_device: Sequence[str | None] | npt.NDArray[np.object_] | None = None,
        neighbor_port: Sequence[str | None] | npt.NDArray[np.object_] | None = None,
        extra: Mapping[str, Sequence[object] | npt.NDArray[np.object_]] | None = None,
    ) -> PollTable:
        """Build a table, filling every column not given with "not reported"."""
        n = len(time)
        state = state or {}
        optics = optics or {}
        nan = np.full(n, np.nan)
        return cls(
            device=np.asarray(device, dtype=object),
            port=np.asarray(port, dtype=object),
            time=np.asarray(time, dtype=np.float64),
            oper_status=np.asarray(oper_status, dtype=object),
            state={k: np.asarray(state.get(k, nan), np.float64) for k in STATE_FIELDS},
            optics={k: np.asarray(optics.get(k, nan), np.float64) for k in OPTICS_FIELDS},
            counters=(np.zeros((n, len(COLUMNS)), np.uint64) if counters is None else counters),
            present=(np.zeros((n, len(COLUMNS)), np.bool_) if present is None else present),
            line=np.zeros(n, np.int64) if line is None else line,
            neighbor_device=_names(neighbor_device, n),
            neighbor_port=_names(neighbor_port, n),
            extra={k: _names((extra or {}).get(k), n) for k in EXTRA_FIELDS},
        )

    def take(self, rows: npt.NDArray[np.intp] | npt.NDArray[np.bool_]) -> PollTable:
        """The rows selected by an index or mask array, as a new table."""
        rows = np.asarray(rows)  # type: ignore[assignment]  # (a list of rows too)
        return PollTable(
            device=self.device[rows],
            port=self.port[rows],
            time=self.time[rows],
            oper_status=self.oper_status[rows],
            state={k: picked(v, rows) for k, v in self.state.items()},
            optics={k: picked(v, rows) for k, v in self.optics.items()},
            counters=self.counters[rows],
            present=self.present[rows],
            line=self.line[rows],
            neighbor_device=self.neighbor_device[rows],
            neighbor_port=self.neighbor_port[rows],
            extra={k: v[rows] for k, v in self.extra.items()},
        )

    def by_device(self) -> list[tuple[str, PollTable]]:
        """The rows of each device, in name order (grouped once, by sorting)."""
        if not len(self):
            return []
        order = np.argsort(self.device, kind="stable")
        names, starts = np.unique(self.device[order], return_index=True)
        ends = [*starts[1:].tolist(), len(order)]
        return [
            (str(name), self.take(order[start:end]))
            for name, start, end in zip(names.tolist(), starts.tolist(), ends, strict=True)
        ]

    @classmethod
    def grown(cls, chunks: Iterable[PollTable]) -> PollTable:
        """All rows of ``chunks`` in order, like :meth:`concat`, copied as each chunk comes
        into arrays that grow in place (realloc, not copy): a large file read a chunk at a
        time is held once, never once in chunks and again whole. A reading or a word column
        no row carries is never grown: every such column of the result shares one read-only
        column of "not reported"."""
        names: dict[str, list[object]] = {
            name: [] for name in ("device", "port", "oper_status", *NEIGHBOR_FIELDS)
        }
        extras: dict[str, list[object]] = {}
        columns: dict[str, npt.NDArray[Any]] = {}
        rows = capacity = 0
        for chunk in chunks:
            if not len(chunk):
                continue  # every line of it was refused
            parts = chunk._numbers()
            end = rows + len(chunk)
            if end > capacity:
                # numpy zero-fills what a resize adds: grow by a quarter, not double, so at
                # most a quarter more than the rows is ever touched.
                capacity = max(capacity + capacity // 4, end)
                for column in columns.values():
                    column.resize((capacity, *column.shape[1:]), refcheck=False)
            for name, part in parts.items():
                grown = columns.get(name)
                if grown is None:
                    if _unread(name, part):
                        continue  # nothing read yet, and none in this chunk: not grown
                    grown = columns[name] = np.empty((capacity, *part.shape[1:]), part.dtype)
                    if name.startswith(_READINGS):
                        grown[:rows] = np.nan  # the rows before read nothing of it
                grown[rows:end] = part
            for name, values in names.items():
                values.extend(getattr(chunk, name).tolist())
            for name, words in chunk.extra.items():
                carried = words.tolist()
                got = extras.get(name)
                if got is None:
                    if carried.count(None) == len(carried):
                        continue
                    got = extras[name] = [None] * rows
                got.extend(carried)
            for got in extras.values():
                if len(got) < end:  # this chunk carried none of it
                    got.extend([None] * (end - len(got)))
            rows = end
        if not rows:
            return cls.empty()
        for column in columns.values():
            column.resize((rows, *column.shape[1:]), refcheck=False)
        unread = unread_column(rows)
        return cls(
            device=np.array(names["device"], object),
            port=np.array(names["port"], object),
            time=columns["time"],
            oper_status=np.array(names["oper_status"], object),
            state={k: columns.get(f"state.{k}", unread) for k in STATE_FIELDS},
            optics={k: columns.get(f"optics.{k}", unread) for k in OPTICS_FIELDS},
            counters=columns["counters"],
            present=columns["present"],
            line=columns["line"],
            neighbor_device=np.array(names["neighbor_device"], object),
            neighbor_port=np.array(names["neighbor_port"], object),
            extra={k: _names(extras.get(k), rows) for k in EXTRA_FIELDS},
        )

    def _numbers(self) -> dict[str, npt.NDArray[Any]]:
        """Every numeric column by a flat name (``state.mtu``, ``optics.bias_ma``, ...)."""
        return {
            "time": self.time,
            **{f"state.{k}": v for k, v in self.state.items()},
            **{f"optics.{k}": v for k, v in self.optics.items()},
            "counters": self.counters,
            "present": self.present,
            "line": self.line,
        }

    @classmethod
    def concat(cls, tables: Sequence[PollTable]) -> PollTable:
        """All rows of several tables, in order."""
        if not tables:
            return cls.empty()
        return PollTable(
            device=np.concatenate([t.device for t in tables]),
            port=np.concatenate([t.port for t in tables]),
            time=np.concatenate([t.time for t in tables]),
            oper_status=np.concatenate([t.oper_status for t in tables]),
            state={k: np.concatenate([t.state[k] for t in tables]) for k in STATE_FIELDS},
            optics={k: np.concatenate([t.optics[k] for t in tables]) for k in OPTICS_FIELDS},
            counters=np.concatenate([t.counters for t in tables]),
            present=np.concatenate([t.present for t in tables]),
            line=np.concatenate([t.line for t in tables]),
            neighbor_device=np.concatenate([t.neighbor_device for t in tables]),
            neighbor_port=np.concatenate([t.neighbor_port for t in tables]),
            extra={k: np.concatenate([t.extra[k] for t in tables]) for k in EXTRA_FIELDS},
        )
