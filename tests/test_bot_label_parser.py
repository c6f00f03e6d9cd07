"""Reading what an engineer found from a thread reply."""

from __future__ import annotations

import pytest

from linktriage.bot.label_parser import LabelIntent, Unclear, parse_label
from linktriage.engine.format.answers import Verdict


@pytest.mark.parametrize(
    ("text", "verdict", "note"),
    [
        ("cable_fault, crushed patch cord behind the desk", "cable_fault",
         "crushed patch cord behind the desk"),
        ("crushed patch cord behind the desk", "cable_fault",
         "crushed patch cord behind the desk"),
        ("dirty connector on the SFP, cleaned it", "optic_degraded",
         "dirty connector on the SFP, cleaned it"),
        ("Optic degraded - replaced the module", "optic_degraded", "replaced the module"),
        ("printer was forced to 100/full, duplex", "duplex_mismatch",
         "printer was forced to 100/full, duplex"),
        ("NAS had jumbo frames, MTU 9000", "mtu_mismatch", "NAS had jumbo frames, MTU 9000"),
        ("tx and rx swapped fibers at the patch panel, one-way", "unidirectional",
         "tx and rx swapped fibers at the patch panel, one-way"),
        ("nightly backup job saturating the uplink", "congestion",
         "nightly backup job saturating the uplink"),
        ("false alarm, nothing wrong at the desk", "healthy",
         "false alarm, nothing wrong at the desk"),
    ],
)  # fmt: skip
def test_a_reply_names_a_verdict_and_keeps_the_rest_as_a_note(
    text: str, verdict: Verdict, note: str
) -> None:
    assert parse_label(text) == LabelIntent(verdict, note)


def test_agreeing_confirms_the_bots_verdict() -> None:
    assert parse_label("confirmed, good call") == LabelIntent(None, "confirmed, good call")


@pytest.mark.parametrize("text", ["going to look now", "incorrect", "not correct", "repaired it?"])
def test_talk_is_not_a_label(text: str) -> None:
    assert parse_label(text) is None


def test_two_readings_as_strong_as_each_other_ask_which() -> None:
    assert parse_label("cable or optic?") == Unclear(["cable_fault", "optic_degraded"])
    assert parse_label("cable_fault or maybe optic_degraded") == Unclear(
        ["cable_fault", "optic_degraded"]
    )


def test_a_digest_reply_names_its_link_by_number_or_name() -> None:
    assert parse_label("3: duplex forced on the printer") == LabelIntent(
        "duplex_mismatch", "duplex forced on the printer", item=3
    )
    names = [("lark-east-idf2", "port14"), ("lark-core1", "up3")]
    assert parse_label("lark-core1 up3 swapped fibres one-way", names=names) == LabelIntent(
        "unidirectional", "swapped fibres one-way", device="lark-core1", port="up3"
    )


def test_mentions_are_not_read_as_words() -> None:
    assert parse_label("<@U0CABLE> confirmed") == LabelIntent(None, "confirmed")


@pytest.mark.parametrize(
    ("text", "negated"),
    [
        ("not a cable fault, the far-end NIC was bad", ["cable_fault"]),
        ("wasn't duplex", ["duplex_mismatch"]),
        ("cable fault? no.", ["cable_fault"]),
        ("no congestion here", ["congestion"]),
        ("not congestion, the backup job is fine", ["congestion"]),
    ],
)
def test_a_reply_that_negates_a_verdict_is_asked_back_never_stored_as_it(
    text: str, negated: list[Verdict]
) -> None:
    intent = parse_label(text)
    assert isinstance(intent, Unclear)
    assert intent.negated == negated
    assert not set(negated) & set(intent.candidates)


def test_a_reply_that_negates_one_verdict_and_names_another_is_the_other() -> None:
    # "backup job" alone would read as congestion; negated here, the reply says healthy.
    assert parse_label("not congestion, the backup job is fine, false alarm") == LabelIntent(
        "healthy", "not congestion, the backup job is fine, false alarm"
    )
    assert parse_label("not duplex: a crushed patch cord") == LabelIntent(
        "cable_fault", "not duplex: a crushed patch cord"
    )
    assert parse_label("it wasn't the cable_fault, optic_degraded") == LabelIntent(
        "optic_degraded", "it wasn't the cable_fault"
    )


@pytest.mark.parametrize(
    "reply",
    [
        "can't confirm",
        "cannot confirm",
        "can\u2019t confirm that",
        "cant confirm, still looking",
        "couldn't confirm it",
        "I don't agree",
        "won't confirm yet",
        "unable to confirm",
        "not confirmed",
        "never confirmed",
        "incorrect",
    ],
)
def test_a_negated_confirmation_is_not_stored_as_one(reply: str) -> None:
    # Issue 21: "can't confirm" and "cannot confirm" were stored as confirmations. Any
    # negation keeps a reply from confirming the bot's verdict (common usage).
    assert parse_label(reply) is None


@pytest.mark.parametrize("reply", ["confirmed", "+1", "correct, confirmed", "agreed"])
def test_a_plain_confirmation_still_confirms(reply: str) -> None:
    assert parse_label(reply) == LabelIntent(None, reply)
