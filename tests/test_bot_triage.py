"""The bot's front: commands routed, bad requests answered short and audited, one port
answered with where it is and what it serves."""

from __future__ import annotations

import pytest

from linktriage.bot.triage import Triage
from linktriage.render.replies import (
    ErrorReply,
    HelpReply,
    ModelReply,
)


@pytest.mark.parametrize(
    ("text", "said"),
    [
        ("lark-east-idf9 port1", "No device named 'lark-east-idf9'."),
        ("east port1", "'east' fits 2 devices."),
        ("lark-core1 up99", "lark-core1 has no port named 'up99'."),
        ("lark-core1", "Name one device and one port"),
        ("suspects mars", "No site or device named 'mars'."),
    ],
)
def test_bad_requests_get_a_short_answer_and_are_audited(
    triage: Triage, text: str, said: str
) -> None:
    reply = triage.handle(text, user="U1", channel="C1")
    assert isinstance(reply, ErrorReply)
    assert reply.message.startswith(said)
    assert reply.visibility == "ephemeral"
    (entry,) = triage.store.audit_log()
    assert entry["command"] == text and entry["outcome"].startswith("error: ")


def test_help_and_model_are_answered_privately(triage: Triage) -> None:
    assert isinstance(triage.handle("help"), HelpReply)
    card = triage.handle("model")
    assert isinstance(card, ModelReply) and card.visibility == "ephemeral"
    assert card.card["version"] == triage.model.version
