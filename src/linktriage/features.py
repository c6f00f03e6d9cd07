"""The feature table: one row per port of ratios that mean the same at 10 Mb/s and 100 Gb/s.

Raw counts grow with speed, load and window length; ratios do not, so one tree serves every
port. Denominators follow RFC 3635 section 3.2.5: ``ifInDiscards`` and errored frames are
not in ``ifIn*Pkts``, so frames seen on receive are packets + discards + errors, while
``ifOutDiscards`` and ``ifOutErrors`` are already inside ``ifOut*Pkts``.

A counter the device does not report stays NaN through every ratio built on it; the tree
routes NaN by what it learned (scikit-learn trees accept missing values, since 1.3).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from linktriage.polls import FloatArray
from linktriage.window import WindowTable


@dataclass(frozen=True, slots=True)
class Feature:
    """A feature column: its name and how its values read (for questions and reports)."""

    name: str
    kind: str  # "ratio" (per frame), "share" (0..1), "rate" (per hour), "flag", "db"


FEATURES: tuple[Feature, ...] = (
    Feature("rx_crc_ratio", "ratio"),
    Feature("rx_symbol_ratio", "ratio"),
    Feature("rx_error_ratio", "ratio"),
    Feature("runt_ratio", "ratio"),
    Feature("giant_ratio", "ratio"),
    Feature("late_collision_ratio", "ratio"),
    Feature("collision_ratio", "ratio"),
    Feature("in_discard_ratio", "ratio"),
    Feature("out_discard_ratio", "ratio"),
    Feature("rx_utilisation", "share"),
    Feature("tx_utilisation", "share"),
    Feature("traffic_balance", "share"),
    Feature("link_changes_per_hour", "rate"),
    Feature("speed_ratio", "share"),
    Feature("half_duplex", "flag"),
    Feature("rx_power_margin_db", "db"),
)
FEATURE_NAMES: tuple[str, ...] = tuple(f.name for f in FEATURES)
FEATURE_KIND: dict[str, str] = {f.name: f.kind for f in FEATURES}

#: Columns kept beside the features for the guards and the bit-error estimate.
AUX_NAMES: tuple[str, ...] = (
    "rx_frames",
    "tx_frames",
    "frames",
    "error_events",
    "rx_octets_per_frame",
    "speed_bps",
    "fiber",
    "poe",
)


def _nansum(*arrays: FloatArray) -> FloatArray:
    """Sum treating NaN as absent; NaN only where every part is NaN."""
    stack = np.stack(arrays)
    return np.where(np.isnan(stack).all(axis=0), np.nan, np.nansum(stack, axis=0))


def _zero(a: FloatArray) -> FloatArray:
    return np.nan_to_num(a, nan=0.0)


def _ratio(num: FloatArray, den: FloatArray) -> FloatArray:
    """num / den, NaN where either is unknown or the denominator is zero."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(den > 0, num / den, np.nan)


def feature_table(w: WindowTable) -> pd.DataFrame:
    """Features (:data:`FEATURE_NAMES`) and helper columns (:data:`AUX_NAMES`) per port."""
    d = w.deltas
    rx_pkts = _nansum(d["in_ucast"], d["in_mcast"], d["in_bcast"])
    tx_pkts = _nansum(d["out_ucast"], d["out_mcast"], d["out_bcast"])
    crc = _nansum(d["fcs_errors"], d["alignment_errors"])
    dot3_bad = _nansum(crc, d["frame_too_longs"], d["mac_receive_errors"])
    # ifInErrors is the sum of the dot3 receive errors (RFC 3635 section 3.2.10).
    rx_bad = np.where(np.isnan(d["in_errors"]), dot3_bad, d["in_errors"])
    rx_seen = rx_pkts + _zero(rx_bad) + _zero(d["in_discards"])
    tx_seen = tx_pkts
    collisions = _nansum(
        d["single_collisions"], d["multiple_collisions"], d["excessive_collisions"]
    )
    speed = w.state["speed_bps"]
    line_octets = speed * w.window_s / 8.0
    hours = w.window_s / 3600.0
    flaps = np.where(np.isnan(w.link_changes), w.status_changes, w.link_changes)
    busier = np.fmax(rx_seen, tx_seen)
    quieter = np.fmin(rx_seen, tx_seen)

    columns = {
        "rx_crc_ratio": _ratio(crc, rx_seen),
        "rx_symbol_ratio": _ratio(d["symbol_errors"], rx_seen),
        "rx_error_ratio": _ratio(rx_bad, rx_seen),
        "runt_ratio": _ratio(_nansum(d["undersize"], d["fragments"]), rx_seen),
        "giant_ratio": _ratio(d["frame_too_longs"], rx_seen),
        "late_collision_ratio": _ratio(d["late_collisions"], tx_seen),
        "collision_ratio": _ratio(collisions, tx_seen),
        "in_discard_ratio": _ratio(d["in_discards"], rx_seen),
        "out_discard_ratio": _ratio(d["out_discards"], tx_seen),
        "rx_utilisation": _ratio(d["in_octets"], line_octets),
        "tx_utilisation": _ratio(d["out_octets"], line_octets),
        "traffic_balance": _ratio(quieter, busier),
        "link_changes_per_hour": _ratio(flaps, hours),
        "speed_ratio": _ratio(speed, w.state["max_speed_bps"]),
        "half_duplex": w.state["half_duplex"],
        "rx_power_margin_db": w.optics["rx_power_dbm"] - w.optics["rx_power_low_alarm_dbm"],
        "rx_frames": rx_seen,
        "tx_frames": tx_seen,
        "frames": _zero(rx_seen) + _zero(tx_seen),
        "error_events": _zero(rx_bad) + _zero(d["late_collisions"]),
        "rx_octets_per_frame": _ratio(d["in_octets"], rx_pkts),
        "speed_bps": speed,
        "fiber": w.state["fiber"],
        "poe": w.state["poe"],
    }
    return pd.DataFrame(columns, columns=[*FEATURE_NAMES, *AUX_NAMES])


def feature_matrix(table: pd.DataFrame) -> np.ndarray:
    """The feature columns as the float32 matrix trees compare on (scikit-learn's dtype)."""
    return np.ascontiguousarray(table[list(FEATURE_NAMES)].to_numpy(np.float32))
