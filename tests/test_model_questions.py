"""How numbers read to an engineer: significant figures, "N in 100,000", percentages."""

from __future__ import annotations

import math

import pytest

from linktriage.engine.measure.numbers import format_ratio, ratio_scale, sig
from linktriage.engine.model.features import FEATURES
from linktriage.engine.model.questions import (
    CHANGES,
    STATE_CHANGES,
    change_said,
    format_threshold,
    value_reader,
)


@pytest.mark.parametrize(
    ("x", "text"),
    [(4.14, "4.1"), (358.2, "360"), (1.0, "1"), (0.0652, "0.065"), (123456, "120,000"), (0, "0")],
)
def test_two_significant_figures_without_exponents(x: float, text: str) -> None:
    assert sig(x) == text


def test_a_ratio_reads_against_the_power_of_ten_of_its_threshold() -> None:
    assert ratio_scale(1e-5) == 100_000
    assert ratio_scale(3.2e-6) == 1_000_000
    assert format_threshold("log_ratio", -5.0) == "1 in 100,000"
    assert value_reader("log_ratio", -5.0)(math.log10(4.1e-5)) == "4.1 in 100,000"


def test_large_ratios_read_as_percentages() -> None:
    assert format_ratio(0.02, 100_000) == "2% of frames"


def test_nothing_counted_reads_as_none() -> None:
    assert value_reader("log_ratio", -5.0)(-13.0) == "none"
    assert value_reader("log_fps", -1.0)(-3.0) == "none"


def test_other_kinds_read_in_their_units() -> None:
    assert value_reader("share", 0.5)(0.85) == "85%"
    assert value_reader("db", 2.0)(-1.23) == "-1.2 dB"
    assert value_reader("flag", 0.5)(1.0) == "half duplex"
    assert value_reader("per_hour", 3.0)(12.0) == "12"
    assert value_reader("times", 0.5)(math.log10(30.0)) == "30 times"
    assert value_reader("log_fps", -1.0)(math.log10(0.05)) == "0.05 frames/s"
    assert format_threshold("times", 0.0) == "1 times"


def test_every_feature_has_words_for_a_change() -> None:
    for feature in FEATURES:
        if feature.kind == "flag":
            assert feature.name in STATE_CHANGES
        else:
            assert "{dir}" in CHANGES[feature.name] and "{t}" in CHANGES[feature.name]


def test_a_change_reads_with_the_threshold_and_the_value_now() -> None:
    said = change_said("ber_over_objective", "times", -0.5, False, "healthy")
    assert said(math.log10(180.0)) == (
        "would be healthy with the bit error ratio, at the low end of its 99% range, below "
        "0.32 times the PHY's objective; now 180 times"
    )
    said = change_said("light_margin_db", "db", 0.65, True, "cable or connector fault")
    assert said(-2.42) == (
        "would be cable or connector fault with received light above 0.7 dB over the "
        "module's low warning; now -2.4 dB"
    )


def test_a_change_of_state_reads_as_the_state() -> None:
    # A split below ANY_BELOW only asks whether the events were counted at all.
    said = change_said("giant_ratio", "log_ratio", -11.2, False, "healthy")
    assert said(math.log10(0.0196)) == (
        "would be healthy with fewer than 20 received frames too long for this port counted; "
        "now 2 in 100"
    )
    said = change_said("late_collision_ratio", "log_ratio", -9.7, True, "duplex mismatch")
    assert said(-13.0) == (
        "would be duplex mismatch with late collisions counted, 3 or more; now none"
    )
    said = change_said("half_duplex", "flag", 0.5, True, "negotiation degraded")
    assert said(0.0) == (
        "would be negotiation degraded with the port running half duplex; now full duplex"
    )
