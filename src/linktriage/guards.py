"""Guards: the verdicts answered before the tree, when a window cannot support one.

``link_down`` and ``no_data`` come from the window. ``insufficient_traffic`` is statistical:
zero errors in ``n`` frames only bounds the error ratio below about ``3/n`` with 95%
confidence (the rule of three; exactly ``1 - 0.05^(1/n)``). The *resolution* is the smallest
error ratio the tree has to tell apart from zero. A port is judged when either

* it carried enough frames that a clean window would bound its error ratio below the
  resolution (``n >= 3 / resolution`` or so: 300,000 frames at 1 in 100,000), or
* its errors make the case on their own: the 95% lower bound of the ratio is above the
  resolution, and there are at least :data:`MIN_ERROR_EVENTS` of them. A handful of errors
  on a quiet port is a re-seated cord or one burst of noise, not grounds to send someone
  to a closet (common practice).

Anything else is too little traffic to tell a healthy port from a faulty one.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt
import pandas as pd
from scipy.special import betaincinv

from linktriage.polls import FloatArray
from linktriage.verdicts import Verdict
from linktriage.window import WindowStatus, WindowTable

#: Error ratio a verdict must be able to resolve: one errored frame in 100,000.
DEFAULT_RESOLUTION = 1e-5
CONFIDENCE = 0.95
MIN_ERROR_EVENTS = 10


def error_ratio_bounds(
    errors: FloatArray, frames: FloatArray, confidence: float = CONFIDENCE
) -> tuple[FloatArray, FloatArray]:
    """One-sided Clopper-Pearson bounds on an error ratio: ``k`` errors in ``n`` frames.

    Returns (lower, upper): the true ratio is above ``lower`` with ``confidence``, and below
    ``upper`` with ``confidence``. With ``k = 0`` the upper bound is ``1 - (1-c)^(1/n)``,
    which the rule of three rounds to ``3/n`` at 95%.
    """
    k = np.asarray(errors, np.float64)
    n = np.asarray(frames, np.float64)
    valid = n > 0
    k = np.clip(k, 0.0, np.where(valid, n, 0.0))
    a_up, b_up = k + 1.0, np.where(n - k > 0, n - k, 1.0)
    upper = np.where(valid & (k < n), betaincinv(a_up, b_up, confidence), 1.0)
    a_lo, b_lo = np.where(k > 0, k, 1.0), n - k + 1.0
    lower = np.where(valid & (k > 0), betaincinv(a_lo, b_lo, 1.0 - confidence), 0.0)
    return lower, upper


def clean_upper_bound(frames: FloatArray, confidence: float = CONFIDENCE) -> FloatArray:
    """The upper bound on the error ratio after ``frames`` frames with no error at all."""
    n = np.asarray(frames, np.float64)
    with np.errstate(divide="ignore"):
        return np.where(n > 0, -np.expm1(np.log1p(-confidence) / n), 1.0)


def apply_guards(
    windows: WindowTable, table: pd.DataFrame, *, resolution: float = DEFAULT_RESOLUTION
) -> npt.NDArray[np.object_]:
    """Per port, ``link_down``, ``no_data``, ``insufficient_traffic``, or None for the tree."""
    frames = table["frames"].to_numpy()
    # Errored frames are already among the frames seen (see linktriage.features).
    errors = table["error_events"].to_numpy()
    enough_frames = clean_upper_bound(frames) <= resolution
    asked = ~enough_frames & (errors >= MIN_ERROR_EVENTS) & (frames > 0)
    lower = np.zeros(len(frames))
    lower[asked] = error_ratio_bounds(errors[asked], frames[asked])[0]
    evident = lower > resolution
    verdict = np.full(len(windows), None, dtype=object)
    verdict[~(enough_frames | evident)] = Verdict.INSUFFICIENT_TRAFFIC
    verdict[windows.status == WindowStatus.NO_DATA] = Verdict.NO_DATA
    verdict[windows.status == WindowStatus.LINK_DOWN] = Verdict.LINK_DOWN
    return verdict
