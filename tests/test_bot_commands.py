"""What people type after /triage, and what it means."""

from __future__ import annotations

import pytest

from linktriage.bot.commands import (
    DEFAULT_HISTORY_S,
    DiagnosePort,
    ListSuspects,
    ShowHelp,
    ShowHistory,
    ShowModel,
    ShowTree,
    parse,
    span_seconds,
)
from linktriage.errors import CommandError
from linktriage.network.watched import BEHIND


@pytest.mark.parametrize(
    ("text", "command"),
    [
        ("lark-east-idf2 port14", DiagnosePort("lark-east-idf2", "port14")),
        ("  idf2   Gi1/0/14 ", DiagnosePort("idf2", "Gi1/0/14")),
        ("/triage lark-core1 up3", DiagnosePort("lark-core1", "up3")),
        ("suspects", ListSuspects(None)),
        ("Suspects annex", ListSuspects("annex")),
        ("model", ShowModel()),
        ("history idf2 port14", ShowHistory("idf2", "port14", DEFAULT_HISTORY_S)),
        ("History lark-core1 up3 90m", ShowHistory("lark-core1", "up3", 5400.0)),
        ("tree lark-core1 up3", ShowTree("lark-core1", "up3")),
        ("", ShowHelp()),
        ("help", ShowHelp()),
        ("@linktriage lark-east-idf2 port14", DiagnosePort("lark-east-idf2", "port14")),
        ("<@U0LTBOT> suspects annex", ListSuspects("annex")),
        ("<@U0LTBOT|linktriage> lark-core1 up3", DiagnosePort("lark-core1", "up3")),
        ("@LinkTriage", ShowHelp()),
        # Names as typed; the network settles what they name (network.watched).
        ("idf2 Gi1/0/5", DiagnosePort("idf2", "Gi1/0/5")),
        ("lark-circ-sw1 xe-0/0/1", DiagnosePort("lark-circ-sw1", "xe-0/0/1")),
        ("10.20.0.5 port14", DiagnosePort("10.20.0.5", "port14")),
        ("lark-core1.mgmt.example up3", DiagnosePort("lark-core1.mgmt.example", "up3")),
        # IPv6 addresses as RFC 4291 section 2.2 writes them, an IPv4 address inside one too.
        ("2001:db8:20::5 Te1/1/1", DiagnosePort("2001:db8:20::5", "Te1/1/1")),
        ("2001:DB8:0:0:0:0:0:5 Po1", DiagnosePort("2001:DB8:0:0:0:0:0:5", "Po1")),
        ("::ffff:10.20.0.5 port14", DiagnosePort("::ffff:10.20.0.5", "port14")),
        ("history 2001:db8::5 Gi1/0/5 6h", ShowHistory("2001:db8::5", "Gi1/0/5", 21_600.0)),
        # The port behind which LLDP hears a neighbor.
        ("port-of lark-circ-prn1", DiagnosePort(BEHIND, "lark-circ-prn1")),
        ("/triage Port-Of lark-circ-prn1", DiagnosePort(BEHIND, "lark-circ-prn1")),
        ("history port-of lark-circ-prn1 6h", ShowHistory(BEHIND, "lark-circ-prn1", 21_600.0)),
        ("tree port-of lark-circ-prn1", ShowTree(BEHIND, "lark-circ-prn1")),
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
        ("history lark-core1", "`history` takes a device, a port and how far back"),
        ("history lark-core1 up3 6h now", "`history` takes a device, a port and how far back"),
        ("history lark-core1 up3 yesterday", "is not a span of time"),
        ("history http://x up3", "is not a device or port name"),
        ("tree lark-core1 up3 6h", "`tree` takes a device and a port"),
        ("http://10.0.0.1/ x", "is not a device or port name"),
        ("port1 <@U123>", "is not a device or port name"),
        ("port-of", "`port-of` takes the name LLDP gives the far end"),
        ("port-of lark-circ-prn1 eth0", "`port-of` takes the name LLDP gives the far end"),
        ("port-of <@U123>", "is not a device or port name"),
        # ":" makes a device word only as part of an IPv6 address.
        ("10.20.0.5:161 port1", "is not a device or port name"),
        ("[2001:db8::5] port1", "is not a device or port name"),
        ("2001:db8::5/64 port1", "is not a device or port name"),
        ("2001:db8::5%eth0 port1", "is not a device or port name"),
        ("2001:db8:::5 port1", "is not a device or port name"),
        ("fe80::1::2 port1", "is not a device or port name"),
        ("lark:core1 up3", "is not a device or port name"),
    ],
)
def test_malformed_text_gets_a_short_answer_with_usage(text: str, complaint: str) -> None:
    with pytest.raises(CommandError, match=complaint) as caught:
        parse(text)
    assert caught.value.hint is not None and "/triage DEVICE PORT" in caught.value.hint
    assert "/triage port-of NEIGHBOR" in caught.value.hint


def test_only_a_leading_mention_of_the_bot_is_taken_away() -> None:
    with pytest.raises(CommandError, match="is not a device or port name"):
        parse("lark-core1 <@U0LTBOT>")
    with pytest.raises(CommandError, match="is not a device or port name"):
        parse("@someone up3")  # someone else's name typed out is not the bot's


@pytest.mark.parametrize(
    ("text", "seconds"),
    [("30s", 30.0), ("90m", 5400.0), ("24h", 86_400.0), ("1.5h", 5400.0), ("3d", 259_200.0)],
)
def test_spans_of_time_read_as_people_write_them(text: str, seconds: float) -> None:
    assert span_seconds(text) == seconds


@pytest.mark.parametrize("text", ["0h", "h", "-1h", "24", "2 weeks", ""])
def test_a_span_that_is_not_one_is_refused(text: str) -> None:
    with pytest.raises(CommandError, match="is not a span of time"):
        span_seconds(text)
