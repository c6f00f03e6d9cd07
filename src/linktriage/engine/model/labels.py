"""Labels as training rows: the feature row a verdict was based on, and what was found.

Which labels count: one per person per answer, the latest (a person who changes their
mind replaces their label; the earlier one stays in the store for the audit), none whose
finding teaches no verdict (:func:`linktriage.engine.model.findings.taught`), and none of
an answer whose people disagree, until they agree: a disputed answer teaches nothing.
Labels kept before findings name a verdict and no finding; they count as they did.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from linktriage.engine.model.features import FEATURE_NAMES


@dataclass(frozen=True, slots=True)
class Label:
    """What an engineer found on a port, tied to the diagnosis it answers."""

    id: int
    at: float
    diagnosis_id: int
    device: str
    port: str
    verdict: str  # the verdict it teaches; "" where its finding teaches none
    model_verdict: str
    model_version: str
    features: dict[str, float | None]
    note: str
    user_id: str
    channel: str | None
    source: str
    finding: str | None = None  # what was found (findings.FINDINGS); None: a verdict named


META = (
    "verdict",
    "finding",
    "model_verdict",
    "device",
    "port",
    "at",
    "user_id",
    "source",
    "note",
    "model_version",
)


def label_frame(labels: Sequence[Label]) -> pd.DataFrame:
    """One row per label: the features (NaN where not reported), then the label's facts."""
    rows = []
    for label in labels:
        row: dict[str, object] = {
            name: np.nan if label.features.get(name) is None else label.features[name]
            for name in FEATURE_NAMES
        }
        row.update({key: getattr(label, key) for key in META})
        rows.append(row)
    return pd.DataFrame(rows, columns=[*FEATURE_NAMES, *META])


@dataclass(frozen=True, slots=True)
class Settled:
    """The labels that count, and what was set aside."""

    kept: list[Label]  # one per person per answer, of answers whose labels agree
    replaced: list[Label]  # earlier labels their person changed
    disputed: dict[int, list[Label]]  # answer (diagnosis id) -> its disagreeing labels
    untaught: list[Label]  # latest labels whose finding teaches no verdict


def current(labels: Sequence[Label]) -> tuple[list[Label], list[Label]]:
    """Each person's latest label on each answer, oldest first, and the ones they replaced."""
    ordered = sorted(labels, key=lambda lb: lb.id)
    latest = {(lb.diagnosis_id, lb.user_id): lb.id for lb in ordered}  # the last one wins
    kept = set(latest.values())
    return [lb for lb in ordered if lb.id in kept], [lb for lb in ordered if lb.id not in kept]


def settle(labels: Sequence[Label]) -> Settled:
    """The labels that train the model (see the module's docstring)."""
    latest, replaced = current(labels)
    untaught = [label for label in latest if not label.verdict]
    teaching = [label for label in latest if label.verdict]
    verdicts: dict[int, set[str]] = {}
    for label in teaching:
        verdicts.setdefault(label.diagnosis_id, set()).add(label.verdict)
    disputed: dict[int, list[Label]] = {}
    kept: list[Label] = []
    for label in teaching:
        if len(verdicts[label.diagnosis_id]) > 1:
            disputed.setdefault(label.diagnosis_id, []).append(label)
        else:
            kept.append(label)
    return Settled(kept, replaced, disputed, untaught)
