"""Which verdicts a port's readings allow at all, each rule with its reason and source.

Between the guards and the tree: the tree ranks only what the physics of the link leaves
possible. A duplex mismatch needs a port where half duplex exists; an optic verdict needs
transceiver readings that are low; a healthy answer needs enough frames to bound the error
ratio and no significant bit error ratio over the PHY's objective; and so on. Each verdict's
rules must all hold; the first that fails is the reason shown when the tree's first choice
is ruled out. Each verdict declares what it needs, with its source, in its own module
(:mod:`linktriage.engine.verdicts`); this module holds them all against every port.

State readings (a speed below capability, half duplex, light under the thresholds, one
direction silent, flapping) need no traffic: they allow their verdicts however few frames
the window saw. Rate readings (errors, runts, frames too long, discards) count only when
they are significant in counts (:data:`linktriage.engine.measure.measures.MIN_EVENTS`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.answers import Verdict
from linktriage.engine.measure.columns import Columns
from linktriage.engine.measure.measures import BoolArray
from linktriage.engine.measure.signs import Signs
from linktriage.engine.verdicts import TREE, TREE_VERDICTS


@dataclass(frozen=True, slots=True)
class Rule:
    """One condition a verdict needs, why, and where that comes from."""

    verdict: Verdict
    needs: str  # what the verdict needs, as it reads after "needs"
    source: str
    holds: Callable[[Signs], BoolArray]


#: Every verdict's needs, a verdict at a time in the format's order.
RULES: tuple[Rule, ...] = tuple(
    Rule(kind.verdict, need.needs, need.source, need.holds) for kind in TREE for need in kind.needs
)

_COLUMN = {v: j for j, v in enumerate(TREE_VERDICTS)}


@dataclass(frozen=True, slots=True)
class Allowed:
    """Per port and tree verdict (columns in TREE_VERDICTS order): allowed, and if not, why.

    ``broken[i, j]`` is the index in :data:`RULES` of the first rule verdict ``j`` fails on
    port ``i``, or -1.
    """

    mask: npt.NDArray[np.bool_]
    broken: npt.NDArray[np.intp]
    signs: Signs

    def rule_against(self, i: int, verdict: Verdict) -> Rule | None:
        k = int(self.broken[i, _COLUMN[verdict]])
        return None if k < 0 else RULES[k]


def allowed(measures: Columns) -> Allowed:
    """Which tree verdicts each port's readings allow (:data:`RULES`)."""
    signs = Signs.read(measures)
    n = measures.rows
    broken = np.full((n, len(TREE_VERDICTS)), -1, np.intp)
    for k, rule in reversed(list(enumerate(RULES))):  # reversed: the first failing rule wins
        fails = ~rule.holds(signs)
        j = _COLUMN[rule.verdict]
        broken[fails, j] = k
    return Allowed(broken < 0, broken, signs)
