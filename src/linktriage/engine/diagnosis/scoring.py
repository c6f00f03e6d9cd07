"""How well a model's verdicts match known answers: simulated ports and hand-written cases.

The score is of the whole pipeline (physics, guards and tree), not of the tree alone: a
verdict the physics or a guard gives is as much the tool's answer as one the tree gives.
A simulated healthy port too quiet to judge is expected to come back
``insufficient_traffic``, as the rule of three says it must.
"""

from __future__ import annotations

import itertools
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from sklearn.metrics import f1_score, precision_score, recall_score

from linktriage.engine.diagnosis.batch import DiagnosisBatch
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.snapshot import read_snapshots
from linktriage.engine.model.artefact import ReliabilityBin, TreeArtefact
from linktriage.engine.prior import simulate_prior
from linktriage.engine.simulate.ports import TRAINING, Ranges
from linktriage.engine.verdicts import FAULTS
from linktriage.engine.verdicts.healthy import HEALTHY
from linktriage.engine.verdicts.insufficient_traffic import INSUFFICIENT_TRAFFIC


@dataclass(frozen=True, slots=True)
class Score:
    """Macro-F1 over the verdicts present, recall and precision per verdict, false alarms,
    and faults missed (answered healthy)."""

    ports: int
    macro_f1: float
    recall: dict[str, float]
    precision: dict[str, float]
    healthy_called_faulty: float
    faults_called_healthy: float
    wrong: list[tuple[int, str, str]]  # (row, expected, answered)
    reliability: tuple[ReliabilityBin, ...] = ()  # by confidence, where confidences were given


#: The edges of the confidence bins a reliability table counts answers in.
RELIABILITY_EDGES = (0.0, 0.5, 0.8, 0.9, 0.95, 1.0)


def reliability(
    expected: npt.NDArray[np.object_],
    answered: npt.NDArray[np.object_],
    confidence: list[float | None],
) -> tuple[ReliabilityBin, ...]:
    """A reliability table of the tree's answers (a guard's answer has no confidence): per
    bin of confidence [low, high) (the last includes 1), the answers and how many were
    right; calibrated, the share right is at least ``low``."""
    given = np.array([c is not None for c in confidence], np.bool_)
    sure = np.array([c if c is not None else np.nan for c in confidence], np.float64)
    right = np.asarray(expected == answered, np.bool_)
    rows = []
    edges = RELIABILITY_EDGES
    for k, (low, high) in enumerate(itertools.pairwise(edges)):
        last = k == len(edges) - 2
        inside = given & (sure >= low) & ((sure <= high) if last else (sure < high))
        answers, hits = int(inside.sum()), int(right[inside].sum())
        rows.append(ReliabilityBin(low=low, high=high, answers=answers, right=hits))
    return tuple(rows)


def score(
    expected: npt.NDArray[np.object_],
    answered: npt.NDArray[np.object_],
    confidence: list[float | None] | None = None,
) -> Score:
    """Compare answers with expected verdicts (both arrays of verdict ids), and where their
    ``confidence`` is given, tabulate how often each level of it was right."""
    expected = expected.astype(str)
    answered = answered.astype(str)
    labels = sorted(set(expected))
    recall = recall_score(expected, answered, labels=labels, average=None, zero_division=0.0)
    precision = precision_score(expected, answered, labels=labels, average=None, zero_division=0.0)
    healthy = expected == HEALTHY
    alarm = float(np.mean([a in FAULTS for a in answered[healthy]])) if healthy.any() else 0.0
    fault = np.isin(expected, list(FAULTS))
    missed = float(np.mean(answered[fault] == HEALTHY)) if fault.any() else 0.0
    wrong = [(int(i), expected[i], answered[i]) for i in np.flatnonzero(expected != answered)]
    return Score(
        ports=len(expected),
        macro_f1=float(f1_score(expected, answered, labels=labels, average="macro")),
        recall={c: float(r) for c, r in zip(labels, recall, strict=True)},
        precision={c: float(r) for c, r in zip(labels, precision, strict=True)},
        healthy_called_faulty=alarm,
        faults_called_healthy=missed,
        wrong=wrong,
        reliability=() if confidence is None else reliability(expected, answered, confidence),
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
    answered = np.array([batch.link_verdict(i) for i in range(len(batch))])
    return score(expected, answered, [batch.link_confidence(i) for i in range(len(batch))])


#: Held-out simulated ports the reliability of a new model's confidence is measured on, and
#: how far from the training seed theirs lies.
RELIABILITY_PORTS = 10_000
_RELIABILITY_SEED_OFFSET = 1


def with_reliability(artefact: TreeArtefact) -> TreeArtefact:
    """``artefact`` with the reliability of its confidence measured on held-out simulated
    ports (a seed apart from training), for the model card."""
    seed = artefact.training.seed + _RELIABILITY_SEED_OFFSET
    bins = score_simulated(Model(artefact), RELIABILITY_PORTS, seed, TRAINING).reliability
    training = artefact.training.model_copy(update={"reliability": bins})
    return artefact.model_copy(update={"training": training})


def score_simulated(model: Model, ports: int, seed: int, ranges: Ranges) -> Score:
    """Diagnose ``ports`` simulated ports drawn from ``ranges`` and score the verdicts."""
    polls, labels = simulate_prior(ports, np.random.default_rng(seed), ranges)
    batch = diagnose(polls, model)
    # Simulated port names are unique and windows keep the order of first appearance.
    answered = np.array(batch.verdict, dtype=object)
    return score(expected_verdicts(batch, labels), answered, batch.confidence)
