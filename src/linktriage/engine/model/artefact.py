"""The model artefact: a pruned tree as plain JSON, and prediction from it without pickle.

The artefact holds scikit-learn's own tree arrays (children, split features, thresholds,
where missing values go, class weights per node), the feature and class names, a content
version and a training summary. :class:`CompiledTree` predicts from those arrays with
numpy, following scikit-learn's rules exactly: features are compared as float32 against
float64 thresholds (``x <= threshold`` goes left), NaN follows ``missing_go_to_left``, and
leaf probabilities are the leaf's class weights divided by their sum. Tests hold it to
``DecisionTreeClassifier.predict_proba`` on the same rows, bit for bit.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Literal

import numpy as np
import numpy.typing as npt
from pydantic import BaseModel, ConfigDict, ValidationError

from linktriage import invalid
from linktriage.errors import ModelError

DEFAULT_MODEL_RESOURCE = "default.json"


class TreeArrays(BaseModel):
    """scikit-learn's ``tree_`` arrays, one entry per node; leaves have children -1.

    A ``threshold`` of null stands for +infinity: scikit-learn's split that sends every
    reported value left and only missing values right (JSON has no infinity).
    """

    model_config = ConfigDict(frozen=True)

    children_left: list[int]
    children_right: list[int]
    feature: list[int]
    threshold: list[float | None]
    missing_go_to_left: list[bool]
    value: list[list[float]]
    n_node_samples: list[int]
    weighted_n_node_samples: list[float]
    impurity: list[float]


class ReliabilityBin(BaseModel):
    """Answers given with a confidence in [low, high) (the last bin includes 1), and how many
    were right: a row of a reliability table."""

    model_config = ConfigDict(frozen=True)

    low: float
    high: float
    answers: int
    right: int


class TrainingSummary(BaseModel):
    """How the tree was trained and how well it scored in cross-validation."""

    model_config = ConfigDict(frozen=True)

    seed: int
    simulated_ports: int
    rows: int
    labelled_rows: int = 0
    folds: int
    ccp_alpha: float
    selection: str
    cv_macro_f1: float
    cv_macro_f1_se: float
    best_cv_macro_f1: float
    best_ccp_alpha: float
    per_class_recall: dict[str, float]
    healthy_false_alarm: float
    sklearn_version: str
    #: How often each level of confidence was right, measured after training on held-out
    #: simulated ports through the whole pipeline (empty where it was not measured).
    reliability: tuple[ReliabilityBin, ...] = ()


class TreeArtefact(BaseModel):
    """The whole model as stored: the only thing a fresh install needs to answer."""

    model_config = ConfigDict(frozen=True)

    format: Literal["linktriage-tree"] = "linktriage-tree"
    #: 2: evidence features (linktriage 0.2); a model of format 1 was trained on other inputs.
    format_version: Literal[2] = 2
    version: str
    features: list[str]
    classes: list[str]
    tree: TreeArrays
    training: TrainingSummary

    @property
    def leaves(self) -> int:
        return sum(1 for c in self.tree.children_left if c == -1)

    @property
    def depth(self) -> int:
        depth = [0] * len(self.tree.children_left)
        for node, (left, right) in enumerate(
            zip(self.tree.children_left, self.tree.children_right, strict=True)
        ):
            if left != -1:  # children always come after their parent in scikit-learn's order
                depth[left] = depth[right] = depth[node] + 1
        return max(depth)

    def save(self, path: str | Path) -> None:
        """Write the artefact as indented JSON (floats round-trip exactly)."""
        Path(path).write_text(self.model_dump_json(indent=1) + "\n", encoding="utf-8")

    @classmethod
    def load(cls, path: str | Path) -> TreeArtefact:
        """Read an artefact; a missing, malformed or foreign file raises :class:`ModelError`."""
        try:
            text = Path(path).read_text(encoding="utf-8")
        except OSError as exc:
            raise ModelError(
                f"Cannot read model file {path}: {exc.strerror or exc}",
                hint="Run `linktriage train` to build one, or leave --model out.",
            ) from exc
        return cls.parse(text, origin=str(path))

    @classmethod
    def parse(cls, text: str, *, origin: str) -> TreeArtefact:
        try:
            return cls.model_validate_json(text)
        except ValidationError as exc:
            if any(e["loc"] == ("format_version",) for e in exc.errors()):
                raise ModelError(
                    f"{origin} was built by an earlier release, on inputs this one no longer "
                    "computes",
                    hint="Rebuild it with `linktriage train`.",
                ) from exc
            raise ModelError(
                f"{origin} is not a linktriage model artefact "
                f"({exc.error_count()} problems, first: {invalid.problems(exc)[0]})",
                hint="Rebuild it with `linktriage train`.",
            ) from exc

    @classmethod
    def default(cls) -> TreeArtefact:
        """The model shipped inside the package."""
        text = (resources.files("linktriage.engine.model") / DEFAULT_MODEL_RESOURCE).read_text(
            "utf-8"
        )
        return cls.parse(text, origin="the packaged default model")


def content_version(features: list[str], classes: list[str], tree: TreeArrays) -> str:
    """A short hash of what the tree decides, stable across platforms.

    Thresholds and node weights are rounded to 9 significant digits first, so a last-bit
    difference in floating point between machines does not rename the same model.
    """
    canonical = {
        "features": features,
        "classes": classes,
        "left": tree.children_left,
        "right": tree.children_right,
        "feature": tree.feature,
        "missing_left": tree.missing_go_to_left,
        "threshold": [None if t is None else float(f"{t:.9g}") for t in tree.threshold],
        "value": [[float(f"{v:.9g}") for v in row] for row in tree.value],
    }
    digest = hashlib.sha256(json.dumps(canonical, sort_keys=True).encode()).hexdigest()
    return digest[:12]


@dataclass(frozen=True, slots=True)
class Step:
    """One question on the way to a node: the node asking, its feature, threshold, the branch."""

    node: int
    feature: int
    threshold: float
    went_right: bool  # True: the value was above the threshold (or NaN routed right)


@dataclass(frozen=True, slots=True)
class Choice:
    """Per row: the node whose classes decided, the class chosen, and its share there."""

    node: npt.NDArray[np.intp]
    klass: npt.NDArray[np.intp]  # index into CompiledTree.classes; -1 where none was allowed
    confidence: npt.NDArray[np.float64]
    first: npt.NDArray[np.intp]  # the leaf's own first choice, allowed or not


class CompiledTree:
    """Numpy arrays of an artefact, ready to route many rows at once."""

    def __init__(self, artefact: TreeArtefact) -> None:
        t = artefact.tree
        self.artefact = artefact
        self.version = artefact.version
        self.features = tuple(artefact.features)
        self.classes = np.asarray(artefact.classes, dtype=object)
        self.left = np.asarray(t.children_left, np.intp)
        self.right = np.asarray(t.children_right, np.intp)
        self.feature = np.asarray(t.feature, np.intp)
        self.threshold = np.asarray([np.inf if v is None else v for v in t.threshold], np.float64)
        self.missing_left = np.asarray(t.missing_go_to_left, np.bool_)
        value = np.asarray(t.value, np.float64)
        normalizer = value.sum(axis=1, keepdims=True)
        normalizer[normalizer == 0.0] = 1.0  # as scikit-learn's predict_proba does
        self.proba = value / normalizer
        self.samples = np.asarray(t.n_node_samples, np.float64)  # training ports per node
        self.is_leaf = self.left == -1
        self.depth = artefact.depth
        self.parent = np.full(len(self.left), -1, np.intp)
        inner = np.flatnonzero(~self.is_leaf)
        self.parent[self.left[inner]] = inner
        self.parent[self.right[inner]] = inner
        self.paths = self._paths()

    def apply(self, x: npt.NDArray[np.float32]) -> npt.NDArray[np.intp]:
        """The leaf each row of ``x`` (float32, features in artefact order) lands in."""
        x = np.asarray(x, np.float32)
        node = np.zeros(len(x), np.intp)
        rows = np.arange(len(x))  # the rows not yet at a leaf: most reach one in a few steps
        for _ in range(self.depth):
            at = node[rows]
            inner = ~self.is_leaf[at]
            if not inner.all():
                rows, at = rows[inner], at[inner]
                if not len(rows):
                    break
            v = x[rows, self.feature[at]]
            go_left = np.where(np.isnan(v), self.missing_left[at], v <= self.threshold[at])
            node[rows] = np.where(go_left, self.left[at], self.right[at])
        return node

    def predict_proba(self, x: npt.NDArray[np.float32]) -> npt.NDArray[np.float64]:
        """Class probabilities per row, exactly as scikit-learn's ``predict_proba``."""
        proba: npt.NDArray[np.float64] = self.proba[self.apply(x)]
        return proba

    def predict(self, x: npt.NDArray[np.float32]) -> npt.NDArray[np.object_]:
        """The most probable class per row (first one on ties, as scikit-learn)."""
        labels: npt.NDArray[np.object_] = self.classes[np.argmax(self.predict_proba(x), axis=1)]
        return labels

    def choose(self, leaf: npt.NDArray[np.intp], allowed: npt.NDArray[np.bool_]) -> Choice:
        """The most probable *allowed* class per row (``allowed``: rows x classes).

        Where the leaf holds none of the allowed classes, the question is asked one node up,
        and so on towards the root: the nearest node whose training rows include an allowed
        class decides. A row with no allowed class at all gets ``klass`` -1.
        """
        node = leaf.copy()
        masked = self.proba[node] * allowed
        total = masked.sum(axis=1)
        # Only the rows still without an allowed class walk up, a level at a time.
        stuck = np.flatnonzero((total <= 0) & allowed.any(axis=1))
        for _ in range(self.depth):
            up = self.parent[node[stuck]]
            stuck, up = stuck[up >= 0], up[up >= 0]
            if not len(stuck):
                break
            node[stuck] = up
            walked = self.proba[up] * allowed[stuck]
            masked[stuck] = walked
            found = walked.sum(axis=1)
            total[stuck] = found
            stuck = stuck[found <= 0]
        best = np.argmax(masked, axis=1)
        chosen = total > 0
        with np.errstate(divide="ignore", invalid="ignore"):
            confidence = np.where(chosen, masked[np.arange(len(best)), best] / total, 0.0)
        return Choice(
            node=node,
            klass=np.where(chosen, best, -1),
            confidence=confidence,
            first=np.argmax(self.proba[leaf], axis=1),
        )

    def _paths(self) -> dict[int, tuple[Step, ...]]:
        """For every node, the internal nodes from the root to it, in order."""
        paths: dict[int, tuple[Step, ...]] = {}
        stack: list[tuple[int, tuple[Step, ...]]] = [(0, ())]
        while stack:
            node, path = stack.pop()
            paths[node] = path
            if self.is_leaf[node]:
                continue
            f, thr = int(self.feature[node]), float(self.threshold[node])
            stack.append((int(self.left[node]), (*path, Step(node, f, thr, False))))
            stack.append((int(self.right[node]), (*path, Step(node, f, thr, True))))
        return paths
