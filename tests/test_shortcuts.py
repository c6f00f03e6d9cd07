"""The verdicts do not follow what is not evidence: on held-out simulated ports, hiding or
perturbing a reading no verdict rests on moves no verdict."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace

import numpy as np
import pytest

from linktriage.engine.diagnosis.batch import DiagnosisBatch
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.counters import COLUMN_INDEX, QUANTITIES
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.prior import simulate_prior

HELD_OUT_SEED = 77_001  # not the packaged model's training seed


def _without(table: PollTable, *names: str) -> PollTable:
    present = table.present.copy()
    for name in names:
        present[:, COLUMN_INDEX[name]] = False
    return replace(table, present=present)


def _state(table: PollTable, field: str, keep: Callable[[np.ndarray], np.ndarray]) -> PollTable:
    values = table.state[field]
    return replace(table, state={**table.state, field: np.where(keep(values), values, np.nan)})


def _symbols_stuck_at_zero(table: PollTable) -> PollTable:
    counters = table.counters.copy()
    counters[:, COLUMN_INDEX["dot3StatsSymbolErrors"]] = 0
    return replace(table, counters=counters)


def _counter32_beside_counter64(table: PollTable) -> PollTable:
    counters, present = table.counters.copy(), table.present.copy()
    for q in QUANTITIES:
        if q.hc is not None and q.c32 is not None and q.hc.startswith("ifHC"):
            wide, narrow = COLUMN_INDEX[q.hc], COLUMN_INDEX[q.c32]
            has = present[:, wide]
            counters[has, narrow] = counters[has, wide] & np.uint64(0xFFFFFFFF)
            present[has, narrow] = True
    return replace(table, counters=counters, present=present)


def _other_start_values(table: PollTable) -> PollTable:
    # A counter has no defined initial value (RFC 2578 section 7.1.6): only differences count.
    counters = table.counters + np.uint64(12_345_678_901)
    narrow = np.array([name.startswith(("if", "dot3", "ether")) and "HC" not in name
                       for name in COLUMN_INDEX])  # fmt: skip
    counters[:, narrow] &= np.uint64(0xFFFFFFFF)
    return replace(table, counters=counters)


def _cool_readings_unreported(table: PollTable) -> PollTable:
    optics = dict(table.optics)
    cool = ~(optics["temperature_c"] > 70.0)
    optics["temperature_c"] = np.where(cool, np.nan, optics["temperature_c"])
    # Bias is evidence only past its alarm thresholds (SNAPSHOT-FORMAT 1.2): within them, or
    # with no thresholds, it may go unreported.
    inside = ~(optics["bias_ma"] > optics["bias_high_alarm_ma"]) & ~(
        optics["bias_ma"] < optics["bias_low_alarm_ma"]
    )
    optics["bias_ma"] = np.where(inside, np.nan, optics["bias_ma"])
    return replace(table, optics=optics)


PERTURBATIONS: dict[str, Callable[[PollTable], PollTable]] = {
    "symbol errors not reported": lambda t: _without(t, "dot3StatsSymbolErrors"),
    "symbol errors stuck at zero": _symbols_stuck_at_zero,
    "PoE state not reported": lambda t: _state(t, "poe", lambda v: np.zeros(len(v), bool)),
    "MTU of 1500 not reported": lambda t: _state(t, "mtu", lambda v: v != 1500),
    "copper medium not reported": lambda t: _state(t, "fiber", lambda v: v != 0.0),
    "full duplex not reported": lambda t: _state(t, "half_duplex", lambda v: v != 0.0),
    "top speed not reported where it is the speed": lambda t: _state(
        t, "max_speed_bps", lambda v: v != t.state["speed_bps"]
    ),
    "discontinuity times not reported": lambda t: _state(
        t, "discontinuity", lambda v: np.zeros(len(v), bool)
    ),
    # (Broadcast and multicast are no longer interchangeable: since format 1.2 broadcasts
    # are evidence of a storm, and a steady multicast stream its look-alike.)
    "Counter32 forms beside the Counter64 ones": _counter32_beside_counter64,
    "other counter start values": _other_start_values,
    "module temperature and bias within their alarms not reported": _cool_readings_unreported,
}


@pytest.fixture(scope="module")
def held_out() -> PollTable:
    polls, _ = simulate_prior(4000, np.random.default_rng(HELD_OUT_SEED))
    return polls


@pytest.fixture(scope="module")
def baseline(held_out: PollTable, model: Model) -> DiagnosisBatch:
    return diagnose(held_out, model)


@pytest.mark.parametrize("name", sorted(PERTURBATIONS))
def test_hiding_what_is_not_evidence_moves_no_verdict(
    name: str, held_out: PollTable, baseline: DiagnosisBatch, model: Model
) -> None:
    perturbed = diagnose(PERTURBATIONS[name](held_out), model)
    assert perturbed.device == baseline.device and perturbed.port == baseline.port
    moved = [
        (baseline.port[i], baseline.verdict[i], perturbed.verdict[i])
        for i in range(len(baseline))
        if perturbed.verdict[i] != baseline.verdict[i]
    ]
    assert moved == [], moved[:5]
    assert perturbed.confidence == baseline.confidence
