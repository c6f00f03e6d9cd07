"""The words around a diagnosis: never an all-clear for what was not read or judged."""

from __future__ import annotations

import pytest

from linktriage.render import words
from linktriage.render.words import coverage_words, what_changed


def test_a_list_of_suspects_is_an_all_clear_only_when_everything_was_read_and_judged() -> None:
    assert coverage_words(0, 90, {}, {}) == "No suspects among the 90 ports judged."
    partial = coverage_words(2, 80, {"too quiet to judge": 7, "down": 1}, {})
    assert partial == (
        "2 suspect links among 80 ports judged; 8 ports not judged (7 too quiet to judge, 1 down)."
    )
    unread = coverage_words(0, 40, {}, {"lark-west-idf1": "no answer within 2 s"})
    assert unread == (
        "No suspects among the 40 ports judged; 1 device not read (lark-west-idf1: no answer "
        "within 2 s)."
    )
    nothing = coverage_words(0, 0, {}, {"a": "refused", "b": "no answer"})
    assert nothing.startswith("Nothing was read: 2 devices could not be read (a: refused; b:")


def _answer(verdict: str, title: str, said: str) -> dict[str, object]:
    evidence = [{"feature": "ber_over_objective", "said": said}]
    return {"verdict": verdict, "title": title, "evidence": evidence}


def test_a_check_again_says_what_the_verdict_was_and_what_moved() -> None:
    before = _answer("cable_fault", "cable or connector fault", "49 errored frames")
    after = _answer("healthy", "healthy", "no errored frames")
    said = what_changed(before, 1000.0, after, 1600.0)
    assert said == (
        "Checked again 10 min after the first answer: was cable or connector fault, now "
        "healthy. Then \u2192 now: 49 errored frames \u2192 no errored frames."
    )


def test_a_check_again_that_finds_the_same_says_so() -> None:
    same = _answer("cable_fault", "cable or connector fault", "49 errored frames")
    assert what_changed(same, 0.0, same, 3 * 3600.0).endswith(
        "3.0 h after the first answer: still cable or connector fault. "
        "The readings it rests on read the same."
    )


@pytest.mark.parametrize(
    ("said", "expected"),
    [
        (words.window_fact("0", 1), "window 0 s over 1 poll"),
        (words.window_fact("300", 2), "window 300 s over 2 polls"),
        (words.diagnosed(1, 1, 1), "1 snapshot of 1 port diagnosed; 1 line skipped"),
        (words.diagnosed(3, 2, 0), "3 snapshots of 2 ports diagnosed; 0 lines skipped"),
        (words.wrote_snapshots(1, "sw1", 1), "wrote 1 snapshot of sw1 in 1 poll"),
        (words.wrote_rows(1, "x.csv"), "wrote 1 labelled row to x.csv"),
        (words.answers_in("sw1", 0.5, 1), "sw1: answers in 0.50 s with 1 port"),
        (words.devices_ok(1), "1 device ok"),
        (words.set_up_wrongly(1, 3), "1 of 3 devices is set up wrongly"),
        (words.inventory_state("inv.toml", 1), "inventory: inv.toml, 1 device"),
        (words.kept_version("abc", 1, current=True), "  * kept abc: 1 label"),
        (
            words.labels_summary(1, 1, 0, 0, 0),
            "1 label: 1 counting, 0 replaced by their author's later one, 0 on 0 disputed answers",
        ),
        (
            words.labels_summary(3, 2, 1, 1, 1),
            "3 labels: 2 counting, 1 replaced by their author's later one, 1 on 1 disputed answer",
        ),
        (words.suspects_fallback("Digest", 1), "Digest: 1 suspect link"),
        (
            words.device_setup("sw1", "annex", "snmp", "10.0.0.1", 1, "ok"),
            "sw1 (annex): snmp at 10.0.0.1, 1 port listed: ok",
        ),
    ],
)
def test_counts_of_one_are_said_in_the_singular(said: str, expected: str) -> None:
    assert said == expected


def test_what_training_learnt_is_said_in_the_singular_for_one() -> None:
    said = words.learnt(1, 1, 1, 1, 0.9, "abc", 0.8, True)
    assert said == (
        "learnt from 1 label (1 older one left out) (1 answer held out: their labels "
        "disagree); on 1 held out the candidate scores 0.90, the current model abc 0.80: "
        "promoted"
    )
