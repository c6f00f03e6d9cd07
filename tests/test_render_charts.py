"""The pictures: decoded as PNGs of the size they were drawn at, large enough to read on a
phone; a chart of windows holds the evidence a verdict rests on (errored frames against what
the IEEE 802.3 objective allows, link changes), the moment the verdict changed marked in
words, and only the other readings that counted something; the tree's path drawn, and nothing
drawn for an answer the tree never gave."""

from __future__ import annotations

import dataclasses
import io
import math
from typing import Any

import pytest
from PIL import Image

from linktriage.bot.history import verdict_runs
from linktriage.bot.triage import Triage
from linktriage.engine.simulate.ports import DEFAULT_START
from linktriage.network.demo import PLANTED, DemoClock
from linktriage.render.charts import (
    answer_chart,
    history_chart_of,
    history_png,
    pictures_for,
    tree_png,
)
from linktriage.render.drawing import day, png
from linktriage.render.history_chart import Chart
from linktriage.render.replies import (
    DiagnosisReply,
    HistoryPoint,
    HistoryReply,
    TreeReply,
)

#: Slack shows a picture in a thread at up to about 360 points wide on a phone; narrower
#: than 400 pixels and it is drawn upscaled and blurred.
MIN_WIDTH = 400
PATH_ORANGE = (0xD5, 0x5E, 0x00)
(CABLE,) = [p for p in PLANTED if p.planted == "cable_fault"]
FIVE_MIN = 300.0


def decoded(data: bytes) -> Image.Image:
    image = Image.open(io.BytesIO(data))
    assert image.format == "PNG"
    image.load()  # every pixel decoded: a truncated file fails here
    return image.convert("RGB")


def pixels_of(image: Image.Image, colour: tuple[int, int, int]) -> int:
    found = image.getcolors(maxcolors=image.width * image.height) or []
    return sum(count for count, pixel in found if pixel == colour)


def drawn(chart: Chart, gid: str, key: str = "errors") -> list[Any]:
    """The artists a panel drew under one name."""
    panel = chart.panel(key)
    assert panel is not None, f"no {key} panel"
    axes = panel.axes
    return [a for a in [*axes.lines, *axes.collections, *axes.texts] if a.get_gid() == gid]


def bars_of(chart: Chart, key: str = "errors") -> list[Any]:
    """A panel's bars, one per window counted, oldest first."""
    panel = chart.panel(key)
    assert panel is not None, f"no {key} panel"
    return [bar for bar in panel.axes.patches if bar.get_gid() == "counts"]


def texts_of(chart: Chart) -> str:
    """Every word written on the chart: heading, panel titles, legends, notes, axes."""
    said = [t.get_text().replace("\n", " ") for t in chart.figure.texts]
    for panel in chart.panels:
        axes = panel.axes
        said += [t.get_text() for t in axes.texts] + [axes.get_ylabel(), axes.get_xlabel()]
        said += [c.get_text() for c in getattr(axes.get_legend(), "texts", [])]
    return "\n".join(said)


def point(k: int, verdict: str = "healthy", **values: float | None) -> HistoryPoint:
    """The k-th five-minute window before the demo's moment, clean unless told: 1000BASE-T
    at 10% load, 15 million frames of 180 octets."""
    clean: dict[str, Any] = {
        "error_ratio": 0.0, "bit_error_ratio": 0.0, "objective": 1e-10, "rx_errors": 0.0,
        "rx_frames": 1.5e7, "errors_at_objective": 2.16, "link_changes": 0.0,
        "in_discards": 0.0, "out_discards": 0.0, "rx_util": 0.1, "tx_util": 0.04,
        "rx_dbm": None, "rx_low_dbm": None, "fec_bits": None, "fec_high_bits": None,
    }  # fmt: skip
    start = DEFAULT_START - (12 - k) * FIVE_MIN
    return {"start": start, "end": start + FIVE_MIN, "verdict": verdict, "confidence": 0.99,  # type: ignore[typeddict-item]
            "polls": 2, **clean, **values}  # fmt: skip


