"""The bot's work on the demo network, a real store and simulated time."""

from __future__ import annotations

import sqlite3
from collections.abc import Sequence
from pathlib import Path

import pytest

from linktriage.bot.triage import Triage
from linktriage.diagnosis import Model
from linktriage.errors import PollError
from linktriage.network.demo import DemoClock, DemoNetwork
from linktriage.polls import PollTable
from linktriage.render.replies import (
    DiagnosisReply,
    ErrorReply,
    HelpReply,
    LabelRefused,
    LabelReply,
    ModelReply,
    SuspectsReply,
)
from linktriage.settings import LabelSettings, Settings
from linktriage.store import Store


def test_a_port_with_no_history_gets_two_polls_a_quick_window_apart(triage: Triage) -> None:
    waited: list[float] = []
    sleep = triage.sleep
    triage.gathering.sleep = lambda s: (waited.append(s), sleep(s))[1]  # type: ignore[func-returns-value]
    reply = triage.handle("lark-east-idf2 port14", user="U1", channel="C1")
    assert isinstance(reply, DiagnosisReply)
    assert reply.record["verdict"] == "cable_fault"
    assert waited == [30.0]
    assert reply.record["window_s"] == 30.0
    assert len(triage.store.polls_since(0.0, device="lark-east-idf2", port="port14")) == 2
    stored = triage.store.diagnosis(reply.diagnosis_id)
    assert stored is not None and stored.verdict == "cable_fault"
    assert stored.features["ber_over_objective"] is not None


def test_recent_history_needs_one_fresh_poll_and_no_wait(triage: Triage, clock: DemoClock) -> None:
    triage.gathering.poll_round()
    clock.sleep(300.0)
    triage.gathering.sleep = lambda s: pytest.fail("should not wait")
    reply = triage.handle("lark-core1 up3")
    assert isinstance(reply, DiagnosisReply)
    assert reply.record["verdict"] == "unidirectional"
    assert reply.record["window_s"] == 300.0


def test_a_stored_poll_seconds_old_is_not_a_window(triage: Triage, clock: DemoClock) -> None:
    # Issue 8.6: right after start the poll job has stored one round 2 s ago; answering on a
    # 2 s window would call a busy port "insufficient traffic". Wait out the quick window.
    waited: list[float] = []
    sleep = triage.sleep
    triage.gathering.sleep = lambda s: (waited.append(s), sleep(s))[1]  # type: ignore[func-returns-value]
    triage.gathering.poll_round()
    clock.sleep(2.0)
    reply = triage.handle("lark-east-idf2 port14")
    assert isinstance(reply, DiagnosisReply)
    assert waited == [28.0]
    assert reply.record["window_s"] == 30.0
    assert reply.record["verdict"] == "cable_fault"


@pytest.mark.parametrize(
    ("text", "said"),
    [
        ("lark-east-idf9 port1", "No device named 'lark-east-idf9'."),
        ("east port1", "'east' fits 2 devices."),
        ("lark-core1 up99", "lark-core1 has no port named 'up99'."),
        ("lark-core1", "Name one device and one port"),
        ("suspects mars", "No site named 'mars'."),
    ],
)
def test_bad_requests_get_a_short_answer_and_are_audited(
    triage: Triage, text: str, said: str
) -> None:
    reply = triage.handle(text, user="U1", channel="C1")
    assert isinstance(reply, ErrorReply)
    assert reply.message.startswith(said)
    assert reply.visibility == "ephemeral"
    (entry,) = triage.store.audit_log()
    assert entry["command"] == text and entry["outcome"].startswith("error: ")


def test_help_and_model_are_answered_privately(triage: Triage) -> None:
    assert isinstance(triage.handle("help"), HelpReply)
    card = triage.handle("model")
    assert isinstance(card, ModelReply) and card.visibility == "ephemeral"
    assert card.card["version"] == triage.model.version


