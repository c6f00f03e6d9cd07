"""Labels from threads and buttons: stored once per person, checked against who may label,
asked back when unclear, acknowledged only once stored."""

from __future__ import annotations

import sqlite3
from pathlib import Path

import pytest

from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.network.demo import DemoClock, DemoNetwork
from linktriage.render.replies import (
    DiagnosisReply,
    Labelled,
    LabelRefused,
    LabelReply,
)
from linktriage.settings import LabelSettings, Settings
from linktriage.store import Store


def _posted(triage: Triage, text: str) -> DiagnosisReply:
    reply = triage.handle(text, user="U1", channel="C1")
    assert isinstance(reply, DiagnosisReply)
    assert triage.posted(reply, channel="C1", ts="100.1")
    return reply


def test_a_thread_reply_is_stored_once_then_acknowledged(triage: Triage) -> None:
    _posted(triage, "lark-east-idf2 port14")
    text = "cable_fault, crushed patch cord behind the desk"
    first = triage.labels.reply(text, user="U2", channel="C1", thread_ts="100.1", event_key="Ev1")
    assert first == LabelReply("U2", "lark-east-idf2", "port14", "cable_fault", "cable_fault",
                               "crushed patch cord behind the desk", diagnosis_id=1,
                               finding="a damaged patch cord or cable")  # fmt: skip
    retry = triage.labels.reply(text, user="U2", channel="C1", thread_ts="100.1", event_key="Ev1")
    assert retry is None
    (label,) = triage.store.labels()
    assert label.user_id == "U2" and label.note == "crushed patch cord behind the desk"
    assert (label.finding, label.verdict) == ("damaged_cord", "cable_fault")


def test_picking_the_same_finding_twice_stores_one_label_and_tells_only_its_author(
    triage: Triage,
) -> None:
    # A second press once stored a second label, weighted 20 times again.
    reply = _posted(triage, "lark-east-idf2 port14")
    first = triage.labels.button(
        reply.diagnosis_id, "bad_jack", user="U2", channel="C1", event_key="a1"
    )
    again = triage.labels.button(
        reply.diagnosis_id, "bad_jack", user="U2", channel="C1", event_key="a2"
    )
    assert isinstance(first, LabelReply)
    assert isinstance(again, LabelRefused) and again.visibility == "ephemeral"
    assert "already said a bad jack, outlet or patch-panel port" in again.message
    assert len(triage.store.labels()) == 1


def test_a_person_who_changes_their_mind_replaces_their_label(triage: Triage) -> None:
    reply = _posted(triage, "lark-east-idf2 port14")
    said = []
    for n, found in enumerate(["damaged_cord", "speed_duplex_set", "nothing_found"]):
        label = triage.labels.button(
            reply.diagnosis_id, found, user="U2", channel="C1", event_key=f"k{n}"
        )
        assert isinstance(label, LabelReply)
        said.append((label.replaced, label.verdict))
    assert said == [
        (None, "cable_fault"),
        ("a damaged patch cord or cable", "duplex_mismatch"),
        ("speed or duplex set by hand at one end", ""),  # nothing found teaches nothing here
    ]
    assert len(triage.store.labels()) == 3  # all kept for the audit
    answer, channel, ts = triage.labels.answer(reply.diagnosis_id) or pytest.fail("no answer")
    assert (channel, ts) == ("C1", "100.1")
    # one counts: the latest
    assert answer.labels == (Labelled("U2", "", "nothing found: the link is fine"),)


def test_two_people_who_disagree_are_told_and_the_answer_is_marked(triage: Triage) -> None:
    reply = _posted(triage, "lark-east-idf2 port14")
    triage.labels.button(reply.diagnosis_id, "damaged_cord", user="U2", channel="C1", event_key="a")
    other = triage.labels.button(
        reply.diagnosis_id, "speed_duplex_set", user="U3", channel="C1", event_key="b"
    )
    assert isinstance(other, LabelReply) and other.disputed_with == ("cable_fault",)
    answer, _, _ = triage.labels.answer(reply.diagnosis_id) or pytest.fail("no answer")
    assert answer.disputed
    assert answer.labels == (
        Labelled("U2", "cable_fault", "a damaged patch cord or cable"),
        Labelled("U3", "duplex_mismatch", "speed or duplex set by hand at one end"),
    )


