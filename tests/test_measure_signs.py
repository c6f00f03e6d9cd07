"""What counts as evidence: errors by a significance test against the PHY's objective, a
trickle as silence, output discards from bursts, the full-duplex end of a mismatch read
without runt counters, and every significant count said in a healthy answer. Each case is
one the issue quotes, as snapshot lines written here, diagnosed end to end with the
packaged model."""

from __future__ import annotations

from typing import Any

import pytest

from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.answers import DiagnosisRecord
from linktriage.engine.measure.measures import MIN_ERROR_FRAMES

from helpers import grown, polls, stepped

GIG_COPPER = {"speed_bps": 10**9, "max_speed_bps": 10**9, "duplex": "full", "media": "copper"}
FAST_FULL = {"speed_bps": 10**8, "max_speed_bps": 10**8, "duplex": "full", "media": "copper"}
GIG_FIBER = {**GIG_COPPER, "media": "fiber"}
TEN_G_FIBER = {"speed_bps": 10**10, "max_speed_bps": 10**10, "duplex": "full", "media": "fiber"}
LIGHT = {"optics": {"rx_power_dbm": -7.2, "rx_power_low_warn_dbm": -18.0,
                    "rx_power_low_alarm_dbm": -20.0, "tx_power_dbm": -3.0}}  # fmt: skip


def frames(received: int, sent: int, octets: int = 1000, hc: bool = True) -> dict[str, int]:
    """Both directions of a window: frames of ``octets`` each, as 64-bit counters or not."""
    c = "HC" if hc else ""
    return {
        f"if{c}InOctets": received * octets, f"if{c}InUcastPkts": received,
        f"if{c}OutOctets": sent * octets, f"if{c}OutUcastPkts": sent,
    }  # fmt: skip


def one(model: Model, grow: dict[str, int], **state: Any) -> DiagnosisRecord:
    return diagnose(polls(*grown(grow, **state)), model).record(0)


def said(record: DiagnosisRecord) -> str:
    return " | ".join(e["said"] for e in record["evidence"])


# --- significance (IEEE 802.3 clause 40.1: 1000BASE-T BER objective 1e-10) ---------------


def test_19_errors_in_1_2_million_frames_are_a_fault_by_the_test(model: Model) -> None:
    # The port: 19 FCS errors in 1,200,019 frames of 1,000 octets over 300 s. BER
    # about 2e-9, 20 times the objective; at the objective 0.96 errored frames are expected
    # and P(X >= 19) is about 1e-18. A count floor of 20 called it healthy.
    record = one(model, {**frames(1_200_000, 900_000), "dot3StatsFCSErrors": 19}, **GIG_COPPER)
    assert record["verdict"] == "cable_fault"
    assert "exact one-sided binomial test at 99%" in record["evidence"][0]["source"]


def test_a_short_window_with_errors_far_over_the_objective_is_a_fault(model: Model) -> None:
    # collect --polls 3 --every 5: ten seconds of a 10G link at half load, 60 errored frames
    # in 5 million, about 1,200 times the 1e-12 objective of 10GBASE-R (clause 49).
    lines = stepped(
        [{**frames(2_500_000, 2_500_000, octets=1250), "dot3StatsFCSErrors": 30}] * 2,
        every_s=5.0,
        **TEN_G_FIBER,
        **LIGHT,
    )
    assert diagnose(polls(*lines), model).record(0)["verdict"] == "cable_fault"


def test_errors_a_link_meeting_its_objective_shows_by_chance_are_healthy(model: Model) -> None:
    # 3 FCS errors in 2.5 million frames of 1,000 octets: the objective itself expects 2.0,
    # and P(X >= 3 | 2.0) is 32%.
    record = one(model, {**frames(2_500_000, 2_000_000), "dot3StatsFCSErrors": 3}, **GIG_COPPER)
    assert record["verdict"] == "healthy"


def test_fewer_errored_frames_than_the_burst_allowance_make_no_rate(model: Model) -> None:
    # One errored frame among 2,000: the test alone would reject the objective (P = 0.16%),
    # but one frame is one event. Too few frames to tell: insufficient traffic.
    assert MIN_ERROR_FRAMES > 1
    record = one(model, {**frames(2_000, 2_000), "dot3StatsFCSErrors": 1}, **GIG_COPPER)
    assert record["verdict"] == "insufficient_traffic"


@pytest.mark.parametrize("speed", [10**9, 2_500_000_000, 5 * 10**9, 10**10])
def test_the_same_errors_are_a_fault_at_every_copper_speed_from_1g_to_10g(
    model: Model, speed: int
) -> None:
    # The case: 100 FCS errors in 9,000,100 frames of 1,000 octets, a BER of about
    # 1.4e-9: over 10 times the 1000BASE-T objective (1e-10, clause 40.6.1.3.1) and the
    # 2.5GBASE-T, 5GBASE-T and 10GBASE-T ones (1e-12; 802.3bz from memory, 802.3an).
    copper = {"speed_bps": speed, "max_speed_bps": speed, "duplex": "full", "media": "copper"}
    record = one(model, {**frames(9_000_000, 9_000_000), "dot3StatsFCSErrors": 100}, **copper)
    assert record["verdict"] == "cable_fault"
    assert "the this" not in said(record)


# --- a trickle is not traffic (SNAPSHOT-FORMAT 1.2 unidirectional) ------------------------


def test_three_frames_sent_against_five_million_received_is_one_way(model: Model) -> None:
    # The port: 5 million frames received in 150 s, 3 sent. A live end sends at
    # least its LLDP frames (five in 150 s, IEEE 802.1AB) and answers what it receives.
    record = one(model, frames(5_000_000, 3), window_s=150.0, **GIG_FIBER, **LIGHT)
    assert record["verdict"] == "unidirectional"
    assert any("look-alikes" in check for check in record["next_checks"])


