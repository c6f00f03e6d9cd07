"""The simulator keeps the counter relations the standards define."""

from __future__ import annotations

import numpy as np
import pandas as pd

from linktriage.engine.format.answers import Verdict
from linktriage.engine.format.counters import COLUMN_INDEX
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.measure.window import compute_windows
from linktriage.engine.prior import sample_parameters, simulate_prior
from linktriage.engine.simulate.polled import render_polls


def _ports(
    verdict: Verdict, n: int = 300, seed: int = 1, **set_: object
) -> tuple[pd.DataFrame, PollTable]:
    rng = np.random.default_rng(seed)
    params = sample_parameters([verdict] * n, rng)
    for key, value in set_.items():
        params[key] = value
    names = [f"port{i}" for i in range(n)]
    return params, render_polls(params, rng, device=["sw"] * n, port=names)


def test_the_same_seed_simulates_the_same_counters() -> None:
    a, labels_a = simulate_prior(500, np.random.default_rng(4))
    b, labels_b = simulate_prior(500, np.random.default_rng(4))
    np.testing.assert_array_equal(a.counters, b.counters)
    np.testing.assert_array_equal(labels_a, labels_b)


def test_in_errors_are_the_sum_of_the_dot3_receive_errors() -> None:
    # RFC 3635 section 3.2.10: ifInErrors = Alignment + FCS + FrameTooLongs + InternalMacRx.
    _, table = _ports("cable_fault", dot3=True, hc=True, in_errors_extra_ratio=0.0)
    d = compute_windows(table).deltas
    total = d["alignment_errors"] + d["fcs_errors"] + d["frame_too_longs"] + d["mac_receive_errors"]
    np.testing.assert_array_equal(d["in_errors"], total)


def test_full_duplex_ports_count_no_collisions() -> None:
    # RFC 3635: the collision counters "do not increment in full-duplex mode".
    params, table = _ports("duplex_mismatch", dot3=True)
    d = compute_windows(table).deltas
    full = params["half_duplex"].to_numpy() == 0.0
    assert full.any()
    assert np.all(d["late_collisions"][full] == 0)
    assert np.all(d["single_collisions"][full] == 0)


def test_symbol_errors_do_not_count_at_ten_megabit() -> None:
    # RFC 3635 dot3StatsSymbolErrors: "does not increment when operating at 10 Mb/s".
    _, table = _ports("cable_fault", speed_bps=10**7, max_speed_bps=10**7, dot3=True, symbol_mode=0)
    d = compute_windows(table).deltas
    assert np.all(d["symbol_errors"] == 0)
    assert np.any(d["fcs_errors"] > 0)


def test_late_collisions_grow_with_the_load_at_the_half_duplex_end() -> None:
    # The half-duplex end collides with whatever the full-duplex end sends: more receive
    # load, more late collisions per sent frame.
    params, table = _ports("duplex_mismatch", n=2000, dot3=True)
    d = compute_windows(table).deltas
    half = params["half_duplex"].to_numpy() == 1.0
    load = np.log(params["rx_util"].to_numpy()[half])
    late = np.log((d["late_collisions"] / d["out_ucast"])[half])
    seen = np.isfinite(late)
    assert np.corrcoef(load[seen], late[seen])[0, 1] > 0.3


def test_counter32_devices_report_no_hc_counters() -> None:
    _, table = _ports("healthy", hc=False)
    assert not table.present[:, COLUMN_INDEX["ifHCInOctets"]].any()
    assert table.present[:, COLUMN_INDEX["ifInOctets"]].all()
    assert (table.counters[:, COLUMN_INDEX["ifInOctets"]] < 2**32).all()


def test_devices_without_ethernet_counters_leave_them_out() -> None:
    _, table = _ports("healthy", dot3=False)
    assert not table.present[:, COLUMN_INDEX["dot3StatsFCSErrors"]].any()


def test_symbol_errors_are_sometimes_absent_and_sometimes_stuck_at_zero() -> None:
    # Many devices report dot3StatsSymbolErrors as a constant zero or not at all: the prior
    # has both, in every class alike, so the tree cannot learn from it.
    params, table = _ports("cable_fault", n=1000, dot3=True)
    d = compute_windows(table).deltas["symbol_errors"]
    mode = params["symbol_mode"].to_numpy()
    assert np.isnan(d[mode == 1]).all()
    assert (d[mode == 2] == 0).all()
    assert (d[mode == 0] > 0).any()


def test_what_devices_report_is_drawn_alike_for_every_class() -> None:
    # The share of ports without the EtherLike table, without a top speed or without a
    # duplex state may not tell one class from another (within sampling noise).
    for column in ("dot3", "duplex_reported", "media_reported"):
        shares = []
        for verdict in ("healthy", "cable_fault", "congestion"):
            params = sample_parameters([verdict] * 3000, np.random.default_rng(5))
            shares.append(float(np.mean(params[column].astype(bool))))
        assert max(shares) - min(shares) < 0.05, (column, shares)


def test_healthy_ports_carry_the_nuisances_of_real_networks() -> None:
    params = sample_parameters(["healthy"] * 5000, np.random.default_rng(8))
    assert (params["in_discard_ratio"] > 1e-3).any()  # filtering discards
    assert (params["link_changes"] == 2.0).any()  # a single flap
    assert (params["burst_errors"] > 0).any()  # a few errors after a re-seat
    assert (params["rx_bcast_share"] > 0.85).any()  # broadcast-heavy
    ratio = params["tx_util"] / params["rx_util"]
    assert (ratio > 20).any() and (ratio < 1 / 20).any()  # lopsided hosts


def test_the_shifted_ranges_lie_outside_the_training_ones() -> None:
    from linktriage.engine.simulate.ports import SHIFTED, TRAINING

    assert SHIFTED.frame_octets[1] > TRAINING.frame_octets[1]
    assert SHIFTED.windows[0] < TRAINING.windows[0]
    assert SHIFTED.fault_times_objective[0] < TRAINING.fault_times_objective[0]
    assert SHIFTED.missing > TRAINING.missing and SHIFTED.nuisance > TRAINING.nuisance
