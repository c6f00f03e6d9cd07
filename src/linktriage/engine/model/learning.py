"""The learning loop: the prior plus what engineers found, promoted only if no worse.

The labels that count (:func:`linktriage.engine.model.labels.settle`: each person's latest
on each answer, as the verdict its finding teaches, none of a disputed answer) are split,
deterministically for the seed, into rows to train on and rows held out (a share of them, at
least one). The candidate is trained on the simulated prior plus the training labels, each
label weighted above a simulated row; then the candidate and the current model are both
scored on the held-out labels, and the candidate is promoted only if it does at least as
well. The current model may have learnt from some of the held-out labels in an earlier
round, which favours it: the rule errs towards keeping what already works.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from linktriage.engine.model.artefact import CompiledTree, TreeArtefact
from linktriage.engine.model.features import FEATURE_NAMES
from linktriage.engine.model.labels import Label, label_frame, settle
from linktriage.engine.model.train import LabelledRows, TrainingConfig, train
from linktriage.errors import InputError

HELD_OUT_SHARE = 0.3


def usable(labels: Sequence[Label]) -> tuple[list[Label], int]:
    """The labels whose stored feature row has every input of this release, and how many
    were left out: a label recorded under an earlier release's inputs cannot be learnt from
    (the diagnosis it labels is still in the store, to be asked about again)."""
    kept = [
        label
        for label in labels
        if all(label.features.get(name) is not None for name in FEATURE_NAMES)
    ]
    return kept, len(labels) - len(kept)


def labelled_rows(labels: Sequence[Label]) -> LabelledRows:
    frame = label_frame(labels)
    return LabelledRows(
        np.ascontiguousarray(frame[list(FEATURE_NAMES)].to_numpy(np.float32)),
        frame["verdict"].to_numpy(dtype=object),
    )


def split(rows: LabelledRows, seed: int) -> tuple[LabelledRows, LabelledRows]:
    """Rows to train on, rows held out: a fixed shuffle for the seed."""
    order = np.random.default_rng(seed).permutation(len(rows))
    held = max(1, round(HELD_OUT_SHARE * len(rows)))
    keep, out = order[held:], order[:held]
    return LabelledRows(rows.x[keep], rows.y[keep]), LabelledRows(rows.x[out], rows.y[out])


def accuracy(artefact: TreeArtefact, rows: LabelledRows) -> float:
    """Share of labels the model gets right."""
    predicted = CompiledTree(artefact).predict(rows.x)
    return float(np.mean(predicted.astype(str) == rows.y.astype(str)))


@dataclass(frozen=True, slots=True)
class Outcome:
    """A candidate, how it and the current model did on held-out labels, and the call."""

    candidate: TreeArtefact
    current_version: str
    trained_on: int
    held_out: int
    candidate_score: float
    current_score: float
    older: int = 0  # labels left out, recorded under an earlier release's inputs
    disputed: int = 0  # answers left out because the people who labelled them disagree

    @property
    def promoted(self) -> bool:
        return self.candidate_score >= self.current_score

    def evaluation(self) -> dict[str, Any]:
        return {
            "held_out_labels": self.held_out,
            "candidate_accuracy": self.candidate_score,
            "current_version": self.current_version,
            "current_accuracy": self.current_score,
            "promoted": self.promoted,
        }


def learn(labels: Sequence[Label], current: TreeArtefact, cfg: TrainingConfig) -> Outcome:
    """Train a candidate on the prior plus labels and judge it against ``current``."""
    settled = settle(labels)
    labels, older = usable(settled.kept)
    if len(labels) < 2:
        also = f" ({older} more were recorded under an earlier release's inputs)" if older else ""
        raise InputError(
            f"{len(labels)} usable labels{also}: at least 2 are needed, one to learn from and "
            "one to check the result on.",
            hint="Say what was found on more answers in the channel (pick it from an answer's "
            "menu or reply in its thread), then train again.",
        )
    train_rows, held = split(labelled_rows(labels), cfg.seed)
    candidate = train(cfg, train_rows)
    return Outcome(
        candidate=candidate,
        current_version=current.version,
        trained_on=len(train_rows),
        held_out=len(held),
        candidate_score=accuracy(candidate, held),
        current_score=accuracy(current, held),
        older=older,
        disputed=len(settled.disputed),
    )
