"""The prior the tree learns from: simulated ports of every verdict the tree answers, each
drawn from the simulator's base and turned into its fault by the verdict's own signature, in
the shares the verdicts declare (healthy ports dominate, as on a real network)."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.simulate.polled import render_polls
from linktriage.engine.simulate.ports import TRAINING, Ranges, Rng, base
from linktriage.engine.verdicts import TREE, known

if TYPE_CHECKING:
    import pandas as pd

#: Share of each class in the training prior, as each verdict declares it.
PRIOR_MIX: dict[Verdict, float] = {kind.verdict: kind.prior_share for kind in TREE}


def sample_parameters(labels: Sequence[str], rng: Rng, ranges: Ranges = TRAINING) -> pd.DataFrame:
    """Port parameters for the given classes, one row each, in the order given."""
    import pandas as pd

    labels_a = np.asarray([known(v) for v in labels], dtype=object)
    parts = []
    for kind in TREE:
        rows = np.flatnonzero(labels_a == kind.verdict)
        if len(rows) == 0:
            continue
        p = base(len(rows), rng, ranges)
        kind.signature(p, rng, ranges)
        p["label"] = kind.verdict
        p.index = rows
        parts.append(p)
    return pd.concat(parts).sort_index() if parts else base(0, rng, ranges)


def sample_mix(n: int, rng: Rng, mix: dict[Verdict, float] | None = None) -> list[Verdict]:
    """``n`` class labels drawn in the proportions of ``mix`` (default :data:`PRIOR_MIX`)."""
    mix = mix or PRIOR_MIX
    names = list(mix)
    weights = np.asarray([mix[v] for v in names], np.float64)
    picks = rng.choice(len(names), size=n, p=weights / weights.sum())
    return [names[i] for i in picks]


def simulate_prior(n: int, rng: Rng, ranges: Ranges = TRAINING) -> tuple[PollTable, np.ndarray]:
    """``n`` simulated ports in the prior's class mix: their polls and their true classes."""
    labels = sample_mix(n, rng)
    params = sample_parameters(labels, rng, ranges)
    names = [f"sim{i // 48:05d}" for i in range(n)]
    ports = [f"port{i % 48 + 1}" for i in range(n)]
    polls = render_polls(params, rng, device=names, port=ports)
    return polls, params["label"].to_numpy(dtype=object)
