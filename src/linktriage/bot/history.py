"""A port's history: its stored polls (or its time-series database's) cut into consecutive
windows, each diagnosed by the same engine as a question in chat, and the runs of one
verdict they make, so an engineer sees when a link went bad and what it did meanwhile.

The windows are diagnosed together in one call, each as a port of its own, so a day of
five-minute polls costs one diagnosis of a few hundred ports, not a few hundred diagnoses.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from linktriage.engine.diagnosis.batch import DiagnosisBatch
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.measure.phy import frame_error_ratio
from linktriage.errors import NoHistoryError, PollError
from linktriage.network.watched import Network, PortRef
from linktriage.render import words
from linktriage.render.replies import AnswerWindows, HistoryPoint, HistoryReply, VerdictRun
from linktriage.store import Store

#: How far back an answer's picture reaches into the port's stored polls: a shift's worth,
#: enough to show when a fault began, with a few dozen windows that read apart on a phone.
ANSWER_SPAN_S = 6 * 3600.0
#: The fewest stored windows an answer's picture draws as the port's history; with fewer
#: (the poll job has barely run) it draws the polls the answer rests on.
MIN_STORED_WINDOWS = 3
#: An answer's own polls are cut at every poll, only polls at one moment kept together.
EVERY_POLL_S = 1.0

#: A window of a history spans at least this long: shorter ones are noise beside the poll
#: job's five minutes, so the polls a chat question added 30 s apart fold into the window
#: around them.
MIN_WINDOW_S = 240.0


def window_bounds(times: np.ndarray, min_window_s: float = MIN_WINDOW_S) -> list[tuple[int, int]]:
    """Consecutive windows over polls sorted by time, as (first, last) row pairs: each ends
    at the first poll at least ``min_window_s`` after its start, where the next begins."""
    bounds = []
    start = 0
    for end in range(1, len(times)):
        if times[end] - times[start] >= min_window_s:
            bounds.append((start, end))
            start = end
    return bounds


def history_points(
    port_polls: PollTable, model: Model, min_window_s: float = MIN_WINDOW_S
) -> list[HistoryPoint]:
    """Every window of one port's polls, diagnosed: oldest first."""
    ordered = port_polls.take(np.argsort(port_polls.time, kind="stable"))
    bounds = window_bounds(ordered.time, min_window_s)
    if not bounds:
        return []
    rows = np.concatenate([np.arange(first, last + 1) for first, last in bounds])
    names = np.concatenate(
        [np.full(last - first + 1, str(k), object) for k, (first, last) in enumerate(bounds)]
    )
    windows = ordered.take(rows)
    windows.port = names  # each window a port of its own, diagnosed side by side
    batch = diagnose(windows, model)
    return [
        _point(batch, row, float(ordered.time[first]), float(ordered.time[last]))
        for row, (first, last) in zip(_rows_by_name(batch, len(bounds)), bounds, strict=True)
    ]


def _rows_by_name(batch: DiagnosisBatch, count: int) -> list[int]:
    """The batch row of each window, in window order."""
    found = {int(name): row for row, name in enumerate(batch.port)}
    return [found[k] for k in range(count)]


def _known(value: float) -> float | None:
    return None if math.isnan(value) else float(f"{value:.6g}")


def errors_at_objective(objective: float, rx_frames: float, frame_bits: float) -> float:
    """The errored frames a link just meeting its bit error ratio ``objective`` would count
    on average in a window that received ``rx_frames`` frames of ``frame_bits`` bits each.

    Counted in frames, not in the line's bits over the window's time: only a bit error that
    falls inside a frame makes an errored frame (one in the idle between frames is never
    counted), so the bits that matter are those the frames carried. A frame of ``b`` bits
    is errored with probability ``1 - (1 - q)^b`` (about ``q b``; :func:`frame_error_ratio`,
    the inverse of the estimate the verdicts rest on), so the count is about ``q`` times the
    bits carried in frames, frames times their mean size."""
    return rx_frames * float(frame_error_ratio(np.array([objective]), np.array([frame_bits]))[0])


