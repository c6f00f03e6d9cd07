"""Block Kit replies stay within Slack's limits and cannot be made to mention anyone.

Limits are checked by slack_sdk's own block models (``Block.parse(...).validate_json()``),
the reference for Block Kit's per-element limits, plus the 50-blocks-per-message rule.
"""

from __future__ import annotations

import copy
import dataclasses
import json
from typing import Any

import pytest
from slack_sdk.models.blocks import Block

from linktriage.bot.commands import FORMS
from linktriage.bot.history import verdict_runs
from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.format.answers import DiagnosisRecord
from linktriage.render.blocks import (
    FIRST_SCREEN,
    MAX_BLOCKS,
    MAX_RUNS,
    escape,
    message_for,
    text_size,
    thread_for,
)
from linktriage.render.card import model_card_data
from linktriage.render.replies import (
    DiagnosisReply,
    ErrorReply,
    HelpReply,
    HistoryPoint,
    HistoryReply,
    LabelReply,
    ModelReply,
    SuspectItem,
    SuspectsReply,
    TreeReply,
)
from linktriage.render.text import render


def within_limits(message: dict[str, Any]) -> None:
    assert len(message["blocks"]) <= MAX_BLOCKS
    assert message["text"] and len(message["text"]) <= 3000
    for raw in message["blocks"]:
        Block.parse(copy.deepcopy(raw)).validate_json()  # type: ignore[union-attr]


@pytest.fixture
def cable(triage: Triage) -> DiagnosisReply:
    reply = triage.handle("lark-east-idf2 port14")
    assert isinstance(reply, DiagnosisReply)
    return reply


def test_an_answer_reads_verdict_evidence_first_checks_cautions_then_buttons(
    cable: DiagnosisReply,
) -> None:
    message = message_for(cable)
    within_limits(message)
    kinds = [b["type"] for b in message["blocks"]]
    assert kinds[:3] == ["header", "context", "section"]
    text = json.dumps(message["blocks"])
    assert "*Evidence:*" in text and "*Check first*" in text
    assert ":warning:" in text  # cautions look different from checks
    assert kinds.index("actions") > kinds.index("section")
    assert "*Questions asked*" not in text  # the path is in the thread


def test_an_answers_thread_holds_the_path_every_check_and_every_caution(
    cable: DiagnosisReply,
) -> None:
    why, steps = thread_for(cable)
    for message in (why, steps):
        within_limits(message)
    assert "*Questions asked*" in json.dumps(why["blocks"])
    assert "*Check next*" in json.dumps(steps["blocks"]) and "*Safety*" in json.dumps(
        steps["blocks"]
    )


def test_an_answers_thread_says_its_chart_follows_and_what_it_draws(
    cable: DiagnosisReply,
) -> None:
    # Nothing was stored before the question: the chart draws the polls it rests on.
    assert cable.windows is not None and not cable.windows.stored
    why, _ = thread_for(cable)
    assert why["blocks"][-1]["elements"][0]["text"] == (
        "The chart below draws the errored frames and link changes of each window of the "
        "polls it rests on."
    )
    first = json.dumps(message_for(cable)["blocks"])
    assert "chart" not in first  # redrawn when labelled, from the store, without windows
    why, _ = thread_for(dataclasses.replace(cable, windows=None))
    assert "chart" not in json.dumps(why["blocks"])  # no windows, no chart, no word of one


def test_what_would_change_the_verdict_follows_the_questions(
    triage: Triage, cable: DiagnosisReply
) -> None:
    optic = triage.handle("lark-east-idf1 up1")
    assert isinstance(optic, DiagnosisReply)
    why, _ = thread_for(optic)  # the path is in the answer's thread
    within_limits(why)
    texts = [json.dumps(b) for b in why["blocks"]]
    asked = next(k for k, text in enumerate(texts) if "*Questions asked*" in text)
    assert why["blocks"][asked + 1]["type"] == "context"
    assert (
        "What would change the verdict: this port would be cable or connector fault with "
        "received light above 0.7 dB"
    ) in texts[asked + 1]
    # No one change of a reading moves this answer: nothing is drawn.
    assert cable.record["nearest_other"] is None
    assert "What would change" not in json.dumps(thread_for(cable))
    # An answer kept in the store by an earlier release, redrawn when someone labels it.
    kept = {k: v for k, v in optic.record.items() if k != "nearest_other"}
    redrawn = [message_for(dataclasses.replace(optic, record=kept))]
    redrawn += thread_for(dataclasses.replace(optic, record=kept))
    for each in redrawn:
        within_limits(each)
    assert "What would change" not in json.dumps(redrawn)
    assert "What would change" not in render(dataclasses.replace(optic, record=kept))


