"""Guards: the verdicts answered without the tree, when a window cannot support one.

``link_down`` and ``no_data`` come from the window: there is nothing to measure.
``insufficient_traffic`` is statistical and answers only for rates: zero errors in ``n`` frames
bound the error ratio below about ``3/n`` with 95% confidence (the rule of three), so a clean port
is called healthy only once its received frames bound the ratio at the PHY's resolution
(:mod:`linktriage.engine.measure.measures`). A port with too few frames is still judged when a state
reading (a speed below capability, half duplex, light under the thresholds, one direction silent,
flapping) or significant errors allow a verdict (:mod:`linktriage.engine.physics`): only when
nothing is allowed and the frames are too few is the answer ``insufficient_traffic``.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from linktriage.engine.measure.window import WindowStatus, WindowTable
from linktriage.engine.physics import Allowed
from linktriage.engine.verdicts import Verdict


def apply_guards(windows: WindowTable, allowed: Allowed) -> npt.NDArray[np.object_]:
    """Per port, ``link_down``, ``no_data``, ``insufficient_traffic``, or None for the tree."""
    verdict = np.full(len(windows), None, dtype=object)
    nothing = ~allowed.mask.any(axis=1) & ~allowed.signs.enough_frames
    verdict[nothing] = Verdict.INSUFFICIENT_TRAFFIC
    verdict[windows.status == WindowStatus.NO_DATA] = Verdict.NO_DATA
    verdict[windows.status == WindowStatus.LINK_DOWN] = Verdict.LINK_DOWN
    return verdict