def reply_of(points: list[HistoryPoint]) -> HistoryReply:
    runs = verdict_runs(points)
    start = points[0]["start"]
    return HistoryReply("lark-test-sw1", "port1", "central", "", start, 3600.0, points, runs, "t")


def middle(p: HistoryPoint) -> float:
    return day((p["start"] + p["end"]) / 2)


@pytest.fixture
def history(triage: Triage, clock: DemoClock) -> HistoryReply:
    """Three hours of the poll job across the cable fault's start at 05:40 UTC."""
    clock.now = DEFAULT_START - 3 * 3600.0
    for _ in range(37):
        triage.poller.poll_round()
        clock.sleep(FIVE_MIN)
    clock.now = DEFAULT_START
    reply = triage.handle(f"history {CABLE.device} {CABLE.port} 3h")
    assert isinstance(reply, HistoryReply)
    return reply


# --- the cable fault's history, as the demo stores it
def test_a_cable_faults_chart_holds_its_evidence_and_no_panel_without_data(
    history: HistoryReply,
) -> None:
    chart = history_chart_of(history)
    # The discards stayed at zero all along: no panel for them; no light or FEC was read.
    assert [p.key for p in chart.panels] == ["errors", "link_changes", "load"]
    assert [p.title for p in chart.panels] == [
        "Errored frames received, each window",
        "Link went down or up, each window",
        "Load",
    ]
    bars = bars_of(chart)
    assert [bar.get_height() for bar in bars] == [p["rx_errors"] for p in history.points]
    assert [bar.get_x() + bar.get_width() / 2 for bar in bars] == pytest.approx(
        [middle(p) for p in history.points]
    )


def test_windows_with_no_errored_frame_are_drawn_as_zero_on_the_axis(
    history: HistoryReply,
) -> None:
    chart = history_chart_of(history)
    clean = [p for p in history.points if p["rx_errors"] == 0]
    assert len(clean) == 8  # 05:00 to 05:40
    (marks,) = drawn(chart, "none-counted")
    assert list(marks.get_xdata()) == pytest.approx([middle(p) for p in clean])
    assert set(marks.get_ydata()) == {0.0}  # drawn as zero, not at a floor below any count
    errors = chart.panel("errors")
    assert errors is not None and errors.axes.get_ylim()[0] == 0.0


def test_a_log_axis_shows_one_frame_as_the_least_a_window_can_count(
    history: HistoryReply,
) -> None:
    chart = history_chart_of(history)
    errors = chart.panel("errors")
    assert errors is not None
    # 550 errored frames beside 2.8 at the objective: a log axis above one frame.
    assert errors.axes.get_yscale() == "symlog"
    (least,) = drawn(chart, "least")
    assert set(least.get_ydata()) == {1.0}  # one errored frame: no window counts less
    assert "1 frame: the least a window counts" in texts_of(chart)


def test_each_window_has_the_count_its_objective_allows_beside_its_bar(
    history: HistoryReply,
) -> None:
    # IEEE 802.3 clause 40.6.1.3.1: 1000BASE-T's bit error ratio objective is 1e-10.
    chart = history_chart_of(history)
    (allowed,) = drawn(chart, "allowed")
    levels = [segment[0][1] for segment in allowed.get_segments()]
    assert levels == [p["errors_at_objective"] for p in history.points]
    assert "at the IEEE 802.3 objective, 1e-10" in texts_of(chart)
    bars = bars_of(chart)
    faulty = [b.get_height() / a for b, a in zip(bars, levels, strict=True) if b.get_height()]
    assert faulty and min(faulty) > 100  # the fault's windows count a hundred times more


def test_link_changes_are_marked_in_the_windows_they_happened(history: HistoryReply) -> None:
    chart = history_chart_of(history)
    moved = [p for p in history.points if p["link_changes"]]
    assert moved and all(p["verdict"] == "cable_fault" for p in moved)
    (marks,) = drawn(chart, "link-changes", "link_changes")
    assert list(marks.get_xdata()) == pytest.approx([middle(p) for p in moved])
    assert list(marks.get_ydata()) == [p["link_changes"] for p in moved]
    panel = chart.panel("link_changes")
    assert panel is not None and panel.unit == "changes per window"


