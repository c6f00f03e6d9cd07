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
from linktriage.errors import NoHistoryError, PollError
from linktriage.network.watched import Network, PortRef
from linktriage.render import words
from linktriage.render.replies import HistoryPoint, HistoryReply, VerdictRun
from linktriage.store import Store

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


def history_points(port_polls: PollTable, model: Model) -> list[HistoryPoint]:
    """Every window of one port's polls, diagnosed: oldest first."""
    ordered = port_polls.take(np.argsort(port_polls.time, kind="stable"))
    bounds = window_bounds(ordered.time)
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


def _point(batch: DiagnosisBatch, row: int, start: float, end: float) -> HistoryPoint:
    value = batch.measured
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
        "in_discards": _known(value("in_discards", row)),
        "out_discards": _known(value("out_discards", row)),
        "rx_util": _known(value("rx_util", row)),
        "tx_util": _known(value("tx_util", row)),
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
