"""The feature table: ratios with RFC 3635 denominators; missing counters stay missing."""

from __future__ import annotations

import math

import pytest

from linktriage.features import FEATURE_NAMES, feature_matrix, feature_table
from linktriage.window import compute_windows

from helpers import line, polls

T5 = "2026-03-02T08:05:00Z"
GIG = {"speed_bps": 10**9, "max_speed_bps": 10**9, "duplex": "full", "media": "copper"}


def features(before: dict[str, int], after: dict[str, int], **fields: object) -> dict[str, float]:
    state = {**GIG, **fields}
    table = feature_table(
        compute_windows(polls(line(counters=before, **state), line(T5, counters=after, **state)))
    )
    return table.iloc[0].to_dict()


ZERO = {
    "ifHCInOctets": 0,
    "ifHCOutOctets": 0,
    "ifHCInUcastPkts": 0,
    "ifHCOutUcastPkts": 0,
    "ifInErrors": 0,
    "ifInDiscards": 0,
    "ifOutDiscards": 0,
    "dot3StatsFCSErrors": 0,
    "dot3StatsAlignmentErrors": 0,
}


def test_received_frames_count_discards_and_errors_beside_packets() -> None:
    # RFC 3635 section 3.2.5: ifInDiscards and errored frames are not in ifInUcastPkts.
    after = {**ZERO, "ifHCInUcastPkts": 99_000, "ifInDiscards": 900, "ifInErrors": 100,
             "dot3StatsFCSErrors": 100}  # fmt: skip
    f = features(ZERO, after)
    assert f["rx_frames"] == 100_000
    assert f["rx_crc_ratio"] == pytest.approx(100 / 100_000)
    assert f["in_discard_ratio"] == pytest.approx(900 / 100_000)


def test_sent_frames_already_include_discards() -> None:
    # RFC 3635 section 3.2.5: ifOutDiscards are counted by ifOutUcastPkts.
    after = {**ZERO, "ifHCOutUcastPkts": 50_000, "ifOutDiscards": 500}
    f = features(ZERO, after)
    assert f["out_discard_ratio"] == pytest.approx(0.01)


def test_utilisation_is_octets_over_line_rate() -> None:
    after = {**ZERO, "ifHCInOctets": 3_750_000_000, "ifHCOutOctets": 375_000_000}
    f = features(ZERO, after)
    assert f["rx_utilisation"] == pytest.approx(0.1)  # 3.75e9 * 8 / (1e9 * 300)
    assert f["tx_utilisation"] == pytest.approx(0.01)


def test_a_device_without_ethernet_counters_has_no_fcs_ratio_rather_than_zero() -> None:
    plain = {k: v for k, v in ZERO.items() if not k.startswith("dot3")}
    after = {**plain, "ifHCInUcastPkts": 1000, "ifInErrors": 5}
    f = features(plain, after)
    assert math.isnan(f["rx_crc_ratio"])
    assert f["rx_error_ratio"] == pytest.approx(5 / 1005)


def test_traffic_balance_compares_the_quieter_direction_with_the_busier() -> None:
    after = {**ZERO, "ifHCInUcastPkts": 10, "ifHCOutUcastPkts": 100_000}
    assert features(ZERO, after)["traffic_balance"] == pytest.approx(1e-4)


def test_optical_margin_is_received_power_over_the_low_alarm() -> None:
    optics = {"rx_power_dbm": -12.0, "rx_power_low_alarm_dbm": -14.4}
    f = features(ZERO, ZERO, media="fiber", optics=optics)
    assert f["rx_power_margin_db"] == pytest.approx(2.4)
    assert math.isnan(features(ZERO, ZERO)["rx_power_margin_db"])  # copper: no optics


def test_speed_ratio_and_duplex_come_from_the_latest_poll() -> None:
    f = features(ZERO, ZERO, speed_bps=10**8, duplex="half")
    assert f["speed_ratio"] == pytest.approx(0.1)
    assert f["half_duplex"] == 1.0


def test_the_matrix_is_float32_in_feature_order() -> None:
    table = feature_table(compute_windows(polls(line(), line(T5))))
    x = feature_matrix(table)
    assert x.dtype.name == "float32"
    assert x.shape == (1, len(FEATURE_NAMES))
