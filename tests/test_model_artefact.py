"""The JSON artefact predicts exactly as scikit-learn's own tree, with no pickle involved."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from sklearn.tree import DecisionTreeClassifier

from linktriage.engine.model.artefact import CompiledTree, TreeArtefact, content_version
from linktriage.errors import ModelError

from helpers import artefact_of


def _artefact(clf: DecisionTreeClassifier, n_features: int) -> TreeArtefact:
    return artefact_of(clf, [f"f{i}" for i in range(n_features)])  # type: ignore[no-any-return]


@pytest.fixture(scope="module")
def fitted() -> tuple[DecisionTreeClassifier, np.ndarray, np.ndarray]:
    """A tree on data with missing values, and held-out rows with missing values too."""
    rng = np.random.default_rng(3)
    x = rng.normal(size=(3000, 6)).astype(np.float32)
    y = np.where(x[:, 0] + 0.5 * x[:, 1] > 0, "a", np.where(x[:, 2] > 0.3, "b", "c"))
    x[rng.random(x.shape) < 0.1] = np.nan
    x[:, 5] = rng.normal(size=3000)  # no NaN in training for this feature
    clf = DecisionTreeClassifier(ccp_alpha=0.002, random_state=0).fit(x, y)
    test = rng.normal(size=(5000, 6)).astype(np.float32)
    test[rng.random(test.shape) < 0.15] = np.nan  # NaN also where training had none
    return clf, x, test


def test_probabilities_are_bit_for_bit_scikit_learns(fitted) -> None:  # type: ignore[no-untyped-def]
    # Reference: scikit-learn's DecisionTreeClassifier.predict_proba on the same rows.
    clf, x, test = fitted
    tree = CompiledTree(_artefact(clf, x.shape[1]))
    for rows in (x, test):
        np.testing.assert_array_equal(tree.predict_proba(rows), clf.predict_proba(rows))
        np.testing.assert_array_equal(tree.predict(rows), clf.predict(rows))
        np.testing.assert_array_equal(tree.apply(rows), clf.apply(rows))


def test_a_json_round_trip_keeps_predictions_exact(fitted, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    clf, _, test = fitted
    artefact = _artefact(clf, test.shape[1])
    artefact.save(tmp_path / "m.json")
    text = (tmp_path / "m.json").read_text()
    json.loads(text)  # strict JSON: no NaN or Infinity literals
    again = TreeArtefact.load(tmp_path / "m.json")
    assert again == artefact
    np.testing.assert_array_equal(CompiledTree(again).predict_proba(test), clf.predict_proba(test))


def test_depth_and_leaves_are_scikit_learns(fitted) -> None:  # type: ignore[no-untyped-def]
    clf, x, _ = fitted
    artefact = _artefact(clf, x.shape[1])
    assert artefact.depth == clf.get_depth()
    assert artefact.leaves == clf.get_n_leaves()


def test_paths_reach_every_node_once(fitted) -> None:  # type: ignore[no-untyped-def]
    clf, x, _ = fitted
    tree = CompiledTree(_artefact(clf, x.shape[1]))
    assert sorted(tree.paths) == list(range(clf.tree_.node_count))
    # Reference: scikit-learn's decision_path, for the leaves rows land in.
    for leaf in np.unique(clf.apply(x)):
        row = x[clf.apply(x) == leaf][:1]
        assert len(tree.paths[leaf]) == int(clf.decision_path(row).sum()) - 1
        assert [s.node for s in tree.paths[leaf]] == list(clf.decision_path(row).indices[:-1])


def test_choosing_among_allowed_classes_takes_the_best_allowed_one(fitted) -> None:  # type: ignore[no-untyped-def]
    clf, x, _ = fitted
    tree = CompiledTree(_artefact(clf, x.shape[1]))
    leaf = tree.apply(x[:200])
    everything = np.ones((200, len(tree.classes)), np.bool_)
    free = tree.choose(leaf, everything)
    np.testing.assert_array_equal(free.klass, np.argmax(tree.proba[leaf], axis=1))
    np.testing.assert_array_equal(free.node, leaf)
    # Forbid each row's first choice: the best of the rest wins, from the leaf or, where the
    # leaf holds nothing else, from the nearest ancestor that does.
    allowed = everything.copy()
    allowed[np.arange(200), free.first] = False
    forced = tree.choose(leaf, allowed)
    assert np.all(forced.klass != free.first)
    assert np.all(forced.klass >= 0)
    for row in range(200):
        node = forced.node[row]
        masked = tree.proba[node] * allowed[row]
        assert forced.klass[row] == np.argmax(masked)
        assert forced.confidence[row] == pytest.approx(masked.max() / masked.sum())
        if node != leaf[row]:  # backed off: every node below it held nothing allowed
            assert (tree.proba[leaf[row]] * allowed[row]).sum() == 0


def test_no_allowed_class_leaves_the_row_undecided(fitted) -> None:  # type: ignore[no-untyped-def]
    clf, x, _ = fitted
    tree = CompiledTree(_artefact(clf, x.shape[1]))
    choice = tree.choose(tree.apply(x[:5]), np.zeros((5, len(tree.classes)), np.bool_))
    assert np.all(choice.klass == -1)


def test_the_version_names_the_content() -> None:
    clf = DecisionTreeClassifier(max_depth=2, random_state=0).fit(
        [[0], [1], [2], [3]], list("aabb")
    )
    a = _artefact(clf, 1)
    assert a.version == content_version(a.features, a.classes, a.tree)
    other = a.model_copy(update={"classes": ["b", "a"]})
    assert content_version(other.features, other.classes, other.tree) != a.version


def test_a_file_that_is_not_an_artefact_is_a_clear_error(tmp_path: Path) -> None:
    (tmp_path / "bad.json").write_text('{"format": "something-else"}')
    with pytest.raises(ModelError, match="is not a linktriage model artefact"):
        TreeArtefact.load(tmp_path / "bad.json")
    with pytest.raises(ModelError, match="Cannot read model file"):
        TreeArtefact.load(tmp_path / "missing.json")


def test_the_packaged_model_loads_and_is_plain_json() -> None:
    artefact = TreeArtefact.default()
    assert artefact.format == "linktriage-tree"
    assert artefact.leaves <= 40
