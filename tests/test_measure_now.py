"""Now and before: an answer follows what the link does in its latest intervals, not only the
window's average, and says which polls it rests on. Each case is one the issue quotes, as
snapshot lines written here, diagnosed end to end with the packaged model."""

from __future__ import annotations

from typing import Any

from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.answers import DiagnosisRecord

from helpers import polls, stepped

TEN_G_FIBER = {"speed_bps": 10**10, "max_speed_bps": 10**10, "duplex": "full", "media": "fiber"}
GIG_COPPER = {"speed_bps": 10**9, "max_speed_bps": 10**9, "duplex": "full", "media": "copper"}
LIGHT = {"optics": {"rx_power_dbm": -3.0, "rx_power_low_warn_dbm": -9.9,
                    "rx_power_low_alarm_dbm": -11.9, "tx_power_dbm": -2.5}}  # fmt: skip


def both_ways(received: int, sent: int, octets: int = 1000, **more: int) -> dict[str, int]:
    """One interval: ``received`` and ``sent`` frames of ``octets`` each, and more counters."""
    return {
        "ifHCInOctets": received * octets, "ifHCInUcastPkts": received,
        "ifHCOutOctets": sent * octets, "ifHCOutUcastPkts": sent,
        "dot3StatsFCSErrors": 0, "dot3StatsAlignmentErrors": 0, **more,
    }  # fmt: skip


def answer(model: Model, steps: list[dict[str, int]], **state: Any) -> DiagnosisRecord:
    return diagnose(polls(*stepped(steps, **state)), model).record(0)


def test_a_direction_silent_since_the_first_interval_is_one_way_now(model: Model) -> None:
    # The 10G port: 25.9 million frames received in the first interval, none in
    # the 30 minutes since, while it still sends 22 million an interval. The average is
    # 12,000 frames/s received; the link is one-way now (SNAPSHOT-FORMAT 1.2 unidirectional:
    # "a direction that stopped within the window is one-way now").
    steps = [both_ways(25_900_000, 22_000_000)] + [both_ways(0, 22_000_000)] * 6
    record = answer(model, steps, **TEN_G_FIBER, **LIGHT)
    assert record["verdict"] == "unidirectional"
    assert "silent since 2026-03-02T08:05:00Z" in (record["note"] or "")
    assert "rests on the polls from 2026-03-02T08:05:00Z" in (record["note"] or "")
    received = next(e for e in record["evidence"] if e["feature"] == "rx_frames")
    assert received["value"] == 0  # the evidence is the silent run, not the average


def test_a_trickle_of_keepalives_after_traffic_is_one_way_now(model: Model) -> None:
    # 1000BASE-SX: two busy intervals, then three in which only the far end's LLDP frames
    # arrive (one every 30 s, IEEE 802.1AB) while 5 million frames an interval go out.
    steps = [both_ways(6_000_000, 5_000_000)] * 2 + [both_ways(10, 5_000_000)] * 3
    record = answer(model, steps, **{**GIG_COPPER, "media": "fiber"}, **LIGHT)
    assert record["verdict"] == "unidirectional"


def test_both_directions_falling_quiet_together_is_not_one_way(model: Model) -> None:
    # A server gone idle: both ways fall to a few dozen frames an interval. Neither carries
    # traffic while the other does (common practice).
    steps = [both_ways(3_000_000, 4_000_000)] * 2 + [both_ways(30, 40)] * 4
    record = answer(model, steps, every_s=600.0, **GIG_COPPER)
    assert record["verdict"] != "unidirectional"
    assert "silent since" not in (record["note"] or "")


def test_a_dip_that_is_not_silence_restarts_nothing(model: Model) -> None:
    # A busy host whose receive load fell twentyfold in the last interval still receives
    # hundreds of frames a second: a quieter interval, not a one-way link.
    steps = [both_ways(600_000, 500_000)] * 5 + [both_ways(30_000, 500_000)]
    record = answer(model, steps, every_s=60.0, **GIG_COPPER)
    assert record["verdict"] == "healthy"
    assert "silent since" not in (record["note"] or "")


