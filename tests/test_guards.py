"""Guards: nothing to measure is link_down or no_data; too few frames is
insufficient_traffic only when no state reading or significant count allows a verdict; a port
that is not up is, in SNAPSHOT-FORMAT 1.2's order, admin_down, port_disabled, poe_fault, then
link_down; PoE faults are read from RFC 3621 status and counters, up or not."""

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
    measured = measure(windows).table
    return apply_guards(windows, allowed(measured), measured)[0]


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
    measured = measure(windows).table
    assert apply_guards(windows, allowed(measured), measured)[0] == "no_data"


def test_one_poll_that_reads_a_state_answers_by_that_state() -> None:
    # SNAPSHOT-FORMAT 1.2: no_data only where none of the states before the tree is read.
    for fields, verdict in (
        ({"admin_status": "down"}, "admin_down"),
        ({"disabled_reason": "err-disabled: link flap"}, "port_disabled"),
        ({"poe_status": {"detection": "fault"}}, "poe_fault"),
        ({}, "link_down"),
    ):
        one = polls(line(counters={"ifHCInUcastPkts": 1}, oper_status="down", **fields))
        windows = compute_windows(one)
        measured = measure(windows).table
        assert apply_guards(windows, allowed(measured), measured)[0] == verdict, fields


BUSY = quiet(400_000)
DOWN = {"oper_status": "down"}


def test_a_port_shut_on_purpose_is_admin_down_before_anything_else() -> None:
    # SNAPSHOT-FORMAT 1.2: admin_down first, even with a reason and a PoE fault read.
    assert guard(BUSY, admin_status="down", **DOWN) == "admin_down"
    assert guard(BUSY, admin_status="down", disabled_reason="bpdu guard", **DOWN) == "admin_down"
    poe = {"detection": "fault"}
    assert guard(BUSY, admin_status="down", poe_status=poe, **DOWN) == "admin_down"


def test_a_port_the_device_shut_is_port_disabled_with_admin_up_or_unknown() -> None:
    assert guard(BUSY, admin_status="up", disabled_reason="psecure-violation", **DOWN) == (
        "port_disabled"
    )
    assert guard(BUSY, disabled_reason="loop detected", **DOWN) == "port_disabled"


def test_a_port_down_with_no_reason_and_no_power_fault_stays_link_down() -> None:
    assert guard(BUSY, admin_status="up", **DOWN) == "link_down"
    # RFC 3621 "searching": a PoE port with nothing plugged in is not a fault.
    assert guard(BUSY, poe_status={"detection": "searching"}, **DOWN) == "link_down"
    # MPS absent once, then down: a device unplugged (SNAPSHOT-FORMAT 1.2 poe_fault).
    assert guard({**BUSY, "pethPsePortMPSAbsentCounter": 1}, **DOWN) == "link_down"


def test_rfc_3621_fault_status_is_poe_fault_up_or_down() -> None:
    # pethPsePortDetectionStatus fault(4) and otherFault(6), RFC 3621.
    assert guard(BUSY, poe_status={"detection": "fault"}, **DOWN) == "poe_fault"
    assert guard(BUSY, poe_status={"detection": "otherFault"}) == "poe_fault"


def test_overloads_shorts_or_denials_counting_in_the_window_are_poe_fault() -> None:
    for counter in (
        "pethPsePortOverLoadCounter", "pethPsePortShortCounter", "pethPsePortPowerDeniedCounter",
    ):  # fmt: skip
        assert guard({**BUSY, counter: 2}) == "poe_fault", counter
        assert guard({**BUSY, counter: 0}) is None, counter


def test_power_cut_each_time_the_link_comes_back_is_poe_fault() -> None:
    # MPS absent with every return of the link: the switch cuts a device that draws too
    # little, and it reboots (SNAPSHOT-FORMAT 1.2).
    grow = {**BUSY, "pethPsePortMPSAbsentCounter": 3}
    assert guard(grow, link_changes=10, last={"link_changes": 16}) == "poe_fault"
    assert guard(grow, link_changes=10) is None


def test_invalid_signatures_matter_only_while_the_port_stays_down() -> None:
    grow = {**BUSY, "pethPsePortInvalidSignatureCounter": 40}
    assert guard(grow, **DOWN) == "poe_fault"
    # A device up on its own power that does not present a signature is no fault.
    assert guard(grow) is None
