"""Counter deltas over a window of polls: wrap-around, resets, gaps and out-of-order polls.

Counters have no meaningful absolute value; only differences between polls carry
information (RFC 2578 section 7.1.6). For each port this module sorts its polls by time,
differences consecutive polls and sums the differences over the *window*: the most recent
run of polls since the last counter reset, reaching back at most ``max_window_s``.

Rules, applied to every pair of consecutive polls (an *interval*):

* A Counter32 is read modulo 2^32 and a Counter64 modulo 2^64, so one wrap between polls
  is absorbed (RFC 2578 sections 7.1.6, 7.1.10), wherever the wrapped difference is
  possible at the link's speed.
* The fastest a counter can grow is set by the link speed: line rate over 8 for octets,
  one minimum-size frame time for events
  (:func:`linktriage.engine.format.counters.max_rate_per_second`). A difference above that is
  impossible, so the counters were reset: the interval is not used and the window restarts after it.
  So is an interval across which ``discontinuity_time`` changed (RFC 2863
  ifCounterDiscontinuityTime), a Counter64 of a port with no known speed went backwards, or
  ``link_changes`` went backwards.
* A poll that lacks a counter the port's latest poll reports (a partial answer, such as
  a walk that timed out half way) is skipped: the polls either side of it are compared
  instead, and the port's note names the polls skipped within its window. A counter
  missing from the latest poll too is simply not reported by the device, and stays NaN.
* A Counter32 traffic counter (octets, packets) that could have wrapped more than once in
  the interval (at 1 Gb/s line rate ifInOctets wraps in about 34 s, RFC 2863 section 3.1.6)
  has an unknowable difference: it becomes NaN for this window rather than a wrong number.
  Error, discard and collision counters are read as having wrapped at most once: a second
  wrap would take errors on every minimum-size frame at line rate for the whole interval
  (common practice among pollers).
* Two polls of one port with the same time keep the later line.

The window also keeps its intervals, so that an answer can tell now from before: what each
interval carried each way, its receive errors and whether the link went down and up within
it (:class:`Intervals`, read by :mod:`linktriage.engine.measure.now`).

Everything is vectorised over all ports at once: one sort, then array arithmetic.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime
from enum import IntEnum

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.counters import COLUMN_INDEX, COLUMNS, QUANTITIES, max_rate_per_second
from linktriage.engine.format.poll_table import (
    EXTRA_FIELDS,
    OPTICS_FIELDS,
    STATE_FIELDS,
    FloatArray,
    PollTable,
    picked,
)

#: Default reach of a window back from a port's latest poll.
DEFAULT_MAX_WINDOW_S = 3600.0
# Slack on the physical bound: clocks of poller and device disagree by a little.
_BOUND_FACTOR = 1.05
_BOUND_SLACK = 16.0
# A discontinuity time read twice may differ in its last digits (TimeTicks are 1/100 s,
# and pollers round differently); only a real move counts as a reset.
_DISCONTINUITY_SLACK_S = 0.5


class WindowStatus(IntEnum):
    """Whether a port's window can be measured at all."""

    OK = 0
    NO_DATA = 1
    LINK_DOWN = 2


@dataclass(frozen=True, slots=True)
class Intervals:
    """Every interval of every window of two intervals or more, sorted by port then time:
    what it carried (a window of one interval is its own latest interval)."""

    window: npt.NDArray[np.intp]  # the row of the window (port) it belongs to
    start: FloatArray
    end: FloatArray
    rx_pkts: FloatArray  # packets received (unicast, multicast, broadcast), NaN if unknown
    tx_pkts: FloatArray
    rx_errors: FloatArray  # FCS and alignment errors, else ifInErrors; NaN if unknown
    changed: npt.NDArray[np.bool_]  # the link went down and up within it

    def __len__(self) -> int:
        return len(self.window)


