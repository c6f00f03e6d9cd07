"""Parsing the text of one ``/triage`` command into what to do.

/triage DEVICE PORT     diagnose one port now
/triage suspects [SITE] the current suspect links, ranked
/triage model           the model's card
/triage help            how to use it

The same text may start with the command's name typed out or with a mention of the bot
(``@linktriage`` at the console, ``<@U...>`` as Slack sends an app mention).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from linktriage.errors import CommandError
from linktriage.render import words

COMMAND = "/triage"
#: A leading mention of the bot: its name typed with "@", or a Slack user mention
#: ("<@U0123>", "<@U0123|name>"), which is how an app mention's text begins.
_MENTION = re.compile(r"@linktriage|<@[UW][A-Z0-9]+(?:\|[^>]*)?>", re.IGNORECASE)
# What switches call themselves and their ports; a device name cannot hold a URL's ":" or
# "/". (Whatever passes here must still be a name the network lists: nothing else is polled.)
_DEVICE = re.compile(r"[A-Za-z0-9][A-Za-z0-9._\-]{0,63}")
_PORT = re.compile(r"[A-Za-z0-9][A-Za-z0-9._:/\-]{0,63}")


@dataclass(frozen=True, slots=True)
class DiagnosePort:
    device: str
    port: str


@dataclass(frozen=True, slots=True)
class ListSuspects:
    site: str | None


@dataclass(frozen=True, slots=True)
class ShowModel:
    pass


@dataclass(frozen=True, slots=True)
class ShowHelp:
    pass


Command = DiagnosePort | ListSuspects | ShowModel | ShowHelp


def parse(text: str, *, command: str = COMMAND) -> Command:
    """What a person asked for; malformed text raises :class:`CommandError`, its hint
    spelt as commands start where the text was typed (``command``; "" at the console)."""
    usage = words.usage(command)
    tokens = text.strip().split()
    if tokens and _MENTION.fullmatch(tokens[0]):
        tokens = tokens[1:]
    if tokens and tokens[0].lower() in (COMMAND, COMMAND.lstrip("/")):
        tokens = tokens[1:]  # the console accepts the command name typed out
    if not tokens or tokens[0].lower() in ("help", "?", "-h", "--help"):
        return ShowHelp()
    head = tokens[0].lower()
    if head == "suspects":
        if len(tokens) > 2:
            raise CommandError(words.SUSPECTS_TAKES_ONE_SITE, hint=usage)
        return ListSuspects(tokens[1] if len(tokens) == 2 else None)
    if head == "model":
        if len(tokens) > 1:
            raise CommandError(words.MODEL_TAKES_NOTHING, hint=usage)
        return ShowModel()
    if len(tokens) != 2:
        raise CommandError(words.NAME_DEVICE_AND_PORT, hint=usage)
    for word, pattern in zip(tokens, (_DEVICE, _PORT), strict=True):
        if not pattern.fullmatch(word):
            raise CommandError(words.not_a_name(word), hint=usage)
    return DiagnosePort(tokens[0], tokens[1])