def test_the_moment_the_verdict_changed_is_marked_in_words_on_every_panel(
    history: HistoryReply,
) -> None:
    chart = history_chart_of(history)
    began = DEFAULT_START - (CABLE.since_s or 0.0)  # 05:40 UTC
    assert chart.changes == [began]
    for panel in chart.panels:
        (line,) = drawn(chart, "verdict-change", panel.key)
        assert set(line.get_xdata()) == {day(began)}
    (said,) = drawn(chart, "change-words")
    assert said.get_text() == "05:40 UTC: cable or connector fault\n(before: healthy)"
    words = texts_of(chart)
    assert "cable or connector fault since 05:40 UTC, healthy before" in words
    assert "cable_fault" not in words  # the verdict's words, never its id


def test_every_panel_names_its_unit_and_the_last_one_the_time(history: HistoryReply) -> None:
    chart = history_chart_of(history)
    assert [p.axes.get_ylabel() for p in chart.panels] == [
        "frames per window",
        "changes per window",
        "% of link speed",
    ]
    assert chart.panels[-1].axes.get_xlabel() == "time (UTC)"


def test_a_history_chart_decodes_to_the_size_it_was_drawn_at(history: HistoryReply) -> None:
    chart = history_chart_of(history)
    image = decoded(png(chart.figure))
    assert image.size == chart.size_px
    assert image.width >= MIN_WIDTH and image.height >= image.width  # upright, like a phone
    (picture,) = pictures_for(history)
    assert picture.filename == "history-lark-east-idf2-port14.png"
    assert decoded(picture.data).size == chart.size_px
    assert "cable or connector fault since 05:40 UTC, healthy before" in picture.alt
    assert "Latest window: 550 errored frames; about 2.8 expected at the objective" in picture.alt


def test_a_short_history_draws_the_same_size(history: HistoryReply) -> None:
    last = history.points[-1:]
    short = dataclasses.replace(history, points=last, runs=verdict_runs(last))
    assert decoded(history_png(short)).size == decoded(history_png(history)).size


# --- windows written by hand: what is drawn follows what was counted
def test_a_reading_that_counted_anything_gets_its_panel() -> None:
    points = [point(k) for k in range(12)]
    points[5] = point(5, out_discards=1200.0)
    points[7] = point(7, rx_dbm=-7.5, rx_low_dbm=-14.0)
    points[9] = point(9, fec_bits=40.0, fec_high_bits=3e5)
    chart = history_chart_of(reply_of(points))
    assert [p.key for p in chart.panels] == [
        "errors", "link_changes", "discards", "load", "light", "fec",
    ]  # fmt: skip
    assert [p.unit for p in chart.panels][2:] == [
        "frames per window", "% of link speed", "dBm", "bits per window",
    ]  # fmt: skip
    (sent,) = drawn(chart, "out_discards", "discards")
    assert [v for v in sent.get_ydata() if not math.isnan(v)] == [0.0] * 5 + [1200.0] + [0.0] * 6
    image = decoded(png(chart.figure))
    assert image.size == chart.size_px


def test_readings_never_read_or_all_zero_get_no_panel() -> None:
    quiet = [point(k, rx_util=0.0, tx_util=0.0, link_changes=None) for k in range(12)]
    chart = history_chart_of(reply_of(quiet))
    assert [p.key for p in chart.panels] == ["errors"]  # the evidence panel always stands
    assert "no errored frames in any window" in texts_of(chart)
    assert chart.changes == []


def test_a_window_whose_errors_were_not_counted_has_no_bar_but_a_mark() -> None:
    points = [point(k, rx_errors=3.0) for k in range(4)]
    points[2] = point(2, rx_errors=None, errors_at_objective=None)
    chart = history_chart_of(reply_of(points))
    bars = bars_of(chart)
    assert [b.get_height() for b in bars] == [3.0, 3.0, 3.0]
    (unread,) = drawn(chart, "not-counted")
    assert list(unread.get_xdata()) == [middle(points[2])]
    errors = chart.panel("errors")
    assert errors is not None and errors.axes.get_yscale() == "linear"  # counts of a few


