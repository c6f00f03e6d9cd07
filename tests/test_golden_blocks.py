"""The Block Kit messages the bot posts, kept as golden files: any change to them shows here.

Guarded, each against one file in ``fixtures/golden/`` (JSON, indent 2, keys sorted):

- one diagnosis answer per verdict, tree verdicts and guard verdicts alike, its first
  message and its thread (``diagnosis-<verdict>.json``), each the packaged model's real
  answer for a port of a recorded snapshot file, with its chart following in the thread;
- a digest of suspect links with new links, cleared ones, a device not read and ports
  not judged (``digest.json``);
- the packaged model's card (``model-card.json``).

A message that differs from its file fails, naming the file. When the change is meant,
rewrite the files and review their diff before committing:

    LINKTRIAGE_UPDATE_GOLDEN=1 .venv/bin/pytest tests/test_golden_blocks.py    (make golden)

Every message is also read back by slack_sdk's Block Kit models, which check Slack's
limits, so a golden file cannot hold a message Slack would refuse.
"""

from __future__ import annotations

import copy
import difflib
import json
import os
from pathlib import Path
from typing import Any

import pytest
from slack_sdk.models.blocks import Block

from linktriage.bot.history import ANSWER_SPAN_S
from linktriage.engine.diagnosis.batch import headline
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.answers import DiagnosisRecord, Verdict
from linktriage.engine.format.snapshot import read_snapshot_file
from linktriage.engine.verdicts import FAULTS, GUARD_KINDS, SEVERITY, VERDICTS
from linktriage.engine.verdicts import NOT_JUDGED as NOT_JUDGED_VERDICTS
from linktriage.render.blocks import message_for, thread_for
from linktriage.render.card import model_card_data
from linktriage.render.replies import (
    AnswerWindows,
    DiagnosisReply,
    ModelReply,
    SuspectItem,
    SuspectsReply,
)

ROOT = Path(__file__).resolve().parent.parent
GOLDEN = ROOT / "fixtures" / "golden"
UPDATE_COMMAND = "LINKTRIAGE_UPDATE_GOLDEN=1 .venv/bin/pytest tests/test_golden_blocks.py"
# Read when the module is imported: the shared fixtures clear LINKTRIAGE_* for each test.
UPDATING = os.environ.get("LINKTRIAGE_UPDATE_GOLDEN") == "1"

#: Recorded snapshot files, searched in this order; within a file, ports in (device, port)
#: order. Each verdict's answer is the first port answered with it. The demo network has a
#: port for every verdict; the expert cases would answer for one it came to lack.
SOURCES = ("fixtures/snapshots/demo-network.jsonl", "fixtures/expert/snapshots.jsonl")

AT = 1_772_438_400.0  # Mon 2 Mar 2026 08:00 UTC
DAY = 86_400.0
SITE = "central"
SERVES = "desk outlet, east wing"
ASKED_BY = "U0ENGINEER"
DIAGNOSIS_IDS = {verdict: 101 + n for n, verdict in enumerate(VERDICTS)}

# The digest lists every fault answer, worst first; two are new since the day before's
# digest, two links have cleared, one device was not read and seven ports not judged.
NEW_SINCE_LAST = {"cable_fault", "congestion"}
CLEARED = ["lark-east-idf1 port7", "lark-west-idf1 port3"]
NOT_READ = {"lark-annex-sw2": "no answer within 2 s"}
NOT_JUDGED = {  # as each guard verdict says why a port is not judged
    "too quiet to judge": 4,
    "down": 2,
    "without two usable polls": 1,
    "shut on purpose": 3,
}
PORTS_JUDGED = 91

#: The card of a model trained at a fixed moment; nothing in it depends on the machine.
TRAINED_AT = AT - 7 * DAY

CASES = [f"diagnosis-{v}.json" for v in VERDICTS] + ["digest.json", "model-card.json"]


@pytest.fixture
def packaged_model() -> Model:
    """``Model.load()`` with no kept model (the shared fixtures give an empty data folder)."""
    model = Model.load()
    assert model.trained_at is None, f"expected the packaged model, loaded {model.source}"
    return model


@pytest.fixture
def answers(packaged_model: Model) -> dict[Verdict, DiagnosisRecord]:
    """Each verdict's first answer in the recorded snapshot files."""
    first: dict[Verdict, DiagnosisRecord] = {}
    for source in SOURCES:
        read = read_snapshot_file(ROOT / source)
        assert read.problems == [], source
        batch = diagnose(read.polls, packaged_model)
        for row in sorted(range(len(batch)), key=lambda i: (batch.device[i], batch.port[i])):
            first.setdefault(batch.verdict[row], batch.record(row))
    return first


