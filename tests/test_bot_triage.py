"""The bot's front: commands routed, bad requests answered short and audited, one port
answered with where it is and what it serves."""

from __future__ import annotations

from collections.abc import Sequence

import pytest

from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.format.poll_table import PollTable
from linktriage.errors import PollError
from linktriage.network.demo import DemoClock, DemoNetwork
from linktriage.render.replies import (
    DiagnosisReply,
    ErrorReply,
    HelpReply,
    ModelReply,
)
from linktriage.settings import Settings
from linktriage.store import Store


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


class FarEndSilent(DemoNetwork):
    """The demo network whose lark-west-idf1 never answers: the far end of lark-core1 up3."""

    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        if device == "lark-west-idf1":
            raise PollError(device, "no answer within 2 s")
        return super().poll(device, ports)


def test_an_answer_reads_its_far_end_and_stands_without_it_when_it_cannot_be_read(
    triage: Triage, store: Store, model: Model, clock: DemoClock
) -> None:
    # lark-core1 up3 hears nothing of lark-west-idf1 up1, so no LLDP either; the far end
    # still hears it and names it. After the poll job has read it, the link is judged from
    # both ends; where it could not be read, the port is answered alone, never with a view
    # of what was not read.
    alone_before = triage.handle("lark-core1 up3")
    assert isinstance(alone_before, DiagnosisReply) and "far_end" not in alone_before.record
    triage.poller.poll_round()
    both = triage.handle("lark-core1 up3")
    assert isinstance(both, DiagnosisReply)
    assert both.record["far_end"]["device"] == "lark-west-idf1"
    assert both.record["link"]["verdict"] == "unidirectional"
    silent = Triage(FarEndSilent(clock=clock), store, model, Settings(), clock=clock,
                    sleep=clock.sleep)  # fmt: skip
    silent.poller.poll_round()
    alone = silent.handle("lark-core1 up3")
    assert isinstance(alone, DiagnosisReply)
    assert alone.record["verdict"] == "unidirectional"
    assert "far_end" not in alone.record and "link" not in alone.record


def test_both_ends_of_a_link_are_polled_together_with_one_wait(
    triage: Triage, clock: DemoClock
) -> None:
    # Issue 21: a port whose far end had no recent poll waited the quick window for one
    # end, then again for the other (60.3 s). The last stored poll of lark-east-idf2 port7
    # names its far end (lark-circ-prn1 eth0), so both are polled at once and wait once.
    triage.poller.poll_round()
    clock.sleep(triage.settings.chat.recent_poll_s - 1.0)  # its poll is still on record
    stale = Triage(triage.network, triage.store, triage.model, triage.settings, clock=clock,
                   sleep=clock.sleep)  # a fresh process: nothing heard yet  # fmt: skip
    clock.sleep(2.0)  # now no poll of either end is recent enough to start a window
    started = clock()
    answer = stale.handle("lark-east-idf2 port7")
    assert isinstance(answer, DiagnosisReply)
    assert answer.record["far_end"]["device"] == "lark-circ-prn1"
    assert clock() - started == triage.settings.chat.quick_window_s  # one wait, not two
