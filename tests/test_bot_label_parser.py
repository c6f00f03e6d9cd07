"""Reading what an engineer found from a thread reply."""

from __future__ import annotations

import pytest

from linktriage.bot.label_parser import LabelIntent, Unclear, parse_label
from linktriage.engine.format.answers import Verdict
from linktriage.engine.model.findings import FINDINGS, SOMETHING_ELSE


@pytest.mark.parametrize(
    ("text", "finding"),
    [
        ("crushed patch cord behind the desk", "damaged_cord"),
        ("bad keystone jack in the wall outlet", "bad_jack"),
        ("old Cat5 run with two pairs only", "slow_cabling"),
        ("dirty connector on the SFP, cleaned it", "dirty_connector"),
        ("replaced the SFP", "failing_module"),
        ("LR optic on a 2 m run, added an attenuator", "no_attenuator"),
        ("printer was forced to 100/full, duplex", "speed_duplex_set"),
        ("NAS had jumbo frames, MTU 9000", "mtu_set"),
        ("tx and rx swapped fibers at the patch panel, one-way", "one_fibre"),
        ("nightly backup job saturating the uplink", "link_full"),
        ("false alarm, nothing wrong at the desk", "nothing_found"),
        ("the far-end NIC driver kept resetting", "far_end_device"),
        ("a looped cable between two wall ports", "loop_or_flood"),
        ("flow control on the storage array was sending pause", "pause_sender"),
        ("green ethernet power saving on the desk switch", "far_end_setting"),
    ],
)  # fmt: skip
def test_a_reply_says_what_was_found_in_the_trades_words(text: str, finding: str) -> None:
    # The phrases are common practice of the trade (no standard lists them).
    assert parse_label(text) == LabelIntent(None, text, finding=finding)


@pytest.mark.parametrize(
    ("text", "verdict", "finding", "note"),
    [
        ("cable_fault, crushed patch cord behind the desk", "cable_fault", "damaged_cord",
         "crushed patch cord behind the desk"),
        ("Optic degraded - replaced the module", "optic_degraded", "failing_module",
         "replaced the module"),
        ("fec degraded", "fec_degraded", None, ""),
        ("FEC codewords uncorrectable since Tuesday", "fec_degraded", None,
         "FEC codewords uncorrectable since Tuesday"),
    ],
)  # fmt: skip
def test_a_reply_may_name_a_verdict_as_labels_before_findings_did(
    text: str, verdict: Verdict, finding: str | None, note: str
) -> None:
    assert parse_label(text) == LabelIntent(verdict, note, finding=finding)


def test_each_findings_words_read_back_as_that_finding() -> None:
    # What the menu offers reads back as itself when typed into a thread.
    for f in FINDINGS:
        if f is SOMETHING_ELSE:
            continue
        intent = parse_label(f.words)
        assert isinstance(intent, LabelIntent), f.words
        assert intent.finding == f.id, f.words


@pytest.mark.parametrize("reply", ["confirmed", "+1", "correct, confirmed", "agreed"])
def test_agreeing_alone_is_asked_what_was_found(reply: str) -> None:
    assert parse_label(reply) == Unclear([])


@pytest.mark.parametrize("text", ["going to look now", "incorrect", "not correct", "repaired it?"])
def test_talk_is_not_a_label(text: str) -> None:
    assert parse_label(text) is None


def test_two_readings_as_strong_as_each_other_ask_which() -> None:
    assert parse_label("cable or optic?") == Unclear(
        [], findings=["damaged_cord", "failing_module"]
    )
    assert parse_label("cable_fault or maybe optic_degraded") == Unclear(
        ["cable_fault", "optic_degraded"]
    )


def test_a_digest_reply_names_its_link_by_number_or_name() -> None:
    assert parse_label("3: duplex forced on the printer") == LabelIntent(
        None, "duplex forced on the printer", item=3, finding="speed_duplex_set"
    )
    names = [("lark-east-idf2", "port14"), ("lark-core1", "up3")]
    assert parse_label("lark-core1 up3 swapped fibres one-way", names=names) == LabelIntent(
        None, "swapped fibres one-way", device="lark-core1", port="up3", finding="one_fibre"
    )


def test_mentions_are_not_read_as_words() -> None:
    assert parse_label("<@U0CABLE> crushed cord") == LabelIntent(
        None, "crushed cord", finding="damaged_cord"
    )


@pytest.mark.parametrize(
    ("text", "negated"),
    [
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
    # "backup job" alone would read as a full link; negated here, the reply found nothing.
    text = "not congestion, the backup job is fine, false alarm"
    assert parse_label(text) == LabelIntent(
        None, text, finding="nothing_found", ruled_out=frozenset({"congestion"})
    )
    text = "not duplex: a crushed patch cord"
    assert parse_label(text) == LabelIntent(None, text, finding="damaged_cord")
    text = "not a cable fault, the far-end NIC was bad"
    assert parse_label(text) == LabelIntent(
        None, text, finding="far_end_device", ruled_out=frozenset({"cable_fault"})
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
def test_a_negated_confirmation_is_not_read_as_anything(reply: str) -> None:
    # "can't confirm" and "cannot confirm" were once stored as confirmations. Any negation
    # keeps a reply from agreeing (common usage); it says nothing found either.
    assert parse_label(reply) is None