def test_two_findings_that_teach_one_verdict_agree(triage: Triage) -> None:
    # A crushed cord and a bad jack are both cable faults: the answer still teaches.
    reply = _posted(triage, "lark-east-idf2 port14")
    triage.labels.button(reply.diagnosis_id, "damaged_cord", user="U2", channel="C1", event_key="a")
    other = triage.labels.button(
        reply.diagnosis_id, "bad_jack", user="U3", channel="C1", event_key="b"
    )
    assert isinstance(other, LabelReply) and other.disputed_with == ()
    answer, _, _ = triage.labels.answer(reply.diagnosis_id) or pytest.fail("no answer")
    assert not answer.disputed


def test_a_finding_said_not_to_be_the_answer_never_teaches_it(triage: Triage) -> None:
    _posted(triage, "lark-east-idf2 port14")  # cable_fault
    text = "not a cable fault, the far-end NIC was bad"
    reply = triage.labels.reply(text, user="U2", channel="C1", thread_ts="100.1", event_key="n")
    assert isinstance(reply, LabelReply)
    assert reply.finding == "the far-end device itself (its port, power or software)"
    assert reply.verdict == ""  # the far-end device says no fault of its own
    (label,) = triage.store.labels()
    assert (label.finding, label.verdict) == ("far_end_device", "")


@pytest.mark.parametrize(
    "text",
    ["wasn't cable", "cable fault? no."],
)
def test_a_reply_that_negates_the_verdict_stores_nothing_and_asks_back(
    triage: Triage, text: str
) -> None:
    _posted(triage, "lark-east-idf2 port14")
    reply = triage.labels.reply(text, user="U2", channel="C1", thread_ts="100.1", event_key=text)
    assert isinstance(reply, LabelRefused)
    assert reply.message.startswith("Not `cable_fault`, then: nothing was recorded.")
    assert triage.store.labels() == []


def test_talk_in_a_thread_and_other_threads_are_left_alone(triage: Triage) -> None:
    _posted(triage, "lark-east-idf2 port14")
    assert (
        triage.labels.reply("on my way", user="U2", channel="C1", thread_ts="100.1", event_key="a")
        is None
    )
    assert (
        triage.labels.reply(
            "cable_fault", user="U2", channel="C1", thread_ts="999.9", event_key="b"
        )
        is None
    )
    assert triage.store.labels() == []


def test_an_unclear_reply_is_asked_about_not_stored(triage: Triage) -> None:
    _posted(triage, "lark-east-idf2 port14")
    reply = triage.labels.reply(
        "cable or optic?", user="U2", channel="C1", thread_ts="100.1", event_key="c"
    )
    assert isinstance(reply, LabelRefused)
    assert "a damaged patch cord or cable or a failing transceiver module" in reply.message
    assert triage.store.labels() == []


def test_only_configured_channels_and_groups_may_label(triage: Triage) -> None:
    triage.labels.settings = Settings(labels=LabelSettings(channels=["C1"], user_groups=["S1"]))
    triage.labels.members_of = lambda group: {"U2"} if group == "S1" else set()
    _posted(triage, "lark-east-idf2 port14")
    outsider = triage.labels.reply(
        "cable_fault", user="U9", channel="C1", thread_ts="100.1", event_key="f"
    )
    assert isinstance(outsider, LabelRefused)
    member = triage.labels.reply(
        "cable_fault", user="U2", channel="C1", thread_ts="100.1", event_key="g"
    )
    assert isinstance(member, LabelReply)
    assert not triage.labels.may_label("U2", "C7")


def test_agreeing_is_asked_what_was_found(triage: Triage) -> None:
    _posted(triage, "lark-east-idf2 port14")
    reply = triage.labels.reply(
        "confirmed", user="U2", channel="C1", thread_ts="100.1", event_key="h"
    )
    assert isinstance(reply, LabelRefused) and "What did you find" in reply.message
    assert triage.store.labels() == []


def test_what_is_found_on_a_port_a_guard_answered_is_kept_and_teaches_nothing(
    triage: Triage,
) -> None:
    _posted(triage, "lark-west-idf1 port9")  # link_down: the tree never answered it
    reply = triage.labels.reply(
        "unplugged cable at the display", user="U2", channel="C1", thread_ts="100.1",
        event_key="h",
    )  # fmt: skip
    assert isinstance(reply, LabelReply) and reply.verdict == ""
    (label,) = triage.store.labels()
    assert (label.finding, label.verdict, label.model_verdict) == ("damaged_cord", "", "link_down")


