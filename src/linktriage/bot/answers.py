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
    and a later training run learn from it; returns their ids.

    Where the link decided an answer, the row it rests on is the far end's, whose own
    counters show that verdict: a label on it teaches the tree what that end looks like,
    never that this end's clean counters mean a fault. Where neither end shows it alone,
    no row is kept, and a label on it is recorded but teaches nothing."""
    resting = [_resting_row(batch, i) for i in rows]
    values = batch.values[[i if r is None else r for i, r in zip(rows, resting, strict=True)]]
    answers = [
        NewAnswer(
            dict(record),
            {} if row is None else _features(row_values),
            at,
            origin,
            user,
            channel,
            ref.site if ref else "",
            ref.serves if ref else "",
        )
        for row, record, row_values, ref in zip(
            resting, records, values.tolist(), refs, strict=True
        )
    ]
    return store.add_diagnoses(answers)


def _features(values: list[float]) -> dict[str, float | None]:
    return {
        name: (None if math.isnan(v) else v) for name, v in zip(FEATURE_NAMES, values, strict=True)
    }


def _resting_row(batch: DiagnosisBatch, i: int) -> int | None:
    """The row whose own counters show row ``i``'s answer: ``i`` itself, or where the link
    decided, the far end where it says so alone, else None."""
    if not batch.decides(i):
        return i
    j = batch.far[i]
    return j if batch.verdict[j] == batch.link_verdict(i) else None
