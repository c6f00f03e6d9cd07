"""What people type after /triage, and what it means."""

from __future__ import annotations

import pytest

from linktriage.bot.commands import DiagnosePort, ListSuspects, ShowHelp, ShowModel, parse
from linktriage.errors import CommandError


@pytest.mark.parametrize(
    ("text", "command"),
    [
        ("lark-east-idf2 port14", DiagnosePort("lark-east-idf2", "port14")),
        ("  idf2   Gi1/0/14 ", DiagnosePort("idf2", "Gi1/0/14")),
        ("/triage lark-core1 up3", DiagnosePort("lark-core1", "up3")),
        ("suspects", ListSuspects(None)),
        ("Suspects annex", ListSuspects("annex")),
        ("model", ShowModel()),
        ("", ShowHelp()),
        ("help", ShowHelp()),
        ("@linktriage lark-east-idf2 port14", DiagnosePort("lark-east-idf2", "port14")),
        ("<@U0LTBOT> suspects annex", ListSuspects("annex")),
        ("<@U0LTBOT|linktriage> lark-core1 up3", DiagnosePort("lark-core1", "up3")),
        ("@LinkTriage", ShowHelp()),
    ],
)
def test_commands(text: str, command: object) -> None:
    assert parse(text) == command


@pytest.mark.parametrize(
    ("text", "complaint"),
    [
        ("lark-east-idf2", "Name one device and one port"),
        ("a b c", "Name one device and one port"),
        ("suspects a b", "at most one site"),
        ("model now", "nothing after it"),
        ("http://10.0.0.1/ x", "is not a device or port name"),
        ("port1 <@U123>", "is not a device or port name"),
    ],
)
def test_malformed_text_gets_a_short_answer_with_usage(text: str, complaint: str) -> None:
    with pytest.raises(CommandError, match=complaint) as caught:
        parse(text)
    assert caught.value.hint is not None and "/triage DEVICE PORT" in caught.value.hint


def test_only_a_leading_mention_of_the_bot_is_taken_away() -> None:
    with pytest.raises(CommandError, match="is not a device or port name"):
        parse("lark-core1 <@U0LTBOT>")
    with pytest.raises(CommandError, match="is not a device or port name"):
        parse("@someone up3")  # someone else's name typed out is not the bot's
