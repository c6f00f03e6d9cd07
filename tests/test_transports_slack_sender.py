"""The outbox sent to Slack under pressure: a real store, the real Web API client, and the
Slack emulator rate-limiting methods (HTTP 429 with Retry-After, as Slack's "Rate limits"
page lays out) on a simulated clock shared by the emulator and the sender."""

from __future__ import annotations

import threading
from collections.abc import Iterator

import pytest
from pydantic import SecretStr

from linktriage.bot.triage import Triage
from linktriage.network.demo import DemoClock
from linktriage.render import words
from linktriage.render.charts import pictures_for
from linktriage.render.headline import answer_headline, capitalised
from linktriage.render.replies import DiagnosisReply
from linktriage.settings import Settings
from linktriage.store import Store
from linktriage.transports.slack import say_reply, web_client
from linktriage.transports.slack_sender import SlackSender, outgoing, retry_after, uploads

from slack_emulator import SlackEmulator

CHANNEL = "C0NETOPS"
GIVE_UP_S = 1800.0


@pytest.fixture
def emulator(clock: DemoClock) -> Iterator[SlackEmulator]:
    running = SlackEmulator(clock=clock).start()
    yield running
    running.stop()


def sender_for(store: Store, emulator: SlackEmulator, clock: DemoClock, name: str) -> SlackSender:
    settings = Settings(slack_bot_token=SecretStr("xoxb-test"),
                        slack_api_url_override=emulator.api_url)  # fmt: skip
    client = web_client(settings, wait_out_limits=False)
    return SlackSender(client, store, give_up_s=GIVE_UP_S, holder=name, clock=clock)


def wait_out(sender: SlackSender, clock: DemoClock, *, limit_s: float) -> None:
    """Run the sender as its thread would, the clock jumping to each Retry-After."""
    for _ in range(1000):
        due = sender.send_due()
        if due is None:
            return
        clock.now = max(clock.now, due)
    raise AssertionError(f"the outbox was not sent within {limit_s} s")


def answers(triage: Triage, count: int) -> list[DiagnosisReply]:
    ports = ["port14", "port3", "port7", "port21", "port9"]
    asked = [triage.handle(f"lark-east-idf2 {ports[i % len(ports)]}", user=f"U0ENG{i}")
             for i in range(count)]  # fmt: skip
    assert all(isinstance(reply, DiagnosisReply) for reply in asked)
    return [reply for reply in asked if isinstance(reply, DiagnosisReply)]


def test_a_minute_of_rate_limits_loses_nothing_and_keeps_each_channels_order(
    triage: Triage, emulator: SlackEmulator, clock: DemoClock
) -> None:
    # Issue 21: at one message per second per channel, 5 of 10 answers and 8 of 20 thread
    # posts reached the channel. Here chat.postMessage answers 429 for 60 s.
    sender = sender_for(triage.store, emulator, clock, "replica-a")
    replies = answers(triage, 10)
    emulator.limited_until["chat.postMessage"] = clock() + 60.0
    for reply in replies:
        say_reply(sender, triage, reply, CHANNEL, asker=reply.asked_by)
    assert emulator.called("chat.postMessage") == []  # all held back so far
    wait_out(sender, clock, limit_s=GIVE_UP_S)
    posted = emulator.called("chat.postMessage")
    tops = [call for call in posted if "thread_ts" not in call.params]
    assert len(tops) == 10  # every answer
    assert len(emulator.refused) >= 1  # and Slack did refuse until its minute was up
    # In order: each answer, then its thread, before the next answer.
    heads = [c.params["blocks"][0]["text"]["text"] for c in tops]
    assert heads == [capitalised(answer_headline(reply.record)) for reply in replies]
    follows = [call for call in posted if "thread_ts" in call.params]
    assert follows  # every answer has its why and what-to-check in its thread
    ts_of = {}
    for call_index, call in enumerate(posted):
        if "thread_ts" not in call.params:
            ts_of[call_index] = f"{1772438400 + call_index + 1}.000100"
            last_top = ts_of[call_index]
        else:
            assert call.params["thread_ts"] == last_top  # its own answer's thread
    for reply in replies:  # each answer knows its message: replies in its thread label it
        stored = triage.store.diagnosis(reply.diagnosis_id)
        assert stored is not None and stored.message_ts is not None
    assert emulator.called("chat.postEphemeral") == []  # nobody was told of a failure


