"""How numbers read to an engineer: significant figures, "N in 100,000", percentages."""

from __future__ import annotations

import pytest

from linktriage.messages import format_ratio, format_threshold, format_value, ratio_scale, sig


@pytest.mark.parametrize(
    ("x", "text"),
    [(4.14, "4.1"), (358.2, "360"), (1.0, "1"), (0.0652, "0.065"), (123456, "120,000"), (0, "0")],
)
def test_two_significant_figures_without_exponents(x: float, text: str) -> None:
    assert sig(x) == text


def test_a_ratio_reads_against_the_power_of_ten_of_its_threshold() -> None:
    assert ratio_scale(1e-5) == 100_000
    assert ratio_scale(3.2e-6) == 1_000_000
    assert format_threshold("ratio", 1e-5) == "1 in 100,000"
    assert format_value("ratio", 4.1e-5, 1e-5) == "4.1 in 100,000"


def test_large_ratios_read_as_percentages() -> None:
    assert format_ratio(0.02, 100_000) == "2% of frames"


def test_other_kinds_read_in_their_units() -> None:
    assert format_value("share", 0.85, 0.5) == "85%"
    assert format_value("db", -1.23, 2.0) == "-1.2 dB"
    assert format_value("flag", 1.0, 0.5) == "half duplex"
    assert format_value("rate", 12.0, 3.0) == "12"
    assert format_value("ratio", float("nan"), 1e-5) == "not reported"
