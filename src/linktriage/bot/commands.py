"""The commands of ``/triage``: each written once, in :data:`FORMS` (how it is typed, what it
does, how its words are read), and what a parsed one asks for, as a closed union.

Parsing, the help, the usage hint and the README's table of commands all come from
:data:`FORMS`. The same text may start with the command's name typed out or with a
mention of the bot (``@linktriage`` at the console, ``<@U...>`` as Slack sends an app
mention). Every handler of a :data:`Command` ends in ``assert_never``, so adding one
makes mypy name each place it must be handled.
"""

from __future__ import annotations

import ipaddress
import re
from collections.abc import Callable
from dataclasses import dataclass

from linktriage.errors import CommandError
from linktriage.network.watched import BEHIND
from linktriage.render import words

COMMAND = "/triage"
#: A leading mention of the bot: its name typed with "@", or a Slack user mention
#: ("<@U0123>", "<@U0123|name>"), which is how an app mention's text begins.
_MENTION = re.compile(r"@linktriage|<@[UW][A-Z0-9]+(?:\|[^>]*)?>", re.IGNORECASE)
# What switches call themselves and their ports; a device name cannot hold a URL's ":" or
# "/". (Whatever passes here must still be a name or an address the network lists: nothing
# else is polled.)
_DEVICE = re.compile(r"[A-Za-z0-9][A-Za-z0-9._\-]{0,63}")
_PORT = re.compile(r"[A-Za-z0-9][A-Za-z0-9._:/\-]{0,63}")
# A device's IPv6 address holds ":" (RFC 4291 section 2.2): taken only where the whole word
# reads as one, hexadecimal digits, colons and the dots of an embedded IPv4 address alone,
# so no port, path or URL passes with it.
_IPV6 = re.compile(r"[0-9A-Fa-f:.]{2,45}")


@dataclass(frozen=True, slots=True)
class DiagnosePort:
    """One port, named as typed: ``device`` is a device's name, a part of it or its address,
    or ``port-of`` (:data:`BEHIND`), which makes ``port`` the name of the LLDP neighbor at
    the port's far end; the history and the tree name their ports alike."""

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


def _diagnose(words_: list[str], usage: str) -> Command:
    if len(words_) != 2:
        raise CommandError(words.NAME_DEVICE_AND_PORT, hint=usage)
    return DiagnosePort(*_names(words_, usage))


def _history(words_: list[str], usage: str) -> Command:
    if len(words_) not in (2, 3):
        raise CommandError(words.HISTORY_NAMES, hint=usage)
    device, port = _names(words_[:2], usage)
    try:
        since_s = span_seconds(words_[2]) if len(words_) == 3 else DEFAULT_HISTORY_S
    except CommandError as exc:
        raise CommandError(exc.message, hint=usage) from None
    return ShowHistory(device, port, since_s)


def _tree(words_: list[str], usage: str) -> Command:
    if len(words_) != 2:
        raise CommandError(words.TREE_NAMES, hint=usage)
    return ShowTree(*_names(words_, usage))


def _behind(words_: list[str], usage: str) -> Command:
    if len(words_) != 1:
        raise CommandError(words.BEHIND_NAMES, hint=usage)
    return DiagnosePort(*_names([BEHIND, *words_], usage))


def _suspects(words_: list[str], usage: str) -> Command:
    if len(words_) > 1:
        raise CommandError(words.SUSPECTS_TAKES_ONE_SITE, hint=usage)
    return ListSuspects(words_[0] if words_ else None)


def _model(words_: list[str], usage: str) -> Command:
    if words_:
        raise CommandError(words.MODEL_TAKES_NOTHING, hint=usage)
    return ShowModel()


def _help(words_: list[str], usage: str) -> Command:
    return ShowHelp()


@dataclass(frozen=True, slots=True)
class Form:
    """One command as people type it: its first word (None for a device and a port), its
    whole form, what it does (as the help says it), and how the words after the first are
    read."""

    word: str | None
    form: str
    does: str
    read: Callable[[list[str], str], Command]


#: Every command, in the order help and usage list them.
FORMS: tuple[Form, ...] = (
    Form(
        None,
        "DEVICE PORT",
        "diagnose one port now: the device by its name, a unique part of it or its "
        "address, the port by its name with its type short or long (Gi1/0/5 or "
        "GigabitEthernet1/0/5); a chart of its evidence follows in the thread.",
        _diagnose,
    ),
    Form(
        BEHIND,
        f"{BEHIND} NEIGHBOR",
        "diagnose the port whose far end LLDP names NEIGHBOR, e.g. a printer or a phone "
        f"(`{BEHIND} NEIGHBOR` names a port for history and tree too).",
        _behind,
    ),
    Form(
        "history",
        "history DEVICE PORT [SINCE]",
        "the port's verdicts and evidence over time from the stored polls "
        "(since 24h unless told, e.g. 6h, 3d), with a chart in the thread.",
        _history,
    ),
    Form(
        "tree",
        "tree DEVICE PORT",
        "the port diagnosed now, with a picture of the tree and its path marked.",
        _tree,
    ),
    Form("suspects", "suspects [SITE]", "the suspect links, worst first.", _suspects),
    Form("model", "model", "the model's card.", _model),
    Form("help", "help", "what the bot understands.", _help),
)
_BY_WORD = {form.word: form for form in FORMS}
#: Other ways people ask for help.
_HELP_WORDS = ("?", "-h", "--help")


def usage(command: str) -> str:
    """The hint after a malformed command: every form, spelt as typed where the text came
    from (``command``; "" at the console)."""
    return words.usage([words.spelt(command, form.form) for form in FORMS])


def parse(text: str, *, command: str = COMMAND) -> Command:
    """What a person asked for; malformed text raises :class:`CommandError`, its hint
    spelt as commands start where the text was typed (``command``; "" at the console)."""
    hint = usage(command)
    tokens = text.strip().split()
    if tokens and _MENTION.fullmatch(tokens[0]):
        tokens = tokens[1:]
    if tokens and tokens[0].lower() in (COMMAND, COMMAND.lstrip("/")):
        tokens = tokens[1:]  # the console accepts the command name typed out
    if not tokens or tokens[0].lower() in _HELP_WORDS:
        return ShowHelp()
    form = _BY_WORD.get(tokens[0].lower())
    if form is None:
        return _BY_WORD[None].read(tokens, hint)
    return form.read(tokens[1:], hint)


def _names(tokens: list[str], usage: str) -> tuple[str, str]:
    """A device and a port name as typed, refusing anything that cannot be one."""
    device, port = tokens
    for word, fits in ((device, _device_word), (port, _PORT.fullmatch)):
        if not fits(word):
            raise CommandError(words.not_a_name(word), hint=usage)
    return device, port


def _device_word(word: str) -> bool:
    """Whether ``word`` can name a device: a name, or an IPv6 address written as one."""
    if _DEVICE.fullmatch(word):
        return True
    if not _IPV6.fullmatch(word):
        return False
    try:
        ipaddress.IPv6Address(word)
    except ValueError:
        return False
    return True


def span_seconds(text: str) -> float:
    """A span of time as people write it (``90m``, ``24h``, ``2d``, ``3600s``), in seconds;
    anything else, or nothing at all, raises :class:`CommandError`."""
    found = _SPAN.fullmatch(text.strip().lower())
    seconds = float(found[1]) * _UNIT_S[found[2]] if found else 0.0
    if seconds <= 0:
        raise CommandError(words.not_a_span(text))
    return seconds
