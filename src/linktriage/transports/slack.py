"""The Slack transport: slack-bolt wiring around the transport-free service.

Slash commands are acknowledged at once (Slack wants an answer within 3 seconds): help,
the model card and anything malformed or unknown (a name checked against the network,
nothing polled) are answered in the acknowledgement itself, privately; a port or a list of
suspects gets a short "looking" note, then the work runs after the acknowledgement and the
answer is posted to the channel, where its thread collects what engineers found; its
picture (an answer's or a history's windows, a tree's path) is drawn once the answer is on
its way and follows in that thread as a PNG upload. A mention of
the bot at the top of a channel (``@linktriage lark-core1 up3``) is the same command,
answered the same way. Thread replies and the label buttons become labels.

Bolt's listeners only acknowledge; the slow part runs on a pool of its own, so an
acknowledgement never waits behind an answer. Everything said goes through the store's
outbox (:mod:`linktriage.transports.slack_sender`): in order per channel, waiting out
Slack's rate limits, across restarts and replicas.

Two ways in: Socket Mode (no public URL; the default) and HTTP mode, whose listener
(:mod:`linktriage.transports.slack_http`) checks each request before it hands it to bolt.
"""

from __future__ import annotations

import logging
import time
import uuid
from collections.abc import Callable
from concurrent.futures import Executor, ThreadPoolExecutor
from typing import Any, assert_never

from slack_bolt import Ack, App, BoltContext, Respond
from slack_sdk import WebClient
from slack_sdk.errors import SlackApiError
from slack_sdk.http_retry.builtin_handlers import RateLimitErrorRetryHandler
from slack_sdk.http_retry.handler import RetryHandler

from linktriage.bot.commands import (
    COMMAND,
    Command,
    DiagnosePort,
    ListSuspects,
    ShowHelp,
    ShowHistory,
    ShowModel,
    ShowTree,
)
from linktriage.bot.triage import Triage
from linktriage.engine.model.findings import BY_ID as FINDINGS_BY_ID
from linktriage.errors import LinktriageError, StoreError
from linktriage.render import words
from linktriage.render.blocks import (
    EARLIER_LABEL_ACTIONS,
    FOUND_ACTION,
    RECHECK_ACTION,
    message_for,
)
from linktriage.render.charts import pictures_for
from linktriage.render.replies import LabelRefused, LabelReply, Reply
from linktriage.settings import Settings
from linktriage.transports.slack_sender import SlackSender, outgoing, uploads

log = logging.getLogger("linktriage.slack")
WORKING = words.WORKING


def say_reply(
    sender: SlackSender,
    triage: Triage,
    reply: Reply,
    channel: str,
    *,
    thread: str | None = None,
    asker: str | None = None,
) -> None:
    """A channel reply put in the outbox with what follows it; the answer or list it
    carries is kept first, so its thread finds it the moment it is posted. Its pictures
    are drawn after it has gone (or waits its turn), so drawing never holds an answer
    back, and follow in its thread; one that cannot be kept is logged and the answer
    stands."""
    diagnosis_id, digest_id = triage.carried(reply, channel=channel)
    first, *_ = sender.say(
        outgoing(reply, channel, thread=thread, asker=asker, diagnosis_id=diagnosis_id,
                 digest_id=digest_id)
    )  # fmt: skip
    pictures = pictures_for(reply)
    if not pictures:
        return
    try:
        sender.say(uploads(pictures, channel, thread=thread, under=first))
    except StoreError as exc:
        log.warning("could not keep a picture to post in %s: %s", channel, exc.message)


def answered_later(command: Command) -> bool:
    """Whether a command's answer needs polls (or a sweep), so it follows Slack's
    acknowledgement instead of being the acknowledgement (which must come within 3 s)."""
    match command:
        case DiagnosePort() | ShowHistory() | ShowTree() | ListSuspects():
            return True
        case ShowModel() | ShowHelp():
            return False
        case _:
            assert_never(command)


def web_client(settings: Settings, *, wait_out_limits: bool = True) -> WebClient:
    """A Web API client for the bot token, at the configured base URL. Without
    ``wait_out_limits`` a rate limit is raised at once (the sender waits it out itself,
    without holding up other channels)."""
    token = settings.slack_bot_token.get_secret_value() if settings.slack_bot_token else None
    handlers: list[RetryHandler] = (
        [RateLimitErrorRetryHandler(max_retry_count=2)] if wait_out_limits else []
    )
    return WebClient(token=token, base_url=settings.slack_api_url, retry_handlers=handlers)


def group_members(client: WebClient) -> Any:
    """Members of a user group by id (scope usergroups:read); none when Slack says no."""

    def members(group: str) -> set[str]:
        try:
            return set(client.usergroups_users_list(usergroup=group)["users"])
        except SlackApiError as exc:
            log.warning("could not list user group %s: %s", group, exc.response.get("error"))
            return set()

    return members


