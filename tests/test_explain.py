"""Explanations follow the tree's real path, with the measured values and thresholds."""

from __future__ import annotations

import math

import numpy as np
from sklearn.tree import DecisionTreeClassifier

from linktriage.diagnosis import Model
from linktriage.features import FEATURE_NAMES
from linktriage.model.artefact import CompiledTree
from linktriage.model.explain import Explainer
from linktriage.model.train import prior_rows

from helpers import artefact_of


def test_questions_retrace_the_decision_path_of_each_row(model: Model) -> None:
    prior = prior_rows(2000, seed=9)
    x = prior.x
    leaves = model.tree.apply(x)
    for row, leaf in zip(x[:300], leaves[:300], strict=True):
        questions = model.explainer.questions(int(leaf), row.astype(np.float64).tolist())
        node = 0
        for q in questions:
            column = FEATURE_NAMES.index(q["feature"])
            value = row[column]
            threshold = model.tree.threshold[node]
            assert model.tree.feature[node] == column
            if math.isnan(value):
                assert q["value"] is None
                went_right = not model.tree.missing_left[node]
            else:
                went_right = bool(value > threshold)
            assert q["answer"] is went_right
            node = int(model.tree.right[node] if went_right else model.tree.left[node])
        assert node == leaf


def test_answers_say_yes_or_no_with_the_value(model: Model) -> None:
    prior = prior_rows(500, seed=10)
    leaf = int(model.tree.apply(prior.x[:1])[0])
    for q in model.explainer.questions(leaf, prior.x[0].astype(np.float64).tolist()):
        assert q["said"].startswith("yes: " if q["answer"] else "no: ")
        assert q["question"].endswith("?")


def test_a_split_on_whether_a_value_is_reported_reads_as_such() -> None:
    x = np.array([[0.1], [0.2], [np.nan], [np.nan], [0.3], [np.nan]], dtype=np.float32)
    y = ["a", "a", "b", "b", "a", "b"]
    clf = DecisionTreeClassifier(random_state=0).fit(x, y)
    assert np.isinf(clf.tree_.threshold[0])  # scikit-learn's "missing or not" split
    explainer = Explainer(CompiledTree(artefact_of(clf, ["rx_crc_ratio"])))
    leaf = int(clf.apply(np.array([[np.nan]], dtype=np.float32))[0])
    (q,) = explainer.questions(leaf, [math.nan])
    assert q["question"] == "Device does not report FCS error counts?"
    assert q["answer"] is True
    assert q["said"] == "yes: not reported"
    assert q["threshold"] is None