@dataclass(slots=True)
class WindowTable:
    """One row per port: counter deltas over its window and its state at the latest poll."""

    device: npt.NDArray[np.object_]
    port: npt.NDArray[np.object_]
    status: npt.NDArray[np.int8]  # WindowStatus values
    note: npt.NDArray[np.object_]  # why a port has no usable window; "" otherwise
    polls_used: npt.NDArray[np.int64]
    polls_seen: npt.NDArray[np.int64]
    resets: npt.NDArray[np.int64]  # intervals judged to be counter resets
    start_time: FloatArray
    end_time: FloatArray
    window_s: FloatArray
    oper_status: npt.NDArray[np.object_]  # at the latest poll
    state: dict[str, FloatArray]  # STATE_FIELDS at the latest poll
    optics: dict[str, FloatArray]  # OPTICS_FIELDS at the latest poll
    deltas: dict[str, FloatArray]  # quantity key -> increase over the window, NaN if unknown
    link_changes: FloatArray  # increase of link_changes, NaN where not reported
    # How often ifLastChange moved between polls in the window (each move is at least one
    # change of state), NaN where not reported (format 1.2).
    last_change_moves: FloatArray
    status_changes: npt.NDArray[np.int64]  # oper-status flips seen between polls
    neighbor_device: npt.NDArray[np.object_]  # the far end at the latest poll, or None
    neighbor_port: npt.NDArray[np.object_]
    extra: dict[str, npt.NDArray[np.object_]]  # EXTRA_FIELDS at the latest poll
    intervals: Intervals
    # The window starts where its latest intervals differ from what came before
    # (linktriage.engine.measure.now), not at the reach of the window.
    restarted: npt.NDArray[np.bool_]

    def __len__(self) -> int:
        return len(self.device)


def port_codes(polls: PollTable) -> tuple[npt.NDArray[np.intp], int]:
    """Each row's port as a number, numbered in the order ports first appear, and how many
    ports there are: the order windows, and so diagnoses, come in."""
    numbers: dict[tuple[str, str], int] = {}
    number = numbers.setdefault
    keys = zip(polls.device.tolist(), polls.port.tolist(), strict=True)
    codes = [number(key, len(numbers)) for key in keys]
    return np.array(codes, np.intp), len(numbers)


def compute_windows(
    polls: PollTable,
    *,
    max_window_s: float = DEFAULT_MAX_WINDOW_S,
    codes: npt.NDArray[np.intp] | None = None,
) -> WindowTable:
    """Group polls by port and compute each port's window (see the module docstring);
    ``codes``, each poll's port as :func:`port_codes` numbers them, where already known."""
    if codes is None:
        codes, _ = port_codes(polls)
    order = np.lexsort((polls.time, codes))
    codes_s = codes[order]
    time_s = polls.time[order]
    # Same port, same time: keep the later line (lexsort is stable, so it sorts last).
    dup = np.zeros(len(order), np.bool_)
    dup[:-1] = (codes_s[1:] == codes_s[:-1]) & (time_s[1:] == time_s[:-1])
    if len(order) == 0:
        return _no_windows()
    rows, codes_s = order[~dup], codes_s[~dup]
    partial = _partial(polls.present[rows], codes_s)
    skipped = _Skipped(codes_s[partial], polls.time[rows[partial]])
    return _windows_of_sorted(polls.take(rows[~partial]), codes_s[~partial], max_window_s, skipped)


@dataclass(frozen=True, slots=True)
class _Skipped:
    """The partial polls left out: each one's port (as numbered by :func:`port_codes`)
    and time."""

    code: npt.NDArray[np.intp]
    time: FloatArray


def _partial(present: npt.NDArray[np.bool_], codes: npt.NDArray[np.intp]) -> npt.NDArray[np.bool_]:
    """Which polls (sorted by port, then time) lack a counter their port's latest poll
    reports; the latest poll itself never does, so every port keeps at least one."""
    last = np.flatnonzero(np.r_[codes[1:] != codes[:-1], True])
    return np.asarray(np.any(present[last][codes] & ~present, axis=1), np.bool_)