def test_suspects_are_ranked_worst_first(triage: Triage) -> None:
    reply = triage.handle("suspects")
    assert isinstance(reply, SuspectsReply)
    verdicts = [i.record["verdict"] for i in reply.items]
    assert verdicts[:3] == ["unidirectional", "optic_degraded", "cable_fault"]
    assert "healthy" not in verdicts and "link_down" not in verdicts
    assert [i.rank for i in reply.items] == list(range(1, len(reply.items) + 1))
    assert reply.ports_judged + sum(reply.not_judged.values()) == len(triage.network.ports())
    assert reply.not_judged["link_down"] == 1 and reply.failed == {}


def test_suspects_of_one_site(triage: Triage) -> None:
    reply = triage.handle("suspects annex")
    assert isinstance(reply, SuspectsReply)
    assert {i.record["device"] for i in reply.items} == {"lark-annex-sw1"}


class Flaky(DemoNetwork):
    """The demo network with one switch that never answers."""

    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        if device == "lark-west-idf1":
            raise PollError(device, "no answer within 2 s")
        return super().poll(device, ports)


def test_a_device_that_does_not_answer_is_named_and_the_rest_still_answer(
    store: Store, model: Model, clock: DemoClock
) -> None:
    triage = Triage(Flaky(clock=clock), store, model, Settings(), clock=clock, sleep=clock.sleep)
    reply = triage.handle("suspects")
    assert isinstance(reply, SuspectsReply)
    assert reply.failed == {"lark-west-idf1": "no answer within 2 s"}
    assert "1 device not read (lark-west-idf1: no answer within 2 s)" in reply.coverage
    assert any(i.record["verdict"] == "cable_fault" for i in reply.items)
    asked = triage.handle("lark-west-idf1 port1")
    assert isinstance(asked, ErrorReply)
    assert asked.message == "lark-west-idf1: no answer within 2 s"
    assert triage.gathering.poll_round().failed == {"lark-west-idf1": "no answer within 2 s"}


def test_a_digest_says_what_is_new_and_what_cleared(triage: Triage, clock: DemoClock) -> None:
    first = triage.digests.digest(channel="C1")
    assert first.since is None and not any(i.new for i in first.items)
    assert triage.store.last_digest() is None  # kept only once posted
    triage.posted(first, channel="C1", ts="1.0")
    network = triage.network
    assert isinstance(network, DemoNetwork)
    # The cable is replaced on port14, and a jumbo-frame host appears on port2.
    fixed = network._rows[("lark-east-idf2", "port14")]
    broken = network._rows[("lark-east-idf2", "port2")]
    for key in ("fcs_errors", "alignment_errors", "symbol_errors", "in_errors", "fragments"):
        network.rates[key][fixed] = 0.0
    network.rates["frame_too_longs"][broken] = network.rates["in_ucast"][broken] * 0.01
    network.rates["in_errors"][broken] = network.rates["frame_too_longs"][broken]
    clock.sleep(3600.0)
    second = triage.digests.digest(channel="C1")
    assert second.since == first.at
    assert second.cleared == ["lark-east-idf2 port14"]
    new = [f"{i.record['device']} {i.record['port']}" for i in second.items if i.new]
    assert new == ["lark-east-idf2 port2"]


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
                               "crushed patch cord behind the desk", diagnosis_id=1)  # fmt: skip
    retry = triage.labels.reply(text, user="U2", channel="C1", thread_ts="100.1", event_key="Ev1")
    assert retry is None
    (label,) = triage.store.labels()
    assert label.user_id == "U2" and label.note == "crushed patch cord behind the desk"


def test_confirming_twice_stores_one_label_and_tells_only_its_author(triage: Triage) -> None:
    # Issue 8.8: a second press of Confirm stored a second label, weighted 20 times again.
    reply = _posted(triage, "lark-east-idf2 port14")
    first = triage.labels.button(reply.diagnosis_id, None, user="U2", channel="C1", event_key="a1")
    again = triage.labels.button(reply.diagnosis_id, None, user="U2", channel="C1", event_key="a2")
    assert isinstance(first, LabelReply)
    assert isinstance(again, LabelRefused) and again.visibility == "ephemeral"
    assert "already said cable_fault" in again.message
    assert len(triage.store.labels()) == 1


