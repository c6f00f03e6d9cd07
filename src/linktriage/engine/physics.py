"""Which verdicts a port's readings allow at all, each rule with its reason and source.

Between the guards and the tree: the tree ranks only what the physics of the link leaves
possible. A duplex mismatch needs a port where half duplex exists; an optic verdict needs
transceiver readings that are low; a healthy answer needs enough frames to bound the error
ratio and no significant bit error ratio over the PHY's objective; and so on. Each verdict's
rules must all hold; the first that fails is the reason shown when the tree's first choice
is ruled out.

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

from linktriage.engine.format.poll_table import FloatArray
from linktriage.engine.measure.columns import Columns
from linktriage.engine.measure.measures import MIN_COLLISIONS, MIN_EVENTS
from linktriage.engine.measure.phy import half_duplex_exists
from linktriage.engine.verdicts import TREE_VERDICTS, Verdict

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


@dataclass(frozen=True, slots=True)
class Rule:
    """One condition a verdict needs, why, and where that comes from."""

    verdict: Verdict
    needs: str  # what the verdict needs, as it reads after "needs"
    source: str
    holds: Callable[[Signs], BoolArray]


RULES: tuple[Rule, ...] = (
    Rule(
        Verdict.HEALTHY,
        "enough received frames to bound the error ratio at the PHY's resolution",
        "rule of three (exact binomial bound at 95%)",
        lambda s: s.enough_frames,
    ),
    Rule(
        Verdict.HEALTHY,
        "no significant bit error ratio over the PHY's objective",
        "IEEE 802.3 bit-error-ratio objectives",
        lambda s: ~s.errors,
    ),
    Rule(
        Verdict.HEALTHY,
        "no late collisions, which are never normal",
        "RFC 3635 dot3StatsLateCollisions; IEEE 802.3 clause 4.4.2",
        lambda s: ~s.late,
    ),
    Rule(
        Verdict.HEALTHY,
        "full duplex at the port's top speed",
        "SNAPSHOT-FORMAT verdicts: below capability is negotiation_degraded",
        lambda s: ~(s.half | s.slow),
    ),
    Rule(
        Verdict.HEALTHY,
        "received and transmitted light above the module's low alarm",
        "SFF-8472 alarm thresholds",
        lambda s: ~(s.light_under_alarm | (s.tx_low & s.optics)),
    ),
    Rule(
        Verdict.HEALTHY,
        "a link that stays up (fewer than two down/up cycles in the window)",
        "common practice",
        lambda s: ~s.flapping,
    ),
    Rule(
        Verdict.HEALTHY,
        "frames in both directions",
        "common practice",
        lambda s: ~s.silent,
    ),
    Rule(
        Verdict.CABLE_FAULT,
        "a significant bit error ratio over the PHY's objective, or a flapping link",
        "IEEE 802.3 bit-error-ratio objectives",
        lambda s: s.errors | s.flapping,
    ),
    Rule(
        Verdict.DUPLEX_MISMATCH,
        "a port where half duplex exists (10, 100 or 1000 Mb/s copper) or one that reports it",
        "IEEE 802.3 clause 44.1.1: 10 Gb/s and faster are full duplex only (from memory)",
        lambda s: s.half_exists | s.half,
    ),
    Rule(
        Verdict.DUPLEX_MISMATCH,
        "late collisions, or runts beside FCS errors",
        "RFC 3635 dot3StatsLateCollisions; RFC 2819 etherStatsFragments",
        lambda s: s.late | s.runts,
    ),
    Rule(
        Verdict.NEGOTIATION_DEGRADED,
        "a speed below the port's capability, or half duplex (reported, or shown by collisions)",
        "IEEE 802.3 clause 28 (autonegotiation)",
        lambda s: s.slow | s.half,
    ),
    Rule(
        Verdict.MTU_MISMATCH,
        "frames too long counted (dot3StatsFrameTooLongs or etherStatsOversizePkts)",
        "RFC 3635 dot3StatsFrameTooLongs; RFC 2819 etherStatsOversizePkts",
        lambda s: s.giants,
    ),
    Rule(
        Verdict.OPTIC_DEGRADED,
        "transceiver readings (optical power)",
        "SFF-8472 digital diagnostics",
        lambda s: s.optics,
    ),
    Rule(
        Verdict.OPTIC_DEGRADED,
        "received light under the module's low warning (near its alarm), low transmit "
        "power, or a module running hot",
        "SFF-8472 alarm and warning thresholds",
        lambda s: s.light_low | s.tx_low | s.hot,
    ),
    Rule(
        Verdict.UNIDIRECTIONAL,
        f"one direction silent ({SILENT_FRAMES} frames or fewer in the window, or under "
        f"{SILENT_FPS:g} frames/s) while the other carries {ALIVE_FPS:g} frames/s or more",
        "common practice",
        lambda s: s.silent,
    ),
    Rule(
        Verdict.CONGESTION,
        f"discards in a direction running at {CONGESTED_UTILISATION:.0%} of line rate or more",
        "RFC 2863 ifInDiscards/ifOutDiscards; common practice",
        lambda s: s.congested,
    ),
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
