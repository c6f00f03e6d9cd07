"""Answers kept: every diagnosis the bot gives is stored, so replies can label it."""

from __future__ import annotations

import math

from linktriage.diagnosis import DiagnosisBatch
from linktriage.features import FEATURE_NAMES
from linktriage.network.interface import PortRef
from linktriage.store import Store


def keep_answer(
    store: Store,
    batch: DiagnosisBatch,
    row: int,
    ref: PortRef | None,
    *,
    at: float,
    origin: str,
    user: str | None = None,
    channel: str | None = None,
) -> int:
    """Store one answer with the feature row it rests on (NaN: not reported, kept as
    null), so that a label can refer to it and a later training run learn from it."""
    features = {
        name: (None if math.isnan(v) else v)
        for name, v in zip(FEATURE_NAMES, batch.values[row].tolist(), strict=True)
    }
    return store.add_diagnosis(
        dict(batch.record(row)),
        features,
        at=at,
        origin=origin,
        asked_by=user,
        channel=channel,
        site=ref.site if ref else "",
        serves=ref.serves if ref else "",
    )