def test_where_a_window_allows_less_than_one_frame_one_frame_is_marked() -> None:
    # 10GBASE-R at 1e-12 (IEEE 802.3 clause 49): a few thousand frames allow far less than
    # one errored frame, so a single one is over the objective.
    points = [point(k, objective=1e-12, errors_at_objective=0.003) for k in range(6)]
    chart = history_chart_of(reply_of(points))
    (least,) = drawn(chart, "least")
    assert set(least.get_ydata()) == {1.0}
    assert "at the IEEE 802.3 objective, 1e-12" in texts_of(chart)


def test_earlier_changes_are_drawn_and_the_latest_written_out() -> None:
    verdicts = ["healthy"] * 3 + ["cable_fault"] * 3 + ["healthy"] * 3 + ["link_flapping"] * 3
    points = [point(k, v) for k, v in enumerate(verdicts)]
    chart = history_chart_of(reply_of(points))
    assert chart.changes == [points[3]["start"], points[6]["start"], points[9]["start"]]
    assert len(drawn(chart, "earlier-change")) == 2
    (said,) = drawn(chart, "change-words")
    assert said.get_text().endswith("link flapping\n(before: healthy)")
    assert "earlier verdict changes" in texts_of(chart)


# --- an answer's picture
def test_an_answer_with_stored_history_draws_it_headed_by_its_verdict(
    history: HistoryReply, triage: Triage
) -> None:
    answer = triage.handle(f"{CABLE.device} {CABLE.port}")
    assert isinstance(answer, DiagnosisReply) and answer.windows is not None
    assert answer.windows.stored and len(answer.windows.points) == 36
    chart = answer_chart(answer)
    assert [p.key for p in chart.panels] == ["errors", "link_changes", "load"]
    heading = chart.figure.texts[0].get_text()
    assert heading == "lark-east-idf2 port14: cable or connector fault"
    (picture,) = pictures_for(answer)
    assert picture.filename == "answer-lark-east-idf2-port14.png"
    assert picture.title == "lark-east-idf2 port14: evidence in each window, the last 6 h"
    assert decoded(picture.data).size == chart.size_px


def test_an_answer_without_stored_history_draws_the_polls_it_rests_on(triage: Triage) -> None:
    answer = triage.handle(f"{CABLE.device} {CABLE.port}")  # nothing stored before: 2 polls
    assert isinstance(answer, DiagnosisReply) and answer.windows is not None
    windows = answer.windows
    assert not windows.stored and len(windows.points) == 1
    assert windows.points[0]["end"] - windows.points[0]["start"] == 30.0  # quick_window_s
    chart = answer_chart(answer)
    assert "The 2 polls this answer rests on, over 30 s" in texts_of(chart)
    bars = bars_of(chart)
    assert [b.get_height() for b in bars] == [windows.points[0]["rx_errors"]]
    labels = [t.get_text() for t in chart.panels[-1].axes.get_xticklabels()]
    assert any(label.count(":") == 2 for label in labels)  # a short window: to the second


def test_an_answer_with_no_window_has_no_picture(triage: Triage) -> None:
    answer = triage.handle(f"{CABLE.device} {CABLE.port}")
    assert isinstance(answer, DiagnosisReply)
    assert pictures_for(dataclasses.replace(answer, windows=None)) == []


# --- the tree
def test_the_tree_picture_marks_the_path_in_its_own_colour(triage: Triage) -> None:
    tree = triage.handle("tree lark-east-idf2 port14")
    assert isinstance(tree, TreeReply)
    image = decoded(tree_png(tree))
    assert image.width >= MIN_WIDTH
    assert pixels_of(image, PATH_ORANGE) > 2000  # thick path edges and square nodes
    (picture,) = pictures_for(tree)
    assert picture.filename == "tree-lark-east-idf2-port14.png"
    assert picture.alt.endswith("questions leading to cable_fault.")


def test_a_guards_answer_has_no_tree_to_draw(triage: Triage) -> None:
    down = triage.handle("tree lark-west-idf1 port9")
    assert isinstance(down, TreeReply) and down.node == -1
    assert pictures_for(down) == []
    assert pictures_for(triage.handle("help")) == []
