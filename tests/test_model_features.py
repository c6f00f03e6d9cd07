"""The tree's inputs: evidence in units that carry across vendors and speeds, never a
missing value to route on, and nothing from a handful of events."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest

from linktriage.engine.measure.measures import measure
from linktriage.engine.measure.window import compute_windows
from linktriage.engine.model.features import FEATURE_BY_NAME, FEATURE_NAMES, feature_rows

from helpers import grown, polls

GIG = {"speed_bps": 10**9, "max_speed_bps": 10**9, "duplex": "full", "media": "copper"}
TRAFFIC = {"ifHCInOctets": 10**10, "ifHCInUcastPkts": 10**7, "ifHCOutUcastPkts": 10**7}


def features(grow: dict[str, int], **fields: Any) -> tuple[dict[str, float], dict[str, bool]]:
    rows = feature_rows(measure(compute_windows(polls(*grown(grow, **{**GIG, **fields})))).table)
    return rows.values.row(0), rows.reported.row(0)


def test_a_port_reporting_only_traffic_gives_the_values_of_nothing_counted() -> None:
    values, reported = features(TRAFFIC)
    for name in FEATURE_NAMES:
        assert not math.isnan(values[name]), name
    assert values["ber_over_objective"] == FEATURE_BY_NAME["ber_over_objective"].neutral
    assert values["light_margin_db"] == FEATURE_BY_NAME["light_margin_db"].neutral
    assert not reported["ber_over_objective"] and not reported["light_margin_db"]
    assert reported["quiet_fps"]


def test_errors_are_held_against_the_phys_objective_by_their_lower_bound() -> None:
    # 1,000 errored frames in 1e7 of 1,000 octets: BER about 1.25e-8, over 100 times the
    # 1000BASE-T objective of 1e-10 (IEEE 802.3 clause 40.6.1.3.1).
    values, _ = features({**TRAFFIC, "dot3StatsFCSErrors": 1000})
    assert 10**2 < 10 ** values["ber_over_objective"] < 125


def test_an_errored_frame_or_two_is_no_evidence_however_quiet_the_port() -> None:
    # Two errors in 10,000 frames is a large ratio, but a touched plug does that: an event,
    # not a rate (measure.measures.MIN_ERROR_FRAMES).
    values, reported = features(
        {"ifHCInOctets": 10**7, "ifHCInUcastPkts": 10**4, "ifHCOutUcastPkts": 10**4,
         "dot3StatsFCSErrors": 2}
    )  # fmt: skip
    assert values["ber_over_objective"] == FEATURE_BY_NAME["ber_over_objective"].low
    assert reported["ber_over_objective"]


def test_runts_are_read_against_the_share_collisions_leave() -> None:
    # A collision cuts a frame at a random point; within the first 64 octets (the slot time,
    # IEEE 802.3 clause 4.4.2) it leaves a runt: 64 / 1,000 of the frames it damages.
    values, _ = features({**TRAFFIC, "dot3StatsFCSErrors": 300, "etherStatsFragments": 100})
    assert values["runts_vs_collisions"] == pytest.approx(0.25 / (64 / 1000))


def test_one_flap_in_five_minutes_is_one_flap_an_hour_not_twelve() -> None:
    values, _ = features(TRAFFIC, link_changes=10, last={"link_changes": 12})
    assert values["flaps_per_hour"] == 1.0


def test_discards_are_read_with_the_load_of_their_own_direction() -> None:
    values, _ = features(
        {"ifHCInOctets": 10**9, "ifHCOutOctets": 3 * 10**10, "ifHCInUcastPkts": 10**6,
         "ifHCOutUcastPkts": 2 * 10**7, "ifOutDiscards": 20_000, "ifInDiscards": 5}
    )  # fmt: skip
    assert values["discard_utilisation"] == pytest.approx(0.8)
    assert 10 ** values["discard_ratio"] == pytest.approx(1e-3)


def test_the_quiet_direction_is_read_in_frames_per_second() -> None:
    values, _ = features({"ifHCInUcastPkts": 0, "ifHCOutUcastPkts": 300_000, "ifInErrors": 0})
    assert values["quiet_fps"] == FEATURE_BY_NAME["quiet_fps"].low
    values, _ = features({"ifHCInUcastPkts": 3_000, "ifHCOutUcastPkts": 300_000})
    assert 10 ** values["quiet_fps"] == pytest.approx(10.0)


def test_the_matrix_is_float32_in_feature_order() -> None:
    rows = feature_rows(measure(compute_windows(polls(*grown(TRAFFIC, **GIG)))).table)
    x = rows.matrix()
    assert x.dtype == np.float32 and x.shape == (1, len(FEATURE_NAMES))
