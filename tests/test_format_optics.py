"""Optical power units of SFF-8472 digital diagnostics."""

from __future__ import annotations

import numpy as np
import pytest

from linktriage.engine.format.optics import (
    dbm_to_mw,
    mw_to_dbm,
    sff8472_power_dbm,
    sff8472_power_raw,
)


def test_one_milliwatt_is_zero_dbm_and_a_tenth_is_minus_ten() -> None:
    # dBm = 10 log10(P / 1 mW).
    assert mw_to_dbm(1.0) == pytest.approx(0.0)
    assert mw_to_dbm(0.1) == pytest.approx(-10.0)
    assert dbm_to_mw(-3.0) == pytest.approx(0.501187, rel=1e-5)


@pytest.mark.parametrize(
    ("raw", "dbm"),
    [
        (10_000, 0.0),  # 10,000 x 0.1 uW = 1 mW
        (1_000, -10.0),  # 0.1 mW
        (1, -40.0),  # the smallest non-zero reading, 0.1 uW
        (65_535, 8.1648),  # full scale, 6.5535 mW: "~ +8.2 dBm" (SFF-8472's source note)
    ],
)
def test_sff8472_power_words_are_tenths_of_a_microwatt(raw: int, dbm: float) -> None:
    assert sff8472_power_dbm(raw) == pytest.approx(dbm, abs=1e-4)


def test_a_reading_goes_to_a_word_and_back_within_its_rounding() -> None:
    # Half an LSB is 0.05 uW: 0.5% of the power (0.02 dB) at -20 dBm, less above it.
    dbm = np.array([-2.5, -14.4, -19.9, 3.0])
    again = sff8472_power_dbm(sff8472_power_raw(dbm))
    np.testing.assert_allclose(again, dbm, atol=0.025)


def test_power_beyond_the_word_is_clamped() -> None:
    assert sff8472_power_raw(20.0) == 65_535
    assert sff8472_power_raw(-60.0) == 0
