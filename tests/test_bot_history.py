"""A port's history: the poll job's stored polls cut into windows, each diagnosed as a
question in chat would be, and when the verdict changed."""

from __future__ import annotations

import numpy as np
import pytest

from linktriage.bot.commands import DEFAULT_HISTORY_S
from linktriage.bot.history import (
    ANSWER_SPAN_S,
    MIN_STORED_WINDOWS,
    MIN_WINDOW_S,
    verdict_runs,
    window_bounds,
)
from linktriage.bot.jobs import Jobs
from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.answers import Verdict
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.simulate.ports import DEFAULT_START
from linktriage.errors import NoHistoryError, PollError, UnknownPortError
from linktriage.network.demo import PLANTED, DemoClock, DemoNetwork
from linktriage.network.watched import BEHIND, Gathered
from linktriage.render.replies import HistoryPoint

FIVE_MIN = 300.0
(CABLE,) = [p for p in PLANTED if p.planted == "cable_fault"]
(FLAPPING,) = [p for p in PLANTED if p.planted == "link_flapping"]


def poll_job_runs(triage: Triage, clock: DemoClock, rounds: int) -> None:
    """The poll job, every five minutes of simulated time."""
    jobs = Jobs(triage, post=lambda reply: None, channel=None, holding=True)  # the only replica
    for _ in range(rounds):
        jobs.poll()
        clock.sleep(FIVE_MIN)


@pytest.fixture
def three_hours(triage: Triage, clock: DemoClock) -> Triage:
    """Three hours of the poll job up to the demo's moment, across the cable fault's start."""
    clock.now = DEFAULT_START - 3 * 3600.0
    poll_job_runs(triage, clock, 37)
    clock.now = DEFAULT_START  # asked right after the last poll
    return triage


def test_windows_end_at_the_first_poll_far_enough_from_their_start() -> None:
    times = np.array([0.0, 30.0, 300.0, 330.0, 600.0, 630.0])
    assert window_bounds(times, 240.0) == [(0, 2), (2, 4)]  # 600 -> 630 is too short alone
    assert window_bounds(np.array([0.0, 100.0]), 240.0) == []
    assert MIN_WINDOW_S < FIVE_MIN  # every pair of the poll job's polls is a window


def test_a_fault_that_began_during_the_history_is_said_with_when(three_hours: Triage) -> None:
    assert CABLE.since_s is not None
    began = DEFAULT_START - CABLE.since_s  # 05:40 UTC
    reply = three_hours.histories.of(CABLE.device, CABLE.port, 3 * 3600.0)
    assert reply.summary == "cable_fault since 05:40 UTC, healthy before"
    assert [(r["verdict"], r["windows"]) for r in reply.runs] == [
        ("healthy", 8),
        ("cable_fault", 28),
    ]
    assert reply.runs[1]["start"] == began and reply.runs[1]["end"] == DEFAULT_START
    before = [p for p in reply.points if p["end"] <= began]
    after = [p for p in reply.points if p["start"] >= began]
    assert len(before) + len(after) == len(reply.points) == 36
    assert all(p["rx_errors"] == 0 for p in before)
    ber = [p["bit_error_ratio"] for p in after]
    objective = after[0]["objective"]
    assert objective == 1e-10 and all(b is not None and b > 100 * objective for b in ber)


def test_each_window_is_diagnosed_as_the_same_two_polls_would_be_alone(
    three_hours: Triage,
) -> None:
    reply = three_hours.histories.of(CABLE.device, CABLE.port, 3 * 3600.0)
    point = reply.points[-1]
    stored = three_hours.store.polls_since(point["start"], devices=[CABLE.device], port=CABLE.port)
    alone = diagnose(stored, three_hours.model)
    assert alone.verdict == [Verdict(point["verdict"])] and alone.polls == [point["polls"]] == [2]
    for name, key in (
        ("fer", "error_ratio"),
        ("in_discards", "in_discards"),
        ("out_discards", "out_discards"),
        ("rx_util", "rx_util"),
        ("tx_util", "tx_util"),
    ):
        assert alone.measured(name, 0) == pytest.approx(point[key], rel=1e-5), name  # type: ignore[literal-required]


