"""Guards: the rule of three, exact binomial bounds, and when a port is judged at all."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import binomtest

from linktriage.features import feature_table
from linktriage.guards import (
    DEFAULT_RESOLUTION,
    MIN_ERROR_EVENTS,
    apply_guards,
    clean_upper_bound,
    error_ratio_bounds,
)
from linktriage.verdicts import Verdict
from linktriage.window import compute_windows

from helpers import line, polls


@pytest.mark.parametrize("n", [1_000, 30_000, 300_000, 10**7])
def test_zero_errors_bound_the_ratio_near_three_over_n(n: int) -> None:
    # The rule of three: with no events in n trials the one-sided 95% upper bound is
    # about 3/n (Hanley and Lippman-Hand, JAMA 1983, "If nothing goes wrong...").
    _, upper = error_ratio_bounds(np.array([0.0]), np.array([float(n)]))
    assert upper[0] == pytest.approx(3 / n, rel=0.01)
    assert clean_upper_bound(np.array([float(n)]))[0] == pytest.approx(upper[0], rel=1e-12)


@pytest.mark.parametrize(("k", "n"), [(1, 50), (10, 20_000), (250, 10**6), (3, 7)])
def test_bounds_match_scipys_exact_clopper_pearson_interval(k: int, n: int) -> None:
    # One-sided 95% bounds are the ends of the two-sided 90% exact (Clopper-Pearson)
    # interval; scipy.stats.binomtest is the reference implementation.
    lower, upper = error_ratio_bounds(np.array([float(k)]), np.array([float(n)]))
    ci = binomtest(k, n).proportion_ci(confidence_level=0.90, method="exact")
    assert lower[0] == pytest.approx(ci.low, rel=1e-9)
    assert upper[0] == pytest.approx(ci.high, rel=1e-9)


def test_all_frames_errored_bounds_the_ratio_at_one() -> None:
    lower, upper = error_ratio_bounds(np.array([40.0]), np.array([40.0]))
    assert upper[0] == 1.0
    assert 0.9 < lower[0] < 1.0


T5 = "2026-03-02T08:05:00Z"


def guard(rx_pkts: int, errors: int, *, oper_status: str = "up", polls_: int = 2) -> object:
    first = line(counters={"ifHCInUcastPkts": 0, "ifInErrors": 0, "ifHCOutUcastPkts": 0})
    last = line(
        T5,
        counters={"ifHCInUcastPkts": rx_pkts, "ifInErrors": errors, "ifHCOutUcastPkts": 0},
        oper_status=oper_status,
    )
    table = polls(first, last) if polls_ == 2 else polls(last)
    windows = compute_windows(table)
    return apply_guards(windows, feature_table(windows))[0]


def test_a_quiet_clean_port_is_not_called_healthy() -> None:
    assert guard(10_000, 0) is Verdict.INSUFFICIENT_TRAFFIC


def test_a_busy_clean_port_goes_to_the_tree() -> None:
    # 3 / 1e-5 = 300,000 frames: enough to bound a clean port below the resolution.
    assert DEFAULT_RESOLUTION == 1e-5
    assert guard(310_000, 0) is None


def test_a_quiet_port_with_many_errors_goes_to_the_tree() -> None:
    assert guard(2_000, 200) is None


def test_a_handful_of_errors_on_a_quiet_port_is_not_enough() -> None:
    assert guard(2_000, MIN_ERROR_EVENTS - 1) is Verdict.INSUFFICIENT_TRAFFIC


def test_no_traffic_at_all_is_insufficient() -> None:
    assert guard(0, 0) is Verdict.INSUFFICIENT_TRAFFIC


def test_a_port_that_is_not_up_is_link_down_whatever_its_traffic() -> None:
    assert guard(10**7, 0, oper_status="down") is Verdict.LINK_DOWN


def test_one_poll_is_no_data() -> None:
    assert guard(10**7, 0, polls_=1) is Verdict.NO_DATA