def test_a_camera_sending_a_hundred_times_what_it_receives_is_alive(model: Model) -> None:
    # A PoE camera: 420,000 frames of video received in 10 minutes, 4,200 sent to it (ARP,
    # RTCP, NTP): seven frames a second is a live direction, not a trickle.
    record = one(model, frames(420_000, 4_200), window_s=600.0, **FAST_FULL)
    assert record["verdict"] == "healthy"


# --- drops and transmit errors --------------------------------------------------------


def test_output_discards_from_bursts_at_30_percent_load_are_congestion(model: Model) -> None:
    # The port: 30,000 ifOutDiscards in 5 minutes (0.2% of 15 million frames
    # queued) at 30% average load out. Output discards at a lower average load, from bursts
    # the buffers cannot absorb, are congestion (SNAPSHOT-FORMAT 1.2).
    grow = {**frames(5_000_000, 15_030_000, octets=750), "ifOutDiscards": 30_000}
    grow["ifHCOutOctets"] = 11_250_000_000  # 30% of 1 Gb/s over 300 s
    record = one(model, {**grow, "dot3StatsFCSErrors": 0}, **GIG_COPPER)
    assert record["verdict"] == "congestion"


def test_a_stray_handful_of_output_discards_is_not_congestion(model: Model) -> None:
    # 14 output discards in 12.5 million frames at 35% load: one in a million, the stray
    # microburst of any busy port (common practice).
    grow = {**frames(8_000_000, 12_500_000, octets=1050), "ifOutDiscards": 14}
    record = one(model, {**grow, "dot3StatsFCSErrors": 0}, **GIG_COPPER)
    assert record["verdict"] == "healthy"
    assert "14 frames discarded" in said(record)  # said, beside the healthy answer


def test_output_discards_with_wrapped_counter32_octets_say_the_load_is_unknown(
    model: Model,
) -> None:
    # SNMPv1, Counter32 only, polls 300 s apart at 1 Gb/s: ifOutOctets may wrap every 34 s
    # (RFC 2863 section 3.1.6), so the load cannot be read; 0.4% output discards are still
    # congestion, and the answer says the load is unknown rather than report a wrong one.
    grow = {**frames(2_000_000, 8_032_000, hc=False), "ifOutDiscards": 32_000}
    grow["ifOutOctets"] = 11_250_000_000  # more than 2^32: it wrapped twice
    record = one(model, {**grow, "dot3StatsFCSErrors": 0}, **GIG_COPPER)
    assert record["verdict"] == "congestion"
    assert "load could not be read" in said(record)


def test_transmit_errors_without_collisions_are_said_beside_a_healthy_answer(
    model: Model,
) -> None:
    # 5,000 ifOutErrors in 10 million frames sent, collisions all zero, as they must be in
    # full duplex: what RFC 3635 section 3.2.10 leaves is the device's own transmit path.
    grow = {**frames(7_500_000, 10_000_000), "ifOutErrors": 5_000, "dot3StatsFCSErrors": 0,
            "dot3StatsLateCollisions": 0, "dot3StatsExcessiveCollisions": 0}  # fmt: skip
    record = one(model, grow, **GIG_COPPER)
    assert record["verdict"] == "healthy"
    assert "ifOutErrors grew by 5,000" in said(record)


def test_in_errors_beyond_their_parts_are_said_and_never_a_cable_fault(model: Model) -> None:
    # ifInErrors grows by 1% of the frames that arrived while FCS, alignment and frames too
    # long stay flat: coding errors above 10 Mb/s fail the FCS (RFC 3635), so not the cable.
    grow = {**frames(6_000_000, 5_000_000), "ifInErrors": 60_600, "dot3StatsFCSErrors": 0,
            "dot3StatsAlignmentErrors": 0, "dot3StatsFrameTooLongs": 0}  # fmt: skip
    record = one(model, grow, **GIG_COPPER)
    assert record["verdict"] == "healthy"
    assert "ifInErrors grew by 60,600 beyond its FCS" in said(record)


# --- the full-duplex end of a duplex mismatch without runt counters ---------------------


def test_alignment_errors_with_clean_symbols_at_100m_are_the_full_duplex_end(
    model: Model,
) -> None:
    # The port: 100BASE-TX full duplex, no RMON table, 105,000 FCS and 70,000
    # alignment errors in 1.575 million frames, dot3StatsSymbolErrors reported and flat.
    # Line noise on 100BASE-TX corrupts 4B/5B code groups (symbol errors); frames a half-duplex
    # far end aborts end cleanly at a nibble boundary (RFC 3635 dot3StatsSymbolErrors).
    grow = {**frames(1_400_000, 1_600_000, octets=600), "dot3StatsFCSErrors": 105_000,
            "dot3StatsAlignmentErrors": 70_000, "dot3StatsSymbolErrors": 0}  # fmt: skip
    record = one(model, grow, **FAST_FULL)
    assert record["verdict"] == "duplex_mismatch"
    assert "fail alignment" in said(record)


def test_fcs_errors_with_symbol_errors_at_100m_are_the_cable(model: Model) -> None:
    # The same errors with symbol errors beside them and few alignment errors: line noise.
    grow = {**frames(1_400_000, 1_600_000, octets=600), "dot3StatsFCSErrors": 105_000,
            "dot3StatsAlignmentErrors": 1_000, "dot3StatsSymbolErrors": 150_000}  # fmt: skip
    record = one(model, grow, **FAST_FULL)
    assert record["verdict"] == "cable_fault"
