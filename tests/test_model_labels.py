"""Which labels count: each person's latest on an answer, none of a disputed answer."""

from __future__ import annotations

from linktriage.engine.model.features import FEATURE_NAMES
from linktriage.engine.model.labels import Label, label_frame, settle


def label(n: int, answer: int, user: str, verdict: str) -> Label:
    return Label(
        id=n, at=float(n), diagnosis_id=answer, device="lark-east-idf2", port=f"port{answer}",
        verdict=verdict, model_verdict="cable_fault", model_version="m1",
        features=dict.fromkeys(FEATURE_NAMES, 0.0), note="", user_id=user, channel="C1",
        source="button",
    )  # fmt: skip


def test_a_persons_latest_label_on_an_answer_is_the_one_that_counts() -> None:
    settled = settle(
        [
            label(1, 7, "U2", "cable_fault"),
            label(2, 7, "U2", "duplex_mismatch"),
            label(3, 7, "U2", "healthy"),
        ]
    )
    assert [lb.id for lb in settled.kept] == [3]
    assert [lb.id for lb in settled.replaced] == [1, 2]
    assert settled.disputed == {}


def test_people_who_agree_each_count_and_people_who_disagree_hold_the_answer_out() -> None:
    settled = settle(
        [
            label(1, 7, "U2", "cable_fault"),
            label(2, 7, "U3", "cable_fault"),
            label(3, 8, "U2", "cable_fault"),
            label(4, 8, "U3", "duplex_mismatch"),
        ]
    )
    assert [lb.id for lb in settled.kept] == [1, 2]
    assert {answer: [lb.id for lb in group] for answer, group in settled.disputed.items()} == {
        8: [3, 4]
    }


def test_a_dispute_ends_when_one_side_changes_their_label() -> None:
    settled = settle(
        [
            label(1, 8, "U2", "cable_fault"),
            label(2, 8, "U3", "duplex_mismatch"),
            label(3, 8, "U2", "duplex_mismatch"),
        ]
    )
    assert [lb.id for lb in settled.kept] == [2, 3] and settled.disputed == {}


def test_training_rows_are_the_features_then_the_facts_of_the_label() -> None:
    frame = label_frame([label(1, 7, "U2", "cable_fault")])
    assert list(frame.columns[: len(FEATURE_NAMES)]) == list(FEATURE_NAMES)
    assert frame.loc[0, "verdict"] == "cable_fault" and frame.loc[0, "user_id"] == "U2"


def test_a_label_whose_finding_teaches_nothing_is_set_aside_and_disputes_nothing() -> None:
    # "nothing found" after a cable_fault answer is kept, teaches no verdict (verdict ""),
    # and does not hold out another person's finding on the same answer.
    settled = settle([label(1, 7, "U2", ""), label(2, 7, "U3", "cable_fault")])
    assert [lb.id for lb in settled.kept] == [2]
    assert [lb.id for lb in settled.untaught] == [1]
    assert settled.disputed == {}
