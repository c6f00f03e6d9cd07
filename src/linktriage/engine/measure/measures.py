"""What a window measured on each port, in an engineer's units: frames, rates, error bounds, light.

One row per port, numbers only; the physics rules (:mod:`linktriage.engine.physics`), the
tree's inputs (:mod:`linktriage.engine.model.features`) and each verdict's evidence (its
module under :mod:`linktriage.engine.verdicts`) are all read off this table, so each speaks
of the same quantities.

Denominators follow RFC 3635 section 3.2.5: ``ifInDiscards`` and errored frames are not in
``ifIn*Pkts``, so frames seen on receive are packets + discards + errors, while
``ifOutDiscards`` and ``ifOutErrors`` are already inside ``ifOut*Pkts`` (RFC 2863
ifOutUcastPkts: "including those that were discarded or not sent").

Receive errors are judged against received frames only. Which counter measures them, in
order of preference: ``dot3StatsFCSErrors`` + ``dot3StatsAlignmentErrors`` (exactly the
frames that failed the FCS check, RFC 3635); else ``ifInErrors`` less the frames too long
(``ifInErrors`` also sums too-long and MAC receive errors, RFC 3635 section 3.2.10, and on
some devices other errors: an upper estimate). Symbol errors are shown, never relied on:
many devices report them as a constant zero or not at all.

A counter that grew by more than the frames its direction carried is a counter fault, not
evidence: it is left out (NaN) and named in the port's note.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.counters import (
    MAX_UNTAGGED_FRAME_OCTETS,
    MIN_FRAME_OCTETS,
    QUANTITIES,
)
from linktriage.engine.format.poll_table import FloatArray
from linktriage.engine.measure.columns import Columns
from linktriage.engine.measure.fec import UNCORRECTABLE_SHARE, codewords, high_pre_fec_ber
from linktriage.engine.measure.phy import (
    HALF_DUPLEX_MAX_BPS,
    MAX_PAUSE_BITS,
    RX_SENSITIVITY_DBM,
    estimate_ber,
    frame_error_ratio,
    max_rx_dbm,
    objective_for,
)
from linktriage.engine.measure.window import WindowTable

#: Upper case temperature of commercial-grade transceivers, 0 to 70 degrees C (common
#: practice, from memory: SFF-8472 reports the temperature, the module's data sheet sets it);
#: where a module reports its own high alarm (format 1.2), that is the line.
HOT_C = 70.0

BoolArray = npt.NDArray[np.bool_]

#: One-sided confidence of the bounds an answer shows on a ratio (the rule of three's).
CONFIDENCE = 0.95
#: Level of the significance tests that make a rate evidence: a one-sided exact binomial
#: test (Clopper-Pearson), at 99%, of the measured ratio against the level that matters.
TEST_CONFIDENCE = 0.99
#: Errors are evidence of a fault where the test shows the bit error ratio over the PHY's
#: IEEE 802.3 objective and it measures at least this many times the objective: a link
#: meeting its objective shows a few errored frames by chance, and one running a few times
#: over it is marginal, not a cable to replace (common practice). Three errored frames
#: among 2.5 million at 1 Gb/s do not pass; 19 among 1.2 million do (20 times 1e-10).
FAULT_TIMES_OBJECTIVE = 10.0
#: The test counts errored frames as if each were its own event, but errors come in bursts
#: (a touched plug, an ESD hit): one or two errored frames are an event, not a rate, however
#: few frames they are among (common practice).
MIN_ERROR_FRAMES = 3
#: Output discards above this share of the frames sent, by the same test, are bursts the
#: egress buffer cannot absorb at whatever average load (SNAPSHOT-FORMAT 1.2 congestion); a
#: few per million are the stray microburst of any busy port (common practice: 1 in 10,000).
BURST_DISCARD_SHARE = 1e-4
#: Errors of the device itself (ifInErrors and ifOutErrors beyond their RFC 3635 parts) are
#: said from this share of the frames of their direction up, by the same test (common
#: practice: as for discards, 1 in 10,000).
DEVICE_ERROR_SHARE = 1e-4
#: Fewest events (runts, frames too long, discards in a direction at high load) that make
#: evidence where there is no objective to test against: a handful is a re-seated cord or
#: one burst of noise (common practice).
MIN_EVENTS = 20
#: Fewest collisions (late or not) that show a port runs half duplex: the collision counters
#: do not increment in full duplex (RFC 3635), so a few are enough; three, so that one
#: miscounted event does not decide.
MIN_COLLISIONS = 3
#: A clean port is judged once its frames bound the error ratio below the ratio at which
#: the bit error ratio would be this many times the PHY's objective (a fault that loses one
#: frame in tens of thousands or more: 400,000 acknowledgement-sized frames are enough at
#: 10 Gb/s)...
RESOLUTION_TIMES_OBJECTIVE = 3e4
#: ... or below this frame error ratio, whichever is smaller: one errored frame in 10,000,
#: the loss at which TCP throughput visibly suffers (common practice).
RESOLUTION_CAP = 1e-4

#: A module's low warning sits a couple of dB above its low alarm (the common spacing of
#: SFF-8472 thresholds, common practice); where a module gives no warning, or no thresholds
#: at all, light is held against its alarm, or the PHY's receiver sensitivity, plus this.
WARN_ABOVE_FLOOR_DB = 2.0

#: Where a device's counter names come from, for the notes on counter faults.
_NAME = {q.key: q.c32 or q.hc or q.key for q in QUANTITIES}
#: Event counters of the transmit direction: inside the frames sent (RFC 2863).
_TX_EVENTS = (
    "out_discards",
    "out_errors",
    "late_collisions",
    "single_collisions",
    "multiple_collisions",
    "excessive_collisions",
)
#: Event counters of the receive direction: not inside the packets received, but no more
#: than the minimum-size frames the line could carry in the window.
_RX_EVENTS = (
    "in_discards",
    "in_errors",
    "fcs_errors",
    "alignment_errors",
    "frame_too_longs",
    "undersize",
    "fragments",
    "oversize",
)
#: Counters a device may report beyond what the window carried, by this much (slack for
#: polls that read counters a moment apart).
_EVENT_SLACK = 1.02


@dataclass(frozen=True, slots=True)
class Measured:
    """The measures of every port, and per port the counter faults left out (for its note)."""

    table: Columns
    counter_faults: list[str]


def error_ratio_upper(
    errors: FloatArray, frames: FloatArray, confidence: float = CONFIDENCE
) -> FloatArray:
    """The one-sided upper Clopper-Pearson bound on an error ratio, ``k`` errors in ``n``
    frames: the true ratio is below it with ``confidence``. With ``k = 0`` it is
    ``1 - (1-c)^(1/n)``, which the rule of three rounds to ``3/n`` at 95%. (The lower bound
    an answer shows is the significance test's, :func:`ratio_floor`.)"""
    k = np.asarray(errors, np.float64)
    n = np.asarray(frames, np.float64)
    valid = n > 0
    k = np.clip(np.nan_to_num(k), 0.0, np.where(valid, n, 0.0))
    upper = np.ones(k.shape)
    clean = valid & (k == 0)
    with np.errstate(divide="ignore"):
        upper[clean] = -np.expm1(np.log1p(-confidence) / n[clean])
    below = valid & (k > 0) & (k < n)
    if below.any():
        from scipy.special import betaincinv

        upper[below] = betaincinv(k[below] + 1.0, n[below] - k[below], confidence)
    return upper


def ratio_floor(events: FloatArray, frames: FloatArray) -> FloatArray:
    """The least a ratio of ``events`` in ``frames`` can be at :data:`TEST_CONFIDENCE`
    (its one-sided lower Clopper-Pearson bound): a ratio is significantly over ``r`` exactly
    where this is over ``r`` (:func:`ratio_over`). NaN where either is unknown."""
    k = np.asarray(events, np.float64)
    n = np.asarray(frames, np.float64)
    floor = np.where(np.isnan(k) | ~(n > 0), np.nan, 0.0)
    some = (k > 0) & (n > 0)
    if some.any():  # only ports that counted something need the inverse beta
        from scipy.special import betaincinv

        kk, nn = np.minimum(k[some], n[some]), n[some]
        floor[some] = betaincinv(kk, nn - kk + 1.0, 1.0 - TEST_CONFIDENCE)
    return floor


def ratio_over(events: FloatArray, frames: FloatArray, share: float) -> BoolArray:
    """Where ``events`` in ``frames`` show a ratio over ``share`` by the same test, without
    solving for the bound: P(X >= k) under ``share`` is the regularised incomplete beta
    I_share(k, n - k + 1), and the ratio is over ``share`` where that is under 1%."""
    k = np.asarray(events, np.float64)
    n = np.asarray(frames, np.float64)
    over = np.zeros(k.shape, np.bool_)
    some = (k > share * n) & (n > 0)  # False where either is NaN; at or under: never over
    if some.any():
        from scipy.special import betainc

        kk, nn = np.minimum(k[some], n[some]), n[some]
        over[some] = betainc(kk, nn - kk + 1.0, share) < 1.0 - TEST_CONFIDENCE
    return over


def frames_needed(resolution: FloatArray) -> FloatArray:
    """Frames a clean window needs before its 95% upper bound falls below ``resolution``."""
    with np.errstate(divide="ignore", invalid="ignore"):
        needed: FloatArray = np.ceil(
            np.log1p(-CONFIDENCE) / np.log1p(-np.asarray(resolution, np.float64))
        )
    return needed


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


def speed_media_pairs(
    speed: FloatArray, fiber: FloatArray
) -> tuple[list[tuple[float, bool | None]], npt.NDArray[np.intp]]:
    """The distinct (speed, fiber) pairs of the ports (fiber None where not reported), and
    each port's pair: work that depends only on them is done once per pair, not per port."""
    medium = np.nan_to_num(fiber, nan=-1.0) + 1.0  # 0 unknown, 1 copper, 2 fiber
    keys = np.nan_to_num(speed, nan=-1.0) * 4.0 + medium  # exact: speeds are whole b/s
    uniques, codes = np.unique(keys, return_inverse=True)
    pairs = [
        (float(k // 4.0), None if k % 4.0 == 0 else bool(k % 4.0 == 2)) for k in uniques.tolist()
    ]
    return pairs, codes.astype(np.intp)


def _per_pair(speed: FloatArray, fiber: FloatArray, f: object) -> FloatArray:
    """``f(speed, fiber)`` per port, worked out once per distinct (speed, medium)."""
    pairs, codes = speed_media_pairs(speed, fiber)
    values = np.array([f(s, m) for s, m in pairs], np.float64)  # type: ignore[operator]
    out: FloatArray = values[codes] if len(values) else np.zeros(0)
    return out


def _sensitivity(speed: float, _fiber: bool | None) -> float:
    known = RX_SENSITIVITY_DBM.get(int(speed)) if speed > 0 else None
    return np.nan if known is None else known[1]


def _leave_out_counter_faults(
    deltas: dict[str, FloatArray], tx_pkts: FloatArray, line_frames: FloatArray, rx_pkts: FloatArray
) -> tuple[dict[str, FloatArray], list[str]]:
    """Deltas with impossible event counts set to NaN, and per port what was left out."""
    d = dict(deltas)
    n = len(tx_pkts)
    faults: list[list[str]] = [[] for _ in range(n)]
    checks = [(k, tx_pkts, "frames sent") for k in _TX_EVENTS]
    room = line_frames - _zero(rx_pkts)
    checks += [(k, room, "frames the line could carry besides those received") for k in _RX_EVENTS]
    for key, bound, what in checks:
        value = d[key]
        bad = value > bound * _EVENT_SLACK + MIN_EVENTS  # False where either is NaN
        if not bad.any():
            continue
        for i in np.flatnonzero(bad):
            faults[i].append(
                f"{_NAME[key]} grew by {value[i]:,.0f}, more than the {max(bound[i], 0):,.0f} "
                f"{what}: a counter fault, left out"
            )
        d[key] = np.where(bad, np.nan, value)
    return d, ["; ".join(f) for f in faults]


def measure(w: WindowTable) -> Measured:
    """Every port's measures (the columns below), from its window."""
    st = w.state
    speed = st["speed_bps"]
    window_s = w.window_s
    fiber = st["fiber"]
    optics = w.optics
    has_optics = ~np.isnan(optics["rx_power_dbm"]) | ~np.isnan(optics["tx_power_dbm"])
    # A port with transceiver readings is fiber whatever the line said of its medium.
    fiber = np.where(has_optics, 1.0, fiber)

    d0 = w.deltas
    rx_pkts = _nansum(d0["in_ucast"], d0["in_mcast"], d0["in_bcast"])
    tx_pkts = _nansum(d0["out_ucast"], d0["out_mcast"], d0["out_bcast"])
    line_frames = speed * window_s / ((MIN_FRAME_OCTETS + 20) * 8.0)
    d, faults = _leave_out_counter_faults(d0, tx_pkts, line_frames, rx_pkts)
    # Late collisions need half duplex, which does not exist above 1 Gb/s: a count there is a
    # counter fault too (IEEE 802.3 clause 44.1.1, from memory).
    fast = speed > HALF_DUPLEX_MAX_BPS
    late_fault = fast & (d["late_collisions"] > 0)
    if late_fault.any():
        for i in np.flatnonzero(late_fault):
            note = (
                "late collisions counted at a speed with no half duplex: a counter fault, left out"
            )
            faults[i] = f"{faults[i]}; {note}" if faults[i] else note
        d["late_collisions"] = np.where(late_fault, np.nan, d["late_collisions"])

    crc = _nansum(d["fcs_errors"], d["alignment_errors"])
    # etherStatsOversizePkts counts every frame over 1518 octets (RFC 2819), jumbo frames a
    # jumbo port accepts too: it stands in for frames too long only at the standard MTU.
    oversize = np.where(st["mtu"] > 1500, np.nan, d["oversize"])
    giants = np.where(np.isnan(d["frame_too_longs"]), oversize, d["frame_too_longs"])
    dot3_bad = _nansum(crc, d["frame_too_longs"], d["mac_receive_errors"])
    # ifInErrors is the sum of the dot3 receive errors (RFC 3635 section 3.2.10).
    rx_bad = np.where(np.isnan(d["in_errors"]), dot3_bad, d["in_errors"])
    rx_frames = rx_pkts + _zero(rx_bad) + _zero(d["in_discards"])
    tx_frames = tx_pkts
    from_in_errors = np.maximum(d["in_errors"] - _zero(giants), 0.0)
    rx_errors = np.where(np.isnan(crc), from_in_errors, crc)
    error_source = np.where(~np.isnan(crc), 1.0, np.where(np.isnan(from_in_errors), np.nan, 2.0))

    octets_per_frame = _ratio(d["in_octets"], rx_pkts)
    frame_octets = np.clip(np.nan_to_num(octets_per_frame, nan=MAX_UNTAGGED_FRAME_OCTETS), 64, 9216)
    frame_bits = frame_octets * 8.0
    fer = _ratio(rx_errors, rx_frames)
    fer_hi = error_ratio_upper(rx_errors, rx_frames)
    known = ~np.isnan(fer)
    ber = estimate_ber(fer, frame_bits)
    ber_hi = np.where(known, estimate_ber(fer_hi, frame_bits), np.nan)
    objective = _per_pair(speed, fiber, objective_for)
    # Fewer errored frames than MIN_ERROR_FRAMES show no rate: their floor is nothing.
    counted = np.where(rx_errors >= MIN_ERROR_FRAMES, rx_errors, 0.0)
    ber_floor = np.where(known, estimate_ber(ratio_floor(counted, rx_frames), frame_bits), np.nan)
    resolution = np.minimum(
        frame_error_ratio(RESOLUTION_TIMES_OBJECTIVE * objective, frame_bits), RESOLUTION_CAP
    )

    runts = _nansum(d["undersize"], d["fragments"])
    # What ifInErrors and ifOutErrors count beyond the parts RFC 3635 section 3.2.10 names
    # and the device reports: errors of the device itself (overruns, its own classes).
    in_errors_other = np.where(
        np.isnan(crc), np.nan, np.maximum(d["in_errors"] - crc - _zero(giants), 0.0)
    )
    out_errors_other = np.maximum(
        d["out_errors"] - _zero(d["late_collisions"]) - _zero(d["excessive_collisions"]), 0.0
    )
    runt_share = _ratio(runts, runts + _zero(rx_errors))
    collisions = _nansum(
        d["single_collisions"], d["multiple_collisions"], d["excessive_collisions"]
    )
    line_octets = speed * window_s / 8.0
    rx_util = _ratio(d["in_octets"], line_octets)
    tx_util = _ratio(d["out_octets"], line_octets)
    rx_fps = _ratio(rx_frames, window_s)
    tx_fps = _ratio(tx_frames, window_s)
    in_discard_ratio = _ratio(d["in_discards"], rx_frames)
    out_discard_ratio = _ratio(d["out_discards"], tx_frames)
    # Bursts are many frames, not a handful: an idle port's few drops are policy, not buffers.
    bursts = ratio_over(d["out_discards"], tx_frames, BURST_DISCARD_SHARE)
    bursts &= d["out_discards"] >= MIN_EVENTS
    # The direction under suspicion: the one with significant discards, the busier one if
    # both have them, else the one discarding the larger share.
    sig_in = d["in_discards"] >= MIN_EVENTS
    sig_out = (d["out_discards"] >= MIN_EVENTS) | bursts
    busier_out = np.nan_to_num(tx_util, nan=-1.0) >= np.nan_to_num(rx_util, nan=-1.0)
    larger_out = np.nan_to_num(out_discard_ratio, nan=-1.0) > np.nan_to_num(
        in_discard_ratio, nan=-1.0
    )
    outbound = np.where(sig_in != sig_out, sig_out, np.where(sig_in, busier_out, larger_out))

    rx_dbm = optics["rx_power_dbm"]
    alarm = optics["rx_power_low_alarm_dbm"]
    warn = optics["rx_power_low_warn_dbm"]
    sensitivity = np.where(fiber == 1.0, _per_pair(speed, fiber, _sensitivity), np.nan)
    floor = np.where(np.isnan(alarm), sensitivity, alarm)  # the least light that still works
    reference = np.where(np.isnan(warn), floor, warn)
    # Where a module gives no warning, one is taken WARN_ABOVE_FLOOR_DB above its floor.
    warning = np.where(np.isnan(warn), floor + WARN_ABOVE_FLOOR_DB, warn)
    # 1: the module's low warning, 2: its low alarm, 3: the PHY's receiver sensitivity.
    reference_kind = np.where(
        ~np.isnan(warn),
        1.0,
        np.where(~np.isnan(alarm), 2.0, np.where(np.isnan(floor), np.nan, 3.0)),
    )
    # Where the device counts no changes, each move of ifLastChange between polls that found
    # the port in the same state is a down and an up (format 1.2), beside the flips seen.
    moved = np.fmax(2.0 * w.last_change_moves, w.status_changes)
    link_changes = np.where(np.isnan(w.link_changes), moved, w.link_changes)

    expected, limited_by = _expected_speed(w)
    table = Columns(
        {
            "window_s": window_s,
            "speed_bps": speed,
            "max_speed_bps": st["max_speed_bps"],
            "speed_ratio": _ratio(speed, expected),
            "expected_speed_bps": expected,
            "speed_limited_by": limited_by,
            "half_duplex": st["half_duplex"],
            # Collisions happen only in half duplex: counted, they show it whatever the
            # duplex state says (or where it says nothing).
            "half_duplex_seen": np.where(
                (_zero(collisions) >= MIN_COLLISIONS)
                | (_zero(d["late_collisions"]) >= MIN_COLLISIONS),
                1.0,
                st["half_duplex"],
            ),
            "fiber": fiber,
            "poe": st["poe"],
            "mtu": st["mtu"],
            "rx_frames": rx_frames,
            "tx_frames": tx_frames,
            "rx_fps": rx_fps,
            "tx_fps": tx_fps,
            "rx_util": rx_util,
            "tx_util": tx_util,
            "rx_broadcast_share": _ratio(_nansum(d["in_bcast"], d["in_mcast"]), rx_pkts),
            "tx_broadcast_share": _ratio(_nansum(d["out_bcast"], d["out_mcast"]), tx_pkts),
            "rx_errors": rx_errors,
            "error_source": error_source,
            "symbol_errors": d["symbol_errors"],
            "alignment_share": _ratio(
                d["alignment_errors"], _nansum(d["fcs_errors"], d["alignment_errors"])
            ),
            "in_errors_other": in_errors_other,
            "in_errors_other_over": ratio_over(
                in_errors_other, rx_frames, DEVICE_ERROR_SHARE
            ).astype(np.float64),
            "out_errors_other": out_errors_other,
            "out_errors_other_over": ratio_over(
                out_errors_other, tx_frames, DEVICE_ERROR_SHARE
            ).astype(np.float64),
            "frame_octets": frame_octets,
            "fer": fer,
            "fer_hi": np.where(known, fer_hi, np.nan),
            "ber": ber,
            "ber_hi": ber_hi,
            "ber_floor": ber_floor,
            "objective": objective,
            "resolution": resolution,
            "frames_needed": frames_needed(resolution),
            "runts": runts,
            "runt_share": runt_share,
            # Collisions cut frames at a random point: about slot / frame of the frames they
            # damage arrive shorter than the 64-octet slot, as runts. 1 is that share.
            "runts_vs_collisions": runt_share * frame_octets / MIN_FRAME_OCTETS,
            "late_collisions": d["late_collisions"],
            "late_ratio": _ratio(d["late_collisions"], tx_frames),
            "collisions": collisions,
            "collision_ratio": _ratio(collisions, tx_frames),
            "giants": giants,
            "giant_ratio": _ratio(giants, rx_frames),
            "in_discards": d["in_discards"],
            "out_discards": d["out_discards"],
            "in_discard_ratio": in_discard_ratio,
            "out_discard_ratio": out_discard_ratio,
            "discard_outbound": outbound.astype(np.float64),
            "discards": np.where(outbound, d["out_discards"], d["in_discards"]),
            "discard_ratio": np.where(outbound, out_discard_ratio, in_discard_ratio),
            # Output discards the test shows over the share of a stray microburst.
            "out_discard_bursts": bursts.astype(np.float64),
            "discard_util": np.where(outbound, tx_util, rx_util),
            "rx_dbm": rx_dbm,
            "rx_alarm_dbm": alarm,
            "rx_warn_dbm": warn,
            "rx_reference_dbm": reference,
            "rx_reference_kind": reference_kind,
            "light_margin_db": rx_dbm - warning,
            "floor_margin_db": rx_dbm - floor,
            "tx_dbm": optics["tx_power_dbm"],
            "tx_alarm_dbm": optics["tx_power_low_alarm_dbm"],
            "tx_margin_db": optics["tx_power_dbm"] - optics["tx_power_low_alarm_dbm"],
            "temperature_c": optics["temperature_c"],
            # The module's own high alarm where it reports one (format 1.2), else the top of
            # the commercial range.
            "hot_c": np.where(
                np.isnan(optics["temperature_high_alarm_c"]),
                HOT_C,
                optics["temperature_high_alarm_c"],
            ),
            "bias_ma": optics["bias_ma"],
            "has_optics": has_optics.astype(np.float64),
            "link_changes": link_changes,
            **_since_1_2(w, d, speed, rx_pkts),
        }
    )
    return Measured(table, faults)


def _since_1_2(
    w: WindowTable, d: dict[str, FloatArray], speed: FloatArray, rx_pkts: FloatArray
) -> dict[str, FloatArray]:
    """The readings format 1.2 adds, as they were read (NaN where not): the port's admin
    state and last change, what the module and the far end support, FEC, pause frames and
    Power over Ethernet, and the light thresholds and lane extremes of an optic; and what
    they measure: the pre-FEC bit error ratio against the code's high level, the share of
    time received pause frames can hold the transmitter off, broadcasts per second, and the
    strongest light against the receiver's most."""
    st, optics = w.state, w.optics
    window_s = w.window_s
    line_bits = speed * window_s
    mode = st["fec_mode"]
    has_fec = np.where(np.isnan(mode), np.nan, (mode > 0).astype(np.float64))
    # Corrected bits are the pre-FEC errors; corrected blocks, at least one bit each.
    from_bits = d["fec_corrected_bits"]
    errored_bits = np.where(np.isnan(from_bits), d["fec_corrected_blocks"], from_bits)
    limit = high_pre_fec_ber(mode)
    pre_fec = _ratio(errored_bits, line_bits)
    carried = codewords(mode, line_bits)
    lost = d["fec_uncorrectable_blocks"]
    # A pause frame holds the transmitter off for at most 65,535 quanta of 512 bit times
    # (IEEE 802.3 annex 31B): the share of the window received pause frames can hold.
    pause_share = np.minimum(_ratio(d["in_pause"] * MAX_PAUSE_BITS, line_bits), 1.0)
    rx_max = np.fmax(optics["rx_power_max_dbm"], optics["rx_power_dbm"])
    high = optics["rx_power_high_warn_dbm"]
    high = np.where(np.isnan(high), optics["rx_power_high_alarm_dbm"], high)
    pmd_most = _pmd_max_rx(w.extra["pmd"], speed, ~np.isnan(rx_max))
    high_kind = np.where(
        ~np.isnan(optics["rx_power_high_warn_dbm"]),
        1.0,
        np.where(~np.isnan(optics["rx_power_high_alarm_dbm"]), 2.0,
                 np.where(np.isnan(pmd_most), np.nan, 3.0)),
    )  # fmt: skip
    high = np.where(np.isnan(high), pmd_most, high)
    return {
        "has_fec": has_fec,
        "pre_fec_ber": pre_fec,
        "pre_fec_from_bits": np.where(np.isnan(from_bits), 0.0, 1.0),
        "fec_errored_bits": errored_bits,
        "pre_fec_limit": limit,
        "pre_fec_ratio": _ratio(pre_fec, limit),
        "fec_codewords": carried,
        "fec_lost": lost,
        "fec_lost_ratio": _ratio(lost, carried),
        "fec_lost_over": (
            (lost >= MIN_ERROR_FRAMES) & ratio_over(lost, carried, UNCORRECTABLE_SHARE)
        ).astype(np.float64),
        "pause_share": pause_share,
        "rx_bcast_fps": _ratio(d["in_bcast"], window_s),
        "rx_mcast_fps": _ratio(d["in_mcast"], window_s),
        "rx_bcast_share": _ratio(d["in_bcast"], rx_pkts),
        "rx_high_dbm": high,
        "rx_high_kind": high_kind,  # 1: the module's high warning, 2: its alarm, 3: the PMD's
        "overload_margin_db": rx_max - high,
        "admin_down": st["admin_down"],
        "last_change": st["last_change"],
        "last_change_moves": w.last_change_moves,
        "module_max_speed_bps": st["module_max_speed_bps"],
        "neighbor_max_speed_bps": st["neighbor_max_speed_bps"],
        "fec_mode": st["fec_mode"],
        "fec_corrected_blocks": d["fec_corrected_blocks"],
        "fec_uncorrectable_blocks": d["fec_uncorrectable_blocks"],
        "fec_corrected_bits": d["fec_corrected_bits"],
        "in_pause": d["in_pause"],
        "out_pause": d["out_pause"],
        "poe_detection": st["poe_detection"],
        "poe_class": st["poe_class"],
        "poe_power_w": st["poe_power_w"],
        "poe_budget_left_w": st["poe_budget_left_w"],
        "poe_mps_absent": d["poe_mps_absent"],
        "poe_invalid_signature": d["poe_invalid_signature"],
        "poe_power_denied": d["poe_power_denied"],
        "poe_overload": d["poe_overload"],
        "poe_short": d["poe_short"],
        # The strongest light of any lane (a module of one lane: its own reading).
        "rx_max_dbm": np.fmax(optics["rx_power_max_dbm"], optics["rx_power_dbm"]),
        "rx_high_alarm_dbm": optics["rx_power_high_alarm_dbm"],
        "rx_high_warn_dbm": optics["rx_power_high_warn_dbm"],
        "tx_high_alarm_dbm": optics["tx_power_high_alarm_dbm"],
        "tx_warn_dbm": optics["tx_power_low_warn_dbm"],
        "temperature_high_alarm_c": optics["temperature_high_alarm_c"],
        "bias_high_alarm_ma": optics["bias_high_alarm_ma"],
        "bias_low_alarm_ma": optics["bias_low_alarm_ma"],
        "bias_min_ma": np.fmin(optics["bias_min_ma"], optics["bias_ma"]),
    }


def _expected_speed(w: WindowTable) -> tuple[FloatArray, FloatArray]:
    """The speed a port should come up at: the highest its port, its module and the far end
    all support, where each is known (SNAPSHOT-FORMAT 1.2: a 1 Gb/s module in a 10 Gb/s cage,
    or a far end that offers only 2.5 Gb/s, is a design), and which of them sets it (0 the
    port, 1 its module, 2 the far end). An aggregate's own interface (IEEE 802.1AX; the sum
    of its members) has none: its speed is no speed drop."""
    st = w.state
    port, module, far = (
        st["max_speed_bps"],
        st["module_max_speed_bps"],
        st["neighbor_max_speed_bps"],
    )
    # Without the port's own top speed there is nothing to fall short of.
    expected = np.where(np.isnan(port), np.nan, np.fmin(np.fmin(port, module), far))
    limited_by = np.where(
        expected == far,
        2.0,
        np.where(expected == module, 1.0, np.where(expected == port, 0.0, np.nan)),
    )
    limited_by = np.where((expected == port) & (limited_by > 0), 0.0, limited_by)
    aggregates = w.extra["aggregate"]
    if any(a is not None for a in aggregates.tolist()):
        devices = w.device.tolist()
        named = {(d, a) for d, a in zip(devices, aggregates.tolist(), strict=True) if a}
        whole = np.array([(d, p) in named for d, p in zip(devices, w.port.tolist(), strict=True)])
        expected = np.where(whole, np.nan, expected)
    return expected, limited_by


def _pmd_max_rx(
    pmd: npt.NDArray[np.object_], speed: FloatArray, light: npt.NDArray[np.bool_]
) -> FloatArray:
    """The most light the receiver of each port with a light reading takes (its PMD's,
    else its speed's most permissive), worked out once per distinct pair; NaN elsewhere."""
    out = np.full(len(speed), np.nan)
    pairs: dict[tuple[str | None, float], float] = {}
    for i in np.flatnonzero(light).tolist():
        key = (pmd[i], float(speed[i]))
        value = pairs.get(key)
        if value is None:
            value = pairs[key] = max_rx_dbm(*key)
        out[i] = value
    return out