def test_errors_of_a_reseat_followed_by_clean_intervals_are_a_past_event(model: Model) -> None:
    # The re-seat: one interval holds a down/up and 5,420 errored frames among 4.0
    # million; the nine intervals since carry 64.8 million frames without one error. By the
    # rule of three the link now runs below 5e-8 frame errors: not a fault now.
    reseat = both_ways(4_000_000, 3_000_000, dot3StatsFCSErrors=5_400,
                       dot3StatsAlignmentErrors=20, link_changes=2)  # fmt: skip
    steps = [reseat] + [both_ways(7_200_000, 5_400_000)] * 9
    record = answer(model, steps, **GIG_COPPER)
    assert record["verdict"] == "healthy"
    note = record["note"] or ""
    assert "5,420 errored frames" in note and "past event" in note
    assert "rests on the polls from 2026-03-02T08:05:00Z" in note


def test_errors_that_go_on_after_a_down_up_are_still_a_fault(model: Model) -> None:
    # The same re-seat, but the errors go on at the same rate afterwards: the down/up fixed
    # nothing, and the whole window stands.
    errored = both_ways(4_000_000, 3_000_000, dot3StatsFCSErrors=5_400)
    steps = [{**errored, "link_changes": 2}] + [errored] * 5
    record = answer(model, steps, **GIG_COPPER)
    assert record["verdict"] == "cable_fault"
    assert "past event" not in (record["note"] or "")


def test_errors_that_start_late_are_a_fault_since_they_began(model: Model) -> None:
    # 10GBASE-LR: nine clean intervals, then FCS errors in each of the last three, rising.
    clean = both_ways(40_000_000, 30_000_000, octets=1250)
    steps = [clean] * 9 + [
        both_ways(40_000_000, 30_000_000, octets=1250, dot3StatsFCSErrors=n)
        for n in (900, 2_400, 3_100)
    ]
    record = answer(model, steps, **TEN_G_FIBER, **LIGHT)
    assert record["verdict"] == "cable_fault"
    assert "errors in every interval since 2026-03-02T08:45:00Z" in (record["note"] or "")


def test_ports_restarted_at_different_times_keep_their_own_answers(model: Model) -> None:
    # Two uplinks in one file, polled together: port1 (first in the file) fell silent at
    # 08:15, port2 at 08:05. Each answer rests on its own polls from its own moment.
    first = stepped([both_ways(9_000_000, 8_000_000)] * 3 + [both_ways(0, 8_000_000)] * 3,
                    port="port1", **TEN_G_FIBER, **LIGHT)  # fmt: skip
    second = stepped([both_ways(9_000_000, 8_000_000)] + [both_ways(0, 8_000_000)] * 5,
                     port="port2", **TEN_G_FIBER, **LIGHT)  # fmt: skip
    lines = [line for pair in zip(first, second, strict=True) for line in pair]
    batch = diagnose(polls(*lines), model)
    for port, since in (("port1", "08:15:00Z"), ("port2", "08:05:00Z")):
        record = batch.record(batch.index_of("lark-test-sw1", port))
        assert record["verdict"] == "unidirectional"
        assert f"silent since 2026-03-02T{since}" in (record["note"] or "")


def test_a_direction_silent_in_the_last_interval_alone_is_one_way_now(model: Model) -> None:
    # The restarted window is a single interval: the last poll interval carried nothing in
    # while 8 million frames went out. Another port of the file, restarted earlier, keeps
    # its own answer beside it.
    last_only = stepped([both_ways(9_000_000, 8_000_000)] * 3 + [both_ways(0, 8_000_000)],
                        port="port1", **TEN_G_FIBER, **LIGHT)  # fmt: skip
    earlier = stepped([both_ways(9_000_000, 8_000_000)] + [both_ways(0, 8_000_000)] * 3,
                      port="port2", **TEN_G_FIBER, **LIGHT)  # fmt: skip
    batch = diagnose(polls(*last_only, *earlier), model)
    for port, since in (("port1", "08:15:00Z"), ("port2", "08:05:00Z")):
        record = batch.record(batch.index_of("lark-test-sw1", port))
        assert record["verdict"] == "unidirectional"
        assert f"silent since 2026-03-02T{since}" in (record["note"] or "")
