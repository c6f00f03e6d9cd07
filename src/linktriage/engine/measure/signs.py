"""What a port's readings show, per port: the facts every verdict's needs are written in.

State readings (a speed below capability, half duplex, light under the thresholds, one
direction silent, flapping) need no traffic. Rates are evidence where a one-sided exact test
at 99% shows them over the level that matters
(:func:`linktriage.engine.measure.measures.ratio_floor`): errors over the PHY's objective
(and measured at ten times it or more), output discards over their tolerated share. Runts,
frames too long and discards at high load, which have no objective to test against, count
from :data:`linktriage.engine.measure.measures.MIN_EVENTS`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from linktriage.engine.format.poll_table import FloatArray
from linktriage.engine.measure.columns import Columns
from linktriage.engine.measure.measures import (
    FAULT_TIMES_OBJECTIVE,
    MIN_COLLISIONS,
    MIN_EVENTS,
    BoolArray,
)
from linktriage.engine.measure.phy import half_duplex_exists

#: Three down/up cycles in the window: one or two are a reboot or a re-patch, several is
#: flapping (OpenConfig interface-transitions: one flap counts 2; common practice).
FLAPPING_CHANGES = 6
#: A direction that carried no more than SILENT_FRAMES frames in the window, or a trickle
#: of control frames alone (SILENT_FPS or fewer a second: IEEE 802.1AB LLDP every 30 s,
#: IEEE 802.1D BPDUs every 2 s, IEEE 802.1AX LACP at most every second; from memory) that is
#: under SILENT_SHARE of what the other direction carries, is silent: a broken strand or
#: pair passes nothing but what an end sends of its own accord, while a live host answers
#: what it receives (a camera sending video gets a few frames a second back). The other
#: direction must carry at least ALIVE_FPS for the link to be one-way rather than idle, and
#: for a trickle to count, that many unicast frames: a flood of broadcasts or a multicast
#: stream asks no answer (common practice).
SILENT_FRAMES = 2
SILENT_FPS = 2.0
SILENT_SHARE = 0.02
ALIVE_FPS = 3.0
#: Discards are congestion where their direction runs at 60% of line rate or more, averaged
#: over the window (common practice: capacity is planned at 50-70% sustained load), or where
#: output discards exceed BURST_DISCARD_SHARE at a lower average: bursts the egress buffer
#: cannot absorb (SNAPSHOT-FORMAT 1.2). Input discards at a lower load are filtering
#: (ifInDiscards counts VLAN, STP and unknown-protocol drops, RFC 2863), not capacity.
CONGESTED_UTILISATION = 0.6
#: The full-duplex end of a duplex mismatch, where no runt counter shows it (100 Mb/s only,
#: where symbol errors mean something): frames the half-duplex far end cuts short on a
#: collision end cleanly at a nibble boundary, so about half fail alignment as well as the
#: FCS, and no invalid code group is received (RFC 3635 dot3StatsSymbolErrors "does not
#: increment if a collision is present"); line noise on 100BASE-TX corrupts 4B/5B code
#: groups, so it counts symbol errors and leaves frames whole octets. A share of alignment
#: errors of CUT_ALIGNMENT_SHARE or more with symbol errors under CLEAN_SYMBOL_SHARE of the
#: errored frames is the cut; with no symbol counter, NO_SYMBOLS_ALIGNMENT_SHARE (common
#: practice, reasoned from the coding).
CUT_ALIGNMENT_SHARE = 0.2
CLEAN_SYMBOL_SHARE = 0.01
NO_SYMBOLS_ALIGNMENT_SHARE = 0.4
_CUT_SPEED_BPS = 100e6


#: Received pause frames are a flood where they could hold the transmitter off this share of
#: the window or more (their upper bound, frames x 65,535 quanta x 512 bit times over the
#: line's bits: the format carries no pause times, and a pause of time zero, which releases
#: the transmitter, counts as a frame too), from MIN_EVENTS frames. A port flow-controlled
#: now and then in bursts stays far below; a tenth of the time off is a far end that cannot
#: keep up (common practice, a judgement SNAPSHOT-FORMAT 1.2 leaves to the implementer).
PAUSE_SHARE = 0.1
#: A broadcast storm: broadcasts arriving at STORM_BCAST_FPS or more and STORM_BCAST_SHARE
#: or more of the frames received. An office LAN carries a few to a few tens of broadcasts a
#: second (ARP, DHCP, discovery); a thousand a second is a flood every host on the VLAN must
#: process, and a loop replicates broadcasts without end (common practice). Multicast is
#: not counted: a steady multicast stream (video, a market feed) is a look-alike, not a
#: storm; the answer shows it.
STORM_BCAST_FPS = 1000.0
STORM_BCAST_SHARE = 0.2


def _ge(values: FloatArray, least: float) -> BoolArray:
    return np.asarray(values >= least, np.bool_)  # NaN: False


@dataclass(frozen=True, slots=True)
class Signs:
    """What the readings show, per port: the facts every rule is written in."""

    enough_frames: BoolArray
    errors: BoolArray  # BER significantly over the objective, and ten times it or more
    flapping: BoolArray
    late: BoolArray
    runts: BoolArray
    cut_frames: BoolArray  # the full-duplex end of a mismatch, without runt counters
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
    # since format 1.2
    real_errors: BoolArray  # errors beyond the frames each change of a flapping link cuts
    fec: BoolArray  # pre-FEC errors over the code's high level, or uncorrectable codewords
    overload: BoolArray  # light above the receiver's high warning or alarm, or its PMD's most
    bias_out: BoolArray  # laser bias outside the module's alarm thresholds
    pause: BoolArray
    storm: BoolArray

    @classmethod
    def read(cls, m: Columns) -> Signs:
        rx_errors = m["rx_errors"]
        quiet = np.fmin(m["rx_frames"], m["tx_frames"])
        busy = np.fmax(m["rx_fps"], m["tx_fps"])
        fps_known = ~np.isnan(m["rx_fps"]) & ~np.isnan(m["tx_fps"])
        return cls(
            enough_frames=(m["rx_frames"] >= m["frames_needed"]),
            errors=_errors(m),
            flapping=_ge(m["link_changes"], FLAPPING_CHANGES),
            late=_ge(m["late_collisions"], MIN_COLLISIONS),
            runts=_ge(m["runts"], MIN_EVENTS) & (rx_errors >= MIN_EVENTS),
            cut_frames=_cut_frames(m),
            half=(m["half_duplex_seen"] == 1.0),
            slow=(m["speed_ratio"] < 1.0),
            half_exists=half_duplex_exists(m["speed_bps"], m["fiber"]) == 1.0,
            giants=_ge(m["giants"], MIN_EVENTS),
            optics=(m["has_optics"] == 1.0),
            light_low=(m["light_margin_db"] < 0.0),
            light_under_alarm=(m["floor_margin_db"] < 0.0),
            # A failing transmitter at this end: its light under its own low alarm
            # (SNAPSHOT-FORMAT 1.2 optic_degraded; just above the alarm is still in range).
            tx_low=(m["tx_margin_db"] < 0.0),
            hot=(m["temperature_c"] > m["hot_c"]),
            silent=fps_known & one_way(quiet, busy, m["window_s"], _busy_unicast(m)),
            congested=_congested(m),
            real_errors=_real_errors(m),
            fec=_fec(m),
            overload=(m["overload_margin_db"] > 0.0),
            bias_out=(m["bias_ma"] > m["bias_high_alarm_ma"])
            | (m["bias_min_ma"] < m["bias_low_alarm_ma"]),
            pause=_ge(m["in_pause"], MIN_EVENTS) & _ge(m["pause_share"], PAUSE_SHARE),
            storm=_ge(m["rx_bcast_fps"], STORM_BCAST_FPS)
            & _ge(m["rx_bcast_share"], STORM_BCAST_SHARE),
        )


def one_way(
    quiet: FloatArray, busy_fps: FloatArray, window_s: FloatArray, unicast: FloatArray
) -> BoolArray:
    """Whether ``quiet`` frames one way in ``window_s`` are silence against ``busy_fps`` the
    other way, of which ``unicast`` is the share a live end would answer (the rule above
    SILENT_FRAMES)."""
    nothing = quiet <= SILENT_FRAMES
    trickle = (quiet <= SILENT_FPS * window_s) & (quiet <= SILENT_SHARE * busy_fps * window_s)
    trickle &= busy_fps * unicast >= ALIVE_FPS
    return np.asarray((nothing | trickle) & (busy_fps >= ALIVE_FPS), np.bool_)


def unicast_shares(m: Columns) -> tuple[FloatArray, FloatArray]:
    """The share of unicast among the frames received and sent (1 where not reported: a
    device that counts only unicast, or none of the three, hides nothing from the rule)."""
    rx = 1.0 - np.nan_to_num(m["rx_broadcast_share"], nan=0.0)
    tx = 1.0 - np.nan_to_num(m["tx_broadcast_share"], nan=0.0)
    return rx, tx


def _busy_unicast(m: Columns) -> FloatArray:
    """The unicast share of the busier direction."""
    rx, tx = unicast_shares(m)
    return np.where(np.nan_to_num(m["rx_fps"]) >= np.nan_to_num(m["tx_fps"]), rx, tx)


def _congested(m: Columns) -> BoolArray:
    """Significant discards at high load, or output discards over the burst share."""
    full = _ge(m["discards"], MIN_EVENTS) & (m["discard_util"] >= CONGESTED_UTILISATION)
    bursts = (m["out_discard_bursts"] == 1.0) & (m["discard_outbound"] == 1.0)
    return np.asarray(full | bursts, np.bool_)


def _cut_frames(m: Columns) -> BoolArray:
    """Errored frames cut short by a half-duplex far end, read where no runts are counted."""
    crc = m["rx_errors"]
    share = m["alignment_share"]
    symbols = m["symbol_errors"]
    clean = symbols <= CLEAN_SYMBOL_SHARE * crc  # False where symbols are not reported
    cut = (share >= CUT_ALIGNMENT_SHARE) & clean
    cut |= np.isnan(symbols) & (share >= NO_SYMBOLS_ALIGNMENT_SHARE)
    eligible = (
        np.isnan(m["runts"]) & (m["speed_bps"] == _CUT_SPEED_BPS) & (m["error_source"] == 1.0)
    )
    eligible &= crc >= MIN_EVENTS  # a share needs errors enough to be one, as runts do
    return np.asarray(cut & eligible, np.bool_)


def _errors(m: Columns) -> BoolArray:
    return np.asarray(
        (m["ber_floor"] > m["objective"]) & (m["ber"] >= FAULT_TIMES_OBJECTIVE * m["objective"]),
        np.bool_,
    )


def _real_errors(m: Columns) -> BoolArray:
    """Errors beyond the frames a flapping link's drops cut short: at most one frame in
    flight per change of state (SNAPSHOT-FORMAT 1.2, link_flapping)."""
    flapping = _ge(m["link_changes"], FLAPPING_CHANGES)
    cut_by_drops = flapping & (m["rx_errors"] <= m["link_changes"])
    return np.asarray(_errors(m) & ~cut_by_drops, np.bool_)


def _fec(m: Columns) -> BoolArray:
    """Pre-FEC errors over the code's high level (from corrected bits, or from MIN_EVENTS
    corrected blocks or more, a lower bound), or uncorrectable codewords the test shows."""
    over = _ge(m["pre_fec_ratio"], 1.0) & (
        (m["pre_fec_from_bits"] == 1.0) | _ge(m["fec_errored_bits"], MIN_EVENTS)
    )
    return np.asarray((m["has_fec"] == 1.0) & (over | (m["fec_lost_over"] == 1.0)), np.bool_)