#: Workers for the slow part of what Slack asks (polls, answers, labels), kept apart from
#: bolt's own pool, which then only ever acknowledges: an acknowledgement never waits
#: behind an answer.
WORKERS = 8
#: How long a reply in a thread not known yet is looked for again while the channel's
#: outbox is still sending (its answer may be landing at this moment).
UNKNOWN_THREAD_WAITS_S = (0.25, 0.5, 1.0, 2.0, 4.0, 8.0, 16.0)


#: How long a mention's event id is remembered by every replica (Slack retries within
#: minutes; an hour leaves room).
EVENT_MEMORY_S = 3600.0


def build_app(
    triage: Triage,
    settings: Settings,
    *,
    sender: SlackSender,
    client: WebClient | None = None,
    work: Executor | None = None,
    **app_options: Any,
) -> App:
    """The bolt app answering ``/triage``, thread replies and the label buttons. Bolt's
    listeners only acknowledge; the work runs on ``work`` (default: a pool of its own) and
    everything said goes through ``sender``'s outbox."""
    secret = settings.slack_signing_secret
    app = App(
        client=client or web_client(settings),
        signing_secret=secret.get_secret_value() if secret else None,
        **app_options,
    )
    pool = work or ThreadPoolExecutor(WORKERS, thread_name_prefix="linktriage-work")

    def first_time(event_id: str) -> bool:
        """Whether any replica of the store has taken this event (a retry, maybe delivered
        to another replica, is not new): the store's key decides."""
        now = time.time()
        return triage.store.first_sight(f"event:{event_id}", now + EVENT_MEMORY_S, now)

    def later(job: Callable[..., None], *args: Any) -> None:
        """Run ``job`` on the work pool, its failure logged with a reference."""

        def run() -> None:
            try:
                job(*args)
            except Exception:
                log.exception("error %s in %s", uuid.uuid4().hex[:8], job.__name__)

        pool.submit(run)

    def deferred(text: str) -> bool:
        """Whether a command needs polls, so its answer comes after the acknowledgement;
        its names are checked first (no polling), so a wrong one is answered at once."""
        try:
            return answered_later(triage.settle(text))
        except LinktriageError:
            return False  # answered at once, with the reason

    def on_triage(ack: Ack, command: dict[str, Any], respond: Respond) -> None:
        text = command.get("text", "")
        if deferred(text):
            ack(response_type="ephemeral", text=WORKING)
            later(answer_triage, command, respond)
            return
        reply = triage.handle(text, user=command.get("user_id"), channel=command.get("channel_id"))
        ack(response_type="ephemeral", **message_for(reply))

    def answer_triage(command: dict[str, Any], respond: Respond) -> None:
        channel, user = command["channel_id"], command.get("user_id")
        reply = triage.handle(command.get("text", ""), user=user, channel=channel)
        message = message_for(reply)
        if reply.visibility != "channel":
            respond(response_type="ephemeral", replace_original=False, **message)
            return
        try:
            say_reply(sender, triage, reply, channel, asker=user)
        except StoreError as exc:  # not kept to post: the asker gets it, and why
            log.warning("could not keep an answer to post in %s: %s", channel, exc.message)
            respond(response_type="ephemeral", replace_original=False,
                    **{**message, "text": words.not_kept(exc.message)})  # fmt: skip

    app.command(COMMAND)(on_triage)

    def deliver(reply: Reply, *, channel: str, thread: str | None, user: str) -> None:
        """A channel reply posted (in ``thread`` when given); any other told to ``user``."""
        if reply.visibility != "channel":
            sender.ephemeral(channel, user, message_for(reply), thread=thread)
            return
        say_reply(sender, triage, reply, channel, thread=thread, asker=user)

    def answer_label(reply: Reply | None, *, channel: str, thread: str | None, user: str) -> None:
        """A stored label is said in the thread and redrawn on its answer; a refusal is
        told to its author alone."""
        if reply is None:
            return
        deliver(reply, channel=channel, thread=thread, user=user)
        if isinstance(reply, LabelReply):
            found = triage.labels.answer(reply.diagnosis_id)
            if found is not None:  # None: a label from a digest's thread
                answer, answer_channel, ts = found
                sender.update(answer_channel, ts, message_for(answer))

    @app.event("app_mention")
    def on_mention(event: dict[str, Any], body: dict[str, Any]) -> None:
        """A command said by mentioning the bot: a port or a list posted to the channel,
        anything else told to the person alone. Inside a thread a mention is a reply there
        (read as a label by on_message), not a command."""
        thread = event.get("thread_ts")
        if thread and thread != event.get("ts"):
            return
        event_id = str(body.get("event_id") or f"{event.get('channel')}:{event.get('ts')}")
        if first_time(event_id):
            later(answer_mention, event)

    def answer_mention(event: dict[str, Any]) -> None:
        text, user, channel = event.get("text", ""), event["user"], event["channel"]
        if deferred(text):
            sender.ephemeral(channel, user, {"text": WORKING})
        reply = triage.handle(text, user=user, channel=channel)
        deliver(reply, channel=channel, thread=None, user=user)

    @app.event("message")
    def on_message(event: dict[str, Any], body: dict[str, Any]) -> None:
        thread = event.get("thread_ts")
        if event.get("subtype") or event.get("bot_id") or not thread or thread == event.get("ts"):
            return  # only people's replies inside threads
        later(answer_thread_reply, event, body)

    def answer_thread_reply(event: dict[str, Any], body: dict[str, Any]) -> None:
        """A reply read as a label. Its thread is looked for again while the channel's
        outbox is still sending (the answer may be landing this moment); a retried
        delivery is one label (the store keeps each event once)."""
        channel, thread = event["channel"], event["thread_ts"]
        event_id = str(body.get("event_id") or f"{channel}:{event.get('ts')}")
        known = triage.labels.knows(channel, thread)
        for wait in UNKNOWN_THREAD_WAITS_S:
            if known or not sender.outbox.waiting_in(channel):
                break
            time.sleep(wait)
            known = triage.labels.knows(channel, thread)
        if not known:
            return
        reply = triage.labels.reply(
            event.get("text", ""),
            user=event["user"],
            channel=channel,
            thread_ts=thread,
            event_key=event_id,
        )
        answer_label(reply, channel=channel, thread=thread, user=event["user"])

    def on_label_action(ack: Ack, body: dict[str, Any], action: dict[str, Any]) -> None:
        ack()
        later(answer_label_action, body, action)

    def answer_label_action(body: dict[str, Any], action: dict[str, Any]) -> None:
        user = body["user"]["id"]
        channel = body.get("channel", {}).get("id")
        thread = body.get("container", {}).get("message_ts") or body.get("message", {}).get("ts")
        key = f"action:{thread}:{user}:{action.get('action_ts')}"
        if action["action_id"] in EARLIER_LABEL_ACTIONS:
            reply: LabelReply | LabelRefused | None = LabelRefused(words.LABEL_SAY_FOUND)
        else:
            raw_id, _, found = (action.get("selected_option") or {}).get("value", "").partition(":")
            if not raw_id.isdigit() or found not in FINDINGS_BY_ID:
                log.warning("ignored a label action with value %r", action.get("value"))
                return
            reply = triage.labels.button(
                int(raw_id), found, user=user, channel=channel, event_key=key
            )
        if channel:
            answer_label(reply, channel=channel, thread=thread, user=user)

    app.action(FOUND_ACTION)(on_label_action)
    for earlier in EARLIER_LABEL_ACTIONS:
        app.action(earlier)(on_label_action)

    def on_recheck(ack: Ack, body: dict[str, Any], action: dict[str, Any]) -> None:
        ack()
        later(answer_recheck, body, action)

    def answer_recheck(body: dict[str, Any], action: dict[str, Any]) -> None:
        """The port diagnosed again; the new answer goes in the first one's thread."""
        user = body["user"]["id"]
        channel = body.get("channel", {}).get("id")
        thread = body.get("container", {}).get("message_ts") or body.get("message", {}).get("ts")
        raw_id = str(action.get("value", ""))
        if not raw_id.isdigit() or not channel:
            log.warning("ignored a check-again action with value %r", raw_id)
            return
        reply = triage.recheck(int(raw_id), user=user, channel=channel)
        deliver(reply, channel=channel, thread=thread, user=user)

    app.action(RECHECK_ACTION)(on_recheck)

    @app.error
    def on_error(error: Exception, body: dict[str, Any], context: BoltContext) -> None:
        reference = uuid.uuid4().hex[:8]
        log.error(
            "error %s handling a %s request",
            reference,
            body.get("type", "slash command"),
            exc_info=error,
        )

    return app


def run_socket_mode(app: App, settings: Settings) -> None:
    """Connect out to Slack over a WebSocket and answer until stopped."""
    from slack_bolt.adapter.socket_mode import SocketModeHandler

    if settings.slack_app_token is None:
        raise LinktriageError(words.SOCKET_MODE_NEEDS_TOKEN)
    handler = SocketModeHandler(app, settings.slack_app_token.get_secret_value())
    handler.start()  # type: ignore[no-untyped-call]  # bolt leaves it unannotated
