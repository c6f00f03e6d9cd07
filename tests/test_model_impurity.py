"""Gini impurity and split gain: textbook worked examples and scikit-learn's own numbers."""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.tree import DecisionTreeClassifier

from linktriage.engine.model.impurity import feature_importances, gini, node_impurities, split_gain
from linktriage.engine.model.train import tree_arrays


def test_a_node_split_three_to_two_has_impurity_0_48() -> None:
    # 1 - (3/5)^2 - (2/5)^2 = 0.48 (common practice; the textbook definition).
    assert gini([3, 2]) == pytest.approx(0.48)


def test_ten_labels_all_different_have_impurity_0_9() -> None:
    assert gini([1] * 10) == pytest.approx(0.9)


def test_a_pure_node_has_no_impurity() -> None:
    assert gini([7, 0, 0]) == 0.0


def test_information_gain_is_parent_minus_weighted_children() -> None:
    # Parent 3:2 (0.48) split into 3:0 and 0:2: both pure, the gain is all of it.
    assert split_gain([3, 2], [[3, 0], [0, 2]]) == pytest.approx(0.48)
    # Split into 2:1 (4/9) and 1:1 (1/2): 0.48 - (3/5 * 4/9 + 2/5 * 1/2) = 0.01333...
    assert split_gain([3, 2], [[2, 1], [1, 1]]) == pytest.approx(0.48 - (3 / 5 * 4 / 9 + 0.2))


@pytest.fixture(scope="module")
def clf() -> DecisionTreeClassifier:
    rng = np.random.default_rng(5)
    x = rng.normal(size=(2000, 4))
    y = (x[:, 0] > 0).astype(int) + (x[:, 1] > 0.5).astype(int)
    return DecisionTreeClassifier(max_depth=4, random_state=0).fit(x, y)


def test_node_impurities_match_scikit_learns_tree_impurity(clf: DecisionTreeClassifier) -> None:
    # Reference: scikit-learn's tree_.impurity on the same data (criterion="gini").
    np.testing.assert_allclose(node_impurities(tree_arrays(clf)), clf.tree_.impurity, atol=1e-12)


def test_feature_importances_match_scikit_learns(clf: DecisionTreeClassifier) -> None:
    # Reference: scikit-learn's feature_importances_ (mean decrease in impurity).
    ours = feature_importances(tree_arrays(clf), 4)
    np.testing.assert_allclose(ours, clf.feature_importances_, atol=1e-12)
