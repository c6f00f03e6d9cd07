"""Guards: the verdicts answered without the tree, when a window cannot support one.

Each verdict answered before the tree declares, in its own module
(:mod:`linktriage.engine.verdicts`), when it applies and its precedence: ``link_down`` and
``no_data`` come from the window, where there is nothing to measure; ``insufficient_traffic``
is statistical and answers only for rates (the rule of three), so a port with too few frames
is still judged when a state reading or significant errors allow a verdict
(:mod:`linktriage.engine.physics`). Where two guards apply, the one of higher precedence
answers.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from linktriage.engine.measure.columns import Columns
from linktriage.engine.measure.window import WindowTable
from linktriage.engine.physics import Allowed
from linktriage.engine.verdict_kit.declaration import GuardInputs
from linktriage.engine.verdicts import GUARDS

_BY_PRECEDENCE = sorted(GUARDS, key=lambda kind: kind.precedence)


def apply_guards(
    windows: WindowTable, allowed: Allowed, measures: Columns
) -> npt.NDArray[np.object_]:
    """Per port, the verdict a guard answers, or None for the tree."""
    verdict = np.full(len(windows), None, dtype=object)
    inputs = GuardInputs(
        status=windows.status,
        enough_frames=allowed.signs.enough_frames,
        anything_allowed=np.asarray(allowed.mask.any(axis=1), np.bool_),
        measures=measures,
        extra=windows.extra,
    )
    for kind in _BY_PRECEDENCE:  # a higher precedence answers over a lower one
        verdict[kind.guard(inputs)] = kind.verdict
    return verdict
