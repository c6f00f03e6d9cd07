"""Text from outside shown safely: what acts or hides is drawn as its code point."""

from __future__ import annotations

from linktriage.printable import printable


def test_characters_that_act_or_hide_are_shown_by_their_code_point() -> None:
    assert printable("Gi1/0/14 \u00fcbergabe") == "Gi1/0/14 \u00fcbergabe"
    assert printable("port\u200b14") == "port<U+200B>14"  # zero-width space
    assert printable("sw\x1b[2J") == "sw<U+001B>[2J"  # clears the screen
    assert printable("up1\u202egnp") == "up1<U+202E>gnp"  # right-to-left override
    assert printable("p1\nrow") == "p1<U+000A>row"