def test_a_message_slack_holds_back_past_its_time_is_dropped_and_the_asker_told(
    triage: Triage, emulator: SlackEmulator, clock: DemoClock
) -> None:
    sender = sender_for(triage.store, emulator, clock, "replica-a")
    (reply,) = answers(triage, 1)
    emulator.limited_until["chat.postMessage"] = clock() + GIVE_UP_S + 600.0
    say_reply(sender, triage, reply, CHANNEL, asker="U0ENG0")
    wait_out(sender, clock, limit_s=GIVE_UP_S + 60.0)
    assert emulator.called("chat.postMessage") == []
    (told,) = emulator.called("chat.postEphemeral")
    assert told.params["user"] == "U0ENG0"
    assert told.params["text"] == words.held_back(GIVE_UP_S / 60.0)
    assert "rate limits" in told.params["text"]  # the truth, not "invite me"
    assert "lark-east-idf2 port14" in told.params["blocks"][0]["text"]["text"]
    with triage.store.engine.connect() as conn:
        states = conn.exec_driver_sql("SELECT DISTINCT state FROM outbox").scalars().all()
    assert states == ["dropped"]


def test_an_answers_picture_goes_in_its_thread_once_the_answer_is_posted(
    triage: Triage, emulator: SlackEmulator, clock: DemoClock
) -> None:
    sender = sender_for(triage.store, emulator, clock, "replica-a")
    (reply,) = answers(triage, 1)
    emulator.limited_until["chat.postMessage"] = clock() + 60.0
    say_reply(sender, triage, reply, CHANNEL, asker="U0ENG0")
    assert emulator.called("files.getUploadURLExternal") == []  # it waits for the answer
    wait_out(sender, clock, limit_s=120.0)
    (top, *_) = emulator.called("chat.postMessage")
    (completed,) = emulator.called("files.completeUploadExternal")
    stored = triage.store.diagnosis(reply.diagnosis_id)
    assert stored is not None and completed.params["thread_ts"] == stored.message_ts
    assert "thread_ts" not in top.params


def test_a_picture_kept_after_its_answer_was_dropped_is_never_posted(
    triage: Triage, emulator: SlackEmulator, clock: DemoClock
) -> None:
    sender = sender_for(triage.store, emulator, clock, "replica-a")
    (reply,) = answers(triage, 1)
    emulator.limited_until["chat.postMessage"] = clock() + GIVE_UP_S + 600.0
    first, *_ = sender.say(outgoing(reply, CHANNEL, asker="U0ENG0"))
    wait_out(sender, clock, limit_s=GIVE_UP_S + 60.0)  # the answer is given up
    sender.say(uploads(pictures_for(reply), CHANNEL, thread=None, under=first))
    wait_out(sender, clock, limit_s=60.0)
    assert emulator.called("files.getUploadURLExternal") == []  # not loose in the channel
    with triage.store.engine.connect() as conn:
        states = conn.exec_driver_sql("SELECT DISTINCT state FROM outbox").scalars().all()
    assert states == ["dropped"]


