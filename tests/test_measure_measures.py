"""Measures: frames, error bounds, light and discards in the units and denominators the
standards define; impossible counts are counter faults, not evidence."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest
from scipy.stats import binomtest

from linktriage.engine.measure.measures import (
    RESOLUTION_CAP,
    WARN_ABOVE_FLOOR_DB,
    error_ratio_upper,
    frames_needed,
    measure,
    ratio_floor,
    ratio_over,
)
from linktriage.engine.measure.window import compute_windows

from helpers import grown, polls

GIG = {"speed_bps": 10**9, "max_speed_bps": 10**9, "duplex": "full", "media": "copper"}
TEN_G_FIBER = {"speed_bps": 10**10, "max_speed_bps": 10**10, "duplex": "full", "media": "fiber"}


def measures(grow: dict[str, int], **fields: Any) -> dict[str, Any]:
    state = {**GIG, **fields}
    measured = measure(compute_windows(polls(*grown(grow, **state))))
    row = measured.table.row(0)
    row["note"] = measured.counter_faults[0]
    return row


@pytest.mark.parametrize("n", [1_000, 30_000, 300_000, 10**7])
def test_zero_errors_bound_the_ratio_near_three_over_n(n: int) -> None:
    # The rule of three: with no events in n trials the one-sided 95% upper bound is
    # about 3/n (Hanley and Lippman-Hand, JAMA 1983, "If nothing goes wrong...").
    upper = error_ratio_upper(np.array([0.0]), np.array([float(n)]))
    assert upper[0] == pytest.approx(3 / n, rel=0.01)


@pytest.mark.parametrize(("k", "n"), [(1, 50), (10, 20_000), (250, 10**6), (3, 7)])
def test_bounds_match_scipys_exact_clopper_pearson_interval(k: int, n: int) -> None:
    # A one-sided bound at c is an end of the two-sided exact (Clopper-Pearson) interval at
    # 2c - 1: the upper at 95% of the 90% interval, the test's lower at 99% of the 98%;
    # scipy.stats.binomtest is the reference implementation.
    upper = error_ratio_upper(np.array([float(k)]), np.array([float(n)]))
    assert upper[0] == pytest.approx(
        binomtest(k, n).proportion_ci(confidence_level=0.90, method="exact").high, rel=1e-9
    )
    lower = ratio_floor(np.array([float(k)]), np.array([float(n)]))
    assert lower[0] == pytest.approx(
        binomtest(k, n).proportion_ci(confidence_level=0.98, method="exact").low, rel=1e-9
    )


CASES = [(30_000, 15_030_000, 1e-4), (14, 12_500_000, 1e-4), (19, 1_200_019, 1e-6)]


@pytest.mark.parametrize(("k", "n", "share"), [*CASES, (3, 2_500_000, 1e-6)])
def test_the_yes_or_no_test_agrees_with_the_bound(k: int, n: int, share: float) -> None:
    # ratio_over asks the regularised incomplete beta instead of solving for the bound: the
    # two must always agree on which side of ``share`` the ratio lies.
    floor = ratio_floor(np.array([float(k)]), np.array([float(n)]))[0]
    assert ratio_over(np.array([float(k)]), np.array([float(n)]), share)[0] == (floor > share)


def test_received_frames_count_discards_and_errors_beside_packets() -> None:
    # RFC 3635 section 3.2.5: ifInDiscards and errored frames are not in ifInUcastPkts.
    m = measures(
        {"ifHCInOctets": 99_000_000, "ifHCInUcastPkts": 99_000, "ifInDiscards": 900,
         "ifInErrors": 100, "dot3StatsFCSErrors": 100, "ifHCOutUcastPkts": 50_000}
    )  # fmt: skip
    assert m["rx_frames"] == 100_000
    assert m["fer"] == pytest.approx(100 / 100_000)
    assert m["in_discard_ratio"] == pytest.approx(900 / 100_000)


def test_sent_frames_already_include_discards() -> None:
    # RFC 2863 ifOutUcastPkts: "including those that were discarded or not sent".
    m = measures({"ifHCOutUcastPkts": 100_000, "ifOutDiscards": 500, "ifHCInUcastPkts": 1})
    assert m["tx_frames"] == 100_000
    assert m["out_discard_ratio"] == pytest.approx(0.005)


def test_fcs_errors_are_preferred_to_in_errors_which_count_more() -> None:
    # RFC 3635 section 3.2.10: ifInErrors also sums frames too long and MAC receive errors.
    m = measures(
        {"ifHCInUcastPkts": 10**6, "ifInErrors": 500, "dot3StatsFCSErrors": 40,
         "dot3StatsAlignmentErrors": 2, "dot3StatsFrameTooLongs": 458}
    )  # fmt: skip
    assert m["rx_errors"] == 42 and m["error_source"] == 1.0
    assert m["giants"] == 458


def test_without_ethernet_counters_in_errors_less_frames_too_long_stand_in() -> None:
    m = measures(
        {"ifHCInUcastPkts": 10**6, "ifInErrors": 500, "etherStatsOversizePkts": 100}, mtu=1500
    )
    assert m["rx_errors"] == 400 and m["error_source"] == 2.0


def test_rmon_oversize_is_not_a_frame_too_long_on_a_jumbo_port() -> None:
    # RFC 2819 etherStatsOversizePkts: "longer than 1518 octets", whatever the port's MTU.
    jumbo = measures({"ifHCInUcastPkts": 10**6, "etherStatsOversizePkts": 90_000}, mtu=9000)
    standard = measures({"ifHCInUcastPkts": 10**6, "etherStatsOversizePkts": 90_000}, mtu=1500)
    assert math.isnan(jumbo["giants"])
    assert standard["giants"] == 90_000


def test_a_discard_count_above_the_frames_sent_is_a_counter_fault() -> None:
    # ifOutDiscards jumping by 2.9e9 in five minutes while 1.2e8 frames were sent: the
    # discards are inside the frames sent (RFC 2863), so this cannot be a measurement.
    m = measures(
        {"ifHCOutUcastPkts": 120_000_000, "ifOutDiscards": 2_900_000_000,
         "ifHCInUcastPkts": 80_000_000},
        **TEN_G_FIBER,
    )  # fmt: skip
    assert math.isnan(m["out_discards"])
    assert "ifOutDiscards grew by 2,900,000,000" in m["note"]
    assert "counter fault" in m["note"]


def test_late_collisions_at_ten_gigabit_are_a_counter_fault() -> None:
    # 10 Gb/s Ethernet is full duplex only: it has no collisions to be late.
    m = measures(
        {"ifHCOutUcastPkts": 10**7, "ifHCInUcastPkts": 10**7, "dot3StatsLateCollisions": 50},
        **TEN_G_FIBER,
    )
    assert math.isnan(m["late_collisions"])
    assert "late collisions" in m["note"]


def test_the_resolution_is_one_in_10000_where_the_objective_allows_it() -> None:
    # 1000BASE-T: 3 x 10^4 x 1e-10 = 3e-6 BER, more than 1e-4 per frame at 1,000 octets, so the
    # cap holds: 29,956 frames, ln(0.05) / ln(1 - 1e-4) (the rule of three's 3 / 1e-4).
    m = measures({"ifHCInOctets": 10**9, "ifHCInUcastPkts": 10**6, "dot3StatsFCSErrors": 0})
    assert m["resolution"] == RESOLUTION_CAP == 1e-4
    assert m["frames_needed"] == 29_956


def test_the_resolution_is_finer_for_small_frames_on_a_1e12_phy() -> None:
    # 10GBASE-R, 64-octet frames: 3 x 10^4 x 1e-12 = 3e-8 BER is an FER of about 1.536e-5 on
    # 512-bit frames (the reflector's equivalence, BER 1e-12 ~ FER 5.12e-10, scaled).
    m = measures(
        {"ifHCInOctets": 64 * 10**7, "ifHCInUcastPkts": 10**7, "dot3StatsFCSErrors": 0},
        **TEN_G_FIBER,
    )
    assert m["resolution"] == pytest.approx(1.536e-5, rel=1e-3)
    assert m["frames_needed"] == pytest.approx(frames_needed(np.array([1.536e-5]))[0], rel=1e-3)


def test_light_is_held_against_the_warning_else_the_alarm_else_the_sensitivity() -> None:
    counters = {"ifHCInUcastPkts": 10**6, "ifHCOutUcastPkts": 10**6}
    gig_fiber = {**GIG, "media": "fiber"}
    alarm_only = {"rx_power_dbm": -12.0, "rx_power_low_alarm_dbm": -15.0}
    warn = measures(counters, **gig_fiber, optics={**alarm_only, "rx_power_low_warn_dbm": -13.0})
    alarm = measures(counters, **gig_fiber, optics=alarm_only)
    bare = measures(counters, **gig_fiber, optics={"rx_power_dbm": -18.0})
    assert (warn["rx_reference_kind"], warn["light_margin_db"]) == (1.0, pytest.approx(1.0))
    # Without a warning, light is held against the alarm plus a warning's usual spacing.
    assert (alarm["rx_reference_kind"], alarm["floor_margin_db"]) == (2.0, pytest.approx(3.0))
    assert alarm["light_margin_db"] == pytest.approx(3.0 - WARN_ABOVE_FLOOR_DB)
    # 1000BASE-LX receive sensitivity, -19 dBm (IEEE 802.3 clause 38, as reproduced).
    assert (bare["rx_reference_kind"], bare["floor_margin_db"]) == (3.0, pytest.approx(1.0))


def test_counters_a_device_does_not_report_stay_unknown() -> None:
    m = measures({"ifHCInUcastPkts": 10**6, "ifHCOutUcastPkts": 10**6})
    for name in ("rx_errors", "late_collisions", "runts", "giants", "in_discards"):
        assert math.isnan(m[name]), name
