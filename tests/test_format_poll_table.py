"""The poll table: columns of snapshots, joined from chunks without holding them twice."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.prior import simulate_prior


def assert_same(a: PollTable, b: PollTable) -> None:
    assert len(a) == len(b)
    for name in ("device", "port", "oper_status"):
        assert getattr(a, name).tolist() == getattr(b, name).tolist(), name
    for name in ("time", "counters", "present", "line"):
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name), err_msg=name)
    for group in ("state", "optics"):
        for key, values in getattr(a, group).items():
            np.testing.assert_array_equal(values, getattr(b, group)[key], err_msg=key)


@pytest.fixture(scope="module")
def table() -> PollTable:
    polls, _ = simulate_prior(400, np.random.default_rng(3))
    return polls


@pytest.mark.parametrize("sizes", [[1], [7, 0, 300], [1024, 1], [5000]])
def test_a_table_grown_from_chunks_holds_the_rows_of_the_chunks_in_order(
    table: PollTable, sizes: list[int]
) -> None:
    bounds = np.cumsum([0, *sizes]).clip(0, len(table))
    chunks = [table.take(np.arange(a, b)) for a, b in itertools.pairwise(bounds)]
    grown = PollTable.grown(iter(chunks))
    assert_same(grown, PollTable.concat(chunks))
    assert grown.counters.flags.c_contiguous and grown.counters.flags.owndata


def test_a_table_grown_from_no_chunks_is_empty() -> None:
    assert len(PollTable.grown(iter([]))) == 0
