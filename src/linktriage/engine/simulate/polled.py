"""Simulated ports read as a poller reads them: cumulative counters at two or three polls
(the training prior), or growing with time at their mean rates (the demo network).

Counter32 values are kept modulo 2^32 and Counter64 modulo 2^64, from random starting
values; counter groups a device does not report are left out rather than zeroed.
``ifInErrors`` is the sum of the dot3 receive errors and ``ifOutErrors`` includes late and
excessive collisions (RFC 3635 section 3.2.10); symbol errors do not count at 10 Mb/s and
collisions do not count in full duplex (RFC 3635 object definitions). Optical powers are
reported as SFF-8472 words of 0.1 uW, so they carry its rounding.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.counters import (
    COLUMN_INDEX,
    COLUMNS,
    QUANTITIES,
    WIRE_OVERHEAD_OCTETS,
)
from linktriage.engine.format.optics import sff8472_power_dbm, sff8472_power_raw
from linktriage.engine.format.poll_table import POE_DETECTIONS, PollTable
from linktriage.engine.simulate.ports import DEFAULT_START, M, Rng

if TYPE_CHECKING:
    import pandas as pd


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
    """A parameter column, or its default where an older caller's parameters lack it, or
    a row was never given it (a column planted on some ports only is NaN elsewhere)."""
    if key in p:
        values = p[key].to_numpy()
        unset = values != values  # NaN
        return np.where(unset, default, values) if unset.any() else values
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
            _column(p, "poe", 0.0, n) == 1.0,
            _column(p, "fec_mode", np.nan, n).astype(float) > 0,
            _column(p, "fec_bits_reported", False, n).astype(bool),
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
        last_change: np.ndarray | None = None,
    ) -> PollTable:
        """The poll table when each quantity has grown by ``steps`` since the start;
        ``last_change`` is when each port last changed state (NaN: not said)."""
        n = len(p)
        counters = np.zeros((n, len(COLUMNS)), np.uint64)
        for q in SIMULATED:
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
        admin_down = _column(p, "admin_down", False, n).astype(bool)
        disabled = _column(p, "disabled", False, n).astype(bool) & down
        media_known = _column(p, "media_reported", True, n).astype(bool)
        duplex_known = _column(p, "duplex_reported", True, n).astype(bool)
        return PollTable.from_columns(
            device=np.asarray(device, dtype=object),
            port=np.asarray(port, dtype=object),
            time=time,
            oper_status=np.where(down | admin_down, "down", "up").astype(object),
            state={
                "speed_bps": p["speed_bps"].to_numpy(np.float64),
                "max_speed_bps": p["max_speed_bps"].to_numpy(np.float64),
                "mtu": p["mtu"].to_numpy(np.float64),
                "link_changes": np.where(p["reports_link_changes"], links, np.nan),
                "discontinuity": self.discontinuity if discontinuity is None else discontinuity,
                "last_change": np.full(n, np.nan) if last_change is None else last_change,
                "half_duplex": np.where(
                    duplex_known, p["half_duplex"].to_numpy(np.float64), np.nan
                ),
                "fiber": np.where(media_known, p["fiber"].to_numpy(np.float64), np.nan),
                "poe": p["poe"].to_numpy(np.float64),
                "admin_down": admin_down.astype(np.float64),
                "fec_mode": _column(p, "fec_mode", np.nan, n).astype(np.float64),
                "module_max_speed_bps": _column(p, "module_max_speed_bps", np.nan, n).astype(
                    np.float64
                ),
                "neighbor_max_speed_bps": _column(p, "neighbor_max_speed_bps", np.nan, n).astype(
                    np.float64
                ),
                **_poe_status(p, down | admin_down),
            },
            optics=_optics_readings(p, rng),
            counters=counters,
            present=self.reported.copy(),
            extra={"disabled_reason": [DISABLED_REASON if d else None for d in disabled]},
        )


def _poe_status(p: pd.DataFrame, down: np.ndarray) -> dict[str, np.ndarray]:
    """RFC 3621 state of PoE ports: delivering power to a class 2 to 4 device while up,
    searching while down, a fault where the port has one; NaN where the port gives none."""
    n = len(p)
    poe = _column(p, "poe", 0.0, n) == 1.0
    fault = _column(p, "poe_fault", False, n).astype(bool)
    detection = np.where(
        fault,
        POE_DETECTIONS.index("fault"),
        np.where(down, POE_DETECTIONS.index("searching"), POE_DETECTIONS.index("deliveringPower")),
    ).astype(np.float64)
    power_class = np.where(fault, 4.0, 2.0 + (np.arange(n) % 3))
    delivering = detection == POE_DETECTIONS.index("deliveringPower")
    watts = np.where(delivering, 2.0 + 3.0 * power_class, 0.0)
    return {
        "poe_detection": np.where(poe, detection, np.nan),
        "poe_class": np.where(poe & (delivering | fault), power_class, np.nan),
        "poe_power_w": np.where(poe, watts, np.nan),
    }


#: The counters the simulator draws: every one of the catalogue (Power over Ethernet's on PoE
#: ports, pause frames beside the EtherLike table, FEC's on ports that run FEC).
SIMULATED = QUANTITIES
#: The device's words for a port it shut itself, in the simulated network (invented).
DISABLED_REASON = "bpdu guard: spanning-tree frame on an edge port"


def _reported_columns(
    hc: np.ndarray,
    dot3: np.ndarray,
    rmon: np.ndarray,
    symbol_mode: np.ndarray,
    poe: np.ndarray,
    fec: np.ndarray,
    fec_bits: np.ndarray,
) -> np.ndarray:
    """Which counter names each simulated device reports."""
    n = len(hc)
    present = np.zeros((n, len(COLUMNS)), np.bool_)
    simulated = {name for q in SIMULATED for name in (q.hc, q.c32)}
    for j, c in enumerate(COLUMNS):
        if c.name not in simulated:
            continue
        if c.name.startswith("dot3HC"):
            continue  # the dot3 HC table is rare in the field
        if c.name.startswith("pethPse"):
            present[:, j] = poe
        elif c.name in ("dot3InPauseFrames", "dot3OutPauseFrames"):
            present[:, j] = dot3
        elif c.name in ("aFECCorrectedBlocks", "aFECUncorrectableBlocks"):
            present[:, j] = fec
        elif c.name == "FECCorrectedBits":
            present[:, j] = fec & fec_bits
        elif c.name == "dot3StatsSymbolErrors":
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
        onset = self.onset[rows]
        down = p["down"].to_numpy(np.bool_) & (when >= onset)  # up until it went down
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
            down=down,
            link_changes=self.flaps_before[rows] * before_s + self.flaps_per_s[rows] * after_s,
            # A port that went down at its onset says so, as ifLastChange would (RFC 2863).
            last_change=np.where(down & (onset > self.epoch), onset, np.nan),
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
    mcast_part = np.clip(_column(p, "rx_mcast_part", 0.5, n).astype(float), 0.0, 1.0)
    speed_bits = speed * dt
    corrected = draw.poisson(speed_bits * _column(p, "pre_fec_ber", 0.0, n).astype(float))
    fec_mode = _column(p, "fec_mode", np.nan, n).astype(float)
    carried = np.where(fec_mode > 0, speed_bits / 5140.0, 0.0)
    mcast_out = draw.uniform(0.005, 0.05, n)
    return {
        "in_octets": rx_pkts * p["rx_frame_octets"].to_numpy(),
        "out_octets": tx_pkts * p["tx_frame_octets"].to_numpy(),
        "in_ucast": rx_pkts * (1 - nonunicast_in),
        "in_mcast": rx_pkts * nonunicast_in * mcast_part,
        "in_bcast": rx_pkts * nonunicast_in * (1.0 - mcast_part),
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
        # RFC 3621 counters, on PoE ports: a port with a power fault trips its short-circuit
        # protection as it retries, about twice a minute (drawn without the generator, so the
        # ports of format 1.1 draw as before).
        "poe_mps_absent": np.zeros(n),
        "poe_invalid_signature": np.zeros(n),
        "poe_power_denied": np.zeros(n),
        "poe_overload": np.zeros(n),
        "poe_short": _column(p, "poe_fault", False, n).astype(float) * dt / 30.0,
        # Pause frames received (IEEE 802.3 annex 31B), and FEC (IEEE 802.3 clause 30):
        # corrected bits at the port's pre-FEC bit error ratio, each corrected codeword
        # holding a bit or two, and the codewords lost.
        "in_pause": np.floor(_column(p, "in_pause_fps", 0.0, n).astype(float) * dt),
        "out_pause": np.zeros(n),
        "fec_corrected_bits": corrected,
        # at most every codeword carried
        "fec_corrected_blocks": np.minimum(np.floor(corrected / 1.3), np.floor(carried)),
        "fec_uncorrectable_blocks": draw.poisson(
            carried * _column(p, "fec_lost_ratio", 0.0, n).astype(float)
        ),
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
    high_alarm = alarm + _column(p, "rx_span_db", 17.0, n).astype(np.float64)
    return {
        "rx_power_dbm": _as_reported(np.where(has, alarm + margin, nan)),
        "rx_power_low_alarm_dbm": np.where(thresholds, alarm, nan),
        "rx_power_low_warn_dbm": np.where(thresholds, alarm + warn_offset, nan),
        "tx_power_dbm": _as_reported(np.where(has, p["tx_power_dbm"].to_numpy(np.float64), nan)),
        "tx_power_low_alarm_dbm": np.where(thresholds, tx_alarm, nan),
        "temperature_c": np.where(has, _column(p, "temperature_c", 40.0, n), nan),
        "bias_ma": np.where(has, _column(p, "bias_ma", 20.0, n), nan),
        "rx_power_high_alarm_dbm": np.where(thresholds, high_alarm, nan),
        "rx_power_high_warn_dbm": np.where(
            thresholds, high_alarm - _column(p, "high_warn_gap_db", 2.0, n).astype(float), nan
        ),
        "bias_high_alarm_ma": np.where(thresholds, _column(p, "bias_high_alarm_ma", 50.0, n), nan),
        "bias_low_alarm_ma": np.where(thresholds, _column(p, "bias_low_alarm_ma", 2.0, n), nan),
    }
