"""Replies drawn as plain text: the console transport and the demo."""

from __future__ import annotations

from datetime import UTC, datetime

from linktriage.chat.replies import (
    DiagnosisReply,
    ErrorReply,
    HelpReply,
    LabelReply,
    ModelReply,
    Reply,
    SuspectsReply,
)
from linktriage.messages import help_lines, label_recorded, printable
from linktriage.render.card import card_text
from linktriage.render.text import explanation


def _when(at: float) -> str:
    return datetime.fromtimestamp(at, UTC).strftime("%Y-%m-%d %H:%M UTC")


def suspects_text(reply: SuspectsReply) -> str:
    lines = [f"{reply.title}, {_when(reply.at)}", printable(reply.coverage)]
    if reply.since is not None:
        new = sum(1 for i in reply.items if i.new)
        lines.append(
            f"since the last digest ({_when(reply.since)}): {new} new, {len(reply.cleared)} cleared"
        )
    for item in reply.items:
        r = item.record
        mark = "  new" if item.new else ""
        lines.append(
            f"{item.rank:>3}. {printable(r['device'])} {printable(r['port'])}: {r['title']} "
            f"({r['verdict']}), "
            f"confidence {r['confidence']:.2f}{mark}"
        )
        lines.append(f"     {item.reason}")
    if reply.cleared:
        lines.append(f"cleared: {printable(', '.join(reply.cleared))}")
    return "\n".join(lines)


def render(reply: Reply) -> str:
    """Any reply as text."""
    if isinstance(reply, DiagnosisReply):
        where = f"({reply.serves}, {reply.site})\n" if reply.serves else ""
        return where + explanation(reply.record)
    if isinstance(reply, SuspectsReply):
        return suspects_text(reply)
    if isinstance(reply, HelpReply):
        return "\n".join(f"- {line}" for line in help_lines(reply.command))
    if isinstance(reply, ModelReply):
        return card_text(reply.card)
    if isinstance(reply, ErrorReply):
        return reply.message if reply.hint is None else f"{reply.message}\n{reply.hint}"
    if isinstance(reply, LabelReply):
        where = f"{reply.device} {reply.port}"
        return label_recorded(
            reply.user,
            reply.verdict,
            reply.model_verdict,
            where,
            reply.note,
            replaced=reply.replaced,
            disputed_with=reply.disputed_with,
        )
    return reply.message
