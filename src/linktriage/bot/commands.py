"""Parsing the text of one ``/triage`` command into what to do.

/triage DEVICE PORT     diagnose one port now
/triage history DEVICE PORT [SINCE]  the port's verdicts over time, from stored polls
/triage tree DEVICE PORT             the tree's path for the port, as a picture
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
class ShowHistory:
    device: str
    port: str
    since_s: float


@dataclass(frozen=True, slots=True)
class ShowTree:
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


Command = DiagnosePort | ShowHistory | ShowTree | ListSuspects | ShowModel | ShowHelp

#: How far back a history reaches unless asked otherwise: the last day, a night's on-call.
DEFAULT_HISTORY_S = 86_400.0
_SPAN = re.compile(r"(\d+(?:\.\d+)?)([smhd])")
_UNIT_S = {"s": 1.0, "m": 60.0, "h": 3600.0, "d": 86_400.0}


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
    if head == "history":
        if len(tokens) not in (3, 4):
            raise CommandError(words.HISTORY_NAMES, hint=usage)
        device, port = _names(tokens[1:3], usage)
        try:
            since_s = span_seconds(tokens[3]) if len(tokens) == 4 else DEFAULT_HISTORY_S
        except CommandError as exc:
            raise CommandError(exc.message, hint=usage) from None
        return ShowHistory(device, port, since_s)
    if head == "tree":
        if len(tokens) != 3:
            raise CommandError(words.TREE_NAMES, hint=usage)
        return ShowTree(*_names(tokens[1:3], usage))
    if len(tokens) != 2:
        raise CommandError(words.NAME_DEVICE_AND_PORT, hint=usage)
    return DiagnosePort(*_names(tokens, usage))


def _names(tokens: list[str], usage: str) -> tuple[str, str]:
    """A device and a port name as typed, refusing anything that cannot be one."""
    for word, pattern in zip(tokens, (_DEVICE, _PORT), strict=True):
        if not pattern.fullmatch(word):
            raise CommandError(words.not_a_name(word), hint=usage)
    return tokens[0], tokens[1]


def span_seconds(text: str) -> float:
    """A span of time as people write it (``90m``, ``24h``, ``2d``, ``3600s``), in seconds;
    anything else, or nothing at all, raises :class:`CommandError`."""
    found = _SPAN.fullmatch(text.strip().lower())
    seconds = float(found[1]) * _UNIT_S[found[2]] if found else 0.0
    if seconds <= 0:
        raise CommandError(words.not_a_span(text))
    return seconds