def test_a_verdict_named_outright_is_stored_as_named_even_on_a_guards_answer(
    triage: Triage,
) -> None:
    # Labels named verdicts before findings; one named now still teaches what it names.
    _posted(triage, "lark-west-idf1 port9")  # link_down
    reply = triage.labels.reply(
        "cable_fault, the cord was cut", user="U2", channel="C1", thread_ts="100.1",
        event_key="v",
    )  # fmt: skip
    assert isinstance(reply, LabelReply) and reply.verdict == "cable_fault"
    (label,) = triage.store.labels()
    assert (label.finding, label.verdict) == ("damaged_cord", "cable_fault")


def test_a_label_that_cannot_be_written_is_not_acknowledged(tmp_path: Path, model: Model) -> None:
    clock = DemoClock(0.0)
    path = tmp_path / "s.sqlite"
    store = Store(f"sqlite:///{path}")
    triage = Triage(
        DemoNetwork(clock=clock), store, model, Settings(), clock=clock, sleep=clock.sleep
    )
    _posted(triage, "lark-east-idf2 port14")
    with sqlite3.connect(path) as conn:
        conn.execute("DROP TABLE labels")
    reply = triage.labels.reply(
        "cable_fault", user="U2", channel="C1", thread_ts="100.1", event_key="i"
    )
    assert isinstance(reply, LabelRefused)
    assert reply.message.startswith("Could not record that label")


def test_a_finding_picked_teaches_the_answer_it_bears_out_else_its_own(triage: Triage) -> None:
    posted = _posted(triage, "lark-east-idf2 port7")  # duplex_mismatch
    bears_out = triage.labels.button(
        posted.diagnosis_id, "speed_duplex_set", user="U3", channel="C1", event_key="btn1"
    )
    assert isinstance(bears_out, LabelReply) and bears_out.verdict == "duplex_mismatch"
    other = triage.labels.button(posted.diagnosis_id, "mtu_set", user="U3",
                                 channel="C1", event_key="btn2")  # fmt: skip
    assert isinstance(other, LabelReply) and other.model_verdict == "duplex_mismatch"
    assert [(label.finding, label.verdict) for label in triage.store.labels()] == [
        ("speed_duplex_set", "duplex_mismatch"),
        ("mtu_set", "mtu_mismatch"),
    ]


def test_an_answer_keeps_its_site_and_what_the_port_serves(triage: Triage) -> None:
    reply = _posted(triage, "lark-east-idf2 port14")
    answer, _, _ = triage.labels.answer(reply.diagnosis_id) or pytest.fail("no answer")
    assert (answer.site, answer.serves) == (reply.site, reply.serves)
    assert answer.record == reply.record


def test_a_digest_thread_labels_the_link_named_by_number(triage: Triage) -> None:
    digest = triage.digests.digest(channel="C1")
    assert triage.posted(digest, channel="C1", ts="200.2")
    third = digest.items[2].record
    reply = triage.labels.reply("3: cable_fault, crushed cord", user="U2", channel="C1",
                               thread_ts="200.2", event_key="d")  # fmt: skip
    assert isinstance(reply, LabelReply)
    assert (reply.device, reply.port) == (third["device"], third["port"])
    vague = triage.labels.reply(
        "cable_fault", user="U2", channel="C1", thread_ts="200.2", event_key="e"
    )
    assert isinstance(vague, LabelRefused) and "Say which link" in vague.message


def test_a_label_on_an_answer_the_link_decided_teaches_the_end_that_shows_it(
    triage: Triage,
) -> None:
    # lark-west-idf1 up1 sends into the broken strand: its own counters look healthy, and
    # the answer (the link's) is one-way. Finding the broken fibre must not teach the tree
    # that clean counters mean one-way: the row kept is the far end's, which receives nothing.
    triage.poller.poll_round()
    reply = _posted(triage, "lark-west-idf1 up1")
    assert reply.record["verdict"] == "unidirectional"
    assert reply.record["own_view"]["verdict"] == "healthy"
    confirmed = triage.labels.button(reply.diagnosis_id, "one_fibre", user="U2", channel="C1",
                                     event_key="b1")  # fmt: skip
    assert isinstance(confirmed, LabelReply)
    (label,) = triage.store.labels()
    assert label.verdict == "unidirectional"
    far = triage.handle("lark-core1 up3")
    assert isinstance(far, DiagnosisReply) and "own_view" not in far.record
    silent = next(q for q in far.record["questions"] if q["feature"] == "quiet_fps")
    assert label.features["quiet_fps"] == pytest.approx(silent["value"])