def test_each_window_says_how_many_errored_frames_its_objective_allows(
    three_hours: Triage,
) -> None:
    reply = three_hours.histories.of(CABLE.device, CABLE.port, 3 * 3600.0)
    point = reply.points[-1]
    stored = three_hours.store.polls_since(point["start"], devices=[CABLE.device], port=CABLE.port)
    frame_bits = 8.0 * diagnose(stored, three_hours.model).measured("frame_octets", 0)
    # A frame of b bits is errored with probability 1 - (1 - q)^b, about q b at a bit error
    # ratio q (IEEE 802.3 clause 40.6.1.3.1 states the same for 1000BASE-T: a frame error
    # ratio of 1e-7 on 125-octet frames is 1e-10): the objective times the bits in frames.
    assert point["objective"] == 1e-10 and point["rx_frames"] is not None
    expected = point["objective"] * point["rx_frames"] * frame_bits
    assert point["errors_at_objective"] == pytest.approx(expected, rel=1e-5)
    assert point["rx_errors"] is not None and point["rx_errors"] > 100 * expected


def test_each_window_counts_the_link_changes_its_polls_saw(three_hours: Triage) -> None:
    cable = three_hours.histories.of(CABLE.device, CABLE.port, 3 * 3600.0)
    # The crushed cord drops the link 8 times in five minutes from 05:40 on (its demo port).
    assert {p["link_changes"] for p in cable.points if p["verdict"] == "healthy"} == {0.0}
    assert {p["link_changes"] for p in cable.points if p["verdict"] == "cable_fault"} == {8.0}
    # The boot-looping camera goes down and up every ten seconds: 60 changes in five minutes.
    camera = three_hours.histories.of(FLAPPING.device, FLAPPING.port, 3 * 3600.0)
    assert {p["link_changes"] for p in camera.points} == {60.0}


def test_an_answers_picture_draws_the_stored_history_where_there_is_some(
    three_hours: Triage,
) -> None:
    ref = three_hours.network.find(CABLE.device, CABLE.port)
    windows = three_hours.histories.of_answer(ref, PollTable.empty())
    assert windows is not None and windows.stored and windows.span_s == ANSWER_SPAN_S
    assert len(windows.points) == 36  # three hours of the poll job, all the store holds
    assert [r["verdict"] for r in windows.runs] == ["healthy", "cable_fault"]


def test_without_stored_history_an_answers_picture_draws_the_polls_it_rests_on(
    triage: Triage, clock: DemoClock
) -> None:
    clock.now = DEFAULT_START - (MIN_STORED_WINDOWS - 1) * FIVE_MIN
    poll_job_runs(triage, clock, MIN_STORED_WINDOWS - 1)  # with the answer's poll, a window short
    ref = triage.network.find(CABLE.device, CABLE.port)
    polls, _ = triage.poller.polls_for([ref])
    windows = triage.histories.of_answer(ref, polls)
    assert windows is not None and not windows.stored
    mine = np.sort(polls.time[(polls.device == ref.device) & (polls.port == ref.port)])
    assert [(p["start"], p["end"]) for p in windows.points] == list(
        zip(mine[:-1].tolist(), mine[1:].tolist(), strict=True)
    )  # cut at every poll
    assert windows.span_s == mine[-1] - mine[0]
    assert triage.histories.of_answer(ref, PollTable.empty()) is None


def test_runs_join_consecutive_windows_of_one_verdict() -> None:
    def point(start: float, verdict: str) -> HistoryPoint:
        return {"start": start, "end": start + FIVE_MIN, "verdict": verdict, "confidence": 1.0,
                "polls": 2, "error_ratio": None, "bit_error_ratio": None, "objective": None,
                "rx_errors": None, "rx_frames": None, "errors_at_objective": None,
                "link_changes": None, "in_discards": None, "out_discards": None,
                "rx_util": None, "tx_util": None, "rx_dbm": None, "rx_low_dbm": None,
                "fec_bits": None, "fec_high_bits": None}  # fmt: skip

    verdicts = ["healthy", "healthy", "cable_fault", "healthy", "healthy", "healthy"]
    runs = verdict_runs([point(k * FIVE_MIN, v) for k, v in enumerate(verdicts)])
    assert [(r["verdict"], r["start"], r["end"], r["windows"]) for r in runs] == [
        ("healthy", 0.0, 600.0, 2),
        ("cable_fault", 600.0, 900.0, 1),
        ("healthy", 900.0, 1800.0, 3),
    ]


