"""The Slack transport: slack-bolt wiring around the transport-free service.

Slash commands are acknowledged at once (Slack wants an answer within 3 seconds): help,
the model card and anything malformed or unknown (a name checked against the network,
nothing polled) are answered in the acknowledgement itself, privately; a port or a list of
suspects gets a short "looking" note, then the work runs after the acknowledgement and the
answer is posted to the channel, where its thread collects what engineers found; a
history's chart and a tree's picture follow in that thread as PNG uploads. A mention of
the bot at the top of a channel (``@linktriage lark-core1 up3``) is the same command,
answered the same way. Thread replies and the label buttons become labels.

Two ways in: Socket Mode (no public URL; the default) and HTTP mode, whose listener
(:mod:`linktriage.transports.slack_http`) checks each request before it hands it to bolt.
"""

from __future__ import annotations

import logging
import uuid
from collections import OrderedDict
from typing import Any, assert_never

from slack_bolt import Ack, App, BoltContext, Respond
from slack_sdk import WebClient
from slack_sdk.errors import SlackApiError, SlackClientError
from slack_sdk.http_retry.builtin_handlers import RateLimitErrorRetryHandler

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
from linktriage.engine.verdicts import TREE_VERDICTS
from linktriage.errors import LinktriageError
from linktriage.render import words
from linktriage.render.blocks import (
    CONFIRM_ACTION,
    CORRECT_ACTION,
    RECHECK_ACTION,
    message_for,
    thread_for,
)
from linktriage.render.charts import pictures_for
from linktriage.render.replies import LabelReply, Reply
from linktriage.settings import Settings

log = logging.getLogger("linktriage.slack")
WORKING = words.WORKING


def post_reply(client: WebClient, channel: str, reply: Reply, *, thread: str | None = None) -> str:
    """Post a reply to a channel (into ``thread`` when given), and what follows it in its
    thread, at once; returns its ``ts``. Raises SlackApiError when Slack refuses the first
    message."""
    posted = client.chat_postMessage(channel=channel, thread_ts=thread, **message_for(reply))
    ts = str(posted["ts"])
    for follow in thread_for(reply):
        client.chat_postMessage(channel=channel, thread_ts=thread or ts, **follow)
    return ts


def upload_pictures(client: WebClient, channel: str, ts: str, reply: Reply) -> None:
    """The reply's pictures (a history's chart, a tree's path) into its thread, through
    Slack's external upload (files.getUploadURLExternal, the bytes, then
    files.completeUploadExternal with the thread). The answer is already posted: a picture
    that cannot go up is logged, not retried."""
    for picture in pictures_for(reply):
        try:
            client.files_upload_v2(
                channel=channel,
                thread_ts=ts,
                file=picture.data,
                filename=picture.filename,
                title=picture.title,
                alt_txt=picture.alt,
            )
        except SlackClientError as exc:
            error = exc.response.get("error") if isinstance(exc, SlackApiError) else exc
            log.warning("could not upload %s to %s: %s", picture.filename, channel, error)


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


def web_client(settings: Settings) -> WebClient:
    """A Web API client for the bot token, at the configured base URL."""
    token = settings.slack_bot_token.get_secret_value() if settings.slack_bot_token else None
    return WebClient(
        token=token,
        base_url=settings.slack_api_url,
        retry_handlers=[RateLimitErrorRetryHandler(max_retry_count=2)],
    )


def group_members(client: WebClient) -> Any:
    """Members of a user group by id (scope usergroups:read); none when Slack says no."""

    def members(group: str) -> set[str]:
        try:
            return set(client.usergroups_users_list(usergroup=group)["users"])
        except SlackApiError as exc:
            log.warning("could not list user group %s: %s", group, exc.response.get("error"))
            return set()

    return members


class _Seen:
    """Event ids already handled, so a retried delivery does nothing twice."""

    def __init__(self, size: int = 2000) -> None:
        self._ids: OrderedDict[str, None] = OrderedDict()
        self._size = size

    def first_time(self, event_id: str) -> bool:
        if event_id in self._ids:
            return False
        self._ids[event_id] = None
        if len(self._ids) > self._size:
            self._ids.popitem(last=False)
        return True


