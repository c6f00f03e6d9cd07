"""The counter catalogue against RFC 2863, RFC 2578, RFC 3635 and IEEE 802.3 arithmetic."""

from __future__ import annotations

import pytest

from linktriage.engine.format.counters import (
    COLUMNS,
    FRAME_OVERHEAD_OCTETS,
    MAX_UNTAGGED_FRAME_OCTETS,
    MIN_FRAME_OCTETS,
    QUANTITIES,
    SLOT_TIME_BITS,
    Unit,
    max_rate_per_second,
)
from linktriage.engine.model.questions import QUESTIONS


def test_hc_names_are_counter64_and_the_rest_counter32() -> None:
    # RFC 2863 section 6: ifHC* objects are Counter64; RFC 3635: dot3HCStats* and
    # dot3HC*PauseFrames likewise; every other IF-MIB, EtherLike-MIB, RMON-MIB and
    # POWER-ETHERNET-MIB counter is a Counter32. SNAPSHOT-FORMAT 1.2: the FEC counters
    # (IEEE 802.3 clause 30 attributes) are all 64-bit.
    for column in COLUMNS:
        wide = column.name.startswith(("ifHC", "dot3HC", "aFEC", "FEC"))
        assert column.bits == (64 if wide else 32), column.name


def test_every_counter_name_of_the_snapshot_format_is_known() -> None:
    # The names SNAPSHOT-FORMAT lists (traffic, drops and errors, Ethernet, RMON).
    listed = {
        "ifHCInOctets", "ifHCOutOctets", "ifHCInUcastPkts", "ifHCInMulticastPkts",
        "ifHCInBroadcastPkts", "ifHCOutUcastPkts", "ifHCOutMulticastPkts",
        "ifHCOutBroadcastPkts", "ifInOctets", "ifOutOctets", "ifInUcastPkts",
        "ifOutUcastPkts", "ifInErrors", "ifOutErrors", "ifInDiscards", "ifOutDiscards",
        "dot3StatsFCSErrors", "dot3StatsAlignmentErrors", "dot3StatsSymbolErrors",
        "dot3StatsLateCollisions", "dot3StatsSingleCollisionFrames",
        "dot3StatsMultipleCollisionFrames", "dot3StatsExcessiveCollisions",
        "dot3StatsFrameTooLongs", "dot3StatsInternalMacReceiveErrors",
        "etherStatsUndersizePkts", "etherStatsFragments", "etherStatsOversizePkts",
        "etherStatsJabbers",
        # since 1.2: pause frames, FEC, Power over Ethernet
        "dot3InPauseFrames", "dot3OutPauseFrames", "dot3HCInPauseFrames",
        "dot3HCOutPauseFrames", "aFECCorrectedBlocks", "aFECUncorrectableBlocks",
        "FECCorrectedBits", "pethPsePortMPSAbsentCounter", "pethPsePortInvalidSignatureCounter",
        "pethPsePortPowerDeniedCounter", "pethPsePortOverLoadCounter", "pethPsePortShortCounter",
    }  # fmt: skip
    assert listed <= {c.name for c in COLUMNS}


def test_each_quantity_names_at_most_one_counter_of_each_width() -> None:
    for q in QUANTITIES:
        assert q.hc is not None or q.c32 is not None


def test_minimum_frame_rate_at_one_gigabit() -> None:
    # 64-octet frames plus 8 octets of preamble/SFD and 12 of inter-frame gap (IEEE 802.3
    # clause 4.4.2; the 96-bit gap is from memory): 10^9 / (84 * 8) = 1,488,095 frames/s.
    assert max_rate_per_second(Unit.PACKETS, 1e9) == pytest.approx(1_488_095, abs=1)


@pytest.mark.parametrize(
    ("speed_bps", "wrap_s"),
    [
        (10e6, 3435.97),  # RFC 2863 section 3.1.6: "just over 57 minutes"
        (100e6, 343.6),  # "5.7 minutes"
        (1e9, 34.36),  # "34 seconds"
    ],
)
def test_counter32_octets_wrap_times_match_rfc_2863(speed_bps: float, wrap_s: float) -> None:
    assert 2**32 / max_rate_per_second(Unit.OCTETS, speed_bps) == pytest.approx(wrap_s, rel=1e-3)


def test_counter64_octets_at_one_terabit_wrap_in_just_under_five_years() -> None:
    # RFC 2863 section 3.1.6: "a 1-terabit/second link will cause a 64 bit octet counter
    # to wrap in just under 5 years".
    years = 2**64 / max_rate_per_second(Unit.OCTETS, 1e12) / (365.25 * 86400)
    assert 4.5 < years < 5.0


def test_frame_limits_and_slot_time() -> None:
    # IEEE 802.3 clause 4.4.2 (quoted): minFrameSize 64 octets, maxUntaggedFrameSize 1518
    # octets, slotTime 512 bit times at 10/100 Mb/s; RFC 2819 uses the same 64 and 1518 for
    # etherStatsUndersizePkts and etherStatsOversizePkts.
    assert MIN_FRAME_OCTETS * 8 == SLOT_TIME_BITS
    assert MAX_UNTAGGED_FRAME_OCTETS == 1518
    # RFC 3635 section 3.2.7: the standard Ethernet MTU is 1500 octets.
    assert 1500 + FRAME_OVERHEAD_OCTETS == MAX_UNTAGGED_FRAME_OCTETS
    # 512 bit times at 10 Mb/s are 51.2 microseconds.
    slot_s = SLOT_TIME_BITS / 10e6
    assert slot_s == pytest.approx(51.2e-6)


def test_the_questions_state_the_standard_limits() -> None:
    assert "frames under 64 octets" in QUESTIONS["runts_vs_collisions"][0]
    assert "after the first 512 bit times" in QUESTIONS["late_collision_ratio"][0]
    assert "plus 18 octets" in QUESTIONS["giant_ratio"][0]
