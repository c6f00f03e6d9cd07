"""Now and before: a window whose latest intervals tell another story than its average.

A window's sums answer for the whole window; an engineer asks what the link does now. Where
the latest intervals differ, the window restarts where they begin, and the port's note says
so and when:

* **A direction that went silent.** The latest intervals each carry next to nothing one way
  while the other way is alive (the test of :func:`linktriage.engine.measure.signs.one_way`,
  the same a whole window is held to, whatever its length): the link is one-way now,
  whatever the average says. The window restarts where the silence began.
* **Errors a down/up left behind.** Errors significant over the window, a link that went down
  and up (a re-seat, a re-patch) without flapping, and the intervals after it clean with
  frames enough to judge: the errors are a past event. The window restarts after the interval
  that held the down/up, and the note names the errors and when.

Both are tried on the candidates only, by measuring their restarted windows; a restart that
does not show what it was tried for is dropped. Errors that begin late and go on are a fault
from then: the note of such a port says since when (:func:`errors_since`).
"""

from __future__ import annotations

from dataclasses import fields, replace

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.poll_table import FloatArray, PollTable
from linktriage.engine.measure.columns import Columns
from linktriage.engine.measure.measures import Measured, measure
from linktriage.engine.measure.signs import Signs, one_way, unicast_shares
from linktriage.engine.measure.window import (
    Intervals,
    WindowTable,
    compute_windows,
    moment,
)


def _last_per_window(
    mask: npt.NDArray[np.bool_], window: npt.NDArray[np.intp], ports: int
) -> npt.NDArray[np.intp]:
    """Per window, the index of its last interval where ``mask`` holds, or -1."""
    last = np.full(ports, -1, np.intp)
    where = np.flatnonzero(mask)
    np.maximum.at(last, window[where], where)
    return last


def _first_per_window(window: npt.NDArray[np.intp], ports: int) -> npt.NDArray[np.intp]:
    """Per window, the index of its first interval, or -1 where it has none."""
    first = np.full(ports, -1, np.intp)
    starts = np.flatnonzero(np.r_[True, window[1:] != window[:-1]]) if len(window) else window
    first[window[starts]] = starts
    return first


def silence_start(iv: Intervals, ports: int, m: Columns) -> FloatArray:
    """Per window, when the trailing run of one-way intervals began, where it is shorter
    than the window (a whole window one way is read as such); NaN elsewhere."""
    dt = iv.end - iv.start
    with np.errstate(divide="ignore", invalid="ignore"):
        rx_fps, tx_fps = iv.rx_pkts / dt, iv.tx_pkts / dt
    # What share of each direction is unicast, an interval does not keep: the window's.
    rx_unicast, tx_unicast = (share[iv.window] for share in unicast_shares(m))
    one_way_now = one_way(iv.rx_pkts, tx_fps, dt, tx_unicast) | one_way(
        iv.tx_pkts, rx_fps, dt, rx_unicast
    )
    start = np.full(ports, np.nan)
    if not len(iv):
        return start
    last_break = _last_per_window(~one_way_now, iv.window, ports)
    first = _first_per_window(iv.window, ports)
    last = _last_per_window(np.ones(len(iv), np.bool_), iv.window, ports)
    run_first = last_break + 1
    inside = (last_break >= 0) & (run_first <= last)  # a run, after an interval that was not
    rows = np.flatnonzero(inside & (first >= 0))
    start[rows] = iv.start[run_first[rows]]
    return start


def change_end(iv: Intervals, ports: int) -> FloatArray:
    """Per window, the end of the last interval holding a down/up that intervals follow."""
    end = np.full(ports, np.nan)
    changed = _last_per_window(iv.changed, iv.window, ports)
    last = _last_per_window(np.ones(len(iv), np.bool_), iv.window, ports)
    rows = np.flatnonzero((changed >= 0) & (changed < last))
    end[rows] = iv.end[changed[rows]]
    return end


def errors_since(iv: Intervals, ports: int) -> FloatArray:
    """Per window, when the trailing run of intervals with errors began, where an interval
    before it carried frames without one; NaN elsewhere."""
    since = np.full(ports, np.nan)
    if not len(iv):
        return since
    errored = iv.rx_errors > 0
    clean = ~errored & (iv.rx_pkts > 0)
    last_clean = _last_per_window(clean, iv.window, ports)
    last = _last_per_window(np.ones(len(iv), np.bool_), iv.window, ports)
    # Every interval after the last clean one holds errors: the errors go on since then.
    after_clean = _last_per_window(~errored, iv.window, ports)
    rows = np.flatnonzero((last_clean >= 0) & (after_clean == last_clean) & (last_clean < last))
    since[rows] = iv.start[last_clean[rows] + 1]
    return since