def test_a_long_path_is_split_and_still_within_limits(cable: DiagnosisReply) -> None:
    record: DiagnosisRecord = copy.deepcopy(cable.record)
    question = record["questions"][0]
    record["questions"] = [dict(question, said="yes: " + "9" * 400) for _ in range(40)]  # type: ignore[misc]
    record["device"] = "d" * 200
    reply = DiagnosisReply(record, 1, "central", "x" * 500)
    within_limits(message_for(reply))
    why, _ = thread_for(reply)
    within_limits(why)
    sections = [b for b in why["blocks"] if b["type"] == "section"]
    assert len(sections) > 4  # the path spilled over several sections


def _suspects(cable: DiagnosisReply, count: int) -> SuspectsReply:
    items = [
        SuspectItem(
            n,
            cable.record,
            n,
            "More than 2.9 in 100,000 received frames fail? yes: " + "7" * 80,
            new=n % 2 == 0,
        )
        for n in range(1, count + 1)
    ]
    return SuspectsReply(
        "Digest of suspect links", items, 5000, {"insufficient_traffic": 3},
        {"lark-west-idf1": "no answer within 2 s"}, 1.0, since=0.5, cleared=["a b"],
    )  # fmt: skip


def _ranks(message: dict[str, Any]) -> list[int]:
    return [
        int(line.split(".*")[0].lstrip("*"))
        for b in message["blocks"] if b["type"] == "section"
        for line in b["text"]["text"].splitlines() if line.startswith("*")
    ]  # fmt: skip


@pytest.mark.parametrize("count", [3, 200, 2000])
def test_a_long_digest_lists_the_worst_first_and_the_rest_in_its_thread(
    cable: DiagnosisReply, count: int
) -> None:
    reply = _suspects(cable, count)
    first, rest = message_for(reply), thread_for(reply)
    for message in (first, *rest):
        within_limits(message)
        # Slack refuses blocks of about 13,000 characters (slackapi/bolt-js#2509).
        assert len(json.dumps(message["blocks"], ensure_ascii=False)) <= 13_000
    ranks = [rank for message in (first, *rest) for rank in _ranks(message)]
    assert ranks == list(range(1, count + 1))  # every link once, worst first
    # Issue 21: a 400-link list's first message held 12,000 characters, 14 phone screens.
    assert text_size(first["blocks"]) <= FIRST_SCREEN
    shown = _ranks(first)
    assert shown  # the worst links are on the first screen
    if count > len(shown):
        assert f"\u2026 and {count - len(shown)} more in this message's thread." in json.dumps(
            first["blocks"], ensure_ascii=False
        )
    else:
        assert rest == []


def test_text_from_people_cannot_mention_or_link() -> None:
    assert escape("<!channel> & <https://x|y>") == "&lt;!channel&gt; &amp; &lt;https://x|y&gt;"
    reply = LabelReply("U1", "sw<!here>", "p1", "cable_fault", "cable_fault", "<!channel> *loud*")
    message = message_for(reply)
    within_limits(message)
    note = next(b for b in message["blocks"] if b["type"] == "context")["elements"][0]
    assert note == {"type": "plain_text", "text": "found: <!channel> *loud*"}  # read as text
    mrkdwn = json.dumps([message["text"], message["blocks"][0]])
    assert "<!here>" not in mrkdwn and "<!channel>" not in mrkdwn


def test_the_other_replies_fit_too(model: Model) -> None:
    for reply in (
        HelpReply("/triage", tuple((form.form, form.does) for form in FORMS)),
        ModelReply(model_card_data(model.artefact, source="x")),
        ErrorReply("No device named 'x<!channel>'.", "Did you mean: y?"),
    ):
        message = message_for(reply)
        within_limits(message)
        assert "<!channel>" not in json.dumps(message)


