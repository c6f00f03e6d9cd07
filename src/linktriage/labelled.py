"""Labels as training rows: the feature row a verdict was based on, and what was found."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from linktriage.features import FEATURE_NAMES
from linktriage.store import Label

META = (
    "verdict",
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