def now_and_before(
    polls: PollTable,
    codes: npt.NDArray[np.intp],
    windows: WindowTable,
    measured: Measured,
    max_window_s: float,
) -> tuple[WindowTable, Measured]:
    """The windows, with those whose latest intervals differ restarted where they begin
    (``codes``: each poll's window, as :func:`linktriage.engine.measure.window.port_codes`
    numbers them)."""
    ports = len(windows)
    signs = Signs.read(measured.table)
    quiet_since = np.where(
        signs.silent, np.nan, silence_start(windows.intervals, ports, measured.table)
    )
    changed = change_end(windows.intervals, ports)
    past = signs.errors & ~signs.flapping & ~np.isnan(changed) & np.isnan(quiet_since)
    start = np.where(past, changed, quiet_since)
    tried = np.flatnonzero(~np.isnan(start))
    if len(tried) == 0:
        return _said_since(windows, signs), measured
    keep = np.flatnonzero(
        ~np.isnan(start[codes]) & (polls.time >= np.nan_to_num(start[codes], nan=np.inf))
    )
    # Ports first appear in the order of their windows, so the later windows come in it too.
    keep = keep[np.argsort(codes[keep], kind="stable")]
    later = compute_windows(polls.take(keep), max_window_s=max_window_s)
    again = measure(later)
    shows = Signs.read(again.table)
    shown = np.where(past[tried], shows.enough_frames & ~shows.errors, shows.silent)
    if not shown.any():
        return _said_since(windows, signs), measured
    rows, picked = tried[shown], np.flatnonzero(shown)
    notes = _notes(windows, measured.table, rows, past[rows], start[rows])
    restarted = _spliced(windows, rows, later, picked)
    restarted.restarted[rows] = True
    for row, note in zip(rows.tolist(), notes, strict=True):
        restarted.note[row] = f"{restarted.note[row]}; {note}" if restarted.note[row] else note
    faults = list(measured.counter_faults)
    for row, j in zip(rows.tolist(), picked.tolist(), strict=True):
        faults[row] = again.counter_faults[j]
    table = Columns({k: _put(v, rows, again.table[k][picked]) for k, v in measured.table.items()})
    return _said_since(restarted, Signs.read(table)), Measured(table, faults)


def _said_since(w: WindowTable, signs: Signs) -> WindowTable:
    """``w`` with the note of each port whose errors began late saying since when."""
    since = np.where(signs.errors, errors_since(w.intervals, len(w)), np.nan)
    rows = np.flatnonzero(~np.isnan(since))
    if len(rows) == 0:
        return w
    note = w.note.copy()
    for row in rows.tolist():
        said = (
            f"errors in every interval since {moment(float(since[row]))}, none in the "
            "intervals before"
        )
        note[row] = f"{note[row]}; {said}" if note[row] else said
    return replace(w, note=note)


def _notes(
    w: WindowTable,
    m: Columns,
    rows: npt.NDArray[np.intp],
    past: npt.NDArray[np.bool_],
    start: FloatArray,
) -> list[str]:
    """Why each restarted window starts where it does, with what came before."""
    notes = []
    for row, was_past, at in zip(rows.tolist(), past.tolist(), start.tolist(), strict=True):
        began = moment(float(w.start_time[row]))
        if was_past:
            notes.append(
                f"{m['rx_errors'][row]:,.0f} errored frames between {began} and {moment(at)}, "
                "with the link going down and up (a re-seat or re-patch): a past event, "
                f"clean since; the answer rests on the polls from {moment(at)}"
            )
        else:
            notes.append(
                f"one direction silent since {moment(at)} (busy before, from {began}): the "
                f"answer rests on the polls from {moment(at)}"
            )
    return notes


def _put(
    values: npt.NDArray[np.generic], rows: npt.NDArray[np.intp], new: npt.NDArray[np.generic]
) -> npt.NDArray[np.generic]:
    out = values.copy()
    out[rows] = new
    return out


def _spliced(
    w: WindowTable, rows: npt.NDArray[np.intp], later: WindowTable, picked: npt.NDArray[np.intp]
) -> WindowTable:
    """``w`` with its windows ``rows`` replaced by ``later``'s windows ``picked``."""
    changes: dict[str, object] = {}
    for f in fields(w):
        if f.name == "intervals":
            continue
        old, new = getattr(w, f.name), getattr(later, f.name)
        if isinstance(old, dict):
            changes[f.name] = {k: _put(v, rows, new[k][picked]) for k, v in old.items()}
        else:
            changes[f.name] = _put(old, rows, new[picked])
    changes["intervals"] = _intervals_spliced(
        w.intervals, rows, later.intervals, picked, len(later)
    )
    return replace(w, **changes)  # type: ignore[arg-type]


def _intervals_spliced(
    iv: Intervals,
    rows: npt.NDArray[np.intp],
    later: Intervals,
    picked: npt.NDArray[np.intp],
    windows: int,
) -> Intervals:
    """The intervals of ``iv`` with those of windows ``rows`` replaced by those of ``later``'s
    windows ``picked`` (of ``windows``)."""
    old = ~np.isin(iv.window, rows)
    new_of = np.full(windows, -1, np.intp)
    new_of[picked] = rows
    mapped = new_of[later.window] if len(later) else later.window
    new = mapped >= 0
    window = np.r_[iv.window[old], mapped[new]]
    order = np.argsort(window, kind="stable")

    def joined(a: FloatArray, b: FloatArray) -> FloatArray:
        return np.asarray(np.r_[a[old], b[new]][order], np.float64)

    return Intervals(
        window=window[order],
        start=joined(iv.start, later.start),
        end=joined(iv.end, later.end),
        rx_pkts=joined(iv.rx_pkts, later.rx_pkts),
        tx_pkts=joined(iv.tx_pkts, later.tx_pkts),
        rx_errors=joined(iv.rx_errors, later.rx_errors),
        changed=np.r_[iv.changed[old], later.changed[new]][order].astype(np.bool_),
    )