def test_a_port_the_poll_job_never_stored_has_no_history_not_a_clean_one(
    triage: Triage,
) -> None:
    reply = triage.handle(f"history {CABLE.device} {CABLE.port}")
    assert reply.visibility == "ephemeral"
    said = getattr(reply, "message", "")
    assert said == (
        "No history of lark-east-idf2 port14 over the last 24 h: fewer than two of its polls "
        "are stored that far apart, so nothing was judged."
    )
    assert "healthy" not in said


def test_one_poll_or_polls_too_close_together_are_no_history(
    triage: Triage, clock: DemoClock
) -> None:
    triage.poller.poll_round()
    clock.sleep(60.0)
    triage.poller.poll_round()
    with pytest.raises(NoHistoryError):
        triage.histories.of(CABLE.device, CABLE.port, DEFAULT_HISTORY_S)


def test_a_history_reaches_back_only_as_far_as_asked(three_hours: Triage) -> None:
    reply = three_hours.histories.of(CABLE.device, CABLE.port, 3600.0)
    assert reply.summary.startswith("cable_fault throughout, 12 windows since ")
    assert reply.points[0]["start"] >= reply.since


def test_names_are_settled_before_anything_is_read(triage: Triage) -> None:
    with pytest.raises(UnknownPortError, match="lark-core1 has no port named 'up99'"):
        triage.histories.of("core1", "up99", 3600.0)


def test_a_port_is_named_by_the_neighbor_its_stored_polls_hear(three_hours: Triage) -> None:
    # The demo's label printer hangs on lark-east-idf2 port7 (LLDP names it there).
    reply = three_hours.histories.of(BEHIND, "lark-circ-prn1", 3600.0)
    assert (reply.device, reply.port) == ("lark-east-idf2", "port7")
    assert reply.runs[-1]["verdict"] == "duplex_mismatch"
    by_name = three_hours.histories.of("lark-east-idf2", "PORT7", 3600.0)
    assert reply.points == by_name.points


class _Recorded:
    """A source that keeps history: the demo's own polls, answered as a time-series
    database would, and a device it cannot reach."""

    def __init__(self, network: DemoNetwork) -> None:
        self.network = network

    def history(self, wanted: dict[str, list[str]], since: float) -> Gathered:
        if "lark-core1" in wanted:
            return Gathered({}, {"lark-core1": "no answer within 5 s"}, {})
        times = np.arange(since, DEFAULT_START + 1, 60.0)  # scraped every minute
        return Gathered(
            {d: PollTable.concat([self.polled_at(d, t) for t in times]) for d in wanted}, {}, {}
        )

    def polled_at(self, device: str, when: float) -> PollTable:
        rows = np.flatnonzero(self.network.counters.device == device)
        return self.network.counters.at(rows, when)


def test_a_device_whose_source_keeps_history_is_answered_from_it(
    triage: Triage, monkeypatch: pytest.MonkeyPatch
) -> None:
    assert isinstance(triage.network, DemoNetwork)
    monkeypatch.setattr(triage.network, "history", _Recorded(triage.network).history)
    reply = triage.histories.of(CABLE.device, CABLE.port, 3600.0)
    assert triage.store.poll_history().ports == 0  # nothing was stored, nothing read from it
    assert {p["end"] - p["start"] for p in reply.points} == {MIN_WINDOW_S}
    assert reply.runs[-1]["verdict"] == "cable_fault"
    with pytest.raises(PollError, match="no answer within 5 s"):
        triage.histories.of("lark-core1", "up3", 3600.0)
