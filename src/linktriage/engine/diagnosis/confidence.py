"""How sure a tree's answer is: the share of its node, with its sample, times the chance that
each reading the answer rests on would fall on the same side of its question in another
window.

A pure leaf of thousands of training ports says 1.00 to every port it holds, the marginal as
well as the plain; an engineer wants to know which is which. So:

* **The node.** The share of the answered class among the allowed classes at the node that
  answers, smoothed by its training sample (Laplace's rule of succession: ``(k + 1) / (n + K)``
  for ``k`` of ``n`` ports and the tree's ``K`` classes), so no node says 1.00.
* **Each question on the path.** A reading near its threshold could have fallen the other way
  in another window. The distance is counted in :data:`FLIP_SCALE` units of the feature's
  kind (about what a window's counting noise or a module's reading accuracy moves it), and the
  answer holds with ``1 - exp(-d) / 2``: a half at the threshold, 0.98 four units away. Only
  a question whose other side leads elsewhere counts: where the other branch's training ports
  point to the same verdict among those the port's readings allow, a flip changes nothing. A
  reading the device does not report is not measured and moves nothing.
* **Enough frames.** A healthy answer rests on the frames that bound the error ratio
  (:data:`linktriage.engine.measure.measures.RESOLUTION_CAP`): counted like a question, in
  decades of frames over those needed.
* **The latest intervals.** Where the window restarted because its latest intervals differ
  (:mod:`linktriage.engine.measure.now`), the answer rests on part of what was read:
  :data:`RESTARTED` times.

Answers given without the tree (a guard: down, no data, too quiet) have no confidence. Where
both ends of a link are read, the batch's ``link_confidence`` takes the end whose counters show
the link's verdict. How well this is calibrated is measured,
not assumed: ``bench/model_quality.py`` prints a reliability table on every outside set.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.poll_table import FloatArray
from linktriage.engine.model.artefact import CompiledTree
from linktriage.engine.model.features import FEATURES

#: A reading's distance from a question's threshold is counted in these units of its kind:
#: 0.05 of a decade for ratios and rates (Poisson noise on a hundred events moves a ratio by
#: about that), 0.5 dB for light (a module's reading wanders by that between polls), 2 points
#: of a share (load from window to window), 0.05 of a multiple, a quarter of a flap an hour
#: (common practice). They were set so that answers given at 0.95 or more are right at least
#: 95% of the time on the sets the project did not write (bench/model_quality.py).
FLIP_SCALE: dict[str, float] = {
    "times": 0.05,
    "log_ratio": 0.05,
    "log_fps": 0.05,
    "db": 0.5,
    "share": 0.02,
    "multiple": 0.05,
    "per_hour": 0.25,
    "flag": 0.0,  # a state is read, not estimated: it holds
}
#: Decades of frames over those a clean window needs, counted like a question's distance.
FRAMES_SCALE = 0.1
#: What a restarted window keeps of the answer's confidence: it rests on the latest
#: intervals alone, and what came before them differs (common practice).
RESTARTED = 0.95

_SCALES = np.array([FLIP_SCALE[f.kind] for f in FEATURES], np.float64)


def holds(distance: FloatArray) -> FloatArray:
    """The chance an answer holds at ``distance`` scale units from its threshold."""
    held: FloatArray = 1.0 - 0.5 * np.exp(-np.abs(distance))
    return held


def tree_confidence(
    tree: CompiledTree,
    node: npt.NDArray[np.intp],
    klass: npt.NDArray[np.intp],
    share: FloatArray,
    mask: npt.NDArray[np.bool_],
    values: FloatArray,
    reported: npt.NDArray[np.bool_],
) -> FloatArray:
    """Per port: the answering node's smoothed ``share`` of class ``klass`` (among the classes
    ``mask`` allows), times the chance each measured reading on its path whose other side
    leads elsewhere holds its side."""
    n = tree.samples[node]
    sure: FloatArray = (share * n + 1.0) / (n + len(tree.classes))
    order = np.argsort(node, kind="stable")  # the rows of each node together, found once
    nodes, starts = np.unique(node[order], return_index=True)
    ends = [*starts[1:].tolist(), len(order)][: len(starts)]
    for at, start, end in zip(nodes.tolist(), starts.tolist(), ends, strict=True):
        rows = order[start:end]
        for step in tree.paths[at]:
            f = step.feature
            if _SCALES[f] == 0.0:
                continue
            other = tree.right[step.node] if not step.went_right else tree.left[step.node]
            # Where the other side holds no allowed verdict, the answer climbs back to this
            # node's (CompiledTree.choose): a flip there changes nothing either.
            there = tree.proba[other] * mask[rows]
            elsewhere = (there.max(axis=1) > 0) & (np.argmax(there, axis=1) != klass[rows])
            distance = (values[rows, f] - step.threshold) / _SCALES[f]
            sure[rows] *= np.where(reported[rows, f] & elsewhere, holds(distance), 1.0)
    return sure


def frames_holding(rx_frames: FloatArray, needed: FloatArray) -> FloatArray:
    """The chance a clean window's frames would still be enough in another window."""
    with np.errstate(divide="ignore", invalid="ignore"):
        decades = np.log10(rx_frames / needed)
    return np.where(np.isfinite(decades), holds(decades / FRAMES_SCALE), 1.0)
