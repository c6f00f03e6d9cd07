"""The console transport: the bot's commands at a local prompt, replies drawn as text.

Threads are emulated: every answer posted "to the channel" gets a message id, and
``reply TEXT`` answers in the thread of the latest one, exactly as a Slack thread reply
would, so labels go through the same path.
"""

from __future__ import annotations

import uuid
from collections.abc import Callable, Iterable

from linktriage.bot.triage import Triage
from linktriage.render import words
from linktriage.render.replies import Reply
from linktriage.render.text import render

CHANNEL = "console"
PROMPT = "triage> "
GREETING = words.CONSOLE_GREETING


class Console:
    """One local conversation with the bot."""

    def __init__(self, triage: Triage, *, user: str = "console") -> None:
        self.triage = triage
        self.user = user
        self.thread: str | None = None  # message id of the latest answer

    def say(self, line: str) -> str | None:
        """The bot's answer to one line typed at the prompt (None: nothing to say)."""
        text = line.strip()
        if not text:
            return None
        head, _, rest = text.partition(" ")
        if head.lower() == "reply":
            return self._reply(rest.strip())
        reply = self.triage.handle(text, user=self.user, channel=CHANNEL, spelt="")
        shown = render(reply)
        posted = self._post(reply)
        if posted:
            shown += "\n" + words.CONSOLE_LABEL_PROMPT
        return shown

    def _post(self, reply: Reply) -> bool:
        """Give a channel answer its message id, as Slack would; True if it has a thread.
        The id is unique in the store for ever (not counted per session), so a reply in a
        later session never lands on an earlier session's answer."""
        ts = f"console-{uuid.uuid4().hex}"
        if not self.triage.posted(reply, channel=CHANNEL, ts=ts):
            return False
        self.thread = ts
        return True

    def _reply(self, text: str) -> str:
        if self.thread is None:
            return words.CONSOLE_NOTHING_TO_REPLY
        if not text:
            return words.CONSOLE_REPLY_WHAT
        label = self.triage.labels.reply(
            text,
            user=self.user,
            channel=CHANNEL,
            thread_ts=self.thread,
            event_key=f"console:{uuid.uuid4()}",
            source="console",
        )
        if label is None:
            return words.CONSOLE_NOT_A_LABEL
        return render(label)

    def run(self, lines: Iterable[str], write: Callable[[str], None]) -> None:
        """Answer lines until they run out or one says quit."""
        write(GREETING)
        for line in lines:
            if line.strip().lower() in ("quit", "exit"):
                break
            answer = self.say(line)
            if answer is not None:
                write(answer)
