"""The evidence each verdict rests on, in an engineer's units, with the value it is held against.

A senior engineer checking a verdict looks at a few readings, not at the tree: the bit error
ratio against the PHY's objective for a cable fault; collisions, late collisions, runts and
duplex for a duplex mismatch; received power in dBm against the module's thresholds for an
optic; which direction is silent for a one-way link; the discards and the load of that same
direction for congestion. Each item here is one such reading: ``feature``, ``value``,
``unit``, ``reference`` (what it is held against, or None), ``source`` and ``said`` (as it
reads). The first item of a verdict is its headline, shown in one-line summaries.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Protocol, TypedDict

from linktriage.messages import format_ratio, ratio_scale, sig, times
from linktriage.physics import (
    ALIVE_FPS,
    CONGESTED_UTILISATION,
    FLAPPING_CHANGES,
    HOT_C,
    SILENT_FPS,
)
from linktriage.verdicts import Verdict


class Row(Protocol):
    """One port's measures (:mod:`linktriage.measures` columns), read by name."""

    def __getitem__(self, key: str) -> float: ...


class EvidenceRecord(TypedDict):
    """One reading a verdict rests on, as ``diagnose --json`` writes it."""

    feature: str
    value: float | str | None
    unit: str
    reference: float | None
    source: str
    said: str


def _item(
    feature: str, value: float | str | None, unit: str, reference: float | None, source: str,
    said: str,
) -> EvidenceRecord:  # fmt: skip
    if isinstance(value, float) and math.isnan(value):
        value = None
    if reference is not None and math.isnan(reference):
        reference = None
    return {
        "feature": feature,
        "value": value if not isinstance(value, float) else float(f"{value:.6g}"),
        "unit": unit,
        "reference": reference if reference is None else float(f"{reference:.6g}"),
        "source": source,
        "said": said,
    }


def _known(x: float) -> bool:
    return not math.isnan(x)


def speed_words(bps: float) -> str:
    """A line rate as engineers say it: "100 Mb/s", "10 Gb/s"."""
    if bps >= 1e9:
        return f"{sig(bps / 1e9, 3)} Gb/s"
    return f"{sig(bps / 1e6, 3)} Mb/s"


def _ratio_words(value: float) -> str:
    return format_ratio(value, ratio_scale(value))


def _window_words(seconds: float) -> str:
    if seconds >= 5400:
        return f"{sig(seconds / 3600, 2)} h"
    if seconds >= 120:
        return f"{sig(seconds / 60, 2)} min"
    return f"{sig(seconds, 3)} s"


_ERROR_SOURCE = {
    1.0: "RFC 3635 dot3StatsFCSErrors + dot3StatsAlignmentErrors",
    2.0: "RFC 2863 ifInErrors (less frames too long; may include other errors)",
}


def bit_errors(r: Row, phy: str | None) -> EvidenceRecord:
    """The receive errors as a bit error ratio against the PHY's objective."""
    name = phy or "this PHY"
    objective = r["objective"]
    source = f"IEEE 802.3 {name} bit-error-ratio objective"
    errors, frames = r["rx_errors"], r["rx_frames"]
    if not _known(errors):
        said = "receive errors not reported: the bit error ratio cannot be judged"
        return _item("bit_error_ratio", None, "BER", objective, source, said)
    counted = f"{sig(errors, 3)} errored frames in {sig(frames, 3)} received"
    if errors == 0:
        said = (
            f"no errored frames in {sig(frames, 3)} received: bit error ratio below "
            f"{r['ber_hi']:.0e} (95%); the {name} objective is {objective:.0e}"
        )
        return _item("bit_error_ratio", 0.0, "BER", objective, source, said)
    over = r["ber_lo"] / objective
    if over > 1:
        said = (
            f"bit error ratio {r['ber']:.1e}, at least {r['ber_lo']:.1e} (95%), from {counted}: "
            f"{times(over)} the {name} objective of {objective:.0e}"
        )
    else:
        said = (
            f"bit error ratio {r['ber']:.1e} from {counted}; not significantly over the "
            f"{name} objective of {objective:.0e}"
        )
    return _item("bit_error_ratio", r["ber"], "BER", objective, source, said)