def _no_windows() -> WindowTable:
    """The windows of a table with no polls: no ports."""
    none = np.zeros(0)
    whole = np.zeros(0, np.int64)
    return WindowTable(
        device=np.zeros(0, object),
        port=np.zeros(0, object),
        status=np.zeros(0, np.int8),
        note=np.zeros(0, object),
        polls_used=whole,
        polls_seen=whole,
        resets=whole,
        start_time=none,
        end_time=none,
        window_s=none,
        oper_status=np.zeros(0, object),
        state=dict.fromkeys(STATE_FIELDS, none),
        optics=dict.fromkeys(OPTICS_FIELDS, none),
        deltas={q.key: none for q in QUANTITIES},
        link_changes=none,
        last_change_moves=none,
        status_changes=whole,
        neighbor_device=np.zeros(0, object),
        neighbor_port=np.zeros(0, object),
        extra={k: np.zeros(0, object) for k in EXTRA_FIELDS},
        intervals=Intervals(
            np.zeros(0, np.intp), none, none, none, none, none, np.zeros(0, np.bool_)
        ),
        restarted=np.zeros(0, np.bool_),
    )


def _windows_of_sorted(
    p: PollTable, codes: npt.NDArray[np.intp], max_window_s: float, skipped: _Skipped
) -> WindowTable:
    m = len(p)
    idx = np.arange(m)
    start = np.ones(m, np.bool_)
    start[1:] = codes[1:] != codes[:-1]
    starts = np.flatnonzero(start)
    last = np.r_[starts[1:] - 1, m - 1]

    # --- every interval (row i against row i-1); row 0 and port starts are not intervals
    interval = ~start
    dt = np.zeros(m)
    dt[1:] = np.diff(p.time)
    st = p.state
    speed = np.full(m, np.nan)
    speed[1:] = np.fmax(st["speed_bps"][1:], st["speed_bps"][:-1])
    speed[1:] = np.where(
        np.isnan(speed[1:]), np.fmax(st["max_speed_bps"][1:], st["max_speed_bps"][:-1]), speed[1:]
    )
    speed[speed <= 0] = np.nan

    # Only the counter columns some poll reports take part (a file rarely has all of them).
    active = np.flatnonzero(p.present.any(axis=0))
    specs = [COLUMNS[j] for j in active]
    values = np.take(p.counters, active, axis=1)
    reported = np.take(p.present, active, axis=1)
    cur, prev = values[1:], values[:-1]
    both = np.zeros_like(reported)
    np.logical_and(reported[1:], reported[:-1], out=both[1:])
    both &= interval[:, None]
    raw = np.zeros(values.shape, np.uint64)
    np.subtract(cur, prev, out=raw[1:])  # unsigned: wraps modulo 2^64
    narrow = np.array([c.bits == 32 for c in specs], np.bool_)
    width = np.where(narrow, np.uint64(0xFFFFFFFF), np.uint64(2**64 - 1)).astype(np.uint64)
    np.bitwise_and(raw, width[None, :], out=raw)  # Counter32: modulo 2^32
    raw_f = raw.astype(np.float64)

    # The most a counter can grow in the interval: per-column rate times speed times time.
    per_bps = np.array([max_rate_per_second(c.unit, 1.0) for c in specs])
    bound = (speed * dt)[:, None] * per_bps[None, :]
    # Comparisons with NaN (speed unknown) are False: no bound, no reset, no ambiguity.
    implausible = both & (raw_f > bound * _BOUND_FACTOR + _BOUND_SLACK)
    # Without a speed there is no bound: a Counter64 going backwards is then taken as a
    # reset, since a wrap of 2^64 takes years at any speed (RFC 2863 section 3.1.6).
    backwards = np.zeros_like(both)
    backwards[1:] = both[1:] & ~narrow[None, :] & (cur < prev) & np.isnan(bound[1:])
    traffic = np.array([c.unit.traffic for c in specs], np.bool_)
    ambiguous = both & (narrow & traffic)[None, :] & (bound >= 2.0**32)

    disc = st["discontinuity"]
    lc = st["link_changes"]
    reset = np.zeros(m, np.bool_)
    reset[1:] = (
        (implausible[1:] | backwards[1:]).any(axis=1)
        | (np.abs(disc[1:] - disc[:-1]) > _DISCONTINUITY_SLACK_S)  # False where either is NaN
        | (lc[1:] < lc[:-1])
    )
    reset &= interval

    # --- the window: since the last reset, reaching back at most max_window_s
    group_of_row = np.repeat(np.arange(len(starts)), np.diff(np.r_[starts, m]))
    seg = np.maximum.accumulate(np.where(start | reset, idx, 0))
    seg_start = seg[last]
    cutoff = p.time[last] - max_window_s
    candidate = np.where(
        (p.time >= cutoff[group_of_row]) & (idx >= seg_start[group_of_row]), idx, m
    )
    first_ok = np.minimum.reduceat(candidate, starts)
    win_start = np.where(
        seg_start < last, np.maximum(seg_start, np.minimum(first_ok, last - 1)), last
    )
    used = interval & (idx > win_start[group_of_row])

    # Sum the used intervals of each port, one after another in time order (np.add.at adds
    # unbuffered, in index order). A NaN in a used interval carries into the sum: that
    # quantity is unknown for the window.
    def summed(values: FloatArray) -> FloatArray:
        out = np.zeros((len(starts), *values.shape[1:]))
        np.add.at(out, group_of_row[used], values[used])
        return out

    delta_rows = np.where(both & ~ambiguous, raw_f, np.nan)
    sums = np.full((len(starts), len(COLUMNS)), np.nan)
    sums[:, active] = summed(delta_rows)
    polls_used = last - win_start + 1
    sums[polls_used < 2] = np.nan  # no interval at all: nothing is known, not zero
    deltas = {q.key: _pick(sums, q.hc, q.c32) for q in QUANTITIES}

    lc_rows = np.zeros(m)
    lc_rows[1:] = lc[1:] - lc[:-1]
    flips = np.zeros(m)
    flips[1:] = p.oper_status[1:] != p.oper_status[:-1]
    last_change = st["last_change"]
    moved_rows = np.zeros(m)
    moved_rows[1:] = np.where(
        np.isnan(last_change[1:]) | np.isnan(last_change[:-1]),
        np.nan,
        np.abs(last_change[1:] - last_change[:-1]) > _DISCONTINUITY_SLACK_S,
    )
    changed_rows = used & ((lc_rows > 0) | (flips > 0) | (moved_rows > 0))
    # A window of one interval is its own latest interval: only longer ones keep theirs.
    several = np.bincount(group_of_row[used], minlength=len(starts)) >= 2
    rows = np.flatnonzero(used & several[group_of_row])
    position = {COLUMNS[j].name: k for k, j in enumerate(active.tolist())}
    interval_of = _IntervalValues(delta_rows[rows], position)
    intervals = Intervals(
        window=group_of_row[rows],
        start=p.time[rows - 1],
        end=p.time[rows],
        rx_pkts=interval_of.packets(("in_ucast", "in_mcast", "in_bcast")),
        tx_pkts=interval_of.packets(("out_ucast", "out_mcast", "out_bcast")),
        rx_errors=interval_of.rx_errors(),
        changed=changed_rows[rows],
    )

    kept = np.diff(np.r_[starts, m])
    polls_seen = kept + np.bincount(skipped.code, minlength=len(starts))
    resets = np.add.reduceat(reset.astype(np.int64), starts)
    oper = p.oper_status[last]
    no_counters = np.all(np.isnan(np.stack(list(deltas.values()), axis=1)), axis=1)
    only_partial_before = (kept == 1) & (polls_seen > 1)
    status, note = _status(oper, polls_used, polls_seen, no_counters, only_partial_before)
    _name_skipped(note, status, skipped, p.time[win_start], p.time[last])

    return WindowTable(
        device=p.device[last],
        port=p.port[last],
        status=status,
        note=note,
        polls_used=polls_used.astype(np.int64),
        polls_seen=polls_seen.astype(np.int64),
        resets=resets,
        start_time=p.time[win_start],
        end_time=p.time[last],
        window_s=p.time[last] - p.time[win_start],
        oper_status=oper,
        state={k: picked(st[k], last) for k in STATE_FIELDS},
        optics={k: picked(p.optics[k], last) for k in OPTICS_FIELDS},
        deltas=deltas,
        link_changes=summed(lc_rows),
        last_change_moves=summed(moved_rows),
        status_changes=summed(flips).astype(np.int64),
        neighbor_device=p.neighbor_device[last],
        neighbor_port=p.neighbor_port[last],
        extra={k: v[last] for k, v in p.extra.items()},
        intervals=intervals,
        restarted=np.zeros(len(starts), np.bool_),
    )


