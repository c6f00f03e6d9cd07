"""Guards: nothing to measure is link_down or no_data; too few frames is
insufficient_traffic only when no state reading or significant count allows a verdict."""

from __future__ import annotations

from typing import Any

from linktriage.engine.guards import apply_guards
from linktriage.engine.measure.measures import MIN_ERROR_FRAMES, measure
from linktriage.engine.measure.window import compute_windows
from linktriage.engine.physics import allowed

from helpers import grown, line, polls

GIG = {"speed_bps": 10**9, "max_speed_bps": 10**9, "duplex": "full", "media": "copper"}


def guard(grow: dict[str, int], **fields: Any) -> object:
    windows = compute_windows(polls(*grown(grow, **{**GIG, **fields})))
    return apply_guards(windows, allowed(measure(windows).table))[0]


def quiet(frames: int, errors: int = 0) -> dict[str, int]:
    return {"ifHCInUcastPkts": frames, "ifHCOutUcastPkts": frames, "dot3StatsFCSErrors": errors}


def test_a_quiet_clean_port_is_not_called_healthy() -> None:
    assert guard(quiet(10_000)) == "insufficient_traffic"


def test_a_busy_clean_port_goes_to_the_tree() -> None:
    # 3 / 1e-5 = 300,000 received frames bound a clean port's ratio at 1 in 100,000.
    assert guard(quiet(310_000)) is None


def test_a_quiet_port_with_many_errors_goes_to_the_tree() -> None:
    assert guard(quiet(2_000, errors=200)) is None


def test_a_handful_of_errors_on_a_quiet_port_is_not_enough() -> None:
    # Fewer errored frames than MIN_ERROR_FRAMES are an event, not a rate, whatever the test
    # says of them (one in 2,000 at 1 Gb/s is P = 0.16% against the 1e-10 objective).
    assert guard(quiet(2_000, errors=1)) == "insufficient_traffic"
    assert guard(quiet(2_000, errors=MIN_ERROR_FRAMES - 1)) == "insufficient_traffic"


def test_errors_a_test_shows_over_the_objective_go_to_the_tree_on_a_quiet_port() -> None:
    # 19 errored frames in 2,000 at 1 Gb/s: a frame error ratio near 1%, ten million times
    # what the 1e-10 objective allows (IEEE 802.3 clause 40.1); no count floor of 20 hides it.
    assert guard(quiet(2_000, errors=19)) is None


def test_sent_frames_do_not_vouch_for_the_receive_direction() -> None:
    # Millions sent, a few thousand received: the receive error ratio is not bounded.
    assert guard({"ifHCInUcastPkts": 5_000, "ifHCOutUcastPkts": 5_000_000,
                  "dot3StatsFCSErrors": 0}) == "insufficient_traffic"  # fmt: skip


def test_a_state_reading_answers_however_little_the_traffic() -> None:
    # 100 Mb/s on a gigabit port needs no traffic to be seen.
    assert guard(quiet(50), speed_bps=10**8) is None


def test_a_port_that_is_not_up_is_link_down_whatever_its_traffic() -> None:
    assert guard(quiet(10**7), last={"oper_status": "down"}) == "link_down"


def test_one_poll_is_no_data() -> None:
    windows = compute_windows(polls(line(counters={"ifHCInUcastPkts": 1})))
    assert apply_guards(windows, allowed(measure(windows).table))[0] == "no_data"
