"""A physics-based simulator of Ethernet ports in each verdict class.

It is the training prior of the tree and the network behind the demo. Each port is first
described by *parameters* (one row of a DataFrame: speed, medium, load, frame sizes, bit
error ratio, collision and discard ratios, optical readings, which counters the device
reports), drawn per class from the fault signatures of the trade within a set of
:class:`Ranges`; then :func:`render_polls` turns parameters into cumulative counters at two
or three polls, exactly as a poller would read them: Counter32 values modulo 2^32, Counter64
modulo 2^64, random starting values, missing counter groups left out rather than zeroed.

Physics used:

* Frames per second from utilisation and mean frame size, with 20 octets of preamble and
  inter-frame gap per frame on the wire (IEEE 802.3 clause 4.4.2).
* Frame error ratio from bit error ratio: ``FER = 1 - (1 - BER)^bits`` (bits independent),
  with bit error ratios set as multiples of the PHY's IEEE 802.3 objective.
* ``ifInErrors`` is the sum of the dot3 receive errors and ``ifOutErrors`` includes late and
  excessive collisions (RFC 3635 section 3.2.10); symbol errors do not count at 10 Mb/s and
  collisions do not count in full duplex (RFC 3635 object definitions).
* Duplex mismatch: the half-duplex end sees late collisions growing with the load the
  full-duplex end sends; the full-duplex end sees FCS errors and runts growing with the
  load it sends itself (the half-duplex end aborts and jams).
* Optic degradation: bit error ratio climbs steeply as received power falls towards and
  under the module's thresholds (the slope is illustrative). Optical powers are reported as
  SFF-8472 words of 0.1 uW, so they carry its rounding.

What is not evidence is randomised in every class alike, so the tree cannot learn it:
devices without the EtherLike table, with symbol errors absent or stuck at zero, with RMON
only, Counter32 only, with ``ifInErrors`` that also counts non-FCS errors (only beside an
EtherLike table, which tells them apart); media, duplex, top speed and link changes not
reported; transceivers with or without diagnostics and thresholds; any speed, frame size,
load and window. Healthy ports carry the nuisances of real networks: filtering discards
at low load, hosts that send a hundred times what they receive, broadcast-heavy ports, a
single flap, a burst of a few errors after a re-seat, light comfortably in range.
Faults range from the detection limit (a few times the objective, a few dozen events) to
the blatant.

:data:`TRAINING` holds the ranges of the packaged model's prior; :data:`SHIFTED` moves
every range and nuisance mix outside them, to test that the verdicts do not follow the
prior's particulars.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from linktriage.engine.format.counters import (
    COLUMN_INDEX,
    COLUMNS,
    QUANTITIES,
    WIRE_OVERHEAD_OCTETS,
)
from linktriage.engine.format.optics import sff8472_power_dbm, sff8472_power_raw
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.measure.phy import RX_SENSITIVITY_DBM, objective_for
from linktriage.engine.verdicts import TREE_VERDICTS, Verdict

M = 1_000_000
G = 1_000_000_000
#: 2026-03-02T08:00:00Z, the epoch of simulated polls unless told otherwise.
DEFAULT_START = 1_772_438_400.0

Rng = np.random.Generator


@dataclass(frozen=True, slots=True)
class Ranges:
    """Where the simulator draws each port's parameters from."""

    name: str
    copper_speeds: tuple[tuple[float, float], ...]  # (speed, weight)
    fiber_speeds: tuple[tuple[float, float], ...]
    fiber_share: float
    frame_octets: tuple[float, float]  # log-uniform mean frame size
    quiet_load: tuple[float, float]  # log-uniform utilisation of ordinary ports
    busy_load: tuple[float, float]  # uniform utilisation of busy ports
    windows: tuple[float, float]  # log-uniform window length, seconds
    asymmetry_sigma: float  # log-normal spread of sent over received frames
    missing: float  # how often counter groups and state fields are not reported (x base)
    nuisance: float  # how often healthy ports carry a nuisance (x base)
    fault_times_objective: tuple[float, float]  # log-uniform BER of faults, x objective
    min_events: float  # fewest events a fault produces in expectation
    light_alarm_dbm: tuple[float, float]
    optic_margin_db: tuple[float, float]  # received light over the warning, optic faults
    congested_load: tuple[float, float]
    discard_ratio: tuple[float, float]
    giant_ratio: tuple[float, float]
    duplex_strength: tuple[float, float]


TRAINING = Ranges(
    name="training",
    copper_speeds=((10 * M, 3), (100 * M, 17), (G, 65), (10 * G, 15)),
    fiber_speeds=((G, 30), (10 * G, 40), (25 * G, 10), (40 * G, 5), (100 * G, 12), (400 * G, 3)),
    fiber_share=0.3,
    frame_octets=(70.0, 1500.0),
    quiet_load=(3e-4, 0.6),
    busy_load=(0.6, 0.97),
    windows=(60.0, 3600.0),
    asymmetry_sigma=1.0,
    missing=1.0,
    nuisance=1.0,
    fault_times_objective=(3.0, 1e7),
    min_events=30.0,
    light_alarm_dbm=(-20.0, -10.0),
    optic_margin_db=(-8.0, -0.2),
    congested_load=(0.6, 0.97),
    discard_ratio=(1e-11, 5e-2),
    giant_ratio=(1e-11, 0.3),
    duplex_strength=(1e-4, 0.6),
)

#: Every range moved outside the training one, and the nuisances twice as common.
SHIFTED = replace(
    TRAINING,
    name="shifted",
    copper_speeds=((10 * M, 15), (100 * M, 35), (G, 40), (10 * G, 10)),
    fiber_speeds=((G, 15), (10 * G, 25), (25 * G, 25), (40 * G, 5), (100 * G, 25), (400 * G, 5)),
    fiber_share=0.5,
    frame_octets=(64.0, 9000.0),
    quiet_load=(1e-4, 0.8),
    busy_load=(0.5, 0.995),
    windows=(30.0, 3600.0),
    asymmetry_sigma=1.8,
    missing=2.0,
    nuisance=2.0,
    fault_times_objective=(2.0, 1e8),
    min_events=27.0,
    light_alarm_dbm=(-28.0, -6.0),
    optic_margin_db=(-12.0, -0.05),
    congested_load=(0.6, 0.995),
    discard_ratio=(1e-12, 0.2),
    giant_ratio=(1e-12, 0.6),
    duplex_strength=(1e-5, 0.9),
)