def test_a_person_who_changes_their_mind_replaces_their_label(triage: Triage) -> None:
    reply = _posted(triage, "lark-east-idf2 port14")
    said = []
    for n, verdict in enumerate(["cable_fault", "duplex_mismatch", "healthy"]):
        label = triage.labels.button(
            reply.diagnosis_id, verdict, user="U2", channel="C1", event_key=f"k{n}"
        )
        assert isinstance(label, LabelReply)
        said.append((label.replaced, label.disputed_with))
    assert said == [(None, ()), ("cable_fault", ()), ("duplex_mismatch", ())]
    assert len(triage.store.labels()) == 3  # all kept for the audit
    answer, channel, ts = triage.labels.answer(reply.diagnosis_id) or pytest.fail("no answer")
    assert (channel, ts) == ("C1", "100.1")
    assert answer.labels == (("U2", "healthy"),)  # one counts: the latest


def test_two_people_who_disagree_are_told_and_the_answer_is_marked(triage: Triage) -> None:
    reply = _posted(triage, "lark-east-idf2 port14")
    triage.labels.button(reply.diagnosis_id, None, user="U2", channel="C1", event_key="a")
    other = triage.labels.button(
        reply.diagnosis_id, "duplex_mismatch", user="U3", channel="C1", event_key="b"
    )
    assert isinstance(other, LabelReply) and other.disputed_with == ("cable_fault",)
    answer, _, _ = triage.labels.answer(reply.diagnosis_id) or pytest.fail("no answer")
    assert answer.disputed
    assert answer.labels == (("U2", "cable_fault"), ("U3", "duplex_mismatch"))


def test_an_answer_keeps_its_site_and_what_the_port_serves(triage: Triage) -> None:
    reply = _posted(triage, "lark-east-idf2 port14")
    answer, _, _ = triage.labels.answer(reply.diagnosis_id) or pytest.fail("no answer")
    assert (answer.site, answer.serves) == (reply.site, reply.serves)
    assert answer.record == reply.record


@pytest.mark.parametrize(
    "text",
    ["not a cable fault, the far-end NIC was bad", "wasn't cable", "cable fault? no."],
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
    assert isinstance(reply, LabelRefused) and "`cable_fault` or `optic_degraded`" in reply.message
    assert triage.store.labels() == []


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


def test_confirming_a_guard_verdict_is_not_a_label(triage: Triage) -> None:
    _posted(triage, "lark-west-idf1 port9")  # link_down
    reply = triage.labels.reply(
        "confirmed", user="U2", channel="C1", thread_ts="100.1", event_key="h"
    )
    assert isinstance(reply, LabelRefused) and "`link_down`" in reply.message


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


def test_a_button_confirms_or_corrects(triage: Triage) -> None:
    posted = _posted(triage, "lark-east-idf2 port7")
    confirm = triage.labels.button(
        posted.diagnosis_id, None, user="U3", channel="C1", event_key="btn1"
    )
    assert isinstance(confirm, LabelReply) and confirm.verdict == "duplex_mismatch"
    correct = triage.labels.button(posted.diagnosis_id, "negotiation_degraded", user="U3",
                                  channel="C1", event_key="btn2")  # fmt: skip
    assert isinstance(correct, LabelReply) and correct.model_verdict == "duplex_mismatch"
    assert [label.verdict for label in triage.store.labels()] == [
        "duplex_mismatch",
        "negotiation_degraded",
    ]


def test_a_poll_round_keeps_every_port(triage: Triage) -> None:
    result = triage.gathering.poll_round()
    assert result.failed == {}
    assert result.stored == len(triage.network.ports())


def test_history_read_back_from_the_store_diagnoses_like_the_polls_themselves(
    triage: Triage, clock: DemoClock, model: Model
) -> None:
    from linktriage.diagnosis import diagnose
    from linktriage.network.demo import demo_polls
    from linktriage.simulate import DEFAULT_START

    clock.now = DEFAULT_START - 300.0
    triage.gathering.poll_round()
    clock.now = DEFAULT_START
    direct = diagnose(demo_polls(), model)
    for spec in ("lark-east-idf2 port7", "lark-annex-sw1 port3", "lark-core1 up5"):
        reply = triage.handle(spec)
        assert isinstance(reply, DiagnosisReply)
        device, port = spec.split()
        row = direct.index_of(device, port)
        assert row is not None
        assert reply.record == direct.record(row)
