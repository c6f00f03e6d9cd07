"""Sends the outbox to Slack: in order per channel, as fast as Slack allows and no faster.

Each replica runs one :class:`SlackSender`. It sends to a channel only while it holds that
channel's lease in the store, so two replicas never interleave one channel's messages; a
message waits for the one before it. Slack's rate limit (HTTP 429) is waited out for as
long as its ``Retry-After`` says, however often, until the message's time runs out
(``[slack] give_up_after_min``); then it is dropped and whoever asked is told so, with the
answer. A channel the bot is not in yet is tried again on a backoff (a person may invite
it), and the asker is told at the first refusal. Outages and 5xx answers are retried the
same way; any other refusal drops the message at once and says Slack's reason.
"""

from __future__ import annotations

import base64
import logging
import threading
import time
from collections.abc import Callable, Mapping
from typing import Any

from slack_sdk import WebClient
from slack_sdk.errors import SlackApiError, SlackClientError

from linktriage.outbox import CHANNEL_LEASE_PREFIX, Outbox, Outgoing, Queued
from linktriage.render import words
from linktriage.render.blocks import message_for, thread_for
from linktriage.render.charts import Picture
from linktriage.render.replies import Reply
from linktriage.store import Store, holder_name

log = logging.getLogger("linktriage.slack.sender")

#: A channel's lease lasts this long past each message: a replica that dies mid-channel
#: holds it up for no longer.
LEASE_S = 30.0
#: The outbox is looked at this often for what other replicas put in it (a message put in
#: by this replica wakes the sender at once).
LOOK_S = 1.0
#: Waits after a refusal someone may put right (not in the channel) or an outage.
BACKOFF_S = (5.0, 30.0, 60.0, 300.0)
#: Refusals a person or time may put right: tried again until the message's time is up.
RETRYABLE = frozenset({"not_in_channel", "channel_not_found", "fatal_error", "internal_error",
                       "service_unavailable", "request_timeout"})  # fmt: skip
#: The answer Slack gives a client over its rate: HTTP 429, or this error in the body.
RATE_LIMITED = "ratelimited"


def outgoing(
    reply: Reply,
    channel: str,
    *,
    thread: str | None = None,
    asker: str | None = None,
    diagnosis_id: int | None = None,
    digest_id: int | None = None,
) -> list[Outgoing]:
    """A channel reply as messages: the reply (in ``thread`` when given) and what follows it
    in its thread. Its pictures follow on their own (:func:`uploads`)."""
    first = Outgoing(
        channel,
        "chat.postMessage",
        message_for(reply),
        thread_ts=thread,
        diagnosis_id=diagnosis_id,
        digest_id=digest_id,
        asker=asker,
    )
    follows = [
        Outgoing(channel, "chat.postMessage", follow, thread_ts=thread,
                 in_first_thread=thread is None)
        for follow in thread_for(reply)
    ]  # fmt: skip
    return [first, *follows]


def uploads(
    pictures: list[Picture], channel: str, *, thread: str | None, under: int
) -> list[Outgoing]:
    """Pictures as file uploads in ``thread``, or where none is given, in the thread of the
    message kept as ``under`` (an outbox id)."""
    return [
        Outgoing(
            channel,
            "files.upload",
            {
                "data": base64.b64encode(picture.data).decode(),
                "filename": picture.filename,
                "title": picture.title,
                "alt_txt": picture.alt,
            },
            thread_ts=thread,
            thread_of=None if thread is not None else under,
        )
        for picture in pictures
    ]


def retry_after(headers: Mapping[str, Any] | None) -> float:
    """Slack's Retry-After in seconds (at least one)."""
    for name, value in (headers or {}).items():
        if name.lower() == "retry-after":
            try:
                return max(1.0, float(value[0] if isinstance(value, list) else value))
            except (TypeError, ValueError):
                break
    return 1.0