def test_labels_said_in_threads_wait_out_rate_limits_too(
    triage: Triage, emulator: SlackEmulator, clock: DemoClock
) -> None:
    sender = sender_for(triage.store, emulator, clock, "replica-a")
    (reply,) = answers(triage, 1)
    say_reply(sender, triage, reply, CHANNEL, asker="U0ENG0")
    (top, *_) = emulator.called("chat.postMessage")
    stored = triage.store.diagnosis(reply.diagnosis_id)
    assert stored is not None and stored.message_ts is not None
    emulator.limited_until["chat.postMessage"] = clock() + 60.0
    emulator.limited_until["chat.update"] = clock() + 60.0
    before = len(emulator.called("chat.postMessage"))
    label = triage.labels.reply("confirmed, cable was crushed", user="U0ENG0", channel=CHANNEL,
                                thread_ts=stored.message_ts, event_key="Ev1")  # fmt: skip
    assert label is not None
    say_reply(sender, triage, label, CHANNEL, thread=stored.message_ts, asker="U0ENG0")
    found = triage.labels.answer(reply.diagnosis_id)
    assert found is not None
    sender.update(CHANNEL, found[2], {"text": "redrawn"})
    wait_out(sender, clock, limit_s=120.0)
    said = emulator.called("chat.postMessage")[before:]
    assert len(said) == 1 and said[0].params["thread_ts"] == stored.message_ts
    assert [call.params["ts"] for call in emulator.called("chat.update")] == [stored.message_ts]
    assert top.params["channel"] == CHANNEL


def test_what_one_process_said_is_sent_by_the_next_after_a_restart(
    triage: Triage, emulator: SlackEmulator, clock: DemoClock
) -> None:
    first = sender_for(triage.store, emulator, clock, "replica-a")
    (reply,) = answers(triage, 1)
    emulator.limited_until["chat.postMessage"] = clock() + 60.0
    say_reply(first, triage, reply, CHANNEL, asker="U0ENG0")
    # replica-a stops here, its message unsent; a new process starts on the same store.
    clock.now += 90.0  # its channel lease has lapsed too
    second = sender_for(triage.store, emulator, clock, "replica-a, restarted")
    wait_out(second, clock, limit_s=60.0)
    assert len([c for c in emulator.called("chat.postMessage") if "thread_ts" not in c.params]) == 1
    stored = triage.store.diagnosis(reply.diagnosis_id)
    assert stored is not None and stored.message_ts is not None


def test_two_replicas_sending_one_outbox_send_each_message_once_in_order(
    triage: Triage, emulator: SlackEmulator, clock: DemoClock
) -> None:
    a = sender_for(triage.store, emulator, clock, "replica-a")
    b = sender_for(triage.store, emulator, clock, "replica-b")
    replies = answers(triage, 6)
    emulator.limited_until["chat.postMessage"] = clock() + 1.0  # so both find it waiting
    for reply in replies:
        say_reply(a, triage, reply, CHANNEL, asker=reply.asked_by)
    clock.now += 2.0
    barrier = threading.Barrier(2)

    def drain(sender: SlackSender) -> None:
        barrier.wait(timeout=30)
        sender.send_due()

    threads = [threading.Thread(target=drain, args=(s,)) for s in (a, b)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=120)
    wait_out(a, clock, limit_s=10.0)
    wait_out(b, clock, limit_s=10.0)
    tops = [c for c in emulator.called("chat.postMessage") if "thread_ts" not in c.params]
    heads = [c.params["blocks"][0]["text"]["text"] for c in tops]
    assert heads == [capitalised(answer_headline(reply.record)) for reply in replies]


def test_not_being_in_the_channel_is_told_at_once_and_the_answer_posted_once_invited(
    triage: Triage, emulator: SlackEmulator, clock: DemoClock
) -> None:
    sender = sender_for(triage.store, emulator, clock, "replica-a")
    emulator.failures["chat.postMessage"] = "not_in_channel"
    (reply,) = answers(triage, 1)
    say_reply(sender, triage, reply, CHANNEL, asker="U0ENG0")
    (told,) = emulator.called("chat.postEphemeral")
    assert told.params["text"] == words.cannot_post("not_in_channel", GIVE_UP_S / 60.0)
    del emulator.failures["chat.postMessage"]  # someone typed /invite @linktriage
    clock.now += 10.0
    wait_out(sender, clock, limit_s=60.0)
    assert len(emulator.called("chat.postEphemeral")) == 1  # told once
    stored = triage.store.diagnosis(reply.diagnosis_id)
    assert stored is not None and stored.message_ts is not None


def test_retry_after_is_read_as_slack_sends_it() -> None:
    assert retry_after({"Retry-After": "30"}) == 30.0
    assert retry_after({"retry-after": ["7"]}) == 7.0
    assert retry_after({}) == 1.0  # none said: a second
