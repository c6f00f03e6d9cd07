"""Model quality: the packaged pruned tree against bigger models on the same held-out ports.

    .venv/bin/python bench/model_quality.py [--ports N]

Every model is trained on the packaged model's own training rows (the simulated prior at
its seed, with the same class weights) and scored on N fresh simulated ports from another
seed, after the same guards. Prints macro-F1, leaves and how often a healthy port is
called faulty. Targets: the pruned tree has at most 40 leaves, scores within 2 points of
macro-F1 of HistGradientBoosting, and calls at most 1% of healthy ports faulty.
"""

from __future__ import annotations

import argparse
import sys

import numpy as np
from sklearn.ensemble import HistGradientBoostingClassifier, RandomForestClassifier
from sklearn.metrics import f1_score
from sklearn.tree import DecisionTreeClassifier

from linktriage.diagnosis import Model
from linktriage.model.train import TrainingConfig, class_weights, prior_rows
from linktriage.verdicts import Verdict

HELD_OUT_SEED = 424242


def false_alarm(y: np.ndarray, predicted: np.ndarray) -> float:
    healthy = y == Verdict.HEALTHY.value
    return float(np.mean(predicted[healthy] != Verdict.HEALTHY.value))


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--ports", type=int, default=30_000)
    args = parser.parse_args()
    model = Model.load()
    t = model.artefact.training
    train = prior_rows(t.simulated_ports, t.seed, resolution=t.guard_resolution)
    test = prior_rows(args.ports, HELD_OUT_SEED, resolution=t.guard_resolution)
    x, y = train.x, train.y.astype(str)
    xt, yt = test.x, test.y.astype(str)
    weights = class_weights(y, TrainingConfig().healthy_weight)
    print(f"training rows {len(y):,} (seed {t.seed})")
    print(f"held-out rows {len(yt):,} (seed {HELD_OUT_SEED})")

    rows = []
    pruned = model.tree.predict(xt).astype(str)
    rows.append(
        (
            "pruned tree (packaged)",
            f1_score(yt, pruned, average="macro"),
            model.artefact.leaves,
            false_alarm(yt, pruned),
        )
    )
    unpruned = DecisionTreeClassifier(class_weight=weights, random_state=0).fit(x, y)
    p = unpruned.predict(xt)
    rows.append(
        (
            "unpruned tree",
            f1_score(yt, p, average="macro"),
            unpruned.get_n_leaves(),
            false_alarm(yt, p),
        )
    )
    forest = RandomForestClassifier(
        n_estimators=200, class_weight=weights, random_state=0, n_jobs=-1
    ).fit(x, y)
    p = forest.predict(xt)
    forest_leaves = sum(e.get_n_leaves() for e in forest.estimators_)
    rows.append(
        (
            "random forest (200 trees)",
            f1_score(yt, p, average="macro"),
            forest_leaves,
            false_alarm(yt, p),
        )
    )
    sample_weight = np.array([weights[c] for c in y])
    boosted = HistGradientBoostingClassifier(random_state=0).fit(x, y, sample_weight=sample_weight)
    p = boosted.predict(xt)
    # _predictors (one list of trees per boosting stage) is private, but the only way to
    # count the leaves of a fitted model.
    boosted_leaves = sum(
        int(tree.nodes["is_leaf"].sum()) for stage in boosted._predictors for tree in stage
    )
    rows.append(
        (
            "hist gradient boosting",
            f1_score(yt, p, average="macro"),
            boosted_leaves,
            false_alarm(yt, p),
        )
    )

    print(f"{'model':<28} {'macro-F1':>9} {'leaves':>9} {'healthy called faulty':>22}")
    for name, f1, leaves, alarm in rows:
        print(f"{name:<28} {f1:>9.4f} {leaves:>9,} {alarm:>21.2%}")
    tree_f1, hgb_f1 = rows[0][1], rows[3][1]
    checks = {
        "at most 40 leaves": model.artefact.leaves <= 40,
        "within 2 points of macro-F1 of HistGradientBoosting": hgb_f1 - tree_f1 <= 0.02,
        "healthy ports called faulty at most 1%": rows[0][3] <= 0.01,
    }
    print(f"gap to HistGradientBoosting: {100 * (hgb_f1 - tree_f1):.2f} points of macro-F1")
    for name, ok in checks.items():
        print(f"  {'meets' if ok else 'MISSES'}: {name}")
    return 0 if all(checks.values()) else 1


if __name__ == "__main__":
    sys.exit(main())
