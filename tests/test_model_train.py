"""Training: the 1-SE rule, class weights, determinism, and the packaged model's rebuild."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from sklearn.tree import DecisionTreeClassifier
from sklearn.utils.class_weight import compute_class_weight

from linktriage.engine.model.artefact import TreeArtefact
from linktriage.engine.model.train import (
    AlphaScore,
    TrainingConfig,
    choose_alpha,
    class_weights,
    prior_rows,
    train,
    tree_arrays,
)


def test_the_one_standard_error_rule_takes_the_simplest_tree_near_the_best() -> None:
    # Breiman et al. 1984, ch. 3: the simplest tree within one SE of the minimum error.
    scores = [
        AlphaScore(alpha=0.001, mean=0.950, se=0.004, leaves=60),
        AlphaScore(alpha=0.002, mean=0.952, se=0.004, leaves=35),  # best
        AlphaScore(alpha=0.004, mean=0.949, se=0.004, leaves=20),  # within one SE
        AlphaScore(alpha=0.008, mean=0.930, se=0.004, leaves=9),
    ]
    chosen, why = choose_alpha(scores, max_leaves=40)
    assert chosen.alpha == 0.004
    assert "1-SE" in why


def test_the_leaf_cap_wins_over_the_one_standard_error_rule() -> None:
    scores = [
        AlphaScore(alpha=0.001, mean=0.95, se=0.001, leaves=90),
        AlphaScore(alpha=0.002, mean=0.94, se=0.001, leaves=38),
        AlphaScore(alpha=0.003, mean=0.93, se=0.001, leaves=30),
    ]
    chosen, why = choose_alpha(scores, max_leaves=40)
    assert chosen.alpha == 0.002
    assert "at most 40 leaves" in why


def test_class_weights_are_balanced_with_healthy_weighted_higher() -> None:
    y = np.array(["healthy"] * 60 + ["cable_fault"] * 30 + ["congestion"] * 10, dtype=object)
    weights = class_weights(y, healthy_weight=3.0)
    # Reference: scikit-learn's compute_class_weight("balanced"), n / (k * n_c).
    classes = np.array(["cable_fault", "congestion", "healthy"])
    balanced = compute_class_weight("balanced", classes=classes, y=y.astype(str))
    expected = dict(zip(classes, balanced, strict=True))
    expected["healthy"] *= 3.0
    assert weights == pytest.approx(expected)


@pytest.fixture(scope="module")
def small() -> TreeArtefact:
    return train(TrainingConfig(simulated_ports=3000, candidate_alphas=6, seed=5))


def test_training_is_deterministic_for_a_seed(small: TreeArtefact) -> None:
    again = train(TrainingConfig(simulated_ports=3000, candidate_alphas=6, seed=5))
    assert again == small


def test_the_chosen_tree_is_scikit_learns_pruning_at_the_chosen_alpha(small: TreeArtefact) -> None:
    # Reference: DecisionTreeClassifier(ccp_alpha=...) fitted on the same prior rows.
    cfg = TrainingConfig(simulated_ports=3000, candidate_alphas=6, seed=5)
    prior = prior_rows(cfg.simulated_ports, cfg.seed)
    y = prior.y.astype(str)
    clf = DecisionTreeClassifier(
        ccp_alpha=small.training.ccp_alpha,
        class_weight=class_weights(y, cfg.healthy_weight),
        random_state=cfg.seed,
    ).fit(prior.x, y)
    assert tree_arrays(clf) == small.tree
    assert small.leaves <= cfg.max_leaves


def test_the_summary_describes_the_training(small: TreeArtefact) -> None:
    t = small.training
    assert t.rows > 0 and t.simulated_ports == 3000
    assert 0.0 < t.cv_macro_f1 <= t.best_cv_macro_f1 <= 1.0
    assert set(t.per_class_recall) == set(small.classes)
    assert 0.0 <= t.healthy_false_alarm <= 1.0


#: numpy's AVX-512 paths round exp and log differently in the last bit from its AVX2 paths
#: (numpy 2.4 dispatches to X86_V3, X86_V4, AVX512_ICL, AVX512_SPR); the simulated prior
#: feeds such values into random draws, so one bit moves whole ports. The packaged model is
#: built on the AVX2 paths every x86-64 machine of the last decade has (`make model`).
PORTABLE_MATH = "X86_V4 AVX512_ICL AVX512_SPR"


def test_make_model_builds_on_the_same_math_as_this_check() -> None:
    makefile = (Path(__file__).parents[1] / "Makefile").read_text()
    assert f'NPY_DISABLE_CPU_FEATURES="{PORTABLE_MATH}"' in makefile


@pytest.mark.slow
def test_a_rebuild_reproduces_the_packaged_model(tmp_path: Path) -> None:
    shipped = TreeArtefact.default()
    out = tmp_path / "model.json"
    script = (
        "import sys; from linktriage.engine.model.train import TrainingConfig, train; "
        "from linktriage.engine.diagnosis.scoring import with_reliability; "
        "with_reliability(train(TrainingConfig(seed=int(sys.argv[1])))).save(sys.argv[2])"
    )
    env = {**os.environ, "NPY_DISABLE_CPU_FEATURES": PORTABLE_MATH}
    subprocess.run(
        [sys.executable, "-c", script, str(shipped.training.seed), str(out)], env=env, check=True
    )
    rebuilt = TreeArtefact.load(out)
    assert rebuilt.version == shipped.version
    assert rebuilt.tree.children_left == shipped.tree.children_left
    assert rebuilt.tree.children_right == shipped.tree.children_right
    assert rebuilt.tree.feature == shipped.tree.feature
    # Thresholds and weights to 1e-9: the last bit may differ across CPUs' libm.
    thresholds = [np.inf if t is None else t for t in rebuilt.tree.threshold]
    shipped_thresholds = [np.inf if t is None else t for t in shipped.tree.threshold]
    np.testing.assert_allclose(thresholds, shipped_thresholds, rtol=1e-9)
    np.testing.assert_allclose(rebuilt.tree.value, shipped.tree.value, rtol=1e-9)
    assert rebuilt.training == shipped.training
