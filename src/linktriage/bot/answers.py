"""Answers kept: every diagnosis the bot gives is stored, so replies can label it."""

from __future__ import annotations

import math
from collections.abc import Sequence

from linktriage.engine.diagnosis.batch import DiagnosisBatch
from linktriage.engine.format.answers import DiagnosisRecord
from linktriage.engine.model.features import FEATURE_NAMES
from linktriage.network.watched import PortRef
from linktriage.store import NewAnswer, Store


def keep_answers(
    store: Store,
    batch: DiagnosisBatch,
    rows: Sequence[int],
    records: Sequence[DiagnosisRecord],
    refs: Sequence[PortRef | None],
    *,
    at: float,
    origin: str,
    user: str | None = None,
    channel: str | None = None,
) -> list[int]:
    """Store answers (``records`` of ``rows``) with the feature rows they rest on (NaN:
    not reported, kept as null), in one transaction, so that a label can refer to each
    and a later training run learn from it; returns their ids."""
    values = batch.values[list(rows)].tolist()
    answers = [
        NewAnswer(
            dict(record),
            {
                name: (None if math.isnan(v) else v)
                for name, v in zip(FEATURE_NAMES, row_values, strict=True)
            },
            at,
            origin,
            user,
            channel,
            ref.site if ref else "",
            ref.serves if ref else "",
        )
        for record, row_values, ref in zip(records, values, refs, strict=True)
    ]
    return store.add_diagnoses(answers)
