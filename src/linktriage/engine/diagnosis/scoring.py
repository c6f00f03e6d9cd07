"""How well a model's verdicts match known answers: simulated ports and hand-written cases.

The score is of the whole pipeline (physics, guards and tree), not of the tree alone: a
verdict the physics or a guard gives is as much the tool's answer as one the tree gives.
A simulated healthy port too quiet to judge is expected to come back
``insufficient_traffic``, as the rule of three says it must.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from sklearn.metrics import f1_score, recall_score

from linktriage.engine.diagnosis.batch import DiagnosisBatch
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.snapshot import read_snapshots
from linktriage.engine.prior import simulate_prior
from linktriage.engine.simulate.ports import Ranges
from linktriage.engine.verdicts import FAULTS
from linktriage.engine.verdicts.healthy import HEALTHY
from linktriage.engine.verdicts.insufficient_traffic import INSUFFICIENT_TRAFFIC


@dataclass(frozen=True, slots=True)
class Score:
    """Macro-F1 over the verdicts present, recall per verdict, false alarms, and faults
    missed (answered healthy)."""

    ports: int
    macro_f1: float
    recall: dict[str, float]
    healthy_called_faulty: float
    faults_called_healthy: float
    wrong: list[tuple[int, str, str]]  # (row, expected, answered)


def score(expected: npt.NDArray[np.object_], answered: npt.NDArray[np.object_]) -> Score:
    """Compare answers with expected verdicts (both arrays of verdict ids)."""
    expected = expected.astype(str)
    answered = answered.astype(str)
    labels = sorted(set(expected))
    recall = recall_score(expected, answered, labels=labels, average=None, zero_division=0.0)
    healthy = expected == HEALTHY
    alarm = float(np.mean([a in FAULTS for a in answered[healthy]])) if healthy.any() else 0.0
    fault = np.isin(expected, list(FAULTS))
    missed = float(np.mean(answered[fault] == HEALTHY)) if fault.any() else 0.0
    wrong = [(int(i), expected[i], answered[i]) for i in np.flatnonzero(expected != answered)]
    return Score(
        ports=len(expected),
        macro_f1=float(f1_score(expected, answered, labels=labels, average="macro")),
        recall={c: float(r) for c, r in zip(labels, recall, strict=True)},
        healthy_called_faulty=alarm,
        faults_called_healthy=missed,
        wrong=wrong,
    )


def expected_verdicts(
    batch: DiagnosisBatch, labels: npt.NDArray[np.object_]
) -> npt.NDArray[np.object_]:
    """The simulator's classes, with healthy ports too quiet to judge expected as such."""
    expected = labels.astype(object).copy()
    quiet = (expected == HEALTHY) & ~batch.allowed.signs.enough_frames
    expected[quiet] = INSUFFICIENT_TRAFFIC
    return expected


def score_labelled(
    model: Model, lines: Iterable[str | bytes], labels: Iterable[dict[str, str]]
) -> Score:
    """Diagnose snapshot ``lines`` and score them against ``labels`` (``device``, ``port``,
    ``expect``): a hand-written or independently generated set."""
    result = read_snapshots(lines)
    if result.problems:
        raise ValueError(f"a labelled set with unreadable lines: {result.problems[0]}")
    batch = diagnose(result.polls, model)
    expect = {(label["device"], label["port"]): label["expect"] for label in labels}
    expected = np.array([expect[key] for key in zip(batch.device, batch.port, strict=True)])
    # The answer as diagnose --json gives it: the link's where both ends were read.
    return score(expected, np.array([batch.link_verdict(i) for i in range(len(batch))]))


def score_simulated(model: Model, ports: int, seed: int, ranges: Ranges) -> Score:
    """Diagnose ``ports`` simulated ports drawn from ``ranges`` and score the verdicts."""
    polls, labels = simulate_prior(ports, np.random.default_rng(seed), ranges)
    batch = diagnose(polls, model)
    # Simulated port names are unique and windows keep the order of first appearance.
    answered = np.array(batch.verdict, dtype=object)
    return score(expected_verdicts(batch, labels), answered)
