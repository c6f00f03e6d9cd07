"""How sure an answer says it is: never for a guard's answer, less where it rests on little or
on readings near a question's threshold, and checked against sets the project did not write."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from linktriage.engine.diagnosis.confidence import holds
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.diagnosis.scoring import score_labelled
from linktriage.engine.format.snapshot import read_snapshots
from linktriage.engine.verdicts import GUARD_VERDICTS

from helpers import grown, polls, stepped

EXPERT = Path(__file__).parents[1] / "fixtures" / "expert"
GIG_COPPER = {"speed_bps": 10**9, "max_speed_bps": 10**9, "duplex": "full", "media": "copper"}


def clean(frames: int) -> dict[str, int]:
    return {"ifHCInOctets": frames * 1000, "ifHCInUcastPkts": frames,
            "ifHCOutOctets": frames * 1000, "ifHCOutUcastPkts": frames,
            "dot3StatsFCSErrors": 0}  # fmt: skip


def test_a_guards_answer_has_no_confidence(model: Model) -> None:
    # Down, one poll, too quiet: facts of the window, not the tree's guess.
    lines = [
        *grown(clean(10**6), port="down", last={"oper_status": "down"}, **GIG_COPPER),
        *grown(clean(10), port="quiet", **GIG_COPPER),
        grown(clean(10**6), port="once", **GIG_COPPER)[1],
    ]
    batch = diagnose(polls(*lines), model)
    for record in batch.records():
        assert record["verdict"] in GUARD_VERDICTS
        assert record["confidence"] is None


def test_no_tree_answer_claims_certainty(model: Model) -> None:
    # Laplace's rule of succession: k of n training ports at a node give (k + 1) / (n + K).
    record = diagnose(polls(*grown(clean(10**7), **GIG_COPPER)), model).record(0)
    assert record["verdict"] == "healthy"
    assert record["confidence"] is not None and 0.9 < record["confidence"] < 1.0


def test_a_healthy_answer_on_barely_enough_frames_is_less_sure(model: Model) -> None:
    # 1000BASE-T: the rule of three needs 29,956 clean frames to bound the frame error ratio
    # at 1 in 10,000; 32,000 barely do, ten million do with room to spare.
    barely = diagnose(polls(*grown(clean(32_000), **GIG_COPPER)), model).record(0)
    plenty = diagnose(polls(*grown(clean(10**7), **GIG_COPPER)), model).record(0)
    assert barely["verdict"] == plenty["verdict"] == "healthy"
    assert barely["confidence"] is not None and plenty["confidence"] is not None
    assert barely["confidence"] < 0.8 < plenty["confidence"]


def test_an_answer_on_a_restarted_window_is_less_sure(model: Model) -> None:
    # A re-seat's errors in the first interval, clean since: the answer rests on the latest
    # intervals alone, and what came before differs.
    def step(errors: int, changes: int) -> dict[str, int]:
        return {**clean(7_200_000), "dot3StatsFCSErrors": errors, "link_changes": changes}

    record = diagnose(polls(*stepped([step(5_400, 2)] + [step(0, 0)] * 9, **GIG_COPPER)), model)
    answer = record.record(0)
    assert answer["verdict"] == "healthy"
    assert answer["confidence"] is not None and answer["confidence"] <= 0.95


def test_a_reading_holds_its_side_by_its_distance_from_the_threshold() -> None:
    assert holds(np.array([0.0]))[0] == 0.5  # at the threshold: either side
    assert np.all(np.diff(holds(np.array([0.0, 1.0, 2.0, 4.0]))) > 0)
    assert holds(np.array([-4.0]))[0] == holds(np.array([4.0]))[0] > 0.99


def test_answers_given_at_095_or_more_are_right_at_least_95_percent_of_the_time(
    model: Model,
) -> None:
    # Issue 19's check, on both hand-written sets (fixtures/expert, written from the
    # standards without the engine in view).
    for lines, labels in (("snapshots.jsonl", "labels.jsonl"),
                          ("links-snapshots.jsonl", "links-labels.jsonl")):  # fmt: skip
        text = (EXPERT / lines).read_bytes().splitlines()
        truth = map(json.loads, (EXPERT / labels).read_text().splitlines())
        result = score_labelled(model, text, truth)
        sure = [b for b in result.reliability if b.low >= 0.95]
        assert sure and sure[0].answers > 0
        assert all(b.right >= 0.95 * b.answers for b in sure), result.reliability
        assert read_snapshots(text).problems == []