class SlackSender:
    """The outbox of one store, sent through one Web API client."""

    def __init__(
        self,
        client: WebClient,
        store: Store,
        *,
        give_up_s: float,
        holder: str | None = None,
        clock: Callable[[], float] = time.time,
    ) -> None:
        self.client = client
        self.store = store
        self.outbox = Outbox(store)
        self.give_up_s = give_up_s
        self.holder = holder or holder_name()
        self.clock = clock
        self._wake = threading.Event()
        self._locks: dict[str, threading.Lock] = {}  # one sending thread per channel here
        self._locks_lock = threading.Lock()
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None

    # --- saying
    def say(self, messages: list[Outgoing]) -> list[int]:
        """Keep messages to send (one transaction), then send what may go to their channels
        now, here, unless this replica is sending to one already (that sending picks them
        up) or another replica holds it."""
        ids = self.outbox.put(messages, now=self.clock(), give_up_s=self.give_up_s)
        for channel in dict.fromkeys(m.channel for m in messages):
            self._drain(channel)
        self._wake.set()
        return ids

    def ephemeral(self, channel: str, user: str, message: dict[str, Any], *,
                  thread: str | None = None) -> list[int]:  # fmt: skip
        """A message only ``user`` sees, in its place in the channel's order."""
        body = {"user": user, **message}
        return self.say([Outgoing(channel, "chat.postEphemeral", body, thread_ts=thread)])

    def update(self, channel: str, ts: str, message: dict[str, Any]) -> list[int]:
        """A posted message redrawn."""
        return self.say([Outgoing(channel, "chat.update", {"ts": ts, **message})])

    # --- sending
    def start(self) -> None:
        self._thread = threading.Thread(target=self._run, name="slack-sender", daemon=True)
        self._thread.start()

    def stop(self) -> None:
        """Stop sending and give up the channels' leases (what is left is kept)."""
        self._stop.set()
        self._wake.set()
        if self._thread is not None:
            self._thread.join(timeout=30)

    def _run(self) -> None:
        while not self._stop.is_set():
            try:
                due = self.send_due()
            except Exception:  # a store or network failure: logged, tried again
                log.exception("could not send the outbox")
                due = None
            wait = LOOK_S if due is None else min(LOOK_S, max(0.0, due - self.clock()))
            self._wake.wait(wait)
            self._wake.clear()

    def send_due(self) -> float | None:
        """Send whatever may go now, channel by channel; returns when the next held-back
        message may go (None: nothing is held back here)."""
        next_due: float | None = None
        for channel in self.outbox.channels_waiting():
            due = self._drain(channel)
            if due is not None:
                next_due = due if next_due is None else min(next_due, due)
        return next_due

    def _drain(self, channel: str) -> float | None:
        """Send a channel's messages in order while this replica may; when the next one
        held back may go, if one is."""
        with self._locks_lock:
            lock = self._locks.setdefault(channel, threading.Lock())
        if not lock.acquire(blocking=False):
            self._wake.set()  # the thread sending there now looks again when done
            return None
        try:
            return self._drain_held(channel)
        finally:
            lock.release()

    def _drain_held(self, channel: str) -> float | None:
        lease = CHANNEL_LEASE_PREFIX + channel
        while not self._stop.is_set():
            now = self.clock()
            if not self.store.take_lease(lease, self.holder, now=now, hold_s=LEASE_S):
                return None  # another replica sends to this channel
            message = self.outbox.head(channel)
            if message is None:
                return None
            if message.thread_of is not None and message.thread_ts is None:
                # What it follows was dropped before it was kept (a picture drawn late).
                self.outbox.drop(message.id, words.THREAD_NOT_POSTED)
                continue
            if now >= message.give_up_at:
                self._give_up(message, words.held_back(round(self.give_up_s / 60.0, 1)))
                continue
            if message.not_before > now:
                return message.not_before
            due = self._send(message, now)
            if due is not None:
                return due
        return None

    def _send(self, message: Queued, now: float) -> float | None:
        """Send one message; None when it is done with (sent or dropped), else when to try
        it again."""
        try:
            ts = self._call(message)
        except SlackApiError as exc:
            response = exc.response
            error = str(response.get("error") or "")
            if response.status_code == 429 or error == RATE_LIMITED:
                wait = retry_after(response.headers)
                log.info("Slack rate-limits %s in %s: waiting %g s", message.method,
                         message.channel, wait)  # fmt: skip
                return self._later(message, now + wait, RATE_LIMITED)
            if error in RETRYABLE or response.status_code >= 500:
                if error == "not_in_channel" and message.tries == 0:
                    self._tell(message, words.cannot_post(error, self.give_up_s / 60.0))
                return self._later(message, now + _backoff(message.tries), error)
            log.warning("Slack refused %s in %s: %s", message.method, message.channel, error)
            self._give_up(message, words.refused(error))
            return None
        except (SlackClientError, OSError) as exc:  # no answer at all: an outage
            why = f"{type(exc).__name__}: {exc}".splitlines()[0]
            log.warning("could not reach Slack for %s: %s", message.channel, why)
            return self._later(message, now + _backoff(message.tries), why)
        self.outbox.sent(message.id, ts)
        return None

    def _later(self, message: Queued, when: float, why: str) -> float:
        self.outbox.later(message.id, when, why)
        return when

    def _call(self, message: Queued) -> str | None:
        """The Web API call a message stands for; the new message's ts where it has one."""
        body, channel, thread = dict(message.body), message.channel, message.thread_ts
        match message.method:
            case "chat.postMessage":
                posted = self.client.chat_postMessage(channel=channel, thread_ts=thread, **body)
                return str(posted["ts"])
            case "chat.postEphemeral":
                self.client.chat_postEphemeral(channel=channel, thread_ts=thread, **body)
            case "chat.update":
                self.client.chat_update(channel=channel, **body)
            case "files.upload":
                data = base64.b64decode(body.pop("data"))
                self.client.files_upload_v2(channel=channel, thread_ts=thread, file=data, **body)
            case _:
                raise SlackClientError(f"unknown outbox method {message.method!r}")
        return None

    def _give_up(self, message: Queued, why: str) -> None:
        dropped = self.outbox.drop(message.id, why)
        log.warning("dropped %d message(s) for %s: %s", len(dropped), message.channel, why)
        self._tell(message, why)

    def _tell(self, message: Queued, why: str) -> None:
        """Tell the asker, privately and at once, what became of their answer, with it."""
        if message.asker is None or message.method == "chat.postEphemeral":
            return
        blocks = message.body.get("blocks")
        try:
            self.client.chat_postEphemeral(
                channel=message.channel, user=message.asker, text=why,
                **({"blocks": blocks} if blocks else {}),
            )  # fmt: skip
        except (SlackClientError, OSError) as exc:
            log.warning("could not tell %s in %s: %s", message.asker, message.channel, exc)


def _backoff(tries: int) -> float:
    return BACKOFF_S[min(tries, len(BACKOFF_S) - 1)]
