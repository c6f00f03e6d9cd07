"""What would change the verdict: the stated change is the smallest one, and crossing it
moves scikit-learn's own tree to the stated verdict."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import numpy.typing as npt
import pytest
from sklearn.tree import DecisionTreeClassifier

from linktriage.engine.diagnosis.batch import DiagnosisBatch
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.snapshot import read_snapshot_file
from linktriage.engine.model.artefact import CompiledTree, TreeArrays
from linktriage.engine.model.features import FEATURE_BY_NAME, FEATURE_NAMES
from linktriage.engine.model.nearest import Counterfactuals
from linktriage.engine.model.train import class_weights, prior_rows
from linktriage.engine.prior import simulate_prior
from linktriage.engine.verdicts import kind_of

from helpers import artefact_of

EXPERT = Path(__file__).resolve().parent.parent / "fixtures" / "expert"

GUARDS = {"link_down", "no_data", "insufficient_traffic"}
UP = np.float32(np.inf)
DOWN = np.float32(-np.inf)


@pytest.fixture(scope="module")
def small() -> tuple[DecisionTreeClassifier, Model]:
    """A small pruned Gini tree on a few hundred simulated rows, exported the way
    ``linktriage train`` exports (model.train.tree_arrays into a TreeArtefact)."""
    prior = prior_rows(500, seed=41)
    y = prior.y.astype(str)
    clf = DecisionTreeClassifier(
        criterion="gini", ccp_alpha=0.005, class_weight=class_weights(y, 3.0), random_state=0
    ).fit(prior.x, y)
    return clf, Model(artefact_of(clf, list(FEATURE_NAMES)))


def _past(threshold: float, above: bool) -> np.float32:
    """The float32 nearest ``threshold`` on the far side: the smallest above it, or the
    largest at or below it (the tree sends ``x <= threshold`` left, comparing float32)."""
    t = np.float32(threshold)
    exact = np.float64(t)  # compared as float64: a Python float would compare as float32
    if above:
        return t if exact > threshold else np.nextafter(t, UP)
    return t if exact <= threshold else np.nextafter(t, DOWN)


def _moved(x: npt.NDArray[np.float32], column: int, value: np.float32) -> npt.NDArray[np.float32]:
    moved = x.copy()
    moved[column] = value
    return moved


def _share(column: int, change: float) -> float:
    feature = FEATURE_BY_NAME[FEATURE_NAMES[column]]
    return abs(change) / (feature.high - feature.low)


def test_crossing_the_threshold_gives_scikit_learns_other_verdict_and_stopping_short_does_not(
    small: tuple[DecisionTreeClassifier, Model],
) -> None:
    clf, model = small
    x = prior_rows(1500, seed=42).x
    everything = np.ones((len(x), len(clf.classes_)), np.bool_)
    near = Counterfactuals(model.tree).find(
        x.astype(np.float64), everything, np.ones(x.shape, np.bool_)
    )
    found = np.flatnonzero(near.column >= 0)
    assert len(found) > 0.9 * len(x)
    # Reference: scikit-learn's own predict and decision_path on the moved rows.
    now = clf.predict(x[found])
    past = np.array(
        [
            _moved(x[i], near.column[i], _past(near.threshold[i], near.above[i]))
            for i in found.tolist()
        ]
    )
    short = np.array(
        [
            _moved(x[i], near.column[i], _past(near.threshold[i], not near.above[i]))
            for i in found.tolist()
        ]
    )
    np.testing.assert_array_equal(clf.predict(past), model.tree.classes[near.klass[found]])
    assert np.all(clf.predict(past) != now)
    np.testing.assert_array_equal(clf.predict(short), now)
    # The two rows part ways at a node that splits the stated feature at the stated value.
    t = clf.tree_
    for k, i in enumerate(found.tolist()):
        a = clf.decision_path(past[k : k + 1]).indices
        b = clf.decision_path(short[k : k + 1]).indices
        parting = a[np.argmax(a[: len(b)] != b[: len(a)]) - 1]
        assert t.feature[parting] == near.column[i]
        assert t.threshold[parting] == near.threshold[i]


def test_no_nearer_change_of_any_feature_changes_scikit_learns_verdict(
    small: tuple[DecisionTreeClassifier, Model],
) -> None:
    clf, model = small
    x = prior_rows(300, seed=43).x
    everything = np.ones((len(x), len(clf.classes_)), np.bool_)
    near = Counterfactuals(model.tree).find(
        x.astype(np.float64), everything, np.ones(x.shape, np.bool_)
    )
    # Reference: every split of scikit-learn's tree_, each crossed from each row. A nearer
    # change may give another verdict only where it does not read as that verdict's cause
    # (nearest.py: the feature moves toward what shows the verdict reached, or back from
    # what shows the verdict answered now).
    t = clf.tree_
    splits = {(int(f), float(v)) for f, v in zip(t.feature, t.threshold, strict=True) if f >= 0}
    checked = 0
    for i in np.flatnonzero(near.column >= 0).tolist():
        stated = _share(near.column[i], near.threshold[i] - x[i, near.column[i]].item())
        now = str(clf.predict(x[i : i + 1])[0])
        nearer = [
            (f, _moved(x[i], f, _past(v, v >= x[i, f])))
            for f, v in splits
            if _share(f, v - x[i, f].item()) < stated
        ]
        for f, moved in nearer:
            then = str(clf.predict(moved[None, :])[0])
            up = bool(moved[f] > x[i, f])
            assert then == now or not _reads_as_cause(FEATURE_NAMES[f], up, now, then)
            checked += 1
    assert checked > 100


def _reads_as_cause(feature: str, up: bool, now: str, then: str) -> bool:
    """Moving ``feature`` up (or down) shows ``then``, or goes back from what shows
    ``now``."""
    toward = getattr(kind_of(then), "shown_by", ())
    back = getattr(kind_of(now), "shown_by", ())
    return any(r.feature == feature and r.higher == up for r in toward) or any(
        r.feature == feature and r.higher != up for r in back
    )


def test_a_change_is_named_only_where_it_reads_as_the_cause(model: Model) -> None:
    # On the hand-written sets, every "what would change the verdict" moves a reading
    # toward the verdict it leads to, or back from the verdict now: never a duplex mismatch
    # "would be a cable fault with more frames too long".
    named = 0
    for name in ("snapshots.jsonl", "links-snapshots.jsonl"):
        batch = diagnose(read_snapshot_file(EXPERT / name).polls, model)
        for record in batch.records():
            near = record["nearest_other"]
            if near is None:
                continue
            now, up = record["verdict"], near["direction"] == "above"
            assert _reads_as_cause(near["feature"], up, now, near["verdict"]), (now, near)
            named += 1
    assert named >= 20


def test_with_the_ports_physics_crossing_gives_the_stated_verdict(
    small: tuple[DecisionTreeClassifier, Model],
) -> None:
    clf, model = small
    polls, _ = simulate_prior(1500, np.random.default_rng(44))
    batch = diagnose(polls, model)
    mask = batch.allowed.mask[:, model.class_columns]
    seen = 0
    for i, record in enumerate(batch.records()):
        near = record["nearest_other"]
        if near is None:
            continue
        seen += 1
        column = FEATURE_NAMES.index(near["feature"])
        row = batch.values[i].astype(np.float32)
        # Reference: scikit-learn's apply routes the moved row; the physics mask then
        # chooses among its allowed classes, as diagnose does.
        for value, verdict in (
            (_past(near["threshold"], near["direction"] == "above"), near["verdict"]),
            (_past(near["threshold"], near["direction"] == "below"), record["verdict"]),
        ):
            leaf = clf.apply(_moved(row, column, value)[None, :])
            answer = model.counterfactuals.answer(leaf, mask[i : i + 1])
            assert model.tree.classes[answer[0]] == verdict
        assert near["verdict"] != record["verdict"]
        assert batch.reported[i, column]
    assert seen > 100


def test_a_reading_the_device_does_not_report_is_never_the_one_to_change(
    small: tuple[DecisionTreeClassifier, Model],
) -> None:
    _, model = small
    x = prior_rows(100, seed=45).x.astype(np.float64)
    everything = np.ones((len(x), len(model.tree.classes)), np.bool_)
    near = Counterfactuals(model.tree).find(x, everything, np.zeros(x.shape, np.bool_))
    assert np.all(near.column == -1)


def test_a_verdict_no_float32_value_reaches_is_never_named(
    small: tuple[DecisionTreeClassifier, Model],
) -> None:
    # Two thresholds between the same neighbouring float32s (0.5 and the next, 2**-24 up):
    # the leaf between them holds no value a port can take, so it is no change to offer.
    low, high = 0.5 + 2.0**-27, 0.5 + 2.0**-26
    column = FEATURE_NAMES.index("speed_ratio")
    arrays = TreeArrays(
        children_left=[1, 3, -1, -1, -1],
        children_right=[2, 4, -1, -1, -1],
        feature=[column, column, -1, -1, -1],
        threshold=[high, low, None, None, None],
        missing_go_to_left=[True, False, False, False, False],  # (no port is missing it)
        value=[[2.0, 1.0], [1.0, 1.0], [1.0, 0.0], [1.0, 0.0], [0.0, 1.0]],
        n_node_samples=[3, 2, 1, 1, 1],
        weighted_n_node_samples=[3.0, 2.0, 1.0, 1.0, 1.0],
        impurity=[0.0] * 5,
    )
    artefact = small[1].artefact.model_copy(
        update={"tree": arrays, "classes": ["healthy", "negotiation_degraded"]}
    )
    tree = CompiledTree(artefact)
    x = np.zeros((4, len(FEATURE_NAMES)))
    x[:, column] = [0.25, 0.5, np.nextafter(np.float32(0.5), np.float32(1.0)), 0.75]
    assert set(tree.predict(x.astype(np.float32))) == {"healthy"}
    near = Counterfactuals(tree).find(x, np.ones((4, 2), np.bool_), np.ones(x.shape, np.bool_))
    assert np.all(near.column == -1)


def test_a_tree_of_one_leaf_has_nothing_to_change() -> None:
    x = prior_rows(100, seed=46).x
    clf = DecisionTreeClassifier(ccp_alpha=1.0, random_state=0).fit(x, ["healthy"] * len(x))
    assert clf.get_n_leaves() == 1
    tree = CompiledTree(artefact_of(clf, list(FEATURE_NAMES)))
    near = Counterfactuals(tree).find(
        x.astype(np.float64), np.ones((len(x), 1), np.bool_), np.ones(x.shape, np.bool_)
    )
    assert np.all(near.column == -1)


def test_guard_answers_have_no_nearest_other(demo_batch: DiagnosisBatch) -> None:
    guarded = [r for r in demo_batch.records() if r["verdict"] in GUARDS]
    assert {r["verdict"] for r in guarded} == GUARDS
    assert all(r["nearest_other"] is None for r in guarded)


def test_on_the_expert_set_the_nearest_other_is_another_verdict(model: Model) -> None:
    # fixtures/expert: ports written by hand from the standards, apart from the engine.
    result = read_snapshot_file(EXPERT / "snapshots.jsonl")
    batch = diagnose(result.polls, model)
    named = 0
    for record in batch.records():
        near = record["nearest_other"]
        if near is None:
            continue
        named += 1
        assert near["verdict"] != record["verdict"]
        assert near["verdict"] not in GUARDS
        assert near["feature"] in model.tree.features
        assert near["direction"] in ("above", "below")
        title = kind_of(near["verdict"]).title
        assert near["said"].startswith(f"would be {title} with ")
        assert json.loads(json.dumps(near)) == near
    assert named >= 5
