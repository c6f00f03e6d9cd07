"""The words around a diagnosis: never an all-clear for what was not read or judged."""

from __future__ import annotations

from linktriage.render.words import coverage_words


def test_a_list_of_suspects_is_an_all_clear_only_when_everything_was_read_and_judged() -> None:
    assert coverage_words(0, 90, {}, {}) == "No suspects among the 90 ports judged."
    partial = coverage_words(2, 80, {"insufficient_traffic": 7, "link_down": 1}, {})
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
