"""Parsing the text of one ``/triage`` command into what to do.

/triage DEVICE PORT     diagnose one port now
/triage suspects [SITE] the current suspect links, ranked
/triage model           the model's card
/triage help            how to use it
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from linktriage.errors import InputError

COMMAND = "/triage"
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


class CommandError(InputError):
    """The text is not a command the bot knows; the hint shows how to ask."""


USAGE = f"Try `{COMMAND} DEVICE PORT`, `{COMMAND} suspects [SITE]`, or `{COMMAND} help`."


def parse(text: str) -> Command:
    """What a person asked for; malformed text raises :class:`CommandError`."""
    words = text.strip().split()
    if words and words[0].lower() in (COMMAND, COMMAND.lstrip("/")):
        words = words[1:]  # the console accepts the command name typed out
    if not words or words[0].lower() in ("help", "?", "-h", "--help"):
        return ShowHelp()
    head = words[0].lower()
    if head == "suspects":
        if len(words) > 2:
            raise CommandError("`suspects` takes at most one site.", hint=USAGE)
        return ListSuspects(words[1] if len(words) == 2 else None)
    if head == "model":
        if len(words) > 1:
            raise CommandError("`model` takes nothing after it.", hint=USAGE)
        return ShowModel()
    if len(words) != 2:
        raise CommandError(
            "Name one device and one port, e.g. `lark-east-idf2 port14`.", hint=USAGE
        )
    for word, pattern in zip(words, (_DEVICE, _PORT), strict=True):
        if not pattern.fullmatch(word):
            raise CommandError(f"{word[:40]!r} is not a device or port name.", hint=USAGE)
    return DiagnosePort(words[0], words[1])
