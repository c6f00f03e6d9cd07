"""Explanations follow the tree's real path, one question per feature, with the measured
values and thresholds."""

from __future__ import annotations

import math

import numpy as np
from sklearn.tree import DecisionTreeClassifier

from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.model.artefact import CompiledTree
from linktriage.engine.model.explain import Explainer
from linktriage.engine.model.features import FEATURE_NAMES
from linktriage.engine.model.train import prior_rows

from helpers import artefact_of


def test_questions_hold_for_the_values_of_each_row(model: Model) -> None:
    x = prior_rows(2000, seed=9).x
    leaves = model.tree.apply(x)
    for row, leaf in zip(x[:400], leaves[:400], strict=True):
        values = row.astype(np.float64).tolist()
        questions = model.explainer.questions(int(leaf), values)
        asked = {model.tree.features[s.feature] for s in model.tree.paths[int(leaf)]}
        assert [q["feature"] for q in questions] == list(dict.fromkeys(
            model.tree.features[s.feature] for s in model.tree.paths[int(leaf)]
        ))  # fmt: skip
        assert {q["feature"] for q in questions} == asked
        for q in questions:
            value = np.float32(values[FEATURE_NAMES.index(q["feature"])])
            if "range" in q:
                low, high = q["range"]
                assert q["answer"] is True and low < value <= high
            else:
                assert q["answer"] is bool(value > q["threshold"])


def test_answers_say_yes_or_no_with_the_value(model: Model) -> None:
    x = prior_rows(500, seed=10).x
    leaf = int(model.tree.apply(x[:1])[0])
    for q in model.explainer.questions(leaf, x[0].astype(np.float64).tolist()):
        assert q["said"].startswith("yes: " if q["answer"] else "no: ")
        assert q["question"].endswith("?")


def test_two_splits_on_one_feature_read_as_one_range() -> None:
    # A tree that needs 0.5 < x <= 1.5 for class "b" asks x twice on that path.
    x = np.array([[0.0], [0.2], [1.0], [1.2], [2.0], [2.5]], dtype=np.float32)
    clf = DecisionTreeClassifier(random_state=0).fit(x, ["a", "a", "b", "b", "c", "c"])
    explainer = Explainer(CompiledTree(artefact_of(clf, ["speed_ratio"])))
    leaf = int(clf.apply(np.array([[1.1]], dtype=np.float32))[0])
    (q,) = explainer.questions(leaf, [1.1])
    assert q["question"] == "Running at between 60% and 160% of the port's top speed?"
    # scikit-learn's thresholds: midway between neighbouring values, as float64.
    assert q["range"] == [float(clf.tree_.threshold[0]), float(clf.tree_.threshold[2])]
    assert q["said"] == "yes: 110%"


def test_a_feature_the_device_did_not_report_says_so() -> None:
    x = np.array([[-13.0], [-12.0], [-5.0], [-4.0]], dtype=np.float32)  # split at -8.5
    clf = DecisionTreeClassifier(random_state=0).fit(x, ["a", "a", "b", "b"])
    explainer = Explainer(CompiledTree(artefact_of(clf, ["giant_ratio"])))
    leaf = int(clf.apply(np.array([[-13.0]], dtype=np.float32))[0])
    (q,) = explainer.questions(leaf, [-13.0], [False])
    assert q["said"] == "no: not reported, so no evidence of it"
    assert q["value"] is None
    (q,) = explainer.questions(leaf, [-13.0], [True])
    assert q["said"] == "no: none"
    assert not math.isnan(q["value"] or 0.0)


def test_a_split_at_the_floor_of_a_count_asks_whether_it_was_counted() -> None:
    x = np.array([[-13.0], [-13.0], [-10.0], [-9.5]], dtype=np.float32)
    clf = DecisionTreeClassifier(random_state=0).fit(x, ["a", "a", "b", "b"])
    explainer = Explainer(CompiledTree(artefact_of(clf, ["late_collision_ratio"])))
    leaf = int(clf.apply(np.array([[-10.0]], dtype=np.float32))[0])
    (q,) = explainer.questions(leaf, [-10.0])
    assert q["question"] == ("Late collisions (after the first 512 bit times) counted, 3 or more?")
    assert q["said"] == "yes: 1 in 10,000,000,000"
