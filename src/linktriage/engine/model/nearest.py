"""What would change the verdict: the smallest change in one input that leads the tree
to another answer, worked out from the tree itself.

For one port, one feature moves and every other stays as measured. The tree compares that feature
(as float32) with its split thresholds on it, ``x <= t`` going left, so the values it can take fall
into intervals between consecutive thresholds, and within one interval the port lands in one leaf.
The answer in each interval is what the tree and the physics answer there:
:meth:`CompiledTree.choose` with the port's own allowed classes, or the leaf's first choice where
none is allowed, as the diagnosis answers. The nearest interval with another answer, above or below,
gives the threshold to cross. Features are in units of their own (decades, dB, shares, flaps an
hour), so across features the change is measured as a share of the feature's span (its clip bounds
in :mod:`linktriage.engine.model.features`) and the smallest wins.

The allowed classes are held fixed at what the port's readings allow now. Moving one
reading could change them too (fewer errors would allow ``healthy``), but they come from
measures a feature does not determine (counts, the window, the module's thresholds): this
is the tree's own counterfactual, and it never names a verdict the port's readings rule
out. Where the physics leaves one verdict, no change of a single feature moves the answer.

A change is named only where it reads as a cause: the feature moves the way that shows the
verdict it leads to (each verdict declares the features it is ``shown_by``, and which way),
or back from the way that shows the verdict answered now, so that what remains decides. Fewer
discards make a congested port healthy; more light makes a low-light port with errors a
cable fault; more frames too long, or fewer bit errors, do not make a duplex mismatch a
cable fault, whatever branch the tree takes there.

Every threshold lies between two training values, which lie within the clip bounds, so
every interval holds values a port can take. Ports in the same interval of every feature
with the same allowed classes share the work: it is done once per such cell.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from linktriage.engine.model.artefact import CompiledTree
from linktriage.engine.model.features import FEATURE_BY_NAME
from linktriage.engine.verdicts import TREE


@dataclass(frozen=True, slots=True)
class Nearest:
    """Per row: the change that gives another answer, or ``column`` -1 where none does."""

    column: npt.NDArray[np.intp]  # the feature to change (a column of the feature matrix)
    threshold: npt.NDArray[np.float64]  # the tree's split value to cross
    above: npt.NDArray[np.bool_]  # True: past it is above it; False: at or below it
    klass: npt.NDArray[np.intp]  # the answer past it, an index into CompiledTree.classes


def _points(cuts: npt.NDArray[np.float64]) -> npt.NDArray[np.float32]:
    """One float32 in each interval (-inf, t0], (t0, t1], ..., (tk, inf): the largest at or
    below its upper bound, and the smallest above the last threshold; NaN where no float32
    falls in the interval (two thresholds between the same neighbouring float32s)."""
    upper = cuts.astype(np.float32)
    upper = np.where(upper > cuts, np.nextafter(upper, np.float32(-np.inf)), upper)
    top = np.float32(cuts[-1])
    if top <= cuts[-1]:
        top = np.nextafter(top, np.float32(np.inf))
    points = np.append(upper, top)
    empty = np.append(False, points[1:-1] <= cuts[:-1])
    points[np.append(empty, False)] = np.nan
    return points


class Counterfactuals:
    """The tree's split thresholds per feature, ready to find each row's nearest change."""

    def __init__(self, tree: CompiledTree) -> None:
        self.tree = tree
        finite = ~tree.is_leaf & np.isfinite(tree.threshold)  # +inf: only NaN goes right
        self.columns = np.unique(tree.feature[finite])
        self.cuts = [np.unique(tree.threshold[finite & (tree.feature == c)]) for c in self.columns]
        self.points = [_points(cuts) for cuts in self.cuts]
        self.spans = np.array(
            [
                FEATURE_BY_NAME[tree.features[c]].high - FEATURE_BY_NAME[tree.features[c]].low
                for c in self.columns
            ]
        )
        # shows[way][f, k]: the f-th feature split on, moving up (way 1) or down (way 0),
        # shows the k-th class (the module docstring).
        ways = {(k.verdict, r.feature, r.higher) for k in TREE for r in k.shown_by}
        self.shows = [
            np.array(
                [[(v, tree.features[c], up) in ways for v in tree.classes] for c in self.columns],
                np.bool_,
            ).reshape(len(self.columns), len(tree.classes))
            for up in (False, True)
        ]

    def answer(
        self, leaf: npt.NDArray[np.intp], allowed: npt.NDArray[np.bool_]
    ) -> npt.NDArray[np.intp]:
        """The class answered at ``leaf`` with ``allowed`` classes, as the diagnosis answers."""
        choice = self.tree.choose(leaf, allowed)
        return np.where(choice.klass >= 0, choice.klass, choice.first)

    def find(
        self,
        values: npt.NDArray[np.float64],
        allowed: npt.NDArray[np.bool_],
        measured: npt.NDArray[np.bool_],
    ) -> Nearest:
        """The nearest change of each row of ``values`` (features in the tree's order) with
        the classes ``allowed`` it (rows x classes). Only a feature ``measured`` (rows x
        features: the device's counters gave it) may change: one not reported stands at
        "nothing counted", which is no reading to move."""
        n = len(values)
        if n == 0 or len(self.columns) == 0:  # no ports, or a tree of one leaf: no change
            return Nearest(
                np.full(n, -1, np.intp),
                np.full(n, np.nan),
                np.zeros(n, np.bool_),
                np.full(n, -1, np.intp),
            )
        x = values.astype(np.float32)  # as the tree compares them
        cells = np.column_stack(
            [
                np.searchsorted(cuts, x[:, c].astype(np.float64))
                for c, cuts in zip(self.columns.tolist(), self.cuts, strict=True)
            ]
        ).astype(np.uint16)
        key = np.ascontiguousarray(np.column_stack([cells.view(np.uint8), allowed]), np.uint8)
        _, first, inverse = np.unique(
            key.view(np.dtype((np.void, key.shape[1]))).ravel(),
            return_index=True,
            return_inverse=True,
        )
        up, down = self._per_cell(x[first], cells[first], allowed[first])
        # Per row and feature, the change up and down as a share of the feature's span.
        at = values[:, self.columns]
        up_t, up_k = up[0][inverse], up[1][inverse]
        down_t, down_k = down[0][inverse], down[1][inverse]
        distance = np.concatenate([(up_t - at) / self.spans, (at - down_t) / self.spans], axis=1)
        can = np.tile(measured[:, self.columns], 2)
        distance = np.where(np.isnan(distance) | ~can, np.inf, distance)
        best = np.argmin(distance, axis=1)
        found = np.isfinite(distance[np.arange(n), best])
        width = len(self.columns)
        is_up = best < width
        k = best % width
        rows = np.arange(n)
        return Nearest(
            column=np.where(found, self.columns[k], -1),
            threshold=np.where(found, np.where(is_up, up_t[rows, k], down_t[rows, k]), np.nan),
            above=found & is_up,
            klass=np.where(found, np.where(is_up, up_k[rows, k], down_k[rows, k]), -1),
        )

    def _per_cell(
        self,
        x: npt.NDArray[np.float32],
        cells: npt.NDArray[np.uint16],
        allowed: npt.NDArray[np.bool_],
    ) -> tuple[
        tuple[npt.NDArray[np.float64], npt.NDArray[np.intp]],
        tuple[npt.NDArray[np.float64], npt.NDArray[np.intp]],
    ]:
        """For one row of each cell, per feature: the nearest threshold above the row with
        another answer past it, and that answer (NaN and -1 where none), and the same below."""
        m, width = len(x), len(self.columns)
        now = self.answer(self.tree.apply(x), allowed)
        up_t, down_t = np.full((m, width), np.nan), np.full((m, width), np.nan)
        up_k, down_k = np.full((m, width), -1, np.intp), np.full((m, width), -1, np.intp)
        for f, (c, cuts, points) in enumerate(
            zip(self.columns.tolist(), self.cuts, self.points, strict=True)
        ):
            # Every row once per interval of this feature, moved to a value inside it.
            moved = np.repeat(x, len(points), axis=0)
            moved[:, c] = np.tile(points, m)
            leaf = self.tree.apply(moved)
            answers = self.answer(leaf, np.repeat(allowed, len(points), axis=0))
            answers = answers.reshape(m, len(points))
            other = (answers != now[:, None]) & ~np.isnan(points)
            j = np.arange(len(points))
            here = cells[:, f].astype(np.intp)[:, None]
            above = other & (j > here) & self._causes(f, True, answers, now)
            below = other & (j < here) & self._causes(f, False, answers, now)
            rows_up = np.flatnonzero(above.any(axis=1))
            nearest_up = np.argmax(above[rows_up], axis=1)  # first interval above
            up_t[rows_up, f] = cuts[nearest_up - 1]  # its lower bound
            up_k[rows_up, f] = answers[rows_up, nearest_up]
            rows_down = np.flatnonzero(below.any(axis=1))
            nearest_down = len(points) - 1 - np.argmax(below[rows_down, ::-1], axis=1)
            down_t[rows_down, f] = cuts[nearest_down]  # its upper bound
            down_k[rows_down, f] = answers[rows_down, nearest_down]
        return (up_t, up_k), (down_t, down_k)

    def _causes(
        self, f: int, up: bool, answers: npt.NDArray[np.intp], now: npt.NDArray[np.intp]
    ) -> npt.NDArray[np.bool_]:
        """Where moving the ``f``-th feature up (or down) into each interval reads as the
        cause of the answer there: it shows that answer, or it goes back from what shows
        the answer now."""
        toward, back = self.shows[up][f], self.shows[not up][f]
        return np.asarray(toward[answers] | back[now][:, None], np.bool_)
