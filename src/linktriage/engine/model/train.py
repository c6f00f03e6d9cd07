"""Training: the simulated prior, a Gini CART tree, cost-complexity pruning chosen by CV.

Pruning follows Breiman, Friedman, Olshen and Stone (*Classification and Regression Trees*,
1984, ch. 3) as scikit-learn implements it: the pruning path of the full tree gives the
candidate ``ccp_alpha`` values; each is scored by stratified k-fold cross-validation on
macro-F1; the *one-standard-error rule* then takes the simplest tree whose mean score is
within one standard error of the best. A cap on leaves keeps the path short enough to read
in a chat message. Class weights balance the classes, with healthy rows weighted higher
still, because calling a healthy link faulty sends someone to a closet for nothing.

Everything is deterministic for a given seed: the simulator, the folds, and the tree.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
import sklearn
from sklearn.metrics import f1_score, recall_score
from sklearn.model_selection import StratifiedKFold
from sklearn.tree import DecisionTreeClassifier

from linktriage.engine.guards import apply_guards
from linktriage.engine.measure.measures import measure
from linktriage.engine.measure.now import now_and_before
from linktriage.engine.measure.window import DEFAULT_MAX_WINDOW_S, compute_windows, port_codes
from linktriage.engine.model.artefact import (
    TrainingSummary,
    TreeArrays,
    TreeArtefact,
    content_version,
)
from linktriage.engine.model.features import FEATURE_NAMES, feature_rows
from linktriage.engine.physics import allowed
from linktriage.engine.prior import simulate_prior
from linktriage.engine.simulate.ports import TRAINING, Ranges
from linktriage.engine.verdicts import TREE_VERDICTS
from linktriage.engine.verdicts.healthy import HEALTHY

DEFAULT_SEED = 2026


@dataclass(frozen=True, slots=True)
class TrainingConfig:
    """What a training run does; the defaults build the packaged model."""

    seed: int = DEFAULT_SEED
    simulated_ports: int = 30_000
    folds: int = 5
    max_leaves: int = 40
    candidate_alphas: int = 24
    healthy_weight: float = 3.0
    #: How much one confirmed label outweighs one simulated row.
    label_weight: float = 20.0


@dataclass(frozen=True, slots=True)
class PriorRows:
    """Feature rows of simulated ports the tree is asked about, with their true classes."""

    x: npt.NDArray[np.float32]
    y: npt.NDArray[np.object_]
    simulated_ports: int


def prior_rows(n: int, seed: int, ranges: Ranges = TRAINING) -> PriorRows:
    """Simulate ``n`` ports and keep the rows the tree would be asked about.

    A row is kept when no guard answers it and the physics allows its true class: a port
    whose readings could not show its fault (an unlucky draw at the detection limit)
    teaches the tree nothing it could use.
    """
    rng = np.random.default_rng(seed)
    polls, labels = simulate_prior(n, rng, ranges)
    codes, _ = port_codes(polls)
    windows = compute_windows(polls, codes=codes)
    windows, measured = now_and_before(
        polls, codes, windows, measure(windows), DEFAULT_MAX_WINDOW_S
    )
    m = measured.table
    ok = allowed(m)
    guarded = apply_guards(windows, ok, m)
    columns = np.array([TREE_VERDICTS.index(v) for v in labels], np.intp)
    possible = ok.mask[np.arange(len(labels)), columns]
    keep = np.array([v is None for v in guarded]) & possible
    return PriorRows(feature_rows(m).matrix()[keep], labels[keep], n)


@dataclass(frozen=True, slots=True)
class LabelledRows:
    """Confirmed labels as training rows: the feature row of each verdict, what was found."""

    x: npt.NDArray[np.float32]
    y: npt.NDArray[np.object_]

    def __len__(self) -> int:
        return len(self.y)


def class_weights(y: npt.NDArray[np.object_], healthy_weight: float) -> dict[str, float]:
    """Balanced weights (n / (classes * n_class)), with healthy multiplied by ``healthy_weight``."""
    names, counts = np.unique(y.astype(str), return_counts=True)
    weights = {str(c): float(len(y) / (len(names) * k)) for c, k in zip(names, counts, strict=True)}
    if HEALTHY in weights:
        weights[HEALTHY] *= healthy_weight
    return weights


@dataclass(frozen=True, slots=True)
class AlphaScore:
    """Cross-validated macro-F1 of the tree pruned at one ``ccp_alpha``."""

    alpha: float
    mean: float
    se: float
    leaves: int


def _tree(alpha: float, weights: dict[str, float], seed: int) -> DecisionTreeClassifier:
    return DecisionTreeClassifier(
        criterion="gini", ccp_alpha=alpha, class_weight=weights, random_state=seed
    )


def _candidate_alphas(
    x: npt.NDArray[np.float32],
    y: npt.NDArray[np.object_],
    weights: dict[str, float],
    cfg: TrainingConfig,
    sample_weight: npt.NDArray[np.float64] | None = None,
) -> npt.NDArray[np.float64]:
    """Alphas of the pruning path, thinned to ``candidate_alphas`` spread evenly in log scale.

    The path's tail of tiny alphas (down to rounding noise) only prunes single leaves off a
    huge tree; the trees worth comparing lie within six decades of the largest alpha.
    """
    path = _tree(0.0, weights, cfg.seed).cost_complexity_pruning_path(
        x, y, sample_weight=sample_weight
    )
    alphas: npt.NDArray[np.float64] = np.unique(path.ccp_alphas)[:-1]  # last: the root alone
    alphas = alphas[alphas > alphas[-1] * 1e-6]
    targets = np.geomspace(alphas[0], alphas[-1], cfg.candidate_alphas)
    nearest = np.abs(np.log(alphas)[None, :] - np.log(targets)[:, None]).argmin(axis=1)
    chosen: npt.NDArray[np.float64] = alphas[np.unique(nearest)]
    return chosen


def _folds(
    x: npt.NDArray[np.float32], y: npt.NDArray[np.object_], cfg: TrainingConfig
) -> list[tuple[npt.NDArray[np.intp], npt.NDArray[np.intp]]]:
    return list(StratifiedKFold(cfg.folds, shuffle=True, random_state=cfg.seed).split(x, y))


def _part(
    sample_weight: npt.NDArray[np.float64] | None, rows: npt.NDArray[np.intp]
) -> npt.NDArray[np.float64] | None:
    return None if sample_weight is None else sample_weight[rows]


def score_alphas(
    x: npt.NDArray[np.float32],
    y: npt.NDArray[np.object_],
    alphas: npt.NDArray[np.float64],
    weights: dict[str, float],
    cfg: TrainingConfig,
    sample_weight: npt.NDArray[np.float64] | None = None,
) -> list[AlphaScore]:
    """Stratified k-fold macro-F1 and full-data leaf count for every candidate alpha."""
    folds = _folds(x, y, cfg)
    scores = []
    for alpha in alphas:
        fold_scores = []
        for train, test in folds:
            clf = _tree(float(alpha), weights, cfg.seed)
            clf.fit(x[train], y[train], sample_weight=_part(sample_weight, train))
            fold_scores.append(f1_score(y[test], clf.predict(x[test]), average="macro"))
        full = _tree(float(alpha), weights, cfg.seed).fit(x, y, sample_weight=sample_weight)
        leaves = full.get_n_leaves()
        s = np.asarray(fold_scores)
        scores.append(
            AlphaScore(
                float(alpha), float(s.mean()), float(s.std(ddof=1) / np.sqrt(len(s))), int(leaves)
            )
        )
    return scores


def choose_alpha(scores: list[AlphaScore], max_leaves: int) -> tuple[AlphaScore, str]:
    """The one-standard-error rule, then the leaf cap; returns the choice and why."""
    best = max(scores, key=lambda s: s.mean)
    within = [s for s in scores if s.mean >= best.mean - best.se]
    simplest = max(within, key=lambda s: s.alpha)
    if simplest.leaves <= max_leaves:
        return simplest, "simplest tree within one standard error of the best (1-SE rule)"
    small = [s for s in scores if s.leaves <= max_leaves]
    if not small:
        raise ValueError(f"no candidate tree has at most {max_leaves} leaves")
    choice = max(small, key=lambda s: s.mean)
    return choice, f"best cross-validated tree with at most {max_leaves} leaves"


def train(cfg: TrainingConfig | None = None, labelled: LabelledRows | None = None) -> TreeArtefact:
    """Build the pruned tree from the simulated prior (and the labels engineers gave, weighted
    ``label_weight`` each) and describe how it was chosen."""
    cfg = cfg or TrainingConfig()
    prior = prior_rows(cfg.simulated_ports, cfg.seed)
    x, y = prior.x, prior.y.astype(str)
    sample_weight = None
    if labelled is not None and len(labelled):
        x = np.vstack([x, labelled.x])
        y = np.concatenate([y, labelled.y.astype(str)])
        sample_weight = np.r_[np.ones(len(prior.y)), np.full(len(labelled), cfg.label_weight)]
    weights = class_weights(y, cfg.healthy_weight)
    alphas = _candidate_alphas(x, y, weights, cfg, sample_weight)
    scores = score_alphas(x, y, alphas, weights, cfg, sample_weight)
    chosen, why = choose_alpha(scores, cfg.max_leaves)
    best = max(scores, key=lambda s: s.mean)
    clf = _tree(chosen.alpha, weights, cfg.seed).fit(x, y, sample_weight=sample_weight)

    predicted = np.empty(len(y), dtype=object)
    for fold_train, fold_test in _folds(x, y, cfg):
        fold = _tree(chosen.alpha, weights, cfg.seed)
        fold.fit(x[fold_train], y[fold_train], sample_weight=_part(sample_weight, fold_train))
        predicted[fold_test] = fold.predict(x[fold_test])
    predicted = predicted.astype(str)
    classes = [str(c) for c in clf.classes_]
    recall = recall_score(y, predicted, labels=classes, average=None, zero_division=0.0)
    healthy = y == HEALTHY
    false_alarm = float(np.mean(predicted[healthy] != HEALTHY)) if healthy.any() else 0.0

    arrays = tree_arrays(clf)
    summary = TrainingSummary(
        seed=cfg.seed,
        simulated_ports=prior.simulated_ports,
        rows=len(y),
        labelled_rows=0 if labelled is None else len(labelled),
        folds=cfg.folds,
        ccp_alpha=chosen.alpha,
        selection=why,
        cv_macro_f1=chosen.mean,
        cv_macro_f1_se=chosen.se,
        best_cv_macro_f1=best.mean,
        best_ccp_alpha=best.alpha,
        per_class_recall={c: float(r) for c, r in zip(classes, recall, strict=True)},
        healthy_false_alarm=false_alarm,
        sklearn_version=sklearn.__version__,
    )
    return TreeArtefact(
        version=content_version(list(FEATURE_NAMES), classes, arrays),
        features=list(FEATURE_NAMES),
        classes=classes,
        tree=arrays,
        training=summary,
    )


def tree_arrays(clf: DecisionTreeClassifier) -> TreeArrays:
    """Copy a fitted tree's arrays into the artefact's plain lists."""
    t = clf.tree_
    if t.n_outputs != 1:
        raise ValueError("only single-output trees are supported")
    missing = getattr(t, "missing_go_to_left", np.zeros(t.node_count, np.uint8))
    return TreeArrays(
        children_left=t.children_left.tolist(),
        children_right=t.children_right.tolist(),
        feature=[int(f) if f >= 0 else -1 for f in t.feature],
        threshold=[None if np.isinf(v) else float(v) for v in t.threshold],
        missing_go_to_left=[bool(m) for m in missing],
        value=t.value[:, 0, :].tolist(),
        n_node_samples=t.n_node_samples.tolist(),
        weighted_n_node_samples=t.weighted_n_node_samples.tolist(),
        impurity=t.impurity.tolist(),
    )
