"""What a port's readings show, per port: the facts every verdict's needs are written in.

State readings (a speed below capability, half duplex, light under the thresholds, one
direction silent, flapping) need no traffic. Rate readings (errors, runts, frames too long,
discards) count only when they are significant in counts
(:data:`linktriage.engine.measure.measures.MIN_EVENTS`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.poll_table import FloatArray
from linktriage.engine.measure.columns import Columns
from linktriage.engine.measure.measures import MIN_COLLISIONS, MIN_EVENTS
from linktriage.engine.measure.phy import half_duplex_exists

BoolArray = npt.NDArray[np.bool_]

#: Three down/up cycles in the window: one or two are a reboot or a re-patch, several is
#: flapping (OpenConfig interface-transitions: one flap counts 2; common practice).
FLAPPING_CHANGES = 6
#: A direction that carried no more than SILENT_FRAMES frames in the window, or fewer than
#: one in 1 / SILENT_FPS seconds, is silent: a broken strand or pair passes nothing, and any
#: live neighbour sends keepalives far more often (IEEE 802.1D BPDUs every 2 s, IEEE
#: 802.1AB LLDP every 30 s). The other direction must carry at least ALIVE_FPS for the
#: link to be one-way rather than idle (common practice).
SILENT_FRAMES = 2
SILENT_FPS = 0.01
ALIVE_FPS = 3.0
#: Discards are congestion only where their direction runs at 60% of line rate or more,
#: averaged over the window; below it they are filtering (ifInDiscards counts VLAN, STP and
#: unknown-protocol drops, RFC 2863), policing, or a short burst the average hides, not a
#: capacity problem (common practice: capacity is planned at 50-70% sustained load).
CONGESTED_UTILISATION = 0.6
#: Transmit power this close to the module's own low alarm is failing (common practice).
NEAR_TX_DB = 1.0
#: Upper case temperature of commercial-grade transceivers, 0 to 70 degrees C (common
#: practice, from memory: SFF-8472 reports the temperature, the module's data sheet sets it).
HOT_C = 70.0


def _ge(values: FloatArray, least: float) -> BoolArray:
    return np.asarray(values >= least, np.bool_)  # NaN: False


@dataclass(frozen=True, slots=True)
class Signs:
    """What the readings show, per port: the facts every rule is written in."""

    enough_frames: BoolArray
    errors: BoolArray  # significant bit error ratio over the PHY's objective
    flapping: BoolArray
    late: BoolArray
    runts: BoolArray
    half: BoolArray
    slow: BoolArray
    half_exists: BoolArray
    giants: BoolArray
    optics: BoolArray
    light_low: BoolArray  # under the module's low warning (a warning is "near the alarm")
    light_under_alarm: BoolArray
    tx_low: BoolArray
    hot: BoolArray
    silent: BoolArray
    congested: BoolArray

    @classmethod
    def read(cls, m: Columns) -> Signs:
        rx_errors = m["rx_errors"]
        quiet = np.fmin(m["rx_frames"], m["tx_frames"])
        busy = np.fmax(m["rx_fps"], m["tx_fps"])
        fps_known = ~np.isnan(m["rx_fps"]) & ~np.isnan(m["tx_fps"])
        return cls(
            enough_frames=(m["rx_frames"] >= m["frames_needed"]),
            errors=(rx_errors >= MIN_EVENTS) & (m["ber_lo"] > m["objective"]),
            flapping=_ge(m["link_changes"], FLAPPING_CHANGES),
            late=_ge(m["late_collisions"], MIN_COLLISIONS),
            runts=_ge(m["runts"], MIN_EVENTS) & (rx_errors >= MIN_EVENTS),
            half=(m["half_duplex_seen"] == 1.0),
            slow=(m["speed_ratio"] < 1.0),
            half_exists=half_duplex_exists(m["speed_bps"], m["fiber"]) == 1.0,
            giants=_ge(m["giants"], MIN_EVENTS),
            optics=(m["has_optics"] == 1.0),
            light_low=(m["light_margin_db"] < 0.0),
            light_under_alarm=(m["floor_margin_db"] < 0.0),
            tx_low=(m["tx_margin_db"] < NEAR_TX_DB),
            hot=(m["temperature_c"] > HOT_C),
            silent=fps_known
            & (quiet <= np.fmax(SILENT_FRAMES, SILENT_FPS * m["window_s"]))
            & (busy >= ALIVE_FPS),
            congested=_ge(m["discards"], MIN_EVENTS) & (m["discard_util"] >= CONGESTED_UTILISATION),
        )
