"""The learning loop: labels split, the candidate judged on held-out labels, kept models."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from linktriage.bot.triage import Triage
from linktriage.engine.model.artefact import TreeArtefact
from linktriage.engine.model.features import FEATURE_NAMES
from linktriage.engine.model.labels import Label
from linktriage.engine.model.learning import Outcome, labelled_rows, learn, split
from linktriage.engine.model.registry import Entry, Registry
from linktriage.engine.model.train import TrainingConfig
from linktriage.errors import InputError, ModelError
from linktriage.render.replies import DiagnosisReply

SMALL = TrainingConfig(simulated_ports=3000, candidate_alphas=6, seed=4)


def label_ports(triage: Triage, found: dict[str, str], times: int = 1) -> list[Label]:
    """Diagnose ports and record what was 'found' on each, ``times`` over."""
    for n in range(times):
        for spec, verdict in found.items():
            reply = triage.handle(spec)
            assert isinstance(reply, DiagnosisReply)
            diagnosis = triage.store.diagnosis(reply.diagnosis_id)
            assert diagnosis is not None
            key = f"{spec}:{n}"
            triage.store.add_label(
                diagnosis, verdict, note="", user_id="U1", channel="C1", source="thread",
                event_key=key, at=float(n), turn=1,
            )  # fmt: skip
            triage.sleep(600.0)  # a fresh window next time
    return triage.store.labels()


def test_too_few_labels_cannot_be_both_learnt_from_and_checked() -> None:
    with pytest.raises(InputError, match="at least 2 are needed"):
        learn([], TreeArtefact.default(), SMALL)


def test_the_split_holds_out_a_share_and_is_the_same_every_time(triage: Triage) -> None:
    labels = label_ports(triage, {"lark-east-idf2 port14": "cable_fault"}, times=5)
    rows = labelled_rows(labels)
    assert rows.x.shape == (5, len(FEATURE_NAMES)) and rows.x.dtype.name == "float32"
    keep, held = split(rows, seed=1)
    assert (len(keep), len(held)) == (3, 2)
    again_keep, _ = split(rows, seed=1)
    np.testing.assert_array_equal(keep.x, again_keep.x)


def test_a_site_that_corrects_the_model_gets_a_model_that_learnt_it(triage: Triage) -> None:
    # At this invented site the link to the annex fills with the archive's backup, and the
    # discards that come with it are accepted: the engineers call it healthy. (A label the
    # physics rules out, healthy beside late collisions say, could never be answered.)
    labels = label_ports(triage, {"lark-core1 up5": "healthy"}, times=6)
    outcome = learn(labels, TreeArtefact.default(), SMALL)
    assert outcome.current_score == 0.0  # the packaged model says congestion
    assert outcome.candidate_score == 1.0
    assert outcome.promoted
    assert outcome.candidate.training.labelled_rows == outcome.trained_on == 4


def test_answers_whose_labels_disagree_teach_nothing_until_they_agree(triage: Triage) -> None:
    # Issue 8.8: a disputed answer is held out of training; a person's changed label counts
    # once, as its latest.
    labels = label_ports(triage, {"lark-core1 up5": "healthy"}, times=6)
    first, second = labels[0], labels[1]
    for n, earlier in enumerate((first, second)):
        diagnosis = triage.store.diagnosis(earlier.diagnosis_id)
        assert diagnosis is not None
        triage.store.add_label(
            diagnosis, "congestion", note="", user_id="U9", channel="C1", source="button",
            event_key=f"other:{n}", at=100.0 + n, turn=1,
        )  # fmt: skip
    diagnosis = triage.store.diagnosis(labels[2].diagnosis_id)
    assert diagnosis is not None
    triage.store.add_label(
        diagnosis, "healthy", note="said again", user_id="U1", channel="C1", source="thread",
        event_key="again", at=200.0, turn=2,
    )  # fmt: skip
    outcome = learn(triage.store.labels(), TreeArtefact.default(), SMALL)
    assert outcome.disputed == 2
    assert outcome.trained_on + outcome.held_out == 4  # 6 answers, 2 disputed, 1 label each


def test_a_candidate_that_does_worse_is_not_promoted() -> None:
    outcome = Outcome(TreeArtefact.default(), "abc", 4, 2, candidate_score=0.5, current_score=1.0)
    assert not outcome.promoted
    assert outcome.evaluation()["promoted"] is False
    tie = Outcome(TreeArtefact.default(), "abc", 4, 2, candidate_score=1.0, current_score=1.0)
    assert tie.promoted  # no worse is enough


def test_the_registry_keeps_every_version_and_rolls_back(tmp_path: Path) -> None:
    registry = Registry(tmp_path / "models")
    assert registry.current() is None
    packaged = TreeArtefact.default()
    other = packaged.model_copy(update={"version": "other0000001"})
    registry.keep(
        packaged, Entry(version=packaged.version, trained_at=1.0, labelled_rows=0), promote=True
    )
    registry.keep(
        other, Entry(version=other.version, trained_at=2.0, labelled_rows=3), promote=False
    )
    current = registry.current()
    assert current is not None and current[0].version == packaged.version
    registry.use("other0000001")
    current = registry.current()
    assert current is not None and current[1].labelled_rows == 3
    assert [e.version for e in registry.versions()] == [packaged.version, "other0000001"]
    with pytest.raises(ModelError, match="No kept model"):
        registry.use("missing")
