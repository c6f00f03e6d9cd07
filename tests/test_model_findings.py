"""What engineers find at a link, and the verdict each finding teaches the tree.

The pairs of finding and verdict are common practice of Ethernet fault-finding (no standard
lists them); the verdicts' meanings are SNAPSHOT-FORMAT 1.2's: a dirty or damaged connector
on fibre with the light in range is a cable fault, low received light an optic degraded,
FEC correcting over its code's level fec_degraded, a port shut or down a guard's answer.
"""

from __future__ import annotations

import pytest

from linktriage.engine.model.findings import BY_ID, FINDINGS, SOMETHING_ELSE, ranked_for, taught
from linktriage.engine.verdicts import GUARD_VERDICTS, TREE_VERDICTS


@pytest.mark.parametrize(
    ("found", "answered", "teaches"),
    [
        # a finding that bears out the answer teaches it
        ("damaged_cord", "cable_fault", "cable_fault"),
        ("damaged_cord", "link_flapping", "link_flapping"),  # a loose, crushed cord
        ("damaged_cord", "negotiation_degraded", "negotiation_degraded"),  # a broken pair
        ("bad_jack", "cable_fault", "cable_fault"),
        ("slow_cabling", "negotiation_degraded", "negotiation_degraded"),
        ("dirty_connector", "cable_fault", "cable_fault"),  # light in range: 1.2's cable_fault
        ("dirty_connector", "optic_degraded", "optic_degraded"),  # light lost at the face
        ("dirty_connector", "fec_degraded", "fec_degraded"),
        ("failing_module", "optic_degraded", "optic_degraded"),
        ("no_attenuator", "optic_overload", "optic_overload"),
        ("one_fibre", "unidirectional", "unidirectional"),
        ("speed_duplex_set", "duplex_mismatch", "duplex_mismatch"),
        ("speed_duplex_set", "negotiation_degraded", "negotiation_degraded"),
        ("mtu_set", "mtu_mismatch", "mtu_mismatch"),
        ("pause_sender", "pause_flood", "pause_flood"),
        ("loop_or_flood", "broadcast_storm", "broadcast_storm"),
        ("link_full", "congestion", "congestion"),
        ("far_end_setting", "mtu_mismatch", "mtu_mismatch"),
        ("far_end_device", "link_flapping", "link_flapping"),  # a device rebooting
        ("nothing_found", "healthy", "healthy"),
        ("nothing_found", "congestion", "congestion"),  # nothing broken: the link is full
        # a finding that does not bear out the answer corrects it to its own first verdict
        ("damaged_cord", "healthy", "cable_fault"),
        ("failing_module", "cable_fault", "cable_fault"),  # a module can throw FCS errors too
        ("speed_duplex_set", "cable_fault", "duplex_mismatch"),
        ("slow_cabling", "healthy", "negotiation_degraded"),
        ("mtu_set", "healthy", "mtu_mismatch"),
        ("one_fibre", "optic_degraded", "unidirectional"),
        ("no_attenuator", "optic_degraded", "optic_overload"),
        ("link_full", "healthy", "congestion"),
        ("loop_or_flood", "congestion", "broadcast_storm"),
        # ... unless it names no single fault
        ("far_end_setting", "cable_fault", None),
        ("far_end_device", "congestion", None),
        ("nothing_found", "cable_fault", None),  # errors were counted; absence is no cause
        ("something_else", "cable_fault", None),
    ],
)
def test_each_finding_teaches_the_verdict_it_should(
    found: str, answered: str, teaches: str | None
) -> None:
    assert taught(BY_ID[found], answered) == teaches


@pytest.mark.parametrize("guard", GUARD_VERDICTS)
def test_what_is_found_where_a_guard_answered_teaches_the_tree_nothing(guard: str) -> None:
    # A port down, shut, unpowered or unread was never the tree's to answer.
    assert all(taught(f, guard) is None for f in FINDINGS)


def test_a_verdict_ruled_out_is_never_taught() -> None:
    # "not a cable fault: a bad jack" on a cable_fault answer
    assert taught(BY_ID["bad_jack"], "cable_fault", frozenset({"cable_fault"})) == ("link_flapping")
    assert taught(BY_ID["far_end_device"], "cable_fault", frozenset({"cable_fault"})) is None


def test_every_finding_teaches_only_verdicts_the_tree_can_learn() -> None:
    for f in FINDINGS:
        assert set(f.bears_out) <= set(TREE_VERDICTS), f.id
    taught_somewhere = {f.bears_out[0] for f in FINDINGS if f.teaches_first}
    # every fault the tree names can be taught by some finding, healthy by nothing found
    assert set(TREE_VERDICTS) - taught_somewhere <= {"healthy", "fec_degraded", "link_flapping"}
    assert all(any(v in f.bears_out for f in FINDINGS) for v in TREE_VERDICTS), (
        "a verdict no finding bears out could never be taught"
    )


def test_the_menu_offers_what_bears_out_the_answer_first_and_something_else_last() -> None:
    menu = ranked_for("mtu_mismatch")
    assert menu[0] is BY_ID["mtu_set"]  # the one finding that means exactly this
    assert menu[-1] is SOMETHING_ELSE
    assert sorted(f.id for f in menu) == sorted(f.id for f in FINDINGS)
    # Slack's static_select takes at most 100 options of at most 75 characters (Block Kit
    # reference, "Select menu element").
    assert len(menu) <= 100 and all(len(f.words) <= 75 for f in menu)