def _log_uniform(rng: Rng, low: float, high: float, n: int) -> np.ndarray:
    return np.exp(rng.uniform(np.log(low), np.log(high), n))


def _choice(rng: Rng, pairs: Sequence[tuple[float, float]], n: int) -> np.ndarray:
    values = np.array([v for v, _ in pairs], np.float64)
    w = np.array([w for _, w in pairs], np.float64)
    return rng.choice(values, size=n, p=w / w.sum())


def _chance(rng: Rng, p: float, n: int) -> np.ndarray:
    return rng.random(n) < min(p, 1.0)


def _objective(speed: np.ndarray, fiber: np.ndarray) -> np.ndarray:
    return np.array([objective_for(s, bool(f)) for s, f in zip(speed, fiber, strict=True)])


def _frames(p: pd.DataFrame, way: str) -> np.ndarray:
    """Frames a port carries over its window in one direction ("rx" or "tx")."""
    octets = p[f"{way}_frame_octets"].to_numpy() + WIRE_OVERHEAD_OCTETS
    frames: np.ndarray = (
        p[f"{way}_util"].to_numpy() * p["speed_bps"].to_numpy() * p["window_s"].to_numpy()
    ) / (octets * 8)
    return frames


def _at_least(ratio: np.ndarray, events: float, frames: np.ndarray) -> np.ndarray:
    """A per-frame ratio raised so that it yields ``events`` in expectation (capped at 0.5)."""
    with np.errstate(divide="ignore"):
        floor = np.where(frames > 0, events / frames, 0.5)
    raised: np.ndarray = np.minimum(np.maximum(ratio, floor), 0.5)
    return raised


def _sensitivity(speed: np.ndarray) -> np.ndarray:
    known = {s: v for s, (_, v) in RX_SENSITIVITY_DBM.items()}
    return np.array([known.get(int(x), np.nan) for x in speed])


def _optics(
    p: pd.DataFrame,
    rng: Rng,
    r: Ranges,
    rx_over_reference: np.ndarray,
    dom: np.ndarray | None = None,
) -> None:
    """Transceiver readings for fiber ports with diagnostics (``dom``, by default most).

    The received light is set ``rx_over_reference`` dB above the warning an engineer would
    hold it against: the module's low warning, else its low alarm or (a module without
    thresholds) the PHY's receiver sensitivity, plus the usual 2 dB of a warning.
    """
    n = len(p)
    fiber = p["fiber"].to_numpy() == 1.0
    if dom is None:
        dom = fiber & ~_chance(rng, 0.12 * r.missing, n)
    sensitivity = _sensitivity(p["speed_bps"].to_numpy())
    # Without thresholds the light can be judged only where the PHY's sensitivity is known.
    thresholds = dom & (~_chance(rng, 0.08 * r.missing, n) | np.isnan(sensitivity))
    alarm = rng.uniform(*r.light_alarm_dbm, n)
    warn_offset = np.where(_chance(rng, 0.15 * r.missing, n), np.nan, rng.uniform(1.0, 3.0, n))
    # Without a warning, an engineer holds the light against the alarm (or the PHY's
    # sensitivity) plus the usual spacing of a warning above it.
    floor = np.where(thresholds, alarm, sensitivity)
    reference = np.where(thresholds & ~np.isnan(warn_offset), alarm + warn_offset, floor + 2.0)
    p["dom"] = dom
    p["thresholds"] = thresholds
    p["rx_alarm_dbm"] = np.where(dom, alarm, np.nan)
    p["warn_offset_db"] = warn_offset
    p["rx_margin_db"] = np.where(dom, reference + rx_over_reference - alarm, np.nan)
    tx = rng.uniform(-7.0, 0.0, n)
    p["tx_power_dbm"] = np.where(dom, tx, np.nan)
    p["tx_alarm_dbm"] = tx - rng.uniform(3.0, 8.0, n)
    p["temperature_c"] = rng.uniform(15.0, 62.0, n)
    p["bias_ma"] = rng.uniform(4.0, 45.0, n)


