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
        (words.suspects_fallback("Digest", 1), "Digest: 1 suspect link"),
    ],
)
def test_counts_of_one_are_said_in_the_singular(said: str, expected: str) -> None:
    assert said == expected
