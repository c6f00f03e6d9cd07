"""Both ends of a link: ports paired by what LLDP names, and a verdict that uses both views.

Each case is two ports' counters written from what the standards say each end counts
(RFC 2863 and RFC 3635 counters belong to the receiving interface; IEEE 802.3 clause 4
for half-duplex collisions), with each port naming the other as LLDP would (IEEE 802.1AB
lldpRemSysName and lldpRemPortId).
"""

from __future__ import annotations

from typing import Any

import pytest

from linktriage.bot.digests import ranked_suspects, unjudged
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose, diagnose_chunks
from linktriage.engine.format.answers import DiagnosisRecord
from linktriage.engine.links import pair_ends

from helpers import grown, polls

HALF_100M = {"speed_bps": 10**8, "max_speed_bps": 10**8, "media": "copper", "duplex": "half"}
FULL_100M = {**HALF_100M, "duplex": "full"}
FIBER_10G = {"speed_bps": 10**10, "max_speed_bps": 10**10, "media": "fiber", "duplex": "full"}


def both_ends(
    a: dict[str, int], b: dict[str, int], *, state_a: dict[str, Any], state_b: dict[str, Any]
) -> list[str]:
    """Two polls of lark-east-idf2 port7 and of lark-core1 up3, each naming the other."""
    return [
        *grown(a, device="lark-east-idf2", port="port7",
               neighbor={"device": "lark-core1", "port": "up3"}, **state_a),
        *grown(b, device="lark-core1", port="up3",
               neighbor={"device": "lark-east-idf2", "port": "port7"}, **state_b),
    ]  # fmt: skip


def records(lines: list[str], model: Model) -> dict[str, DiagnosisRecord]:
    batch = diagnose(polls(*lines), model)
    return {f"{r['device']} {r['port']}": r for r in batch.records()}


# Traffic both ways: 10 million frames of 60 octets each way in five minutes (16 Mb/s).
TRAFFIC = {"ifHCInUcastPkts": 10**7, "ifHCOutUcastPkts": 10**7, "ifHCInOctets": 6 * 10**8,
           "ifHCOutOctets": 6 * 10**8}  # fmt: skip


def test_a_duplex_mismatch_is_named_once_from_either_end_with_the_half_and_the_full_end(
    model: Model,
) -> None:
    # The half-duplex end counts late collisions (dot3StatsLateCollisions, RFC 3635: never
    # counted in full duplex); the full-duplex end counts FCS errors and runts on the frames
    # the half end cut short by colliding (IEEE 802.3 clause 4; common practice).
    half = {**TRAFFIC, "dot3StatsLateCollisions": 400, "dot3StatsSingleCollisionFrames": 9000}
    full = {**TRAFFIC, "dot3StatsFCSErrors": 900, "etherStatsFragments": 700}
    answers = records(both_ends(half, full, state_a=HALF_100M, state_b=FULL_100M), model)
    near, far = answers["lark-east-idf2 port7"], answers["lark-core1 up3"]
    for record in (near, far):
        assert record["link"]["verdict"] == "duplex_mismatch"
        assert record["verdict"] == "duplex_mismatch"  # the link decides, at both ends
    assert near["far_end"]["device"] == "lark-core1" and far["far_end"]["port"] == "port7"
    said = near["link"]["said"]
    assert said[0].startswith("lark-east-idf2 port7 runs half duplex (400 late collisions")
    assert said[1] == "lark-core1 up3 runs full duplex (900 errored frames, 700 runts)"
    assert near["link"]["checks"][0].startswith("at lark-east-idf2 port7: ")
    assert near["far_end"]["evidence"] == far["evidence"]


def test_a_one_way_fiber_is_confirmed_by_the_far_ends_transmit_counter(model: Model) -> None:
    # lark-core1 up3 sends 10 million frames; lark-east-idf2 port7 receives none of them
    # while its own frames arrive: the up3 -> port7 strand is broken.
    sender = TRAFFIC
    deaf = {"ifHCOutUcastPkts": 10**7, "ifHCOutOctets": 6 * 10**8, "ifHCInUcastPkts": 0,
            "ifHCInOctets": 0}  # fmt: skip
    answers = records(both_ends(deaf, sender, state_a=FIBER_10G, state_b=FIBER_10G), model)
    for record in answers.values():
        assert record["link"]["verdict"] == "unidirectional"
        assert record["verdict"] == "unidirectional"  # the sending end too
        assert record["link"]["said"][0].endswith(
            "the lark-core1 up3 \u2192 lark-east-idf2 port7 direction is broken"
        )
    checks = answers["lark-east-idf2 port7"]["link"]["checks"]
    assert checks[0].startswith("at lark-core1 up3: its transmit side")
    assert checks[-1].startswith("at lark-east-idf2 port7: its receive connector")


