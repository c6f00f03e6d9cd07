"""Gini impurity and what each question of a tree gains, computed from the artefact alone.

Gini impurity of a node with class proportions ``p_k`` is ``sum_k p_k (1 - p_k)``, equal to
``1 - sum_k p_k^2`` (Breiman et al. 1984; scikit-learn User Guide, Decision Trees,
mathematical formulation). A split's gain is the parent's impurity minus the children's,
each weighted by its share of the samples; a feature's importance is the sum of the gains
of its splits, weighted by the samples reaching them, normalised to sum to one (the mean
decrease in impurity that scikit-learn reports as ``feature_importances_``).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import numpy.typing as npt

from linktriage.engine.model.artefact import TreeArrays


def gini(weights: Sequence[float] | npt.NDArray[np.float64]) -> float:
    """Gini impurity of a node whose classes carry ``weights`` (counts or sample weights)."""
    w = np.asarray(weights, np.float64)
    total = w.sum()
    if total <= 0:
        return 0.0
    p = w / total
    return float(1.0 - np.dot(p, p))


def split_gain(
    parent: Sequence[float] | npt.NDArray[np.float64],
    children: Sequence[Sequence[float] | npt.NDArray[np.float64]],
) -> float:
    """Parent impurity minus the sample-weighted impurities of its children."""
    total = float(np.sum(parent))
    weighted = sum(float(np.sum(c)) / total * gini(c) for c in children)
    return gini(parent) - weighted


def node_impurities(tree: TreeArrays) -> npt.NDArray[np.float64]:
    """Gini impurity of every node, from its class weights."""
    return np.array([gini(v) for v in tree.value])


def feature_importances(tree: TreeArrays, n_features: int) -> npt.NDArray[np.float64]:
    """Mean decrease in Gini impurity per feature, normalised to sum to one."""
    impurity = node_impurities(tree)
    weight = np.asarray(tree.weighted_n_node_samples, np.float64)
    out = np.zeros(n_features)
    for node, (left, right) in enumerate(zip(tree.children_left, tree.children_right, strict=True)):
        if left == -1:
            continue
        decrease = (
            weight[node] * impurity[node]
            - weight[left] * impurity[left]
            - weight[right] * impurity[right]
        )
        out[tree.feature[node]] += decrease
    total = out.sum()
    return out / total if total > 0 else out