def _base(n: int, rng: Rng, r: Ranges) -> pd.DataFrame:
    """Healthy ports of every kind, with the nuisances of real networks."""
    fiber = _chance(rng, r.fiber_share, n)
    speed = np.where(fiber, _choice(rng, r.fiber_speeds, n), _choice(rng, r.copper_speeds, n))
    # Counter32-only devices: RFC 2863 section 3.1.6 asks for 64-bit octet counters above
    # 20 Mb/s, and such devices survive mostly at the edge, at 100 Mb/s and below.
    legacy = ~fiber & (speed <= 100 * M) & _chance(rng, 0.2 * r.missing, n)
    rx_frame = _log_uniform(rng, *r.frame_octets, n)
    tx_frame = _log_uniform(rng, *r.frame_octets, n)
    busy = _chance(rng, 0.1, n)
    rx_util = np.where(busy, rng.uniform(*r.busy_load, n), _log_uniform(rng, *r.quiet_load, n))
    ratio = np.exp(rng.normal(0.0, r.asymmetry_sigma, n))
    # A backup target, a camera, a streaming server: one direction a hundred times the other.
    lopsided = _chance(rng, 0.05 * r.nuisance, n)
    ratio = np.where(lopsided, _log_uniform(rng, 30.0, 200.0, n) ** rng.choice([-1, 1], n), ratio)
    ratio = np.clip(ratio, 1e-3, 1e3)
    rx_fps = rx_util * speed / ((rx_frame + WIRE_OVERHEAD_OCTETS) * 8)
    tx_util = np.minimum(rx_fps * ratio * (tx_frame + WIRE_OVERHEAD_OCTETS) * 8 / speed, 0.97)
    storm = _chance(rng, 0.03 * r.nuisance, n)
    rx_util = np.where(storm, rng.uniform(0.3, 0.95, n), rx_util)
    rx_frame = np.where(storm, rng.uniform(64, 120, n), rx_frame)
    dt = np.round(_log_uniform(rng, *r.windows, n))
    # Their pollers read them within the 32-bit octet counter's wrap time (5.7 minutes at
    # 100 Mb/s, RFC 2863 section 3.1.6), or they could not measure load at all.
    dt = np.where(legacy, np.minimum(dt, 300.0), dt)
    # A healthy link carries frames both ways, a few a second at the least (control
    # traffic, broadcasts): a silent direction is a one-way link.
    least = rng.uniform(0.2, 2.0, n)
    rx_util = np.maximum(rx_util, least * (rx_frame + WIRE_OVERHEAD_OCTETS) * 8 / speed)
    tx_util = np.maximum(tx_util, least * (tx_frame + WIRE_OVERHEAD_OCTETS) * 8 / speed)
    filtering = ~busy & (rx_util < 0.55) & _chance(rng, 0.3 * r.nuisance, n)
    mtu = _choice(rng, ((1500, 80), (9000, 12), (9216, 8)), n)
    # Other receive errors in ifInErrors only beside an EtherLike table, which tells them
    # from FCS errors: without it no reading could.
    dot3 = ~_chance(rng, 0.15 * r.missing, n)
    p = pd.DataFrame(
        {
            "label": Verdict.HEALTHY.value,
            "speed_bps": speed,
            "max_speed_bps": np.where(_chance(rng, 0.12 * r.missing, n), np.nan, speed),
            "fiber": fiber.astype(float),
            "media_reported": ~_chance(rng, 0.1 * r.missing, n),
            "half_duplex": 0.0,
            "duplex_reported": ~_chance(rng, 0.15 * r.missing, n),
            "poe": np.where(fiber, 0.0, _chance(rng, 0.4, n).astype(float)),
            "mtu": mtu,
            # Jumbo frames a jumbo-enabled port carries as it should: RMON counts them as
            # oversize all the same (RFC 2819: longer than 1518 octets).
            "jumbo_share": np.where(
                (mtu > 1500) & _chance(rng, 0.5, n), rng.uniform(0.01, 0.5, n), 0.0
            ),
            "window_s": dt,
            "polls": np.where(_chance(rng, 0.2, n), 3, 2),
            "rx_util": rx_util,
            "tx_util": tx_util,
            "rx_frame_octets": rx_frame,
            "tx_frame_octets": tx_frame,
            "rx_bcast_share": np.where(storm, rng.uniform(0.85, 0.99, n), rng.uniform(0.0, 0.1, n)),
            "rx_ber": _objective(speed, fiber) * _log_uniform(rng, 1e-5, 0.3, n),
            # A burst after a re-seat, or stray noise: a handful of errors in any window.
            "stray_errors": np.where(
                _chance(rng, 0.2 * r.nuisance, n), rng.uniform(0.2, 3.0, n), 0.0
            ),
            "burst_errors": np.where(
                _chance(rng, 0.05 * r.nuisance, n), rng.integers(1, 7, n), 0
            ).astype(float),
            "symbols_per_error": rng.uniform(0.5, 3.0, n),
            # 0: counted, 1: not reported, 2: reported but stuck at zero.
            "symbol_mode": _choice(rng, ((0, 70), (1, 15 * r.missing), (2, 15 * r.missing)), n),
            "alignment_share": rng.uniform(0.0, 0.05, n),
            "extra_crc_ratio": 0.0,
            # Some devices count other receive errors in ifInErrors too.
            "in_errors_extra_ratio": np.where(
                dot3 & _chance(rng, 0.1 * r.nuisance, n), _log_uniform(rng, 1e-7, 1e-4, n), 0.0
            ),
            "runt_ratio": _log_uniform(rng, 1e-10, 1e-8, n),
            "giant_ratio": 0.0,
            # A stray frame too long now and then (a misconfigured host's odd packet): a
            # few per window, whatever the load.
            "stray_giants": np.where(
                _chance(rng, 0.05 * r.nuisance, n), rng.uniform(0.0, 4.0, n), 0.0
            ),
            "late_ratio": 0.0,
            "collision_ratio": 0.0,
            # ifInDiscards counts VLAN, STP and unknown-protocol filtering (RFC 2863).
            "in_discard_ratio": np.where(
                filtering, _log_uniform(rng, 1e-6, 0.05 * r.nuisance, n), 0.0
            ),
            # Outbound discards: policing or short bursts at low load; on a busy port a
            # stray few (more, on a busy port, is congestion).
            "out_discard_ratio": np.where(
                _chance(rng, 0.2 * r.nuisance, n) & (tx_util < 0.55),
                _log_uniform(rng, 1e-9, 1e-3, n),
                0.0,
            ),
            "stray_out_discards": np.where(
                _chance(rng, 0.2 * r.nuisance, n) & (tx_util >= 0.55),
                rng.uniform(0.0, 3.0, n),
                0.0,
            ),
            # One flap: a reboot of the far end or a re-patch.
            "link_changes": np.where(
                _chance(rng, 0.05 * r.nuisance, n), 2.0 * rng.integers(1, 3, n), 0.0
            ),
            "reports_link_changes": ~_chance(rng, 0.3 * r.missing, n),
            "hc": ~legacy,
            "dot3": dot3,
            "rmon": _chance(rng, 0.5, n),
            "down": False,
        }
    )
    _optics(p, rng, r, rng.uniform(1.5, 14.0, n))
    return p


def _copper(p: pd.DataFrame, rng: Rng, speeds: Sequence[tuple[float, float]]) -> None:
    n = len(p)
    p["fiber"] = 0.0
    p["speed_bps"] = _choice(rng, speeds, n)
    p["max_speed_bps"] = np.where(np.isnan(p["max_speed_bps"]), np.nan, p["speed_bps"])
    p["dom"] = False
    p["rx_margin_db"] = np.nan
    p["rx_alarm_dbm"] = np.nan
    p["tx_power_dbm"] = np.nan
    p["poe"] = _chance(rng, 0.4, n).astype(float)
    p["hc"] = p["hc"] | (p["speed_bps"] > G)


def _fault_ber(p: pd.DataFrame, rng: Rng, r: Ranges) -> np.ndarray:
    """Bit error ratios from the detection limit upwards, as frame error ratios go."""
    n = len(p)
    speed, fiber = p["speed_bps"].to_numpy(), p["fiber"].to_numpy()
    ber = _objective(speed, fiber) * _log_uniform(rng, *r.fault_times_objective, n)
    bits = p["rx_frame_octets"].to_numpy() * 8
    fer = _at_least(
        -np.expm1(bits * np.log1p(-np.minimum(ber, 0.01))), r.min_events, _frames(p, "rx")
    )
    fault: np.ndarray = -np.expm1(np.log1p(-fer) / bits)
    return fault


