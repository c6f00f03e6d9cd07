"""How numbers read to an engineer: significant figures, "N in 100,000", percentages."""

from __future__ import annotations

import math

import pytest

from linktriage.wording import format_ratio, format_threshold, ratio_scale, sig, value_reader


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