def test_a_dirty_connector_on_one_strand_shows_as_that_directions_loss(model: Model) -> None:
    # Each direction loses the sender's transmit power minus the receiver's received power.
    # port7 -> up3: -2.0 - (-9.6) = 7.6 dB, over the 6.2 dB of a 10GBASE-LR channel (IEEE
    # 802.3 clause 52, from memory); up3 -> port7: -2.1 - (-3.0) = 0.9 dB, within it.
    optics_a = {"tx_power_dbm": -2.0, "rx_power_dbm": -3.0, "rx_power_low_alarm_dbm": -14.4}
    optics_b = {"tx_power_dbm": -2.1, "rx_power_dbm": -9.6, "rx_power_low_alarm_dbm": -14.4}
    lines = both_ends(
        TRAFFIC, TRAFFIC, state_a={**FIBER_10G, "optics": optics_a},
        state_b={**FIBER_10G, "optics": optics_b},
    )  # fmt: skip
    answers = records(lines, model)
    link = answers["lark-core1 up3"]["link"]  # the lossy direction first
    assert link["verdict"] == "optic_degraded"
    # Both ends answer the link: the strand port7 transmits into is the one to clean.
    assert {r["verdict"] for r in answers.values()} == {"optic_degraded"}
    assert link["said"] == [
        "lark-east-idf2 port7 \u2192 lark-core1 up3 loses 7.6 dB (over the 6.2 dB a 10GBASE-LR "
        "channel allows)",
        "lark-core1 up3 \u2192 lark-east-idf2 port7 loses 0.9 dB (within the 6.2 dB a "
        "10GBASE-LR channel allows)",
    ]
    assert link["checks"][0].startswith("the lark-east-idf2 port7 \u2192 lark-core1 up3 strand")


def test_errors_received_at_one_end_only_point_at_one_direction(model: Model) -> None:
    # 5,000 FCS errors in 10 million frames at port7 (5 in 10,000: far over the 1000BASE-T
    # objective of 1e-10, IEEE 802.3 clause 40); up3 receives clean.
    gig = {"speed_bps": 10**9, "max_speed_bps": 10**9, "media": "copper", "duplex": "full"}
    errored = {**TRAFFIC, "dot3StatsFCSErrors": 5000}
    answers = records(both_ends(errored, TRAFFIC, state_a=gig, state_b=gig), model)
    sender = answers["lark-core1 up3"]
    link = sender["link"]
    assert answers["lark-east-idf2 port7"]["verdict"] == "cable_fault"
    assert "own_view" not in answers["lark-east-idf2 port7"]  # its own answer is the link's
    assert link["verdict"] == "cable_fault" and not link["agree"]
    assert link["said"][0].endswith(
        "only the lark-core1 up3 \u2192 lark-east-idf2 port7 direction is damaged"
    )
    assert link["checks"][0].startswith("at lark-east-idf2 port7: its receive connector")
    # The clean-receiving end answers the link too: its verdict, its headline (the link's
    # first reason), the checks naming each end; its own clean view kept beside.
    assert sender["verdict"] == "cable_fault"
    assert sender["evidence"][0]["said"] == link["said"][0]
    assert [e["said"] for e in sender["evidence"][1:]] == [
        f"at lark-east-idf2 port7: {e['said']}" for e in answers["lark-east-idf2 port7"]["evidence"]
    ]
    assert sender["next_checks"][: len(link["checks"])] == link["checks"]
    assert sender["own_view"]["verdict"] == "healthy"
    assert sender["own_view"]["evidence"][0]["feature"] == "bit_error_ratio"
    assert sender["nearest_other"] is None  # a change at this end alone moves its own view


def test_a_far_end_without_a_window_leaves_the_port_answered_alone(model: Model) -> None:
    # lark-core1 up3 polled once only (no_data): nothing is measured there, so the link is
    # not judged over this end's own answer.
    gig = {"speed_bps": 10**9, "max_speed_bps": 10**9, "media": "copper", "duplex": "full"}
    errored = {**TRAFFIC, "dot3StatsFCSErrors": 5000}
    lines = both_ends(TRAFFIC, errored, state_a=gig, state_b=gig)[:3]  # up3's first poll only
    answers = records(lines, model)
    assert answers["lark-core1 up3"]["verdict"] == "no_data"
    near = answers["lark-east-idf2 port7"]
    assert near["verdict"] == "healthy" and "own_view" not in near


@pytest.mark.parametrize(
    ("far_name", "far_port", "paired"),
    [
        ("lark-core1", "up3", True),
        ("LARK-CORE1", "UP3", True),  # LLDP names as the device spells them
        ("lark-core1.larkmoor.example", "up3", True),  # a system name with its domain
        ("lark-core2", "up3", False),
        ("lark-core1", "up4", False),
    ],
)
def test_a_far_end_is_matched_by_name_ignoring_case_and_domain(
    far_name: str, far_port: str, paired: bool
) -> None:
    far = pair_ends(
        ["lark-east-idf2", "lark-core1"], ["port7", "up3"], [far_name, None], [far_port, None]
    )
    assert far.tolist() == ([1, 0] if paired else [-1, -1])