def _errored_frames(r: Row) -> EvidenceRecord | None:
    errors = r["rx_errors"]
    if not _known(errors) or errors == 0:
        return None
    said = f"{sig(errors, 3)} received frames failed the FCS check ({_ratio_words(r['fer'])})"
    if r["error_source"] == 2.0:
        said = f"{sig(errors, 3)} receive errors counted ({_ratio_words(r['fer'])})"
    return _item(
        "rx_errored_frames", errors, "frames", None, _ERROR_SOURCE[r["error_source"]], said
    )


def _symbols(r: Row) -> EvidenceRecord | None:
    symbols = r["symbol_errors"]
    if not _known(symbols) or symbols == 0:
        return None  # a zero is weak evidence: many devices never count symbol errors
    said = f"{sig(symbols, 3)} symbol errors: the PHY saw invalid code groups"
    return _item("symbol_errors", symbols, "events", None, "RFC 3635 dot3StatsSymbolErrors", said)


def _flaps(r: Row) -> EvidenceRecord | None:
    changes = r["link_changes"]
    if not _known(changes) or changes < 2:
        return None
    said = f"link went down or up {sig(changes, 3)} times in {_window_words(r['window_s'])}" + (
        " (flapping)" if changes >= FLAPPING_CHANGES else ""
    )
    return _item("link_changes", changes, "changes", FLAPPING_CHANGES, "common practice", said)


def _speed(r: Row) -> EvidenceRecord | None:
    speed, top = r["speed_bps"], r["max_speed_bps"]
    if not (_known(speed) and _known(top)) or speed >= top:
        return None
    said = f"{speed_words(speed)} on a {speed_words(top)} port"
    return _item("speed", speed, "b/s", top, "IEEE 802.3 clause 28 (autonegotiation)", said)


def _duplex(r: Row) -> EvidenceRecord:
    half = r["half_duplex"]
    said = (
        "duplex not reported"
        if not _known(half)
        else ("half duplex" if half == 1.0 else "full duplex")
    )
    value = None if not _known(half) else ("half" if half == 1.0 else "full")
    return _item("duplex", value, "state", None, "RFC 3635 dot3StatsDuplexStatus", said)


def _medium(r: Row) -> EvidenceRecord:
    speed = r["speed_bps"]
    medium = {1.0: "fiber", 0.0: "copper"}.get(r["fiber"], "medium not reported")
    where = speed_words(speed) if _known(speed) else "speed not reported"
    said = f"{where}, {medium}: half duplex exists here"
    source = "IEEE 802.3: half duplex up to 1000 Mb/s only (clause 44.1.1, from memory)"
    return _item("half_duplex_exists", speed, "b/s", 1e9, source, said)


def _count_per_frame(
    r: Row, feature: str, count: str, ratio: str, noun: str, per: str, source: str, extra: str = ""
) -> EvidenceRecord:
    value = r[count]
    if not _known(value):
        return _item(feature, None, "frames", None, source, f"{noun}: not reported")
    if value == 0:
        return _item(feature, 0.0, "frames", None, source, f"no {noun}{extra}")
    said = f"{sig(value, 3)} {noun} ({_ratio_words(r[ratio])} {per}){extra}"
    return _item(feature, value, "frames", None, source, said)


def _late(r: Row) -> EvidenceRecord:
    return _count_per_frame(
        r, "late_collisions", "late_collisions", "late_ratio", "late collisions", "sent frames",
        "RFC 3635 dot3StatsLateCollisions; IEEE 802.3 clause 4.4.2",
        "" if not r["late_collisions"] else ": never normal",
    )  # fmt: skip


def _collisions(r: Row) -> EvidenceRecord:
    return _count_per_frame(
        r, "collisions", "collisions", "collision_ratio", "collisions", "sent frames",
        "RFC 3635 dot3StatsSingle/MultipleCollisionFrames",
    )  # fmt: skip


def _runts(r: Row) -> EvidenceRecord:
    source = "RFC 2819 etherStatsFragments + etherStatsUndersizePkts"
    runts = r["runts"]
    if not _known(runts):
        return _item("runts", None, "frames", None, source, "runts: not reported")
    if runts == 0:
        return _item("runts", 0.0, "frames", None, source, "no runts")
    said = f"{sig(runts, 3)} runts, {sig(r['runt_share'] * 100)}% of the receive errors"
    return _item("runts", runts, "frames", None, source, said)