_QUANTITY = {q.key: q for q in QUANTITIES}


@dataclass(frozen=True, slots=True)
class _IntervalValues:
    """The deltas of some intervals (rows) over the active counter columns (by name)."""

    deltas: FloatArray
    position: dict[str, int]

    def value(self, key: str) -> FloatArray:
        """A quantity per interval: its 64-bit form where the interval has it, else 32-bit."""
        q = _QUANTITY[key]
        out = np.full(len(self.deltas), np.nan)
        for name in (q.c32, q.hc):  # the 64-bit form, where present, overwrites
            if name in self.position:
                column = self.deltas[:, self.position[name]]
                out = np.where(np.isnan(column), out, column)
        return out

    def packets(self, keys: tuple[str, ...]) -> FloatArray:
        """The sum of ``keys``, NaN only where none of them is known."""
        parts = np.stack([self.value(k) for k in keys])
        known = ~np.isnan(parts).all(axis=0)
        return np.where(known, np.nansum(parts, axis=0), np.nan)

    def rx_errors(self) -> FloatArray:
        """Frames that failed the FCS check, else ifInErrors (as the measures read them)."""
        crc = self.packets(("fcs_errors", "alignment_errors"))
        return np.where(np.isnan(crc), self.value("in_errors"), crc)


def moment(at: float) -> str:
    """A poll's time as a note names it: RFC 3339 in UTC, to the second."""
    return datetime.fromtimestamp(at, UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def _pick(sums: FloatArray, hc: str | None, c32: str | None) -> FloatArray:
    """The 64-bit form of a quantity where the whole window has it, else the 32-bit form."""
    nan = np.full(sums.shape[0], np.nan)
    wide = sums[:, COLUMN_INDEX[hc]] if hc else nan
    narrow = sums[:, COLUMN_INDEX[c32]] if c32 else nan
    return np.where(np.isnan(wide), narrow, wide)


def _status(
    oper: npt.NDArray[np.object_],
    polls_used: npt.NDArray[np.intp],
    polls_seen: npt.NDArray[np.intp],
    no_counters: npt.NDArray[np.bool_],
    only_partial_before: npt.NDArray[np.bool_],
) -> tuple[npt.NDArray[np.int8], npt.NDArray[np.object_]]:
    n = len(oper)
    status = np.full(n, WindowStatus.OK, np.int8)
    note = np.full(n, "", dtype=object)
    down = oper != "up"
    short = ~down & (polls_used < 2)
    empty = ~down & ~short & no_counters
    status[down] = WindowStatus.LINK_DOWN
    status[short | empty] = WindowStatus.NO_DATA
    note[down] = [f"the port is {s} at the latest poll" for s in oper[down]]
    note[short & (polls_seen < 2)] = "only one poll of this port"
    # More polls, but the latest stands alone: the one before it cannot be compared, or
    # every one before it was partial (and skipped).
    note[short & (polls_seen >= 2)] = "the counters were reset between the last two polls"
    note[short & only_partial_before] = "every earlier poll lacks counters the latest reports"
    note[empty] = (
        "no counter can be compared across the window (not reported by both polls, "
        "or a Counter32 that may have wrapped more than once)"
    )
    return status, note


def _name_skipped(
    note: npt.NDArray[np.object_],
    status: npt.NDArray[np.int8],
    skipped: _Skipped,
    start: FloatArray,
    end: FloatArray,
) -> None:
    """Name in a measured port's note the partial polls skipped inside its window (a loop
    over those polls only: most ports have none)."""
    inside = (skipped.time > start[skipped.code]) & (skipped.time < end[skipped.code])
    inside &= status[skipped.code] == WindowStatus.OK
    times: dict[int, list[float]] = {}
    for code, at in zip(skipped.code[inside].tolist(), skipped.time[inside].tolist(), strict=True):
        times.setdefault(code, []).append(at)
    for code, ats in times.items():
        when = ", ".join(moment(at) for at in ats)
        polls = "a poll that lacks" if len(ats) == 1 else f"{len(ats)} polls that lack"
        note[code] = f"skipped {polls} counters the latest reports ({when})"
