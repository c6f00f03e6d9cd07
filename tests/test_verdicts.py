"""Verdict ids, and the checks and cautions each one carries for the port at hand."""

from __future__ import annotations

import pytest

from linktriage.engine.verdicts import (
    GUARD_VERDICTS,
    GUIDES,
    SHORT,
    TREE_VERDICTS,
    Caution,
    Touch,
    Verdict,
    cautions,
    cautions_for,
    next_checks,
)

# The fixed ids of SNAPSHOT-FORMAT's verdict table, in its order.
FORMAT_IDS = [
    "healthy", "cable_fault", "duplex_mismatch", "negotiation_degraded", "mtu_mismatch",
    "optic_degraded", "unidirectional", "congestion", "insufficient_traffic", "link_down",
    "no_data",
]  # fmt: skip


def test_the_ids_are_the_formats_and_split_eight_and_three() -> None:
    assert [v.value for v in Verdict] == FORMAT_IDS
    assert [v.value for v in TREE_VERDICTS] == FORMAT_IDS[:8]
    assert [v.value for v in GUARD_VERDICTS] == FORMAT_IDS[8:]


@pytest.mark.parametrize("verdict", list(Verdict))
def test_every_verdict_has_a_title_a_meaning_and_checks(verdict: Verdict) -> None:
    guide = GUIDES[verdict]
    assert guide.title and guide.meaning
    assert next_checks(verdict, fiber=False)
    assert next_checks(verdict, fiber=True)


@pytest.mark.parametrize(
    "verdict",
    [Verdict.CABLE_FAULT, Verdict.UNIDIRECTIONAL, Verdict.LINK_DOWN, Verdict.OPTIC_DEGRADED],
)
def test_fiber_work_always_warns_never_to_look_into_the_fiber(verdict: Verdict) -> None:
    assert Caution.FIBER_EYES.value in cautions(verdict, poe=False, fiber=True)


def test_copper_cable_work_on_a_poe_port_warns_that_unplugging_powers_off() -> None:
    with_poe = cautions(Verdict.CABLE_FAULT, poe=True, fiber=False)
    without = cautions(Verdict.CABLE_FAULT, poe=False, fiber=False)
    assert Caution.POE_POWER.value in with_poe
    assert Caution.POE_POWER.value not in without
    assert Caution.FIBER_EYES.value not in without


def test_an_unknown_medium_is_treated_as_possibly_fiber() -> None:
    assert Caution.FIBER_EYES.value in cautions(Verdict.CABLE_FAULT, poe=None, fiber=None)


def test_cable_work_mentions_ladders_and_mains_and_defers_to_local_codes() -> None:
    notes = cautions(Verdict.CABLE_FAULT, poe=False, fiber=False)
    assert Caution.WORK_AT_HEIGHT.value in notes
    assert Caution.MAINS.value in notes
    assert notes[-1] == Caution.LOCAL_CODES.value


@pytest.mark.parametrize("verdict", list(Verdict))
def test_any_caution_list_ends_by_deferring_to_local_codes(verdict: Verdict) -> None:
    notes = cautions(verdict, poe=True, fiber=True)
    assert not notes or notes[-1] == Caution.LOCAL_CODES.value


def test_nothing_to_touch_means_no_cautions() -> None:
    for verdict in (Verdict.HEALTHY, Verdict.CONGESTION, Verdict.NO_DATA):
        assert cautions(verdict, poe=True, fiber=True) == []


def test_fiber_cable_checks_speak_of_cleaning_and_scopes_not_pairs() -> None:
    fiber = " ".join(next_checks(Verdict.CABLE_FAULT, fiber=True))
    copper = " ".join(next_checks(Verdict.CABLE_FAULT, fiber=False))
    assert "fiber scope" in fiber
    assert "pairs" in copper and "pairs" not in fiber


def _first(verdict: Verdict, count: int, *, poe: bool, fiber: bool) -> list[Caution]:
    checks = next_checks(verdict, fiber=fiber)[:count]
    return cautions_for(checks, cautions(verdict, poe=poe, fiber=fiber))


def test_looking_needs_no_caution_and_unplugging_a_poe_port_needs_its_caution_first() -> None:
    # The first copper cable check only looks at the cords; the second swaps one, which
    # switches off what a PoE port feeds (IEEE 802.3af/at/bt power; common practice to
    # agree a time first).
    assert _first(Verdict.CABLE_FAULT, 1, poe=True, fiber=False) == []
    assert _first(Verdict.CABLE_FAULT, 2, poe=True, fiber=False) == [
        Caution.POE_POWER,
        Caution.SERVICE_BREAK,
        Caution.LOCAL_CODES,
    ]
    assert Caution.POE_POWER not in _first(Verdict.CABLE_FAULT, 2, poe=False, fiber=False)


def test_opening_a_fiber_end_brings_the_eye_caution_to_the_first_screen() -> None:
    # IEC 60825-1 laser classes: never look into a fiber end (the caution's own source).
    assert Caution.FIBER_EYES in _first(Verdict.OPTIC_DEGRADED, 2, poe=False, fiber=True)
    assert _first(Verdict.OPTIC_DEGRADED, 1, poe=False, fiber=True) == []  # a comparison


def test_a_caution_the_port_does_not_need_is_never_added_by_a_check() -> None:
    for verdict in Verdict:
        for fiber in (False, True):
            for poe in (False, True):
                whole = cautions(verdict, poe=poe, fiber=fiber)
                first = _first(verdict, 3, poe=poe, fiber=fiber)
                assert {c.value for c in first} <= set(whole), verdict


#: Words of a check that handles a cord, connector or module (common practice): each such
#: check must say it unplugs, so that its cautions come with it.
HANDLING = ("swap", "re-seat", "seated", "clean", "plugged", "permanent link", "each pair",
            "light source", "replace that transceiver", "patched", "terminations")  # fmt: skip


def test_every_check_that_handles_a_cord_or_module_says_so() -> None:
    for verdict, guide in GUIDES.items():
        for check in (*guide.checks, *(guide.fiber_checks or ())):
            if any(word in check.text.lower() for word in HANDLING):
                assert Touch.UNPLUG in check.touches, (verdict, check.text)


def test_every_caution_has_a_short_form_for_the_first_screen() -> None:
    assert set(SHORT) == set(Caution)
    assert all(len(text) <= 160 for text in SHORT.values())
