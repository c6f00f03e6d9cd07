"""Drawing a simulated port's parameters: the base every port shares, with the nuisances of
real networks, and the helpers each verdict's signature draws its fault with.

A port is a row of a DataFrame (speed, medium, load, frame sizes, bit error ratio, collision
and discard ratios, optical readings, which counters the device reports), drawn within a
set of :class:`Ranges`. :data:`TRAINING` holds the ranges of the packaged model's prior;
:data:`SHIFTED` moves every range and nuisance mix outside them. pandas is imported only
when a frame is made, so the verdict modules that declare signatures stay light.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.counters import WIRE_OVERHEAD_OCTETS
from linktriage.engine.measure.phy import (
    MAX_PAUSE_BITS,
    MOST_PERMISSIVE_MAX_RX_DBM,
    RX_SENSITIVITY_DBM,
    objective_for,
)

if TYPE_CHECKING:
    import pandas as pd

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
    fault_times_objective=(30.0, 1e7),
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
    fault_times_objective=(20.0, 1e8),
    min_events=27.0,
    light_alarm_dbm=(-28.0, -6.0),
    optic_margin_db=(-12.0, -0.05),
    congested_load=(0.6, 0.995),
    discard_ratio=(1e-12, 0.2),
    giant_ratio=(1e-12, 0.6),
    duplex_strength=(1e-5, 0.9),
)


def log_uniform(rng: Rng, low: float, high: float, n: int) -> np.ndarray:
    return np.exp(rng.uniform(np.log(low), np.log(high), n))


def choice(rng: Rng, pairs: Sequence[tuple[float, float]], n: int) -> np.ndarray:
    values = np.array([v for v, _ in pairs], np.float64)
    w = np.array([w for _, w in pairs], np.float64)
    return rng.choice(values, size=n, p=w / w.sum())


def chance(rng: Rng, p: float, n: int) -> np.ndarray:
    return rng.random(n) < min(p, 1.0)


def objective(speed: np.ndarray, fiber: np.ndarray) -> np.ndarray:
    return np.array([objective_for(s, bool(f)) for s, f in zip(speed, fiber, strict=True)])


def frames(p: pd.DataFrame, way: str) -> np.ndarray:
    """Frames a port carries over its window in one direction ("rx" or "tx")."""
    octets = p[f"{way}_frame_octets"].to_numpy() + WIRE_OVERHEAD_OCTETS
    frames: np.ndarray = (
        p[f"{way}_util"].to_numpy() * p["speed_bps"].to_numpy() * p["window_s"].to_numpy()
    ) / (octets * 8)
    return frames


def at_least(ratio: np.ndarray, events: float, carried: np.ndarray) -> np.ndarray:
    """A per-frame ratio raised so that it yields ``events`` in expectation over the
    ``carried`` frames (capped at 0.5)."""
    with np.errstate(divide="ignore"):
        floor = np.where(carried > 0, events / carried, 0.5)
    raised: np.ndarray = np.minimum(np.maximum(ratio, floor), 0.5)
    return raised


def _sensitivity(speed: np.ndarray) -> np.ndarray:
    known = {s: v for s, (_, v) in RX_SENSITIVITY_DBM.items()}
    return np.array([known.get(int(x), np.nan) for x in speed])


def _most_rx(speed: np.ndarray) -> np.ndarray:
    return np.array([MOST_PERMISSIVE_MAX_RX_DBM.get(int(x), 10.0) for x in speed])


def optics(
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
        dom = fiber & ~chance(rng, 0.12 * r.missing, n)
    sensitivity = _sensitivity(p["speed_bps"].to_numpy())
    # Without thresholds the light can be judged only where the PHY's sensitivity is known.
    thresholds = dom & (~chance(rng, 0.08 * r.missing, n) | np.isnan(sensitivity))
    alarm = rng.uniform(*r.light_alarm_dbm, n)
    warn_offset = np.where(chance(rng, 0.15 * r.missing, n), np.nan, rng.uniform(1.0, 3.0, n))
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
    # The module's high thresholds: its high alarm this far above its low alarm, its high
    # warning this far under the high alarm (typical of the classes; SFF-8472 page A2h).
    # (SFF-8472 reports at most 6.5535 mW, +8.2 dBm: a high alarm sits under it.)
    p["rx_span_db"] = np.minimum(rng.uniform(15.0, 19.0, n), 7.0 - alarm)
    p["high_warn_gap_db"] = rng.uniform(1.0, 3.0, n)
    # Light in range stays a decibel or more under the receiver's high warning (with no
    # thresholds, under the most its speed's most permissive PMD takes): over it is
    # optic_overload, which its own signature draws.
    most = (
        np.where(
            thresholds,
            p["rx_span_db"] - p["high_warn_gap_db"],
            _most_rx(p["speed_bps"].to_numpy()) - alarm,
        )
        - 1.0
    )
    p["rx_margin_db"] = np.minimum(p["rx_margin_db"], most)


def base(n: int, rng: Rng, r: Ranges) -> pd.DataFrame:
    """Healthy ports of every kind, with the nuisances of real networks."""
    import pandas as pd

    fiber = chance(rng, r.fiber_share, n)
    speed = np.where(fiber, choice(rng, r.fiber_speeds, n), choice(rng, r.copper_speeds, n))
    # Counter32-only devices: RFC 2863 section 3.1.6 asks for 64-bit octet counters above
    # 20 Mb/s, and such devices survive mostly at the edge, at 100 Mb/s and below.
    legacy = ~fiber & (speed <= 100 * M) & chance(rng, 0.2 * r.missing, n)
    rx_frame = log_uniform(rng, *r.frame_octets, n)
    tx_frame = log_uniform(rng, *r.frame_octets, n)
    busy = chance(rng, 0.1, n)
    rx_util = np.where(busy, rng.uniform(*r.busy_load, n), log_uniform(rng, *r.quiet_load, n))
    ratio = np.exp(rng.normal(0.0, r.asymmetry_sigma, n))
    # A backup target, a camera, a streaming server: one direction a hundred times the other.
    lopsided = chance(rng, 0.05 * r.nuisance, n)
    ratio = np.where(lopsided, log_uniform(rng, 30.0, 200.0, n) ** rng.choice([-1, 1], n), ratio)
    ratio = np.clip(ratio, 1e-3, 1e3)
    rx_fps = rx_util * speed / ((rx_frame + WIRE_OVERHEAD_OCTETS) * 8)
    tx_util = np.minimum(rx_fps * ratio * (tx_frame + WIRE_OVERHEAD_OCTETS) * 8 / speed, 0.97)
    # A steady multicast stream (video, a market feed) filling most of what a port receives:
    # the look-alike of a broadcast storm.
    stream = chance(rng, 0.03 * r.nuisance, n)
    rx_util = np.where(stream, rng.uniform(0.3, 0.95, n), rx_util)
    rx_frame = np.where(stream, rng.uniform(64, 1400, n), rx_frame)
    dt = np.round(log_uniform(rng, *r.windows, n))
    # Their pollers read them within the 32-bit octet counter's wrap time (5.7 minutes at
    # 100 Mb/s, RFC 2863 section 3.1.6), or they could not measure load at all.
    dt = np.where(legacy, np.minimum(dt, 300.0), dt)
    # A healthy link carries frames both ways, a few a second at the least (control
    # traffic, broadcasts, a live end's answers): a direction down to control frames alone,
    # under signs.SILENT_FPS, is a one-way link.
    least = rng.uniform(3.0, 10.0, n)
    rx_util = np.maximum(rx_util, least * (rx_frame + WIRE_OVERHEAD_OCTETS) * 8 / speed)
    tx_util = np.maximum(tx_util, least * (tx_frame + WIRE_OVERHEAD_OCTETS) * 8 / speed)
    filtering = ~busy & (rx_util < 0.55) & chance(rng, 0.3 * r.nuisance, n)
    mtu = choice(rng, ((1500, 80), (9000, 12), (9216, 8)), n)
    # Other receive errors in ifInErrors only beside an EtherLike table, which tells them
    # from FCS errors: without it no reading could.
    dot3 = ~chance(rng, 0.15 * r.missing, n)
    p = pd.DataFrame(
        {
            "label": "healthy",  # the base port; a verdict's signature relabels it
            "speed_bps": speed,
            "max_speed_bps": np.where(chance(rng, 0.12 * r.missing, n), np.nan, speed),
            "fiber": fiber.astype(float),
            "media_reported": ~chance(rng, 0.1 * r.missing, n),
            "half_duplex": 0.0,
            "duplex_reported": ~chance(rng, 0.15 * r.missing, n),
            "poe": np.where(fiber, 0.0, chance(rng, 0.4, n).astype(float)),
            "mtu": mtu,
            # Jumbo frames a jumbo-enabled port carries as it should: RMON counts them as
            # oversize all the same (RFC 2819: longer than 1518 octets).
            "jumbo_share": np.where(
                (mtu > 1500) & chance(rng, 0.5, n), rng.uniform(0.01, 0.5, n), 0.0
            ),
            "window_s": dt,
            "polls": np.where(chance(rng, 0.2, n), 3, 2),
            "rx_util": rx_util,
            "tx_util": tx_util,
            "rx_frame_octets": rx_frame,
            "tx_frame_octets": tx_frame,
            "rx_bcast_share": np.where(
                stream, rng.uniform(0.85, 0.99, n), rng.uniform(0.0, 0.1, n)
            ),
            # Of the frames that are not unicast, the share that is multicast (the rest is
            # broadcast).
            "rx_mcast_part": np.where(stream, 1.0, rng.uniform(0.3, 0.9, n)),
            "rx_ber": objective(speed, fiber) * log_uniform(rng, 1e-5, 0.3, n),
            # A touched plug or an ESD hit: an errored frame or two in a window, fewer than the
            # three a rate needs (measure.measures.MIN_ERROR_FRAMES); a re-seat's burst with
            # its down/up is judged by the intervals after it, which two polls do not show.
            "stray_errors": np.where(
                chance(rng, 0.2 * r.nuisance, n), rng.uniform(0.05, 0.25, n), 0.0
            ),
            "burst_errors": np.where(chance(rng, 0.03 * r.nuisance, n), 1.0, 0.0),
            "symbols_per_error": rng.uniform(0.5, 3.0, n),
            # 0: counted, 1: not reported, 2: reported but stuck at zero.
            "symbol_mode": choice(rng, ((0, 70), (1, 15 * r.missing), (2, 15 * r.missing)), n),
            "alignment_share": rng.uniform(0.0, 0.05, n),
            "extra_crc_ratio": 0.0,
            # Some devices count other receive errors in ifInErrors too.
            "in_errors_extra_ratio": np.where(
                dot3 & chance(rng, 0.1 * r.nuisance, n), log_uniform(rng, 1e-7, 1e-4, n), 0.0
            ),
            "runt_ratio": log_uniform(rng, 1e-10, 1e-8, n),
            "giant_ratio": 0.0,
            # A stray frame too long now and then (a misconfigured host's odd packet): a
            # few per window, whatever the load.
            "stray_giants": np.where(
                chance(rng, 0.05 * r.nuisance, n), rng.uniform(0.0, 4.0, n), 0.0
            ),
            "late_ratio": 0.0,
            "collision_ratio": 0.0,
            # ifInDiscards counts VLAN, STP and unknown-protocol filtering (RFC 2863).
            "in_discard_ratio": np.where(
                filtering, log_uniform(rng, 1e-6, 0.05 * r.nuisance, n), 0.0
            ),
            # Outbound discards: the stray microburst at low load, under one in 20,000 frames
            # sent; on a busy port a stray few (more, or more often, is congestion).
            "out_discard_ratio": np.where(
                chance(rng, 0.2 * r.nuisance, n) & (tx_util < 0.55),
                log_uniform(rng, 1e-9, 5e-5, n),
                0.0,
            ),
            "stray_out_discards": np.where(
                chance(rng, 0.2 * r.nuisance, n) & (tx_util >= 0.55),
                rng.uniform(0.0, 3.0, n),
                0.0,
            ),
            # One flap: a reboot of the far end or a re-patch.
            "link_changes": np.where(
                chance(rng, 0.05 * r.nuisance, n), 2.0 * rng.integers(1, 3, n), 0.0
            ),
            "reports_link_changes": ~chance(rng, 0.3 * r.missing, n),
            "hc": ~legacy,
            "dot3": dot3,
            "rmon": chance(rng, 0.5, n),
            "down": False,
            # A few pause frames now and then: flow control doing its job in a burst, holding
            # the transmitter off 2% of the time at most (a pause frame is at most 65,535
            # quanta of 512 bit times, IEEE 802.3 annex 31B).
            "in_pause_fps": np.where(
                chance(rng, 0.1 * r.nuisance, n),
                log_uniform(rng, 1e-5, 0.02, n) * speed / MAX_PAUSE_BITS,
                0.0,
            ),
            "module_max_speed_bps": np.nan,
            "neighbor_max_speed_bps": np.nan,
        }
    )
    optics(p, rng, r, rng.uniform(1.5, 14.0, n))
    fec(p, rng)
    return p


#: The FEC each fiber speed runs, as a format 1.2 ``fec_mode`` code (FEC_MODES order): RS(528,
#: 514) at 25G and 100G NRZ (clauses 108 and 91), RS(544,514) at 400G PAM4 (clause 119), no
#: FEC at 40G (clause 82 runs without one); slower speeds report none where they report.
FEC_BY_SPEED = {25 * G: 2.0, 100 * G: 2.0, 400 * G: 3.0, 40 * G: 0.0, 10 * G: 0.0}


def fec(p: pd.DataFrame, rng: Rng) -> None:
    """FEC mode and a low, steady corrected rate (a pre-FEC BER of 1e-10 to 2e-6, well
    under the high levels of measure.fec): the code doing the work it is there for."""
    n = len(p)
    speed = p["speed_bps"].to_numpy()
    fiber = p["fiber"].to_numpy() == 1.0
    mode = np.array([FEC_BY_SPEED.get(int(x), np.nan) for x in speed])
    p["fec_mode"] = np.where(fiber, mode, np.nan)
    p["pre_fec_ber"] = np.where(p["fec_mode"] > 0, log_uniform(rng, 1e-10, 2e-6, n), 0.0)
    p["fec_bits_reported"] = chance(rng, 0.6, n)
    p["fec_lost_ratio"] = 0.0


def by_design(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    """Speeds below the port's that are designs, not faults (SNAPSHOT-FORMAT 1.2): a 1 Gb/s
    module in a 10 Gb/s cage, and a 10 Gb/s copper port whose far end (a multigig access
    point) offers only 2.5 or 5 Gb/s."""
    n = len(p)
    speed = p["speed_bps"].to_numpy()
    fiber = p["fiber"].to_numpy() == 1.0
    module = fiber & (speed == 10 * G) & chance(rng, 0.06 * r.nuisance, n)
    p.loc[module, "speed_bps"] = float(G)
    p.loc[module, "max_speed_bps"] = 10.0 * G
    p.loc[module, "module_max_speed_bps"] = float(G)
    multigig = ~fiber & (speed == 10 * G) & chance(rng, 0.2 * r.nuisance, n)
    offered = rng.choice([2.5 * G, 5.0 * G], n)
    p.loc[multigig, "speed_bps"] = offered[multigig]
    p.loc[multigig, "max_speed_bps"] = 10.0 * G
    p.loc[multigig, "neighbor_max_speed_bps"] = offered[multigig]


def copper(p: pd.DataFrame, rng: Rng, speeds: Sequence[tuple[float, float]]) -> None:
    n = len(p)
    p["fiber"] = 0.0
    p["speed_bps"] = choice(rng, speeds, n)
    p["max_speed_bps"] = np.where(np.isnan(p["max_speed_bps"]), np.nan, p["speed_bps"])
    p["dom"] = False
    p["rx_margin_db"] = np.nan
    p["rx_alarm_dbm"] = np.nan
    p["tx_power_dbm"] = np.nan
    p["poe"] = chance(rng, 0.4, n).astype(float)
    p["hc"] = p["hc"] | (p["speed_bps"] > G)


def fault_ber(p: pd.DataFrame, rng: Rng, r: Ranges) -> np.ndarray:
    """Bit error ratios from the detection limit upwards, as frame error ratios go."""
    n = len(p)
    speed, fiber = p["speed_bps"].to_numpy(), p["fiber"].to_numpy()
    ber = objective(speed, fiber) * log_uniform(rng, *r.fault_times_objective, n)
    bits = p["rx_frame_octets"].to_numpy() * 8
    fer = at_least(
        -np.expm1(bits * np.log1p(-np.minimum(ber, 0.01))), r.min_events, frames(p, "rx")
    )
    fault: np.ndarray = -np.expm1(np.log1p(-fer) / bits)
    return fault


def optics_for(p: pd.DataFrame, rows: np.ndarray, rng: Rng, r: Ranges) -> None:
    """Healthy transceiver readings for ``rows`` made fiber after sampling."""
    k = int(rows.sum())
    if k == 0:
        return
    part = p.loc[rows].copy()
    optics(part, rng, r, rng.uniform(1.5, 12.0, k))
    for key in ("dom", "thresholds", "rx_alarm_dbm", "warn_offset_db", "rx_margin_db",
                "tx_power_dbm", "tx_alarm_dbm", "temperature_c", "bias_ma"):  # fmt: skip
        p.loc[rows, key] = part[key].to_numpy()


#: Typical parameters of a gigabit copper desk port and of a 10G fiber uplink, for ports
#: planted in the demo network.
COPPER_1G: dict[str, float | bool] = {
    "fiber": 0.0,
    "speed_bps": G,
    "max_speed_bps": G,
    "hc": True,
    "dot3": True,
    "media_reported": True,
    "duplex_reported": True,
    "fec_mode": np.nan,  # no FEC on copper at 1 Gb/s
    "pre_fec_ber": 0.0,
}
FIBER_10G: dict[str, float | bool] = {
    "fiber": 1.0,
    "speed_bps": 10 * G,
    "max_speed_bps": 10 * G,
    "poe": 0.0,
    "hc": True,
    "dot3": True,
    "media_reported": True,
    "duplex_reported": True,
    "fec_mode": 0.0,  # 10GBASE-R runs without FEC
    "pre_fec_ber": 0.0,
    "rx_alarm_dbm": -14.4,
}
