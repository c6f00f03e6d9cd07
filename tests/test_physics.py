"""Verdicts the physics of the link rules out never come back, and state readings answer at
once: each case here is a port an engineer would judge from the standards, diagnosed end to
end with the packaged model."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest

from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.answers import DiagnosisRecord
from linktriage.engine.format.snapshot import read_snapshots
from linktriage.engine.measure.measures import measure
from linktriage.engine.measure.window import compute_windows
from linktriage.engine.physics import RULES, Rule, allowed
from linktriage.engine.verdicts import TREE_VERDICTS

from helpers import grown, polls

GIG_COPPER = {"speed_bps": 10**9, "max_speed_bps": 10**9, "duplex": "full", "media": "copper"}
FAST_COPPER = {"speed_bps": 10**8, "max_speed_bps": 10**8, "media": "copper"}
TEN_G_FIBER = {"speed_bps": 10**10, "max_speed_bps": 10**10, "duplex": "full", "media": "fiber"}
SFP_READINGS = {"rx_power_low_alarm_dbm": -14.4, "rx_power_low_warn_dbm": -12.4,
                "tx_power_dbm": -2.1, "tx_power_low_alarm_dbm": -8.2}  # fmt: skip


def traffic(
    frames: int, octets: int = 1000, sent: int | None = None, sent_octets: int = 1000
) -> dict[str, int]:
    """Both directions of a window: ``frames`` received of ``octets`` each, ``sent`` (as
    many by default) of ``sent_octets``."""
    out = frames if sent is None else sent
    return {
        "ifHCInOctets": frames * octets, "ifHCInUcastPkts": frames,
        "ifHCOutOctets": out * sent_octets, "ifHCOutUcastPkts": out,
    }  # fmt: skip


def one(model: Model, grow: dict[str, int], **state: Any) -> DiagnosisRecord:
    batch = diagnose(polls(*grown(grow, **state)), model)
    return batch.record(0)


def evidence(record: DiagnosisRecord) -> dict[str, Any]:
    return {e["feature"]: e for e in record["evidence"]}


def test_every_rule_names_what_it_needs_and_its_source() -> None:
    for rule in RULES:
        assert rule.needs and rule.source, rule
    assert {r.verdict for r in RULES} == set(TREE_VERDICTS)


def test_fcs_errors_at_ten_gigabit_are_never_a_duplex_mismatch(
    model: Model, snapshots: Path
) -> None:
    # The congestion port of the demo (10 Gb/s fiber, symbol errors stuck at zero), with FCS
    # errors added on 1 in 10,000 received frames. 10 Gb/s Ethernet is full duplex only
    # (IEEE 802.3 clause 44.1.1, from memory): no half-duplex end, no mismatch.
    lines = (snapshots / "verdicts" / "congestion.jsonl").read_text().splitlines()
    first, last = (json.loads(text) for text in lines)
    received = sum(
        last["counters"][k] - first["counters"][k]
        for k in ("ifHCInUcastPkts", "ifHCInMulticastPkts", "ifHCInBroadcastPkts")
    )
    for snap, errors in ((first, 0), (last, received // 10_000)):
        snap["counters"]["dot3StatsFCSErrors"] = 1_000 + errors
        snap["counters"]["dot3StatsSymbolErrors"] = 0
        snap["counters"]["ifInErrors"] += errors
    batch = diagnose(read_snapshots([json.dumps(first), json.dumps(last)]).polls, model)
    record = batch.record(0)
    assert record["verdict"] not in ("duplex_mismatch", "healthy")
    rule = batch.allowed.rule_against(0, "duplex_mismatch")
    assert rule is not None and "half duplex exists" in rule.needs


def test_a_bit_error_ratio_ten_times_the_objective_is_no_clean_port(model: Model) -> None:
    # 1.2 errored frames in 100,000 of 1,000 octets is a BER near 1.5e-9: fifteen times the
    # 1000BASE-T objective of 1e-10 (IEEE 802.3 clause 40.6.1.3.1); 120 of them in 10^7.
    record = one(model, {**traffic(10**7), "dot3StatsFCSErrors": 120}, **GIG_COPPER)
    assert record["verdict"] == "cable_fault"
    assert record["bit_errors"] is not None and record["bit_errors"]["exceeds"] is True
    assert record["evidence"][0]["feature"] == "bit_error_ratio"
    assert record["evidence"][0]["reference"] == 1e-10


def test_a_few_errors_after_a_re_seat_do_not_make_a_fault(model: Model) -> None:
    # Four errored frames among 10^7: not significant in counts (common practice).
    record = one(model, {**traffic(10**7), "dot3StatsFCSErrors": 4}, **GIG_COPPER)
    assert record["verdict"] == "healthy"
    assert record["bit_errors"] is not None and record["bit_errors"]["exceeds"] is False


def test_no_healthy_answer_beside_a_significant_over_objective_ratio(model: Model) -> None:
    # 10GBASE-R at 80% load: 30 errored frames in 3e8 is a BER near 1.25e-11, twelve
    # times the objective of 1e-12.
    record = one(
        model,
        {**traffic(3 * 10**8), "dot3StatsFCSErrors": 30},
        **TEN_G_FIBER,
        optics={"rx_power_dbm": -3.0, **SFP_READINGS},
    )
    assert record["verdict"] != "healthy"
    assert record["bit_errors"] is not None and record["bit_errors"]["exceeds"] is True


def test_late_collisions_on_a_half_duplex_port_are_a_duplex_mismatch(model: Model) -> None:
    # RFC 3635 dot3StatsLateCollisions: a collision after 512 bit times is never normal.
    record = one(
        model,
        {**traffic(10**6, 600), "dot3StatsLateCollisions": 900,
         "dot3StatsSingleCollisionFrames": 2_000, "dot3StatsFCSErrors": 40},
        **{**FAST_COPPER, "duplex": "half"},
    )  # fmt: skip
    assert record["verdict"] == "duplex_mismatch"
    said = evidence(record)
    assert {"late_collisions", "collisions", "runts", "duplex"} <= set(said)
    assert said["duplex"]["value"] == "half"


def test_fcs_errors_and_runts_at_a_full_duplex_end_are_a_duplex_mismatch(model: Model) -> None:
    # The full-duplex end of a mismatch: FCS errors and runts (the half end aborts its
    # frames), growing with load (IEEE 802.3 duplex-mismatch symptoms, as quoted).
    record = one(
        model,
        {**traffic(10**6, 600), "dot3StatsFCSErrors": 3_000, "etherStatsFragments": 2_500,
         "dot3StatsLateCollisions": 0},
        **{**FAST_COPPER, "duplex": "full"},
    )  # fmt: skip
    assert record["verdict"] == "duplex_mismatch"


def test_light_under_the_modules_warning_with_errors_is_an_optic(model: Model) -> None:
    # SFF-8472 thresholds: -13.5 dBm received is 1.1 dB under this module's low warning.
    record = one(
        model,
        {**traffic(10**8), "dot3StatsFCSErrors": 5_000},
        **TEN_G_FIBER,
        optics={"rx_power_dbm": -13.5, **SFP_READINGS},
    )
    assert record["verdict"] == "optic_degraded"
    light = evidence(record)["rx_power"]
    assert light["unit"] == "dBm" and light["value"] == -13.5 and light["reference"] == -12.4


def test_errors_on_fiber_with_light_in_range_are_a_connector_not_an_optic(model: Model) -> None:
    # A dirty or damaged connector or patch cord (SNAPSHOT-FORMAT 1.1, cable_fault).
    record = one(
        model,
        {**traffic(10**8), "dot3StatsFCSErrors": 5_000},
        **TEN_G_FIBER,
        optics={"rx_power_dbm": -3.0, **SFP_READINGS},
    )
    assert record["verdict"] == "cable_fault"


def test_low_transmit_power_is_an_optic_verdict(model: Model) -> None:
    record = one(
        model,
        traffic(10**8),
        **TEN_G_FIBER,
        optics={"rx_power_dbm": -3.0, **SFP_READINGS, "tx_power_dbm": -9.5},
    )
    assert record["verdict"] == "optic_degraded"
    assert evidence(record)["tx_power"]["reference"] == -8.2


@pytest.mark.parametrize(
    "counters",
    [
        {"dot3StatsFCSErrors": 2_000, "ifInErrors": 2_000},  # EtherLike
        {"ifInErrors": 2_000, "etherStatsOversizePkts": 0},  # IF-MIB and RMON only
        {"ifInErrors": 2_000},  # IF-MIB only
    ],
)
def test_copper_errors_are_never_an_optic_or_an_mtu_fault(
    model: Model, counters: dict[str, int]
) -> None:
    # No transceiver readings: no optic verdict. No frames too long counted: no MTU one.
    record = one(model, {**traffic(10**7), **counters}, **GIG_COPPER, mtu=1500)
    assert record["verdict"] == "cable_fault"


def test_inbound_discards_at_low_load_are_filtering_not_congestion(model: Model) -> None:
    # RFC 2863 ifInDiscards counts VLAN, STP and unknown-protocol drops: 5% of frames at
    # 4% load is filtering.
    frames = 1_500_000
    record = one(model, {**traffic(frames, 1000), "ifInDiscards": frames // 20}, **GIG_COPPER)
    assert record["verdict"] == "healthy"


def test_a_congestion_answer_shows_the_discards_and_the_load_of_their_direction(
    model: Model,
) -> None:
    sent = 35_000_000  # 95% of a gigabit for 300 s at 1,000 octets
    record = one(
        model,
        {
            **traffic(2_000_000, 100, sent=sent, sent_octets=1000),
            "ifOutDiscards": 70_000,
            "ifInErrors": 0,
        },
        **GIG_COPPER,
    )
    assert record["verdict"] == "congestion"
    said = evidence(record)
    assert said["outbound_discards"]["value"] == 70_000
    assert said["outbound_utilisation"]["value"] == pytest.approx(0.93, abs=0.01)


def test_a_link_that_flaps_with_clean_counters_is_link_flapping(model: Model) -> None:
    # Four down/up cycles (eight changes) in five minutes (common practice: flapping); with
    # clean counters, SNAPSHOT-FORMAT 1.2 calls it link_flapping (it was cable_fault).
    record = one(model, traffic(10**7), **GIG_COPPER, link_changes=2, last={"link_changes": 10})
    assert record["verdict"] == "link_flapping"
    assert record["evidence"][0]["feature"] == "link_changes"


def test_one_flap_with_clean_counters_is_not_a_fault(model: Model) -> None:
    record = one(model, traffic(10**7), **GIG_COPPER, link_changes=2, last={"link_changes": 4})
    assert record["verdict"] == "healthy"


@pytest.mark.parametrize(
    ("state", "grow", "verdict"),
    [
        ({**GIG_COPPER, "speed_bps": 10**8}, {}, "negotiation_degraded"),
        ({**FAST_COPPER, "duplex": "half"}, {}, "negotiation_degraded"),
        (
            {**TEN_G_FIBER, "optics": {"rx_power_dbm": -16.0, **SFP_READINGS}},
            {},
            "optic_degraded",
        ),
        (GIG_COPPER, {"ifHCInUcastPkts": 0, "ifHCOutUcastPkts": 6_000}, "unidirectional"),
        ({**GIG_COPPER, "link_changes": 0, "last": {"link_changes": 8}}, {}, "link_flapping"),
    ],
)
def test_state_readings_answer_however_little_the_traffic(
    model: Model, state: dict[str, Any], grow: dict[str, int], verdict: str
) -> None:
    little = {"ifHCInUcastPkts": 300, "ifHCOutUcastPkts": 300, "ifInErrors": 0, **grow}
    record = one(model, little, **state)
    assert record["verdict"] == verdict


def test_a_receive_only_silence_names_the_silent_direction_in_frames_per_second(
    model: Model,
) -> None:
    record = one(model, {"ifHCInUcastPkts": 0, "ifHCOutUcastPkts": 600_000}, **GIG_COPPER)
    assert record["verdict"] == "unidirectional"
    head = record["evidence"][0]
    assert head["feature"] == "rx_frames" and head["unit"] == "frames"
    assert head["value"] == 0.0 and "receive direction silent" in head["said"]
    assert record["evidence"][1]["feature"] == "tx_frames_per_second"


def test_a_broadcast_storm_with_an_idle_return_is_not_a_one_way_link(model: Model) -> None:
    # 90% inbound of 64-octet broadcasts, a couple of frames a second going back.
    storm = 400_000_000
    record = one(
        model,
        {"ifHCInOctets": storm * 64, "ifHCInBroadcastPkts": storm, "ifHCInUcastPkts": 0,
         "ifHCOutOctets": 600 * 100, "ifHCOutUcastPkts": 600},
        **GIG_COPPER,
    )  # fmt: skip
    assert record["verdict"] != "unidirectional"


def test_an_impossible_discard_count_is_a_counter_fault_not_congestion(model: Model) -> None:
    record = one(
        model,
        {**traffic(120_000_000), "ifOutDiscards": 2_900_000_000},
        **TEN_G_FIBER,
        optics={"rx_power_dbm": -3.0, **SFP_READINGS},
    )
    assert record["verdict"] == "healthy"
    assert record["note"] is not None and "counter fault" in record["note"]


def test_rules_agree_with_the_verdicts_on_the_demo_network(model: Model, demo_batch) -> None:  # type: ignore[no-untyped-def]
    # Whatever the tree preferred, no answer is one its port's readings rule out.
    for i, verdict in enumerate(demo_batch.verdict):
        if verdict in TREE_VERDICTS:
            assert demo_batch.allowed.rule_against(i, verdict) is None


def test_a_verdict_ruled_out_is_named_with_its_rule(model: Model) -> None:
    windows = compute_windows(polls(*grown({**traffic(10**8), "dot3StatsFCSErrors": 5_000},
                                           **TEN_G_FIBER)))  # fmt: skip
    ok = allowed(measure(windows).table)
    rule: Rule | None = ok.rule_against(0, "optic_degraded")
    assert rule is not None and rule.needs.startswith("transceiver readings")