def _giants(r: Row) -> EvidenceRecord:
    mtu = r["mtu"]
    extra = f" for an MTU of {mtu:.0f}" if _known(mtu) else ""
    return _count_per_frame(
        r, "frames_too_long", "giants", "giant_ratio", "frames too long", "received frames",
        "RFC 3635 dot3StatsFrameTooLongs; RFC 2819 etherStatsOversizePkts", extra,
    )  # fmt: skip


_REFERENCE = {1.0: "the module's low warning", 2.0: "the module's low alarm"}


def _rx_light(r: Row, phy: str | None) -> EvidenceRecord | None:
    rx = r["rx_dbm"]
    if not _known(rx):
        return None
    reference, kind = r["rx_reference_dbm"], r["rx_reference_kind"]
    if not _known(reference):
        said = f"receiving {rx:.1f} dBm; the module reports no thresholds"
        return _item("rx_power", rx, "dBm", None, "SFF-8472 digital diagnostics", said)
    against = _REFERENCE.get(kind, f"the receiver's sensitivity ({phy or 'this PHY'})")
    margin = rx - reference
    side = "above" if margin >= 0 else "under"
    where = f"{abs(margin):.1f} dB {side} {against} ({reference:.1f} dBm)"
    alarm = r["rx_alarm_dbm"]
    also = f"; low alarm {alarm:.1f} dBm" if kind == 1.0 and _known(alarm) else ""
    source = "SFF-8472 thresholds" if kind in _REFERENCE else "IEEE 802.3 receiver sensitivity"
    return _item("rx_power", rx, "dBm", reference, source, f"receiving {rx:.1f} dBm, {where}{also}")


def _tx_light(r: Row) -> EvidenceRecord | None:
    tx, alarm = r["tx_dbm"], r["tx_alarm_dbm"]
    if not _known(tx):
        return None
    if not _known(alarm):
        return _item("tx_power", tx, "dBm", None, "SFF-8472", f"transmitting {tx:.1f} dBm")
    margin = tx - alarm
    said = (
        f"transmitting {tx:.1f} dBm, {abs(margin):.1f} dB "
        f"{'above' if margin >= 0 else 'under'} the module's low alarm ({alarm:.1f} dBm)"
    )
    return _item("tx_power", tx, "dBm", alarm, "SFF-8472 thresholds", said)


def _module(r: Row) -> list[EvidenceRecord]:
    out = []
    temperature, bias = r["temperature_c"], r["bias_ma"]
    if _known(temperature):
        hot = temperature > HOT_C
        said = f"module at {temperature:.0f} \u00b0C" + (
            f", over the {HOT_C:.0f} \u00b0C of commercial-grade modules" if hot else ""
        )
        out.append(_item("temperature", temperature, "\u00b0C", HOT_C, "common practice", said))
    if _known(bias):
        said = f"laser bias {bias:.1f} mA"
        out.append(_item("bias", bias, "mA", None, "SFF-8472 digital diagnostics", said))
    return out


def _fps(r: Row) -> list[EvidenceRecord]:
    rx, tx = r["rx_fps"], r["tx_fps"]
    quiet_rx = rx <= tx
    quiet, busy = (rx, tx) if quiet_rx else (tx, rx)
    way, other = ("receive", "send") if quiet_rx else ("send", "receive")
    said = (
        f"{way} direction silent: {sig(quiet, 2)} frames/s received"
        if quiet_rx
        else f"{way} direction silent: {sig(quiet, 2)} frames/s sent"
    )
    said += f", while {sig(busy, 3)} frames/s are {'sent' if quiet_rx else 'received'}"
    source = "RFC 2863 ifHCIn/OutUcastPkts; common practice"
    return [
        _item(f"{'rx' if quiet_rx else 'tx'}_frames_per_second", quiet, "frames/s", SILENT_FPS,
              source, said),
        _item(f"{'tx' if quiet_rx else 'rx'}_frames_per_second", busy, "frames/s", ALIVE_FPS,
              source, f"the {other} direction is alive"),
    ]  # fmt: skip