def build_app(
    triage: Triage,
    settings: Settings,
    *,
    client: WebClient | None = None,
    **app_options: Any,
) -> App:
    """The bolt app answering ``/triage``, thread replies and the label buttons."""
    secret = settings.slack_signing_secret
    app = App(
        client=client or web_client(settings),
        signing_secret=secret.get_secret_value() if secret else None,
        **app_options,
    )
    seen = _Seen()

    def deferred(text: str) -> bool:
        """Whether a command needs polls, so its answer comes after the acknowledgement;
        its names are checked first (no polling), so a wrong one is answered at once."""
        try:
            return answered_later(triage.settle(text))
        except LinktriageError:
            return False  # answered at once, with the reason

    def ack_triage(ack: Ack, command: dict[str, Any]) -> None:
        text = command.get("text", "")
        if deferred(text):
            ack(response_type="ephemeral", text=WORKING)
            return
        reply = triage.handle(text, user=command.get("user_id"), channel=command.get("channel_id"))
        ack(response_type="ephemeral", **message_for(reply))

    def answer_triage(command: dict[str, Any], client: WebClient, respond: Respond) -> None:
        text = command.get("text", "")
        if not deferred(text):
            return  # already answered in the acknowledgement
        channel = command["channel_id"]
        reply = triage.handle(text, user=command.get("user_id"), channel=channel)
        message = message_for(reply)
        if reply.visibility != "channel":
            respond(response_type="ephemeral", replace_original=False, **message)
            return
        try:
            ts = post_reply(client, channel, reply)
        except SlackApiError as exc:
            error = exc.response.get("error")
            log.warning("could not post to %s: %s", channel, error)
            respond(
                response_type="ephemeral",
                text=words.cannot_post(str(error)),
                blocks=message["blocks"],
            )
            return
        triage.posted(reply, channel=channel, ts=ts)
        upload_pictures(client, channel, ts, reply)

    app.command(COMMAND)(ack=ack_triage, lazy=[answer_triage])

    def deliver(
        reply: Reply, client: WebClient, *, channel: str, thread: str | None, user: str
    ) -> str | None:
        """A channel reply posted (in ``thread`` when given), returning its ``ts``; any
        other told to ``user`` alone."""
        message = message_for(reply)
        if reply.visibility != "channel":
            client.chat_postEphemeral(channel=channel, user=user, thread_ts=thread, **message)
            return None
        return str(client.chat_postMessage(channel=channel, thread_ts=thread, **message)["ts"])

    def answer_label(
        reply: Reply | None, client: WebClient, *, channel: str, thread: str | None, user: str
    ) -> None:
        """A stored label is said in the thread and redrawn on its answer; a refusal is
        told to its author alone."""
        if reply is None:
            return
        deliver(reply, client, channel=channel, thread=thread, user=user)
        if isinstance(reply, LabelReply):
            redraw(reply.diagnosis_id, client)

    def redraw(diagnosis_id: int, client: WebClient) -> None:
        """The answer updated in place: who labelled it, and buttons to match."""
        found = triage.labels.answer(diagnosis_id)
        if found is None:
            return  # a label from a digest's thread: its answer was never posted alone
        answer, channel, ts = found
        try:
            client.chat_update(channel=channel, ts=ts, **message_for(answer))
        except SlackApiError as exc:
            log.warning(
                "could not update answer %s in %s: %s", ts, channel, exc.response.get("error")
            )

    @app.event("app_mention")
    def on_mention(event: dict[str, Any], body: dict[str, Any], client: WebClient) -> None:
        """A command said by mentioning the bot: a port or a list posted to the channel,
        anything else told to the person alone. Inside a thread a mention is a reply there
        (read as a label by on_message), not a command."""
        thread = event.get("thread_ts")
        if thread and thread != event.get("ts"):
            return
        event_id = str(body.get("event_id") or f"{event.get('channel')}:{event.get('ts')}")
        if not seen.first_time(event_id):
            return
        text, user, channel = event.get("text", ""), event["user"], event["channel"]
        if deferred(text):
            client.chat_postEphemeral(channel=channel, user=user, text=WORKING)
        reply = triage.handle(text, user=user, channel=channel)
        if reply.visibility != "channel":
            deliver(reply, client, channel=channel, thread=None, user=user)
            return
        triage.posted(reply, channel=channel, ts=post_reply(client, channel, reply))

    @app.event("message")
    def on_message(event: dict[str, Any], body: dict[str, Any], client: WebClient) -> None:
        thread = event.get("thread_ts")
        if event.get("subtype") or event.get("bot_id") or not thread or thread == event.get("ts"):
            return  # only people's replies inside threads
        event_id = str(body.get("event_id") or f"{event.get('channel')}:{event.get('ts')}")
        if not seen.first_time(event_id):
            return
        reply = triage.labels.reply(
            event.get("text", ""),
            user=event["user"],
            channel=event["channel"],
            thread_ts=thread,
            event_key=event_id,
        )
        answer_label(reply, client, channel=event["channel"], thread=thread, user=event["user"])

    def on_label_action(
        ack: Ack, body: dict[str, Any], action: dict[str, Any], client: WebClient
    ) -> None:
        ack()
        user = body["user"]["id"]
        channel = body.get("channel", {}).get("id")
        thread = body.get("container", {}).get("message_ts") or body.get("message", {}).get("ts")
        if action["action_id"] == CONFIRM_ACTION:
            raw_id, verdict = action.get("value", ""), None
        else:
            raw_id, _, verdict = (
                (action.get("selected_option") or {}).get("value", "").partition(":")
            )
        if not raw_id.isdigit() or (verdict is not None and verdict not in TREE_VERDICTS):
            log.warning("ignored a label action with value %r", action.get("value"))
            return
        key = f"action:{thread}:{user}:{action.get('action_ts')}"
        reply = triage.labels.button(
            int(raw_id), verdict, user=user, channel=channel, event_key=key
        )
        if channel:
            answer_label(reply, client, channel=channel, thread=thread, user=user)

    app.action(CONFIRM_ACTION)(on_label_action)
    app.action(CORRECT_ACTION)(on_label_action)

    def ack_recheck(ack: Ack) -> None:
        ack()

    def answer_recheck(body: dict[str, Any], action: dict[str, Any], client: WebClient) -> None:
        """The port diagnosed again; the new answer goes in the first one's thread."""
        user = body["user"]["id"]
        channel = body.get("channel", {}).get("id")
        thread = body.get("container", {}).get("message_ts") or body.get("message", {}).get("ts")
        raw_id = str(action.get("value", ""))
        if not raw_id.isdigit() or not channel:
            log.warning("ignored a check-again action with value %r", raw_id)
            return
        reply = triage.recheck(int(raw_id), user=user, channel=channel)
        if reply.visibility != "channel":
            deliver(reply, client, channel=channel, thread=thread, user=user)
            return
        triage.posted(reply, channel=channel, ts=post_reply(client, channel, reply, thread=thread))

    app.action(RECHECK_ACTION)(ack=ack_recheck, lazy=[answer_recheck])

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