def valid_block_kit(message: dict[str, Any]) -> None:
    """What Slack checks, as far as slack_sdk's Block Kit models know it."""
    assert message["text"], "a message needs its notification text"
    assert len(message["blocks"]) <= 50, "Slack takes at most 50 blocks per message"
    for raw in message["blocks"]:
        block = Block.parse(copy.deepcopy(raw))
        assert block is not None, f"not a Block Kit block: {raw}"
        block.validate_json()  # raises on a broken limit or a missing field
        assert block.to_dict() == raw, f"slack_sdk reads this block otherwise: {raw}"


def matches_golden(name: str, message: dict[str, Any], *thread: dict[str, Any]) -> None:
    """The message (and the messages of its thread) equal ``fixtures/golden/<name>``, or
    rewrite it when updating."""
    for each in (message, *thread):
        valid_block_kit(each)
    path = GOLDEN / name
    kept_as = {"message": message, "thread": list(thread)} if thread else message
    drawn = json.dumps(kept_as, indent=2, sort_keys=True, ensure_ascii=False) + "\n"
    kept = path.read_text(encoding="utf-8") if path.exists() else None
    if UPDATING:
        if drawn != kept:
            GOLDEN.mkdir(parents=True, exist_ok=True)
            path.write_text(drawn, encoding="utf-8")
        return
    where = path.relative_to(ROOT)
    if kept is None:
        pytest.fail(f"{where} is missing; write it with: {UPDATE_COMMAND}", pytrace=False)
    if drawn != kept:
        diff = difflib.unified_diff(
            kept.splitlines(), drawn.splitlines(), "golden", "drawn", n=0, lineterm=""
        )
        first = "\n".join(list(diff)[2:5])
        pytest.fail(
            f"the message drawn differs from {where}:\n{first}\n"
            f"if the change is meant, rewrite the golden files with: {UPDATE_COMMAND}",
            pytrace=False,
        )


@pytest.mark.parametrize("verdict", VERDICTS, ids=str)
def test_each_verdicts_answer_draws_as_its_golden_file(
    verdict: Verdict, answers: dict[Verdict, DiagnosisRecord]
) -> None:
    assert verdict in answers, (
        f"no port of {SOURCES} is answered {verdict}: build its snapshot lines with "
        "tests/helpers.py, saying where their counter values come from"
    )
    # As the bot answers where the store holds the port's history: its chart follows the
    # thread (what the messages say of it does not depend on the windows drawn).
    windows = AnswerWindows([], [], stored=True, span_s=ANSWER_SPAN_S)
    reply = DiagnosisReply(
        answers[verdict], DIAGNOSIS_IDS[verdict], SITE, SERVES, asked_by=ASKED_BY, at=AT,
        windows=windows,
    )  # fmt: skip
    matches_golden(f"diagnosis-{verdict}.json", message_for(reply), *thread_for(reply))


def test_the_digest_draws_as_its_golden_file(answers: dict[Verdict, DiagnosisRecord]) -> None:
    assert set(NOT_JUDGED) == {GUARD_KINDS[v].not_judged for v in NOT_JUDGED_VERDICTS}, (
        "one count per guard that does not judge"
    )
    worst_first = sorted(FAULTS, key=lambda v: (-SEVERITY[v], VERDICTS.index(v)))
    items = [
        SuspectItem(
            rank,
            answers[verdict],
            DIAGNOSIS_IDS[verdict],
            headline(answers[verdict]),
            new=verdict in NEW_SINCE_LAST,
        )
        for rank, verdict in enumerate(worst_first, start=1)
    ]
    digest = SuspectsReply(
        title="Digest of suspect links",
        items=items,
        ports_judged=PORTS_JUDGED,
        not_judged=NOT_JUDGED,
        failed=NOT_READ,
        at=AT,
        since=AT - DAY,
        cleared=CLEARED,
        digest_id=12,
        kind="digest",
    )
    matches_golden("digest.json", message_for(digest))


def test_the_model_card_draws_as_its_golden_file(packaged_model: Model) -> None:
    card = model_card_data(
        packaged_model.artefact, source=packaged_model.source, trained_at=TRAINED_AT
    )
    matches_golden("model-card.json", message_for(ModelReply(card)))


def test_the_golden_folder_holds_no_file_but_these_cases() -> None:
    stale = sorted({p.name for p in GOLDEN.glob("*")} - set(CASES))
    if UPDATING:
        for name in stale:
            (GOLDEN / name).unlink()
        return
    if stale:
        pytest.fail(f"no case draws {stale}: remove them, or run {UPDATE_COMMAND}", pytrace=False)
