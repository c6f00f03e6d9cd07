"""Reading what an engineer found from a thread reply."""

from __future__ import annotations

import pytest

from linktriage.bot.label_parser import LabelIntent, Unclear, parse_label
from linktriage.engine.verdicts import Verdict


@pytest.mark.parametrize(
    ("text", "verdict", "note"),
    [
        ("cable_fault, crushed patch cord behind the desk", Verdict.CABLE_FAULT,
         "crushed patch cord behind the desk"),
        ("crushed patch cord behind the desk", Verdict.CABLE_FAULT,
         "crushed patch cord behind the desk"),
        ("dirty connector on the SFP, cleaned it", Verdict.OPTIC_DEGRADED,
         "dirty connector on the SFP, cleaned it"),
        ("Optic degraded - replaced the module", Verdict.OPTIC_DEGRADED, "replaced the module"),
        ("printer was forced to 100/full, duplex", Verdict.DUPLEX_MISMATCH,
         "printer was forced to 100/full, duplex"),
        ("NAS had jumbo frames, MTU 9000", Verdict.MTU_MISMATCH, "NAS had jumbo frames, MTU 9000"),
        ("tx and rx swapped fibers at the patch panel, one-way", Verdict.UNIDIRECTIONAL,
         "tx and rx swapped fibers at the patch panel, one-way"),
        ("nightly backup job saturating the uplink", Verdict.CONGESTION,
         "nightly backup job saturating the uplink"),
        ("false alarm, nothing wrong at the desk", Verdict.HEALTHY,
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
    assert parse_label("cable or optic?") == Unclear([Verdict.CABLE_FAULT, Verdict.OPTIC_DEGRADED])
    assert parse_label("cable_fault or maybe optic_degraded") == Unclear(
        [Verdict.CABLE_FAULT, Verdict.OPTIC_DEGRADED]
    )


def test_a_digest_reply_names_its_link_by_number_or_name() -> None:
    assert parse_label("3: duplex forced on the printer") == LabelIntent(
        Verdict.DUPLEX_MISMATCH, "duplex forced on the printer", item=3
    )
    names = [("lark-east-idf2", "port14"), ("lark-core1", "up3")]
    assert parse_label("lark-core1 up3 swapped fibres one-way", names=names) == LabelIntent(
        Verdict.UNIDIRECTIONAL, "swapped fibres one-way", device="lark-core1", port="up3"
    )


def test_mentions_are_not_read_as_words() -> None:
    assert parse_label("<@U0CABLE> confirmed") == LabelIntent(None, "confirmed")


@pytest.mark.parametrize(
    ("text", "negated"),
    [
        ("not a cable fault, the far-end NIC was bad", [Verdict.CABLE_FAULT]),
        ("wasn't duplex", [Verdict.DUPLEX_MISMATCH]),
        ("cable fault? no.", [Verdict.CABLE_FAULT]),
        ("no congestion here", [Verdict.CONGESTION]),
        ("not congestion, the backup job is fine", [Verdict.CONGESTION]),
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
        Verdict.HEALTHY, "not congestion, the backup job is fine, false alarm"
    )
    assert parse_label("not duplex: a crushed patch cord") == LabelIntent(
        Verdict.CABLE_FAULT, "not duplex: a crushed patch cord"
    )
    assert parse_label("it wasn't the cable_fault, optic_degraded") == LabelIntent(
        Verdict.OPTIC_DEGRADED, "it wasn't the cable_fault"
    )
