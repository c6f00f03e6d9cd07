"""A physics-based simulator of Ethernet ports in each verdict class.

It is the training prior of the tree and the network behind the demo. Each port is first
described by *parameters* (one row of a DataFrame: speed, medium, load, frame sizes, bit
error ratio, collision and discard ratios, optical margin, which counters the device has),
drawn per class from the fault signatures of the trade; then :func:`render_polls` turns
parameters into cumulative counters at two or three polls, exactly as a poller would read
them: Counter32 values modulo 2^32, Counter64 modulo 2^64, random starting values, missing
counter groups left out rather than zeroed.

Physics used:

* Frames per second from utilisation and mean frame size, with 20 octets of preamble and
  inter-frame gap per frame on the wire (IEEE 802.3 clause 4.4.2).
* Frame error ratio from bit error ratio: ``FER = 1 - (1 - BER)^bits`` (bits independent).
* ``ifInErrors`` is the sum of the dot3 receive errors and ``ifOutErrors`` includes late and
  excessive collisions (RFC 3635 section 3.2.10); symbol errors do not count at 10 Mb/s and
  collisions do not count in full duplex (RFC 3635 object definitions).
* Duplex mismatch: the half-duplex end sees late collisions growing with the load the
  full-duplex end sends; the full-duplex end sees FCS errors and runts growing with the
  load it sends itself (the half-duplex end aborts and jams).
* Optic degradation: bit error ratio climbs steeply as received power approaches the
  receiver's sensitivity (a steep BER-vs-power curve; the slope here is illustrative).
  Optical powers are reported as SFF-8472 words of 0.1 uW, so they carry its rounding.

Nuisances make the prior honest: stray errors on healthy ports, devices without EtherLike
or RMON counters, Counter32-only devices, unknown maximum speed, transceivers without
diagnostics, healthy ports near line rate without discards, varied speeds, frame sizes and
windows.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from linktriage.counters import COLUMN_INDEX, COLUMNS, QUANTITIES, WIRE_OVERHEAD_OCTETS
from linktriage.optics import sff8472_power_dbm, sff8472_power_raw
from linktriage.polls import PollTable
from linktriage.verdicts import TREE_VERDICTS, Verdict

M = 1_000_000
G = 1_000_000_000
#: 2026-03-02T08:00:00Z, the epoch of simulated polls unless told otherwise.
DEFAULT_START = 1_772_438_400.0

Rng = np.random.Generator


def _log_uniform(rng: Rng, low: float, high: float, n: int) -> np.ndarray:
    return np.exp(rng.uniform(np.log(low), np.log(high), n))


def _choice(rng: Rng, values: Sequence[float], weights: Sequence[float], n: int) -> np.ndarray:
    w = np.asarray(weights, np.float64)
    return rng.choice(np.asarray(values, np.float64), size=n, p=w / w.sum())


def _base(n: int, rng: Rng) -> pd.DataFrame:
    """Healthy ports of every kind: the starting point every class then changes."""
    fiber = rng.random(n) < 0.3
    copper_speed = _choice(rng, [10 * M, 100 * M, G, 10 * G], [3, 17, 65, 15], n)
    fiber_speed = _choice(rng, [G, 10 * G, 25 * G, 40 * G, 100 * G], [35, 40, 10, 5, 10], n)
    speed = np.where(fiber, fiber_speed, copper_speed)
    legacy = ~fiber & (speed <= G) & (rng.random(n) < 0.15)
    rx_frame = rng.uniform(90, 1400, n)
    tx_frame = rng.uniform(90, 1400, n)
    busy = rng.random(n) < 0.1
    rx_util = np.where(busy, rng.uniform(0.7, 0.95, n), _log_uniform(rng, 2e-4, 0.6, n))
    frames_ratio = np.clip(np.exp(rng.normal(0.0, 0.8, n)), 0.05, 20.0)
    rx_fps = rx_util * speed / ((rx_frame + WIRE_OVERHEAD_OCTETS) * 8)
    tx_util = np.minimum(
        rx_fps * frames_ratio * (tx_frame + WIRE_OVERHEAD_OCTETS) * 8 / speed, 0.95
    )
    dt = _choice(rng, [60, 120, 300, 600, 900, 1800, 3600], [5, 5, 50, 15, 10, 10, 5], n)
    dom = fiber & (rng.random(n) < 0.9)
    rx_alarm = rng.uniform(-20.0, -12.0, n)
    flapped = (dt >= 900) & (rng.random(n) < 0.03)
    return pd.DataFrame(
        {
            "label": Verdict.HEALTHY.value,
            "speed_bps": speed,
            "max_speed_bps": np.where(rng.random(n) < 0.85, speed, np.nan),
            "fiber": fiber.astype(float),
            "half_duplex": 0.0,
            "poe": np.where(fiber, 0.0, (rng.random(n) < 0.4).astype(float)),
            "mtu": _choice(rng, [1500, 9000, 9216], [80, 12, 8], n),
            "window_s": dt,
            "polls": np.where(rng.random(n) < 0.2, 3, 2),
            "rx_util": rx_util,
            "tx_util": tx_util,
            "rx_frame_octets": rx_frame,
            "tx_frame_octets": tx_frame,
            "rx_ber": _log_uniform(rng, 1e-16, 3e-13, n),
            # A re-seated cord or one burst of interference: a few errors in any window.
            "stray_errors": np.where(rng.random(n) < 0.2, rng.uniform(0.2, 3.0, n), 0.0),
            "symbols_per_error": rng.uniform(0.5, 3.0, n),
            "alignment_share": rng.uniform(0.0, 0.05, n),
            "extra_crc_ratio": 0.0,
            "runt_ratio": _log_uniform(rng, 1e-9, 1e-7, n),
            "giant_ratio": 0.0,
            "late_ratio": 0.0,
            "collision_ratio": 0.0,
            "in_discard_ratio": np.where(
                rng.random(n) < 0.2, _log_uniform(rng, 1e-9, 3e-6, n), 0.0
            ),
            "out_discard_ratio": np.where(
                ~busy & (rng.random(n) < 0.3), _log_uniform(rng, 1e-9, 5e-6, n), 0.0
            ),
            "link_changes": np.where(flapped, 2.0, 0.0),
            "rx_margin_db": np.where(dom, rng.uniform(2.5, 12.0, n), np.nan),
            "rx_alarm_dbm": np.where(dom, rx_alarm, np.nan),
            "tx_power_dbm": np.where(dom, rng.uniform(-6.0, -1.0, n), np.nan),
            "hc": ~legacy,
            "dot3": rng.random(n) < 0.85,
            "rmon": rng.random(n) < 0.5,
            "reports_link_changes": rng.random(n) < 0.7,
            "down": False,
        }
    )


def _copper(p: pd.DataFrame, rng: Rng, speeds: Sequence[float], weights: Sequence[float]) -> None:
    n = len(p)
    p["fiber"] = 0.0
    p["speed_bps"] = _choice(rng, speeds, weights, n)
    p["max_speed_bps"] = p["speed_bps"]
    p["rx_margin_db"] = np.nan
    p["rx_alarm_dbm"] = np.nan
    p["tx_power_dbm"] = np.nan
    p["poe"] = (rng.random(n) < 0.4).astype(float)
    p["hc"] = p["hc"] | (p["speed_bps"] > G)


def _cable_fault(p: pd.DataFrame, rng: Rng) -> None:
    n = len(p)
    _copper(p, rng, [100 * M, G, 10 * G], [20, 70, 10])
    fer = _log_uniform(rng, 3e-5, 5e-2, n)
    p["rx_ber"] = -np.log1p(-fer) / (p["rx_frame_octets"] * 8)
    p["alignment_share"] = rng.uniform(0.0, 0.08, n)
    p["runt_ratio"] = fer * rng.uniform(0.0, 0.15, n)
    downshift = (p["speed_bps"] == G) & (rng.random(n) < 0.35)
    p.loc[downshift, "speed_bps"] = 100 * M
    flapping = rng.random(n) < 0.4
    p["link_changes"] = np.where(flapping, 2 * rng.integers(1, 15, n), 0).astype(float)


def _duplex_mismatch(p: pd.DataFrame, rng: Rng) -> None:
    n = len(p)
    _copper(p, rng, [10 * M, 100 * M, G], [15, 75, 10])
    p["max_speed_bps"] = np.where(rng.random(n) < 0.5, G, p["speed_bps"])
    p["max_speed_bps"] = np.maximum(p["max_speed_bps"], p["speed_bps"])
    p["rx_util"] = _log_uniform(rng, 3e-3, 0.5, n)
    p["tx_util"] = _log_uniform(rng, 3e-3, 0.5, n)
    half_end = rng.random(n) < 0.5
    strength = _log_uniform(rng, 0.05, 0.6, n)
    p["half_duplex"] = half_end.astype(float)
    # Half-duplex end: the peer transmits regardless, so collisions follow the receive load.
    p["late_ratio"] = np.where(half_end, strength * p["rx_util"], 0.0)
    p["collision_ratio"] = np.where(half_end, p["late_ratio"] * rng.uniform(1.5, 5.0, n), 0.0)
    # Full-duplex end: the half end aborts our frames, so errors follow our transmit load.
    crc = np.where(half_end, 0.05, 1.0) * strength * p["tx_util"]
    p["extra_crc_ratio"] = crc
    p["runt_ratio"] = np.where(half_end, 0.0, crc * rng.uniform(0.5, 3.0, n))
    p["symbols_per_error"] = 0.0  # a clean signal: the damage is in the MAC, not the PHY
    p["rx_ber"] = _log_uniform(rng, 1e-16, 3e-13, n)


def _negotiation_degraded(p: pd.DataFrame, rng: Rng) -> None:
    n = len(p)
    _copper(p, rng, [10 * M, 100 * M], [20, 80])
    half = rng.random(n) < 0.3
    # Slow links: a gigabit copper port at 10 or 100 Mb/s, or a 10G optic port at 1 Gb/s.
    p["max_speed_bps"] = np.where(half & (rng.random(n) < 0.5), p["speed_bps"], G)
    optic = ~half & (rng.random(n) < 0.15)
    k = int(optic.sum())
    p.loc[optic, ["fiber", "speed_bps", "max_speed_bps", "poe"]] = [1.0, G, 10 * G, 0.0]
    p.loc[optic, "rx_margin_db"] = rng.uniform(3.0, 10.0, k)
    p.loc[optic, "rx_alarm_dbm"] = rng.uniform(-20.0, -12.0, k)
    p.loc[optic, "tx_power_dbm"] = rng.uniform(-6.0, -1.0, k)
    p["half_duplex"] = half.astype(float)
    # Both ends half duplex: ordinary (early) collisions growing with load, no late ones.
    p["collision_ratio"] = np.where(half, _log_uniform(rng, 0.02, 0.3, n) * p["rx_util"], 0.0)


def _mtu_mismatch(p: pd.DataFrame, rng: Rng) -> None:
    n = len(p)
    p["giant_ratio"] = _log_uniform(rng, 1e-4, 0.3, n)
    p["mtu"] = _choice(rng, [1500, 9000], [85, 15], n)


def _optic_degraded(p: pd.DataFrame, rng: Rng) -> None:
    n = len(p)
    p["fiber"] = 1.0
    p["poe"] = 0.0
    p["speed_bps"] = _choice(rng, [G, 10 * G, 25 * G, 100 * G], [35, 45, 10, 10], n)
    p["max_speed_bps"] = np.where(rng.random(n) < 0.85, p["speed_bps"], np.nan)
    p["hc"] = True
    margin = rng.uniform(-4.0, 1.5, n)
    p["rx_margin_db"] = np.where(rng.random(n) < 0.97, margin, np.nan)
    p["rx_alarm_dbm"] = rng.uniform(-20.0, -12.0, n)
    p["tx_power_dbm"] = np.where(rng.random(n) < 0.3, rng.uniform(-10.0, -7.0, n), -3.0)
    log_ber = -12.0 + 1.6 * (1.5 - margin) + rng.normal(0.0, 0.5, n)
    p["rx_ber"] = 10.0 ** np.minimum(log_ber, -3.0)
    p["symbols_per_error"] = rng.uniform(0.5, 2.0, n)
    flapping = (margin < -2.0) & (rng.random(n) < 0.2)
    p["link_changes"] = np.where(flapping, 2 * rng.integers(1, 6, n), 0).astype(float)


def _unidirectional(p: pd.DataFrame, rng: Rng) -> None:
    n = len(p)
    busy = _log_uniform(rng, 2e-3, 0.6, n)
    quiet = np.where(rng.random(n) < 0.4, 0.0, _log_uniform(rng, 1e-8, 1e-4, n) * busy)
    rx_quiet = rng.random(n) < 0.5
    p["rx_util"] = np.where(rx_quiet, quiet, busy)
    p["tx_util"] = np.where(rx_quiet, busy, quiet)


def _congestion(p: pd.DataFrame, rng: Rng) -> None:
    n = len(p)
    inbound = rng.random(n) < 0.25
    hot = rng.uniform(0.8, 0.98, n)
    drop = _log_uniform(rng, 1e-4, 5e-2, n)
    big = rng.uniform(400, 1450, n)
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
    p["out_discard_ratio"] = np.where(inbound, p["out_discard_ratio"], drop)
    p["in_discard_ratio"] = np.where(inbound, drop, p["in_discard_ratio"])


_CLASS_SHAPERS: dict[Verdict, Callable[[pd.DataFrame, Rng], None]] = {
    Verdict.HEALTHY: lambda p, rng: None,
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


def sample_parameters(labels: Sequence[Verdict], rng: Rng) -> pd.DataFrame:
    """Port parameters for the given classes, one row each, in the order given."""
    labels_a = np.asarray([Verdict(v).value for v in labels], dtype=object)
    parts = []
    for verdict in TREE_VERDICTS:
        rows = np.flatnonzero(labels_a == verdict.value)
        if len(rows) == 0:
            continue
        p = _base(len(rows), rng)
        _CLASS_SHAPERS[verdict](p, rng)
        p["label"] = verdict.value
        p.index = rows
        parts.append(p)
    return pd.concat(parts).sort_index() if parts else _base(0, rng)


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
            p["hc"].to_numpy(np.bool_), p["dot3"].to_numpy(np.bool_), p["rmon"].to_numpy(np.bool_)
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
        links = self.link_changes + np.floor(link_changes)
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
                "half_duplex": p["half_duplex"].to_numpy(np.float64),
                "fiber": p["fiber"].to_numpy(np.float64),
                "poe": p["poe"].to_numpy(np.float64),
            },
            optics=_optics(p, rng),
            counters=counters,
            present=self.reported.copy(),
        )


def _reported_columns(hc: np.ndarray, dot3: np.ndarray, rmon: np.ndarray) -> np.ndarray:
    """Which counter names each simulated device reports."""
    n = len(hc)
    present = np.zeros((n, len(COLUMNS)), np.bool_)
    for j, c in enumerate(COLUMNS):
        if c.name.startswith("dot3HC"):
            continue  # the dot3 HC table is rare in the field
        if c.name.startswith("dot3"):
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
    read) and ``down`` (the link is down).
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
        reference = 1e6  # rates from a long window, so that rounding down costs nothing
        counts = window_counts(self.params, Expect(), np.full(n, reference))
        self.rates = {key: value / reference for key, value in counts.items()}
        self.flaps_per_s = (
            self.params["link_changes"].to_numpy() / self.params["window_s"].to_numpy()
        )

    def __len__(self) -> int:
        return len(self.params)

    def at(self, rows: np.ndarray, when: float) -> PollTable:
        """The counters of ``rows`` read at ``when``."""
        p = self.params.iloc[rows].reset_index(drop=True)
        elapsed = when - self.epoch
        cleared = p["cleared"].to_numpy(np.bool_)
        steps = {k: np.where(cleared, 0.0, v[rows] * elapsed) for k, v in self.rates.items()}
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
            link_changes=self.flaps_per_s[rows] * elapsed,
        )


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
    crc = draw.binomial(rx_pkts, fer) + draw.poisson(p["stray_errors"].to_numpy())
    alignment = draw.binomial(crc, p["alignment_share"].to_numpy())
    fcs = crc - alignment
    ten_meg = speed <= 10 * M  # symbol errors do not increment at 10 Mb/s (RFC 3635)
    symbols = np.where(ten_meg, 0.0, draw.poisson(crc * p["symbols_per_error"].to_numpy()))
    giants = draw.poisson(rx_pkts * p["giant_ratio"].to_numpy())
    fragments = draw.poisson(rx_pkts * p["runt_ratio"].to_numpy())
    undersize = draw.poisson(rx_pkts * 1e-9)
    in_disc = draw.poisson(rx_pkts * p["in_discard_ratio"].to_numpy())
    out_disc = draw.poisson(tx_pkts * p["out_discard_ratio"].to_numpy())
    late = draw.poisson(tx_pkts * p["late_ratio"].to_numpy())
    coll = draw.poisson(tx_pkts * p["collision_ratio"].to_numpy())
    single = draw.binomial(coll, np.full(n, 0.7))
    excessive = draw.binomial(coll - single, np.full(n, 0.02))
    multiple = coll - single - excessive
    mcast_in = draw.uniform(0.005, 0.05, n)
    mcast_out = draw.uniform(0.005, 0.05, n)
    return {
        "in_octets": rx_pkts * p["rx_frame_octets"].to_numpy(),
        "out_octets": tx_pkts * p["tx_frame_octets"].to_numpy(),
        "in_ucast": rx_pkts * (1 - 2 * mcast_in),
        "in_mcast": rx_pkts * mcast_in,
        "in_bcast": rx_pkts * mcast_in,
        "out_ucast": tx_pkts * (1 - 2 * mcast_out),
        "out_mcast": tx_pkts * mcast_out,
        "out_bcast": tx_pkts * mcast_out,
        # RFC 3635 section 3.2.10: ifInErrors sums alignment, FCS, too-long and MAC errors.
        "in_errors": alignment + fcs + giants,
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
        "oversize": np.zeros(n),
        "jabbers": np.zeros(n),
    }


def _as_reported(dbm: np.ndarray) -> np.ndarray:
    """A power in dBm as a module reports it: an SFF-8472 word of 0.1 uW, read back."""
    reported = sff8472_power_dbm(sff8472_power_raw(dbm)).round(2)
    return np.where(np.isnan(dbm), np.nan, reported)


def _optics(p: pd.DataFrame, rng: Rng) -> dict[str, np.ndarray]:
    """Transceiver readings for fiber ports with diagnostics; NaN elsewhere."""
    alarm = p["rx_alarm_dbm"].to_numpy(np.float64)
    margin = p["rx_margin_db"].to_numpy(np.float64)
    has = ~np.isnan(alarm) & ~np.isnan(margin)
    n = len(p)
    nan = np.full(n, np.nan)
    return {
        "rx_power_dbm": _as_reported(np.where(has, alarm + margin, nan)),
        "rx_power_low_alarm_dbm": np.where(has, alarm, nan),
        "rx_power_low_warn_dbm": np.where(has, alarm + rng.uniform(1.0, 3.0, n), nan),
        "tx_power_dbm": _as_reported(np.where(has, p["tx_power_dbm"].to_numpy(np.float64), nan)),
        "tx_power_low_alarm_dbm": np.where(has, -11.0, nan),
        "temperature_c": np.where(has, rng.uniform(25.0, 55.0, n), nan),
        "bias_ma": np.where(has, rng.uniform(5.0, 40.0, n), nan),
    }


def simulate_prior(n: int, rng: Rng) -> tuple[PollTable, np.ndarray]:
    """``n`` simulated ports in the prior's class mix: their polls and their true classes."""
    labels = sample_mix(n, rng)
    params = sample_parameters(labels, rng)
    names = [f"sim{i // 48:05d}" for i in range(n)]
    ports = [f"port{i % 48 + 1}" for i in range(n)]
    polls = render_polls(params, rng, device=names, port=ports)
    return polls, params["label"].to_numpy(dtype=object)