@pytest.mark.parametrize(
    ("listed", "lldp_says", "paired"),
    [
        ("GigabitEthernet1/0/5", "Gi1/0/5", True),  # LLDP's port id as the short ifName
        ("Gi1/0/5", "GigabitEthernet1/0/5", True),  # or the long ifDescr
        ("TenGigabitEthernet1/1/1", "te1/1/1", True),
        ("Port-channel1", "Po1", True),
        ("GigabitEthernet1/0/5", "Gi1/0/50", False),  # the numbers must be the same
        ("xe-0/0/1", "XE-0/0/1", True),  # Junos names: only case differs
    ],
)
def test_a_far_end_is_matched_with_its_port_type_written_long_or_short(
    listed: str, lldp_says: str, paired: bool
) -> None:
    # IEEE 802.1AB: lldpRemPortId with subtype interfaceName(5) carries the far end's
    # ifName (RFC 2863), which switches commonly give short while listing ifDescr long
    # (common practice; the table of types is in engine/format/port_names.py).
    far = pair_ends(
        ["lark-east-idf2", "lark-core1"], ["port7", listed], ["lark-core1", None],
        [lldp_says, None],
    )  # fmt: skip
    assert far.tolist() == ([1, 0] if paired else [-1, -1])


def test_two_ports_whose_names_are_written_alike_are_not_guessed_between() -> None:
    # A device listing both Gi1/0/5 and GigabitEthernet1/0/5 (an alias and its port):
    # "gi1/0/5" fits one by case alone, "GIGABITETHERNET1/0/5" the other; "Gig1/0/5" both.
    ports = ["port7", "Gi1/0/5", "GigabitEthernet1/0/5"]
    devices = ["lark-east-idf2", "lark-core1", "lark-core1"]
    for said, row in (("gi1/0/5", 1), ("GIGABITETHERNET1/0/5", 2), ("Gig1/0/5", -1)):
        far = pair_ends(devices, ports, ["lark-core1", None, None], [said, None, None])
        assert far.tolist()[0] == row, said


def test_a_far_end_that_names_a_third_port_is_not_paired() -> None:
    # Two LLDP views that disagree: one of them is stale, and neither is believed.
    far = pair_ends(["a", "b", "c"], ["p1", "p1", "p1"], ["b", "c", None], ["p1", "p1", None])
    assert far.tolist() == [-1, 2, 1]


def test_ports_without_a_neighbor_carry_no_far_end_and_no_link(model: Model) -> None:
    gig = {"speed_bps": 10**9, "max_speed_bps": 10**9, "media": "copper", "duplex": "full"}
    answers = records(grown(TRAFFIC, **gig), model)
    (record,) = answers.values()
    assert "far_end" not in record and "link" not in record


def test_both_ends_far_apart_in_a_large_file_are_diagnosed_together(model: Model) -> None:
    # diagnose --json works a few thousand ports at a time: a link's ends, wherever they
    # stand in the file, share a chunk, so each answer carries its far end.
    gig = {"speed_bps": 10**9, "max_speed_bps": 10**9, "media": "copper", "duplex": "full"}
    near, far = (
        both_ends(TRAFFIC, TRAFFIC, state_a=gig, state_b=gig)[:2],
        both_ends(TRAFFIC, TRAFFIC, state_a=gig, state_b=gig)[2:],
    )
    others = [x for k in range(6) for x in grown(TRAFFIC, port=f"port{20 + k}", **gig)]
    batches = list(diagnose_chunks(polls(*near, *others, *far), model, ports=2))
    answered = [r for batch in batches for r in batch.records()]
    # The six ports of lark-test-sw1 share one chunk (a device is never split), the link's
    # ends another.
    assert len(answered) == 8 and len(batches) == 2
    linked = {
        f"{r['device']} {r['port']}": r["far_end"]["port"] for r in answered if "far_end" in r
    }
    assert linked == {"lark-east-idf2 port7": "up3", "lark-core1 up3": "port7"}


def test_a_quiet_end_of_a_faulty_link_is_a_suspect_not_left_unjudged(model: Model) -> None:
    # lark-core1 up3 receives 1,000 frames in five minutes, too few to judge an error ratio
    # at that end alone; the frames it sends arrive at port7 with 5 in 10,000 errored. The
    # link is one suspect, and neither end is counted as not judged.
    gig = {"speed_bps": 10**9, "max_speed_bps": 10**9, "media": "copper", "duplex": "full"}
    port7 = {"ifHCInUcastPkts": 10**7, "ifHCInOctets": 6 * 10**8, "ifHCOutUcastPkts": 1000,
             "ifHCOutOctets": 60_000, "dot3StatsFCSErrors": 5000}  # fmt: skip
    up3 = {"ifHCInUcastPkts": 1000, "ifHCInOctets": 60_000, "ifHCOutUcastPkts": 10**7,
           "ifHCOutOctets": 6 * 10**8, "dot3StatsFCSErrors": 0}  # fmt: skip
    batch = diagnose(polls(*both_ends(port7, up3, state_a=gig, state_b=gig)), model)
    quiet = batch.index_of("lark-core1", "up3")
    assert quiet is not None
    assert batch.verdict[quiet] == "insufficient_traffic"  # its own answer
    assert batch.link_verdict(quiet) == "cable_fault"
    assert unjudged(batch) == []
    assert len(ranked_suspects(batch)) == 1
