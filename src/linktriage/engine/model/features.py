"""The tree's inputs: one row per port of evidence that means the same on every vendor and speed.

Each feature is a physical quantity read off the measures
(:mod:`linktriage.engine.measure.measures`): the bit error ratio against the PHY's own IEEE 802.3
objective, with its confidence bound rather than a point ratio; runts as a share of receive errors;
late collisions and frames too long per frame; light against the module's own thresholds; and so on.
Raw counts grow with speed, load and window; these do not, so one tree serves 10 Mb/s and 100 Gb/s
ports.

Evidence must be significant: the bit error ratio is read at the low end of its 99% range
(a one-sided exact test, :func:`linktriage.engine.measure.measures.ratio_floor`), and a ratio
built on fewer events than :data:`linktriage.engine.measure.measures.MIN_EVENTS` (of
collisions, :data:`linktriage.engine.measure.measures.MIN_COLLISIONS`) reads as nothing
counted. A counter the device does not report gives no evidence, and the tree sees exactly that: the
value of "nothing counted" (no errors, full duplex, light well in range), never a missing value it
could route on. Which counters a vendor reports says nothing about a link's health, so the tree must
not learn from it; the answer still says what was not reported.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.poll_table import FloatArray
from linktriage.engine.measure.columns import Columns
from linktriage.engine.measure.measures import MIN_COLLISIONS, MIN_ERROR_FRAMES, MIN_EVENTS


@dataclass(frozen=True, slots=True)
class Feature:
    """A tree input: its name, how its values read, and its value when nothing was counted."""

    name: str
    kind: str  # "times" (log10 of a multiple), "multiple", "log_ratio" (log10 per frame),
    #            "share", "flag", "db", "per_hour", "log_fps"
    neutral: float
    low: float  # values are clipped to [low, high]
    high: float


FEATURES: tuple[Feature, ...] = (
    Feature("ber_over_objective", "times", -4.0, -4.0, 8.0),
    Feature("runts_vs_collisions", "multiple", 0.0, 0.0, 20.0),
    Feature("late_collision_ratio", "log_ratio", -13.0, -13.0, 0.0),
    Feature("collision_ratio", "log_ratio", -13.0, -13.0, 0.0),
    Feature("half_duplex", "flag", 0.0, 0.0, 1.0),
    Feature("speed_ratio", "share", 1.0, 0.0, 1.0),
    Feature("giant_ratio", "log_ratio", -13.0, -13.0, 0.0),
    Feature("light_margin_db", "db", 20.0, -20.0, 20.0),
    Feature("tx_margin_db", "db", 20.0, -20.0, 20.0),
    Feature("flaps_per_hour", "per_hour", 0.0, 0.0, 1000.0),
    Feature("quiet_fps", "log_fps", 9.0, -3.0, 9.0),
    Feature("discard_ratio", "log_ratio", -13.0, -13.0, 0.0),
    Feature("discard_utilisation", "share", 0.0, 0.0, 1.0),
    # since format 1.2
    Feature("pre_fec_over_high", "times", -4.0, -4.0, 8.0),
    Feature("fec_lost_ratio", "log_ratio", -13.0, -13.0, 0.0),
    Feature("overload_margin_db", "db", -20.0, -20.0, 20.0),
    Feature("pause_share", "share", 0.0, 0.0, 1.0),
    Feature("broadcast_fps", "log_fps", -3.0, -3.0, 9.0),
    Feature("broadcast_share", "share", 0.0, 0.0, 1.0),
)
FEATURE_NAMES: tuple[str, ...] = tuple(f.name for f in FEATURES)
FEATURE_KIND: dict[str, str] = {f.name: f.kind for f in FEATURES}
FEATURE_BY_NAME: dict[str, Feature] = {f.name: f for f in FEATURES}


def _log10(x: FloatArray) -> FloatArray:
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.log10(x)


@dataclass(frozen=True, slots=True)
class FeatureRows:
    """The tree's inputs per port, and which of them the device's counters actually gave."""

    values: Columns  # FEATURE_NAMES columns, float64, never NaN
    reported: Columns  # FEATURE_NAMES columns, bool

    def matrix(self) -> npt.NDArray[np.float32]:
        """The feature columns as the float32 matrix trees compare on (scikit-learn's dtype)."""
        return self.values.matrix(np.float32)


def _counted(ratio: FloatArray, count: FloatArray, least: float) -> FloatArray:
    """``ratio`` where ``count`` reaches ``least``; zero where fewer were counted (a stray
    few are no evidence, however large their ratio); NaN where nothing was reported."""
    return np.where(np.isnan(count), np.nan, np.where(count >= least, ratio, 0.0))


def feature_rows(m: Columns) -> FeatureRows:
    """Every feature of :data:`FEATURES` from the measures of each port."""
    hours = m["window_s"] / 3600.0
    quiet = np.fmin(m["rx_fps"], m["tx_fps"])
    runts = m["runts"]
    raw = {
        "ber_over_objective": _log10(m["ber_floor"] / m["objective"]),
        "runts_vs_collisions": _counted(m["runts_vs_collisions"], runts, MIN_EVENTS),
        "late_collision_ratio": _log10(
            _counted(m["late_ratio"], m["late_collisions"], MIN_COLLISIONS)
        ),
        "collision_ratio": _log10(_counted(m["collision_ratio"], m["collisions"], MIN_COLLISIONS)),
        "half_duplex": m["half_duplex_seen"],
        "speed_ratio": m["speed_ratio"],
        "giant_ratio": _log10(_counted(m["giant_ratio"], m["giants"], MIN_EVENTS)),
        "light_margin_db": m["light_margin_db"],
        "tx_margin_db": m["tx_margin_db"],
        # Down/up cycles per hour, over an hour at least: one flap in a five-minute window
        # is one flap, not twelve an hour.
        "flaps_per_hour": m["link_changes"] / 2.0 / np.maximum(hours, 1.0),
        "quiet_fps": _log10(quiet),
        "discard_ratio": _log10(_counted(m["discard_ratio"], m["discards"], MIN_EVENTS)),
        "discard_utilisation": m["discard_util"],
        # Pre-FEC errors against the code's high level: from corrected bits, or from blocks
        # enough to be more than a few (a lower bound).
        "pre_fec_over_high": _log10(
            np.where(
                m["pre_fec_from_bits"] == 1.0,
                m["pre_fec_ratio"],
                _counted(m["pre_fec_ratio"], m["fec_errored_bits"], MIN_EVENTS),
            )
        ),
        "fec_lost_ratio": _log10(_counted(m["fec_lost_ratio"], m["fec_lost"], MIN_ERROR_FRAMES)),
        "overload_margin_db": m["overload_margin_db"],
        "pause_share": _counted(m["pause_share"], m["in_pause"], MIN_EVENTS),
        "broadcast_fps": _log10(m["rx_bcast_fps"]),
        "broadcast_share": m["rx_bcast_share"],
    }
    values = {}
    reported = {}
    for f in FEATURES:
        v = np.asarray(raw[f.name], np.float64)
        known = ~np.isnan(v)
        reported[f.name] = known
        values[f.name] = np.clip(np.where(known, v, f.neutral), f.low, f.high)
    return FeatureRows(Columns(values), Columns(reported))