def _point(batch: DiagnosisBatch, row: int, start: float, end: float) -> HistoryPoint:
    value = batch.measured
    line_bits = value("speed_bps", row) * value("window_s", row)
    return {
        "start": start,
        "end": end,
        "verdict": batch.verdict[row],
        "confidence": batch.confidence[row],
        "polls": batch.polls[row],
        "error_ratio": _known(value("fer", row)),
        "bit_error_ratio": _known(value("ber", row)),
        "objective": _known(value("objective", row)),
        "rx_errors": _known(value("rx_errors", row)),
        "rx_frames": _known(value("rx_frames", row)),
        "errors_at_objective": _known(
            errors_at_objective(
                value("objective", row), value("rx_frames", row), 8.0 * value("frame_octets", row)
            )
        ),
        "link_changes": _known(value("link_changes", row)),
        "in_discards": _known(value("in_discards", row)),
        "out_discards": _known(value("out_discards", row)),
        "rx_util": _known(value("rx_util", row)),
        "tx_util": _known(value("tx_util", row)),
        "rx_dbm": _known(value("rx_dbm", row)),
        "rx_low_dbm": _known(value("rx_reference_dbm", row)),
        "fec_bits": _known(value("fec_errored_bits", row)),
        "fec_high_bits": _known(value("pre_fec_limit", row) * line_bits),
    }


def verdict_runs(points: list[HistoryPoint]) -> list[VerdictRun]:
    """Consecutive windows of one verdict, oldest first."""
    runs: list[VerdictRun] = []
    for point in points:
        if runs and runs[-1]["verdict"] == point["verdict"]:
            runs[-1]["end"] = point["end"]
            runs[-1]["windows"] += 1
        else:
            runs.append(
                {
                    "verdict": point["verdict"],
                    "start": point["start"],
                    "end": point["end"],
                    "windows": 1,
                }
            )
    return runs


@dataclass
class Histories:
    """Histories of the ports of one network, read from where its polls are kept: the
    device's time-series database if its source keeps one, else the store."""

    network: Network
    store: Store
    model: Model
    #: What each port last said (to find a port by the LLDP neighbor behind it).
    heard: Callable[[], PollTable]
    clock: Callable[[], float] = time.time

    def of(self, device: str, port: str, since_s: float) -> HistoryReply:
        """The history of one port over the last ``since_s`` seconds; one that has no two
        polls far enough apart to make a window raises :class:`NoHistoryError`."""
        ref = self.network.find(device, port, heard=self.heard)
        since = self.clock() - since_s
        points = history_points(self._polls(ref, since), self.model)
        if not points:
            raise NoHistoryError(
                words.no_history(ref.device, ref.port, since_s), hint=words.NO_HISTORY_HINT
            )
        return HistoryReply(
            ref.device,
            ref.port,
            ref.site,
            ref.serves,
            since,
            since_s,
            points,
            verdict_runs(points),
            self.model.version,
        )

    def of_answer(self, ref: PortRef, polls: PollTable) -> AnswerWindows | None:
        """What the picture of an answer about ``ref`` draws: the port's stored history
        over the last :data:`ANSWER_SPAN_S` where the store holds a few windows of it, else
        the answer's own ``polls`` cut at every poll; None where neither makes a window.
        Read from the store only (a time-series database's device answers from its own
        window, which ``polls`` holds): nothing here waits on the network."""
        stored = self.store.polls_since(
            self.clock() - ANSWER_SPAN_S, devices=[ref.device], port=ref.port
        )
        points = history_points(stored, self.model)
        if len(points) >= MIN_STORED_WINDOWS:
            return AnswerWindows(points, verdict_runs(points), True, ANSWER_SPAN_S)
        mine = polls.take(np.flatnonzero((polls.device == ref.device) & (polls.port == ref.port)))
        points = history_points(mine, self.model, EVERY_POLL_S)
        if not points:
            return None
        span = points[-1]["end"] - points[0]["start"]
        return AnswerWindows(points, verdict_runs(points), False, span)

    def _polls(self, ref: PortRef, since: float) -> PollTable:
        recalled = self.network.history({ref.device: [ref.port]}, since)
        if ref.device in recalled.failed:
            raise PollError(ref.device, recalled.failed[ref.device])
        table = recalled.tables.get(ref.device)
        if table is not None:
            return table.take(
                np.flatnonzero((table.device == ref.device) & (table.port == ref.port))
            )
        return self.store.polls_since(since, devices=[ref.device], port=ref.port)