def _cable_fault(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    # Copper or fiber as the base drew them; on fiber a dirty or damaged connector or patch
    # cord, with the light still in range.
    n = len(p)
    copper = p["fiber"].to_numpy() == 0.0
    # A gigabit port that lost a pair comes up at 100 Mb/s (1000BASE-T needs all four).
    downshift = copper & (p["speed_bps"] == G) & _chance(rng, 0.3, n)
    p.loc[downshift, "max_speed_bps"] = G
    p.loc[downshift, "speed_bps"] = 100 * M
    p["rx_util"] = np.maximum(p["rx_util"], _log_uniform(rng, 1e-3, 0.5, n))
    p["rx_ber"] = _fault_ber(p, rng, r)
    p["alignment_share"] = rng.uniform(0.0, 0.08, n)
    # Noise rarely shortens a frame: runts are at most a few in a thousand errors.
    p["runt_ratio"] = p["rx_ber"] * p["rx_frame_octets"] * 8 * rng.uniform(0.0, 0.005, n)
    flapping = _chance(rng, 0.35, n)
    p["link_changes"] = np.where(flapping, 2 * rng.integers(3, 15, n), 0).astype(float)
    # A link that flaps with clean counters between flaps is a cable fault too.
    clean = flapping & _chance(rng, 0.25, n)
    objective = _objective(p["speed_bps"].to_numpy(), p["fiber"].to_numpy())
    p.loc[clean, "rx_ber"] = objective[clean] * 1e-4
    p.loc[flapping, "reports_link_changes"] = True


def _duplex_mismatch(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    _copper(p, rng, ((10 * M, 15), (100 * M, 75), (G, 10)))
    p["max_speed_bps"] = np.where(_chance(rng, 0.5, n), G, p["speed_bps"])
    p["max_speed_bps"] = np.maximum(p["max_speed_bps"], p["speed_bps"])
    p["rx_util"] = _log_uniform(rng, 3e-3, 0.5, n)
    p["tx_util"] = _log_uniform(rng, 3e-3, 0.5, n)
    half_end = _chance(rng, 0.5, n)
    strength = _log_uniform(rng, *r.duplex_strength, n)
    p["half_duplex"] = half_end.astype(float)
    # The evidence lives in the EtherLike table at the half end (late collisions) and in
    # RMON at the full end (fragments): without them no reading could tell.
    p.loc[half_end, "dot3"] = True
    p.loc[~half_end, "rmon"] = True
    # Half-duplex end: the peer transmits regardless, so collisions follow the receive load.
    late = _at_least(strength * p["rx_util"].to_numpy(), r.min_events / 2, _frames(p, "tx"))
    p["late_ratio"] = np.where(half_end, late, 0.0)
    p["collision_ratio"] = np.where(half_end, late * rng.uniform(1.5, 5.0, n), 0.0)
    # Full-duplex end: the half end aborts our frames, so errors follow our transmit load;
    # the aborted frames arrive as runts (RMON fragments) beside the FCS errors.
    crc = _at_least(strength * p["tx_util"].to_numpy(), r.min_events, _frames(p, "rx"))
    p["extra_crc_ratio"] = np.where(half_end, 0.05 * crc, crc)
    # A collision cuts a frame at a random point: the cut lands within the 64-octet slot,
    # leaving a runt, about slot / frame of the time (IEEE 802.3 clause 4.4.2 slotTime).
    cut_early = np.clip(
        64.0 / p["rx_frame_octets"].to_numpy() * rng.uniform(0.5, 2.0, n), 0.005, 0.9
    )
    runts = _at_least(crc * cut_early / (1.0 - cut_early), r.min_events, _frames(p, "rx"))
    p["runt_ratio"] = np.where(half_end, 0.0, runts)
    p["symbols_per_error"] = 0.0  # a clean signal: the damage is in the MAC, not the PHY
    p["rx_ber"] = _objective(p["speed_bps"].to_numpy(), p["fiber"].to_numpy()) * 1e-4


def _negotiation_degraded(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    _copper(p, rng, ((10 * M, 20), (100 * M, 80)))
    half = _chance(rng, 0.3, n)
    p["max_speed_bps"] = np.where(half & _chance(rng, 0.5, n), p["speed_bps"], G)
    # A 10G port at 1 Gb/s: copper or fiber.
    fast = ~half & _chance(rng, 0.2, n)
    optic = fast & _chance(rng, 0.6, n)
    p.loc[fast, ["speed_bps", "max_speed_bps"]] = [G, 10 * G]
    p.loc[optic, ["fiber", "poe"]] = [1.0, 0.0]
    _optics_for(p, optic, rng, r)
    p["half_duplex"] = half.astype(float)
    # Half duplex shows as reported, or as the collisions of the EtherLike table.
    p.loc[half & ~p["duplex_reported"].to_numpy(), "dot3"] = True
    # Both ends half duplex: ordinary (early) collisions growing with load, no late ones.
    p["collision_ratio"] = np.where(half, _log_uniform(rng, 0.02, 0.3, n) * p["rx_util"], 0.0)
    # A state reading: it holds on idle ports too.
    idle = _chance(rng, 0.2, n)
    p.loc[idle, "rx_util"] = _log_uniform(rng, 1e-6, 1e-4, int(idle.sum()))
    p.loc[idle, "tx_util"] = _log_uniform(rng, 1e-6, 1e-4, int(idle.sum()))


def _optics_for(p: pd.DataFrame, rows: np.ndarray, rng: Rng, r: Ranges) -> None:
    """Healthy transceiver readings for ``rows`` made fiber after sampling."""
    k = int(rows.sum())
    if k == 0:
        return
    part = p.loc[rows].copy()
    _optics(part, rng, r, rng.uniform(1.5, 12.0, k))
    for key in ("dom", "thresholds", "rx_alarm_dbm", "warn_offset_db", "rx_margin_db",
                "tx_power_dbm", "tx_alarm_dbm", "temperature_c", "bias_ma"):  # fmt: skip
        p.loc[rows, key] = part[key].to_numpy()


def _mtu_mismatch(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    p["giant_ratio"] = _at_least(
        _log_uniform(rng, *r.giant_ratio, n), r.min_events, _frames(p, "rx")
    )
    p["mtu"] = _choice(rng, ((1500, 85), (9000, 15)), n)
    p["jumbo_share"] = 0.0
    # The too-long frames are counted by the EtherLike table, or by RMON where the MTU is
    # the standard 1500 (etherStatsOversizePkts counts every frame over 1518 octets).
    jumbo = p["mtu"].to_numpy() > 1500
    neither = ~p["dot3"].to_numpy() & ~p["rmon"].to_numpy()
    p.loc[jumbo, "dot3"] = True
    p.loc[neither & ~jumbo, "rmon"] = True


def _optic_degraded(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    p["fiber"] = 1.0
    p["poe"] = 0.0
    p["speed_bps"] = _choice(rng, r.fiber_speeds, n)
    p["max_speed_bps"] = np.where(np.isnan(p["max_speed_bps"]), np.nan, p["speed_bps"])
    p["hc"] = True
    over_warn = rng.uniform(*r.optic_margin_db, n)
    _optics(p, rng, r, over_warn, dom=np.ones(n, np.bool_))
    # Bit errors climb steeply as the light falls (illustrative slope); a third are still
    # clean: low light is a state reading.
    times = 10.0 ** np.clip(1.5 * (1.5 - over_warn) + rng.normal(0.0, 0.7, n), 0.5, 9.0)
    ber = _objective(p["speed_bps"].to_numpy(), p["fiber"].to_numpy()) * times
    clean = _chance(rng, 0.3, n)
    p["rx_ber"] = np.where(clean, ber * 1e-6, np.minimum(ber, 1e-3))
    p["symbols_per_error"] = rng.uniform(0.5, 2.0, n)
    # A failing transmitter at the far end shows as low light here; at this end, as low
    # transmit power. Some modules run hot.
    weak_tx = _chance(rng, 0.12, n)
    p["tx_power_dbm"] = np.where(
        weak_tx, p["tx_alarm_dbm"] + rng.uniform(-2.0, 0.5, n), p["tx_power_dbm"]
    )
    p["temperature_c"] = np.where(
        _chance(rng, 0.05, n), rng.uniform(72.0, 90.0, n), p["temperature_c"]
    )
    flapping = (over_warn < -4.0) & _chance(rng, 0.2, n)
    p["link_changes"] = np.where(flapping, 2 * rng.integers(1, 6, n), 0).astype(float)


def _unidirectional(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    rx_quiet = _chance(rng, 0.7, n)
    speed = p["speed_bps"].to_numpy()
    wire = {w: (p[f"{w}_frame_octets"].to_numpy() + WIRE_OVERHEAD_OCTETS) * 8 for w in ("rx", "tx")}
    # The live direction carries a few frames a second at least; the silent one nothing at
    # all, or a stray frame every minute or so.
    busy = _log_uniform(rng, 1e-3, 0.6, n)
    window = p["window_s"].to_numpy()
    stray = np.maximum(rng.integers(1, 3, n), rng.uniform(0.0, 0.008, n) * window)
    quiet_fps = np.where(_chance(rng, 0.6, n), 0.0, np.floor(stray) / window)
    for way, silent in (("rx", rx_quiet), ("tx", ~rx_quiet)):
        live = np.maximum(busy, 5.0 * wire[way] / speed)
        p[f"{way}_util"] = np.where(silent, quiet_fps * wire[way] / speed, live)
    p["in_discard_ratio"] = 0.0
    # Nothing arrives on a silent receive direction, errors included.
    p.loc[rx_quiet, ["stray_errors", "burst_errors"]] = 0.0


def _congestion(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    inbound = _chance(rng, 0.25, n)
    big = rng.uniform(400, 1500, n)
    # The load as IF-MIB octets measure it (frames only); the wire carries 20 octets more each.
    hot = rng.uniform(*r.congested_load, n) * (big + WIRE_OVERHEAD_OCTETS) / big
    # The other direction carries the acknowledgements: many small frames, little load.
    small = rng.uniform(64, 200, n)
    ack = (
        hot
        * rng.uniform(0.3, 1.0, n)
        * (small + WIRE_OVERHEAD_OCTETS)
        / (big + WIRE_OVERHEAD_OCTETS)
    )
    p["tx_util"] = np.where(inbound, ack, hot)
    p["rx_util"] = np.where(inbound, hot, ack)
    p["tx_frame_octets"] = np.where(inbound, small, big)
    p["rx_frame_octets"] = np.where(inbound, big, small)
    drop_out = _at_least(_log_uniform(rng, *r.discard_ratio, n), r.min_events, _frames(p, "tx"))
    drop_in = _at_least(_log_uniform(rng, *r.discard_ratio, n), r.min_events, _frames(p, "rx"))
    p["out_discard_ratio"] = np.where(inbound, 0.0, drop_out)
    p["in_discard_ratio"] = np.where(inbound, drop_in, 0.0)


_CLASS_SHAPERS: dict[Verdict, Callable[[pd.DataFrame, Rng, Ranges], None]] = {
    Verdict.HEALTHY: lambda p, rng, r: None,
    Verdict.CABLE_FAULT: _cable_fault,
    Verdict.DUPLEX_MISMATCH: _duplex_mismatch,
    Verdict.NEGOTIATION_DEGRADED: _negotiation_degraded,
    Verdict.MTU_MISMATCH: _mtu_mismatch,
    Verdict.OPTIC_DEGRADED: _optic_degraded,
    Verdict.UNIDIRECTIONAL: _unidirectional,
    Verdict.CONGESTION: _congestion,
}

#: Share of each class in the training prior: healthy ports dominate, as on a real network.
PRIOR_MIX: dict[Verdict, float] = {
    Verdict.HEALTHY: 0.30,
    Verdict.CABLE_FAULT: 0.10,
    Verdict.DUPLEX_MISMATCH: 0.10,
    Verdict.NEGOTIATION_DEGRADED: 0.10,
    Verdict.MTU_MISMATCH: 0.10,
    Verdict.OPTIC_DEGRADED: 0.10,
    Verdict.UNIDIRECTIONAL: 0.10,
    Verdict.CONGESTION: 0.10,
}


def sample_parameters(
    labels: Sequence[Verdict], rng: Rng, ranges: Ranges = TRAINING
) -> pd.DataFrame:
    """Port parameters for the given classes, one row each, in the order given."""
    labels_a = np.asarray([Verdict(v).value for v in labels], dtype=object)
    parts = []
    for verdict in TREE_VERDICTS:
        rows = np.flatnonzero(labels_a == verdict.value)
        if len(rows) == 0:
            continue
        p = _base(len(rows), rng, ranges)
        _CLASS_SHAPERS[verdict](p, rng, ranges)
        p["label"] = verdict.value
        p.index = rows
        parts.append(p)
    return pd.concat(parts).sort_index() if parts else _base(0, rng, ranges)


def sample_mix(n: int, rng: Rng, mix: dict[Verdict, float] | None = None) -> list[Verdict]:
    """``n`` class labels drawn in the proportions of ``mix`` (default :data:`PRIOR_MIX`)."""
    mix = mix or PRIOR_MIX
    names = list(mix)
    weights = np.asarray([mix[v] for v in names], np.float64)
    picks = rng.choice(len(names), size=n, p=weights / weights.sum())
    return [names[i] for i in picks]


def render_polls(
    params: pd.DataFrame,
    rng: Rng,
    *,
    device: Sequence[str],
    port: Sequence[str],
    end_time: float | np.ndarray = DEFAULT_START,
) -> PollTable:
    """Cumulative counters at two or three polls per port, as a poller would read them."""
    n = len(params)
    p = params.reset_index(drop=True)
    dt = p["window_s"].to_numpy(np.float64)
    counts = window_counts(p, Draw(rng), dt)

    end = np.broadcast_to(np.asarray(end_time, np.float64), (n,))
    polls = p["polls"].to_numpy(np.int64)
    fractions = [np.zeros(n), np.where(polls == 3, rng.uniform(0.3, 0.7, n), np.nan), np.ones(n)]
    ports = PortConstants.draw(p, rng, end)
    tables = []
    for k, frac in enumerate(fractions):
        keep = polls >= (2, 3, 1)[k]
        f = np.nan_to_num(frac)
        steps = {key: counts[key] * f for key in counts}
        last = k == len(fractions) - 1
        down = last & p["down"].to_numpy(np.bool_)
        table = ports.table(
            p, rng, steps, device=device, port=port, time=end - dt * (1.0 - f), down=down,
            link_changes=p["link_changes"].to_numpy() * f,
        )  # fmt: skip
        tables.append(table.take(np.flatnonzero(keep)))
    return PollTable.concat(tables)


def _column(p: pd.DataFrame, key: str, default: float | bool, n: int) -> np.ndarray:
    """A parameter column, or its default where an older caller's parameters lack it."""
    if key in p:
        return p[key].to_numpy()
    return np.full(n, default)


@dataclass(frozen=True, slots=True)
class PortConstants:
    """What a simulated port keeps from poll to poll: counter offsets, names it reports."""

    starts: dict[str, np.ndarray]  # counter name -> value at the start
    link_changes: np.ndarray
    discontinuity: np.ndarray
    reported: np.ndarray

    @classmethod
    def draw(cls, p: pd.DataFrame, rng: Rng, end: np.ndarray) -> PortConstants:
        n = len(p)
        starts = {
            c.name: (
                rng.integers(0, 2**32, n, dtype=np.uint64)
                if c.bits == 32
                else rng.integers(0, 2**48, n, dtype=np.uint64)
            )
            for c in COLUMNS
        }
        lc0 = rng.integers(0, 40, n).astype(np.float64)
        disc = np.where(rng.random(n) < 0.5, end - rng.uniform(86_400, 90 * 86_400, n), np.nan)
        reported = _reported_columns(
            p["hc"].to_numpy(np.bool_),
            p["dot3"].to_numpy(np.bool_),
            p["rmon"].to_numpy(np.bool_),
            _column(p, "symbol_mode", 0.0, n),
        )
        return cls(starts, lc0, disc, reported)

    def table(
        self,
        p: pd.DataFrame,
        rng: Rng,
        steps: dict[str, np.ndarray],
        *,
        device: Sequence[str],
        port: Sequence[str],
        time: np.ndarray,
        down: np.ndarray,
        link_changes: np.ndarray,
        discontinuity: np.ndarray | None = None,
    ) -> PollTable:
        """The poll table when each quantity has grown by ``steps`` since the start."""
        n = len(p)
        counters = np.zeros((n, len(COLUMNS)), np.uint64)
        for q in QUANTITIES:
            step = np.floor(steps[q.key]).astype(np.uint64)
            for name in (q.hc, q.c32):
                if name is not None:
                    j = COLUMN_INDEX[name]
                    value = self.starts[name] + step  # unsigned: wraps modulo 2^64
                    if COLUMNS[j].bits == 32:
                        value &= np.uint64(0xFFFFFFFF)
                    counters[:, j] = value
        # Symbol errors stuck at zero: the counter is reported and never moves.
        stuck = _column(p, "symbol_mode", 0.0, n) == 2
        counters[stuck, COLUMN_INDEX["dot3StatsSymbolErrors"]] = 0
        links = self.link_changes + np.floor(link_changes)
        media_known = _column(p, "media_reported", True, n).astype(bool)
        duplex_known = _column(p, "duplex_reported", True, n).astype(bool)
        return PollTable.from_columns(
            device=np.asarray(device, dtype=object),
            port=np.asarray(port, dtype=object),
            time=time,
            oper_status=np.where(down, "down", "up").astype(object),
            state={
                "speed_bps": p["speed_bps"].to_numpy(np.float64),
                "max_speed_bps": p["max_speed_bps"].to_numpy(np.float64),
                "mtu": p["mtu"].to_numpy(np.float64),
                "link_changes": np.where(p["reports_link_changes"], links, np.nan),
                "discontinuity": self.discontinuity if discontinuity is None else discontinuity,
                "half_duplex": np.where(
                    duplex_known, p["half_duplex"].to_numpy(np.float64), np.nan
                ),
                "fiber": np.where(media_known, p["fiber"].to_numpy(np.float64), np.nan),
                "poe": p["poe"].to_numpy(np.float64),
            },
            optics=_optics_readings(p, rng),
            counters=counters,
            present=self.reported.copy(),
        )


def _reported_columns(
    hc: np.ndarray, dot3: np.ndarray, rmon: np.ndarray, symbol_mode: np.ndarray
) -> np.ndarray:
    """Which counter names each simulated device reports."""
    n = len(hc)
    present = np.zeros((n, len(COLUMNS)), np.bool_)
    for j, c in enumerate(COLUMNS):
        if c.name.startswith("dot3HC"):
            continue  # the dot3 HC table is rare in the field
        if c.name == "dot3StatsSymbolErrors":
            present[:, j] = dot3 & (symbol_mode != 1)
        elif c.name.startswith("dot3"):
            present[:, j] = dot3
        elif c.name.startswith("etherStats"):
            present[:, j] = rmon
        elif c.name.startswith("ifHC"):
            present[:, j] = hc
        elif c.name in ("ifInErrors", "ifOutErrors", "ifInDiscards", "ifOutDiscards"):
            present[:, j] = True
        else:  # the Counter32 traffic counters: pollers of HC devices do not fetch them
            present[:, j] = ~hc
    return present


class LiveCounters:
    """Ports whose counters grow with time at the mean rates of their parameters.

    Reading them at any instant gives what a switch would answer then; two readings any
    time apart make a window. Parameters may carry ``cleared`` (counters cleared at every
    read) and ``down`` (the link is down). A port may turn faulty while it runs: until its
    ``onset`` (a time; NaN for none) its counters grow at the rates of its row of
    ``before``, from then on at those of ``params``, so a history shows when it changed.
    """

    def __init__(
        self,
        params: pd.DataFrame,
        rng: Rng,
        *,
        device: Sequence[str],
        port: Sequence[str],
        epoch: float,
        seed: int,
        before: pd.DataFrame | None = None,
        onset: np.ndarray | None = None,
    ) -> None:
        self.params = params.reset_index(drop=True)
        if "cleared" not in self.params:
            self.params["cleared"] = False
        n = len(self.params)
        self.device = np.asarray(device, dtype=object)
        self.port = np.asarray(port, dtype=object)
        self.epoch = epoch
        self.seed = seed
        self.constants = PortConstants.draw(self.params, rng, np.full(n, epoch))
        self.rates, self.flaps_per_s = _live_rates(self.params)
        self.rates_before, self.flaps_before = (
            (self.rates, self.flaps_per_s)
            if before is None
            else _live_rates(before.reset_index(drop=True))
        )
        # Without an onset a port runs at its own rates from the epoch on.
        self.onset = np.full(n, epoch) if onset is None else np.where(np.isnan(onset), epoch, onset)

    def __len__(self) -> int:
        return len(self.params)

    def at(self, rows: np.ndarray, when: float) -> PollTable:
        """The counters of ``rows`` read at ``when``."""
        p = self.params.iloc[rows].reset_index(drop=True)
        elapsed = max(when - self.epoch, 0.0)  # before the epoch, counters have not started
        before_s = np.clip(self.onset[rows] - self.epoch, 0.0, elapsed)
        after_s = elapsed - before_s
        cleared = p["cleared"].to_numpy(np.bool_)
        steps = {
            k: np.where(cleared, 0.0, self.rates_before[k][rows] * before_s + v[rows] * after_s)
            for k, v in self.rates.items()
        }
        constants = PortConstants(
            starts={k: v[rows] for k, v in self.constants.starts.items()},
            link_changes=self.constants.link_changes[rows],
            discontinuity=np.where(cleared, when, self.constants.discontinuity[rows]),
            reported=self.constants.reported[rows],
        )
        return constants.table(
            p,
            np.random.default_rng(self.seed),  # the same transceiver readings at every read
            steps,
            device=self.device[rows],
            port=self.port[rows],
            time=np.full(len(rows), when),
            down=p["down"].to_numpy(np.bool_),
            link_changes=self.flaps_before[rows] * before_s + self.flaps_per_s[rows] * after_s,
        )


def _live_rates(params: pd.DataFrame) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """How fast each counter grows per second at the ports' mean rates, and their flaps."""
    reference = 1e6  # rates from a long window, so that rounding down costs nothing
    counts = window_counts(params, Expect(), np.full(len(params), reference))
    flaps = params["link_changes"].to_numpy() / params["window_s"].to_numpy()
    return {key: value / reference for key, value in counts.items()}, flaps


class Draw:
    """Counts drawn at random around their means, for the training prior."""

    def __init__(self, rng: Rng) -> None:
        self.rng = rng

    def binomial(self, n: np.ndarray, p: np.ndarray) -> np.ndarray:
        return self.rng.binomial(n.astype(np.int64), np.clip(p, 0.0, 1.0)).astype(np.float64)

    def poisson(self, mean: np.ndarray) -> np.ndarray:
        return self.rng.poisson(mean).astype(np.float64)

    def uniform(self, low: float, high: float, n: int) -> np.ndarray:
        return self.rng.uniform(low, high, n)


class Expect:
    """Counts at their means, so that counters grow smoothly with time (the live demo)."""

    def binomial(self, n: np.ndarray, p: np.ndarray) -> np.ndarray:
        mean: np.ndarray = n * np.clip(p, 0.0, 1.0)
        return mean

    def poisson(self, mean: np.ndarray) -> np.ndarray:
        return np.array(mean, np.float64)

    def uniform(self, low: float, high: float, n: int) -> np.ndarray:
        return np.full(n, (low + high) / 2)


def window_counts(p: pd.DataFrame, draw: Draw | Expect, dt: np.ndarray) -> dict[str, np.ndarray]:
    """How much each quantity grows over a window of ``dt`` seconds."""
    n = len(p)
    speed = p["speed_bps"].to_numpy(np.float64)
    rx_pkts = np.floor(
        p["rx_util"].to_numpy()
        * speed
        * dt
        / ((p["rx_frame_octets"].to_numpy() + WIRE_OVERHEAD_OCTETS) * 8)
    )
    tx_pkts = np.floor(
        p["tx_util"].to_numpy()
        * speed
        * dt
        / ((p["tx_frame_octets"].to_numpy() + WIRE_OVERHEAD_OCTETS) * 8)
    )
    bits = p["rx_frame_octets"].to_numpy() * 8
    fer = -np.expm1(bits * np.log1p(-p["rx_ber"].to_numpy()))
    fer = np.clip(fer + p["extra_crc_ratio"].to_numpy(), 0.0, 0.5)
    # Nuisance counts are a few per window, whatever the load: stray errors, a burst after a
    # re-seat (once), frames too long, discards.
    per_window = dt / p["window_s"].to_numpy()
    burst = _column(p, "burst_errors", 0.0, n) * np.minimum(per_window, 1.0)
    stray = draw.poisson(p["stray_errors"].to_numpy() * per_window)
    crc = draw.binomial(rx_pkts, fer) + stray + burst
    alignment = draw.binomial(crc, p["alignment_share"].to_numpy())
    fcs = crc - alignment
    ten_meg = speed <= 10 * M  # symbol errors do not increment at 10 Mb/s (RFC 3635)
    symbols = np.where(ten_meg, 0.0, draw.poisson(crc * p["symbols_per_error"].to_numpy()))
    giants = draw.poisson(
        rx_pkts * p["giant_ratio"].to_numpy() + _column(p, "stray_giants", 0.0, n) * per_window
    )
    fragments = draw.poisson(rx_pkts * p["runt_ratio"].to_numpy())
    undersize = draw.poisson(rx_pkts * 1e-10)
    other_errors = draw.poisson(rx_pkts * _column(p, "in_errors_extra_ratio", 0.0, n))
    in_disc = draw.poisson(rx_pkts * p["in_discard_ratio"].to_numpy())
    out_disc = draw.poisson(
        tx_pkts * p["out_discard_ratio"].to_numpy()
        + _column(p, "stray_out_discards", 0.0, n) * per_window
    )
    late = draw.poisson(tx_pkts * p["late_ratio"].to_numpy())
    coll = draw.poisson(tx_pkts * p["collision_ratio"].to_numpy())
    single = draw.binomial(coll, np.full(n, 0.7))
    excessive = draw.binomial(coll - single, np.full(n, 0.02))
    multiple = coll - single - excessive
    nonunicast_in = np.clip(_column(p, "rx_bcast_share", 0.05, n), 0.0, 1.0)
    mcast_out = draw.uniform(0.005, 0.05, n)
    return {
        "in_octets": rx_pkts * p["rx_frame_octets"].to_numpy(),
        "out_octets": tx_pkts * p["tx_frame_octets"].to_numpy(),
        "in_ucast": rx_pkts * (1 - nonunicast_in),
        "in_mcast": rx_pkts * nonunicast_in / 2,
        "in_bcast": rx_pkts * nonunicast_in / 2,
        "out_ucast": tx_pkts * (1 - 2 * mcast_out),
        "out_mcast": tx_pkts * mcast_out,
        "out_bcast": tx_pkts * mcast_out,
        # RFC 3635 section 3.2.10: ifInErrors sums alignment, FCS, too-long and MAC errors;
        # some devices add other receive errors (other_errors) as well.
        "in_errors": alignment + fcs + giants + other_errors,
        "out_errors": late + excessive,
        "in_discards": in_disc,
        "out_discards": out_disc,
        "fcs_errors": fcs,
        "alignment_errors": alignment,
        "symbol_errors": symbols,
        "late_collisions": late,
        "single_collisions": single,
        "multiple_collisions": multiple,
        "excessive_collisions": excessive,
        "frame_too_longs": giants,
        "mac_receive_errors": np.zeros(n),
        "undersize": undersize,
        "fragments": fragments,
        "oversize": giants + draw.poisson(rx_pkts * _column(p, "jumbo_share", 0.0, n)),
        "jabbers": np.zeros(n),
    }


def _as_reported(dbm: np.ndarray) -> np.ndarray:
    """A power in dBm as a module reports it: an SFF-8472 word of 0.1 uW, read back."""
    raw = np.maximum(sff8472_power_raw(np.nan_to_num(dbm, nan=-40.0)), 1)
    reported = sff8472_power_dbm(raw).round(2)
    return np.where(np.isnan(dbm), np.nan, reported)


def _optics_readings(p: pd.DataFrame, rng: Rng) -> dict[str, np.ndarray]:
    """Transceiver readings for fiber ports with diagnostics; NaN elsewhere."""
    n = len(p)
    nan = np.full(n, np.nan)
    alarm = p["rx_alarm_dbm"].to_numpy(np.float64)
    margin = p["rx_margin_db"].to_numpy(np.float64)
    dom = _column(p, "dom", True, n).astype(bool) & (p["fiber"].to_numpy() == 1.0)
    has = ~np.isnan(alarm) & ~np.isnan(margin) & dom
    thresholds = has & _column(p, "thresholds", True, n).astype(bool)
    warn_offset = _column(p, "warn_offset_db", np.nan, n).astype(np.float64)
    if "warn_offset_db" not in p:  # parameters written before warnings had their own column
        warn_offset = rng.uniform(1.0, 3.0, n)
    tx_alarm = _column(p, "tx_alarm_dbm", -11.0, n).astype(np.float64)
    return {
        "rx_power_dbm": _as_reported(np.where(has, alarm + margin, nan)),
        "rx_power_low_alarm_dbm": np.where(thresholds, alarm, nan),
        "rx_power_low_warn_dbm": np.where(thresholds, alarm + warn_offset, nan),
        "tx_power_dbm": _as_reported(np.where(has, p["tx_power_dbm"].to_numpy(np.float64), nan)),
        "tx_power_low_alarm_dbm": np.where(thresholds, tx_alarm, nan),
        "temperature_c": np.where(has, _column(p, "temperature_c", 40.0, n), nan),
        "bias_ma": np.where(has, _column(p, "bias_ma", 20.0, n), nan),
    }


def simulate_prior(n: int, rng: Rng, ranges: Ranges = TRAINING) -> tuple[PollTable, np.ndarray]:
    """``n`` simulated ports in the prior's class mix: their polls and their true classes."""
    labels = sample_mix(n, rng)
    params = sample_parameters(labels, rng, ranges)
    names = [f"sim{i // 48:05d}" for i in range(n)]
    ports = [f"port{i % 48 + 1}" for i in range(n)]
    polls = render_polls(params, rng, device=names, port=ports)
    return polls, params["label"].to_numpy(dtype=object)