def _discards(r: Row) -> list[EvidenceRecord]:
    outbound = r["discard_outbound"] == 1.0
    way = "outbound" if outbound else "inbound"
    counter = "ifOutDiscards" if outbound else "ifInDiscards"
    count, ratio, util = r["discards"], r["discard_ratio"], r["discard_util"]
    said = f"{way}: {sig(count, 3)} frames discarded ({_ratio_words(ratio)})"
    load = f"{way} load {sig(util * 100, 2)}% of line rate"
    return [
        _item(f"{way}_discards", count, "frames", None, f"RFC 2863 {counter}", said),
        _item(f"{way}_utilisation", util, "share", CONGESTED_UTILISATION, "common practice", load),
    ]


def _traffic(r: Row) -> EvidenceRecord:
    said = (
        f"{sig(r['rx_frames'], 3)} frames received in {_window_words(r['window_s'])}; a clean "
        f"window needs about {sig(r['frames_needed'], 2)} to bound the error ratio at "
        f"{_ratio_words(r['resolution'])}"
    )
    return _item(
        "rx_frames", r["rx_frames"], "frames", r["frames_needed"],
        "rule of three (exact binomial bound at 95%)", said,
    )  # fmt: skip


def _present(*items: EvidenceRecord | None) -> list[EvidenceRecord]:
    return [i for i in items if i is not None]


def _healthy(r: Row, phy: str | None) -> list[EvidenceRecord]:
    return [bit_errors(r, phy)]


def _cable(r: Row, phy: str | None) -> list[EvidenceRecord]:
    errors = bit_errors(r, phy)
    head = [errors] if r["rx_errors"] and r["ber_lo"] > r["objective"] else []
    flaps = _flaps(r)
    if not head and flaps is not None:
        head = [flaps, errors]
        flaps = None
    light = _rx_light(r, phy) if r["fiber"] == 1.0 else None
    return head + _present(_errored_frames(r), _symbols(r), flaps, _speed(r), light)


def _duplex_mismatch(r: Row, phy: str | None) -> list[EvidenceRecord]:
    late = _late(r)
    first = [late] if late["value"] else []
    rest = [_duplex(r), _collisions(r), _runts(r)]
    if not first:
        rest.insert(1, late)
    return first + rest + _present(_errored_frames(r)) + [_medium(r)]


def _negotiation(r: Row, phy: str | None) -> list[EvidenceRecord]:
    head = _present(_speed(r))
    if r["half_duplex"] == 1.0:
        head.append(_duplex(r))
    return [*head, _collisions(r), bit_errors(r, phy)]


def _mtu(r: Row, phy: str | None) -> list[EvidenceRecord]:
    return [_giants(r), bit_errors(r, phy)]


def _optic(r: Row, phy: str | None) -> list[EvidenceRecord]:
    return _present(_rx_light(r, phy), _tx_light(r)) + _module(r) + [bit_errors(r, phy)]


def _one_way(r: Row, phy: str | None) -> list[EvidenceRecord]:
    return _fps(r)


def _congestion(r: Row, phy: str | None) -> list[EvidenceRecord]:
    return [*_discards(r), bit_errors(r, phy)]


def _insufficient(r: Row, phy: str | None) -> list[EvidenceRecord]:
    return [_traffic(r)]


_BUILDERS: dict[Verdict, Callable[[Row, str | None], list[EvidenceRecord]]] = {
    Verdict.HEALTHY: _healthy,
    Verdict.CABLE_FAULT: _cable,
    Verdict.DUPLEX_MISMATCH: _duplex_mismatch,
    Verdict.NEGOTIATION_DEGRADED: _negotiation,
    Verdict.MTU_MISMATCH: _mtu,
    Verdict.OPTIC_DEGRADED: _optic,
    Verdict.UNIDIRECTIONAL: _one_way,
    Verdict.CONGESTION: _congestion,
    Verdict.INSUFFICIENT_TRAFFIC: _insufficient,
}


def evidence_for(verdict: Verdict, r: Row, phy: str | None) -> list[EvidenceRecord]:
    """The readings ``verdict`` rests on for the port whose measures are ``r``."""
    build = _BUILDERS.get(verdict)
    return [] if build is None else build(r, phy)