def _history(verdicts: list[str]) -> HistoryReply:
    points: list[HistoryPoint] = [
        {
            "start": 1772434800.0 + 300 * k,
            "end": 1772435100.0 + 300 * k,
            "verdict": v,
            "confidence": 1.0,
            "polls": 2,
            "error_ratio": 0.0,
            "bit_error_ratio": 0.0,
            "objective": 1e-10,
            "rx_errors": 0.0,
            "in_discards": 0.0,
            "out_discards": 0.0,
            "rx_util": 0.1,
            "tx_util": 0.1,
        }
        for k, v in enumerate(verdicts)
    ]
    return HistoryReply(
        "lark-east-idf2", "port14", "central", "desk <@U0BOSS>", 1772434800.0, 6 * 3600.0,
        points, verdict_runs(points), "52cbdda12037",
    )  # fmt: skip


def test_a_history_says_when_it_changed_and_its_latest_runs_within_limits() -> None:
    message = message_for(_history(["healthy", "cable_fault"] * 36))  # flapping all along
    within_limits(message)
    blocks = message["blocks"]
    assert blocks[0]["text"]["text"] == "lark-east-idf2 port14: the last 6 h"
    assert blocks[2]["text"]["text"] == (
        "*cable_fault since 12:55 UTC, healthy before (71 changes since Mon 02 Mar 07:00 UTC)*"
    )
    runs = "\n".join(b["text"]["text"] for b in blocks[3:-1])
    assert blocks[-1]["elements"][0]["text"].startswith("Chart of the evidence")
    assert runs.count("\u2022 ") == MAX_RUNS and runs.endswith("cable_fault (1 window)")
    assert "<@U0BOSS>" not in json.dumps(blocks)  # what a device says it serves is escaped


def test_a_tree_answer_lists_the_path_or_says_no_tree_was_asked(
    triage: Triage, cable: DiagnosisReply
) -> None:
    tree = triage.handle("tree lark-east-idf2 port14")
    assert isinstance(tree, TreeReply) and tree.node >= 0
    message = message_for(tree)
    within_limits(message)
    said = message["blocks"][1]["text"]["text"]
    assert said.startswith("*Questions asked*\n1. ")
    assert said.count("\u2192") == len(cable.record["questions"])
    down = message_for(triage.handle("tree lark-west-idf1 port9"))
    assert "The tree was not asked: link_down is decided by a guard" in json.dumps(down)


def test_an_answer_the_link_decided_says_so_and_keeps_what_this_port_says_alone(
    triage: Triage,
) -> None:
    # The demo's one-way fiber, asked at the end that sends (lark-west-idf1 up1): alone its
    # counters look healthy; the far end, read by the poll job, receives nothing of it.
    triage.poller.poll_round()
    reply = triage.handle("lark-west-idf1 up1")
    assert isinstance(reply, DiagnosisReply)
    record = reply.record
    assert record["verdict"] == "unidirectional"
    assert record["own_view"]["verdict"] == "healthy"
    message = message_for(reply)
    within_limits(message)
    first = json.dumps(message["blocks"])
    assert "one-way link" in first and "lark-core1 up3 receives 0" in first
    assert "this port's own counters alone say healthy" in first
    why, steps = thread_for(reply)
    for part in (why, steps):
        within_limits(part)
    thread = json.dumps(why["blocks"])
    assert "*This port alone: healthy*" in thread
    assert "*Questions asked of this port's own counters*" in thread
    assert "at lark-west-idf1 up1: its transmit side" in json.dumps(steps["blocks"])
    text = render(reply)
    assert text.index("Both ends") < text.index("This port alone: healthy")
    assert text.index("This port alone: healthy") < text.index("Check next")


def test_a_strand_losing_light_is_the_answer_at_the_end_that_transmits_into_it(
    triage: Triage,
) -> None:
    # lark-core1 up1 transmits into the strand whose connector at lark-east-idf1 is damaged:
    # its own counters are clean, the link loses far more than a 10GBASE-LR channel allows.
    reply = triage.handle("lark-core1 up1")
    assert isinstance(reply, DiagnosisReply)
    assert reply.record["verdict"] == "optic_degraded"
    assert reply.record["evidence"][0]["said"].startswith(
        "lark-core1 up1 \u2192 lark-east-idf1 up1 loses"
    )
    assert reply.record["own_view"]["verdict"] == "healthy"
