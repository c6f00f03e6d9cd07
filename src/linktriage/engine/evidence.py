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

from collections.abc import Callable

from linktriage.engine.format.answers import EvidenceRecord
from linktriage.engine.measure.numbers import format_ratio, ratio_scale, sig, times
from linktriage.engine.physics import (
    ALIVE_FPS,
    CONGESTED_UTILISATION,
    FLAPPING_CHANGES,
    HOT_C,
    SILENT_FRAMES,
)
from linktriage.engine.verdicts import Verdict


def item(
    feature: str, value: float | str | None, unit: str, reference: float | None, source: str,
    said: str,
) -> EvidenceRecord:  # fmt: skip
    """One piece of evidence: what was measured, against which reference, from which source."""
    return {
        "feature": feature,
        "value": value,
        "unit": unit,
        "reference": reference,
        "source": source,
        "said": said,
    }


def _six(x: float) -> float:
    """A derived value (a ratio, a rate) to six significant digits; counts and readings are
    shown as they were counted or read."""
    return float(f"{x:.6g}")


def count(x: float) -> str:
    """A count as it reads: exact, grouped ("12,003,412")."""
    return f"{x:,.0f}"


def _known(x: float) -> bool:
    return x == x  # NaN never equals itself


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


class Columns:
    """The measures of a group of ports, column by column as Python lists, read on demand:
    evidence is worded a group at a time, so the per-port work is the wording alone."""

    def __init__(
        self, column: Callable[[str], list[float]], rows: list[int], phy: list[str | None]
    ) -> None:
        self.column = column  # a whole measures column, as a list
        self.rows = rows
        self.phy = phy
        self._lists: dict[str, list[float]] = {}

    def __getitem__(self, name: str) -> list[float]:
        values = self._lists.get(name)
        if values is None:
            whole = self.column(name)
            values = self._lists[name] = [whole[i] for i in self.rows]
        return values

    def __len__(self) -> int:
        return len(self.rows)


Items = list[EvidenceRecord]
MaybeItems = list[EvidenceRecord | None]


def bit_errors(c: Columns) -> Items:
    """The receive errors as a bit error ratio against the PHY's objective."""
    out: Items = []
    for errors, frames, ber, lo, hi, objective, phy in zip(
        c["rx_errors"], c["rx_frames"], c["ber"], c["ber_lo"], c["ber_hi"], c["objective"],
        c.phy, strict=True,
    ):  # fmt: skip
        name = phy or "this PHY"
        source = f"IEEE 802.3 {name} bit-error-ratio objective"
        if errors != errors:  # NaN: not reported
            said = "receive errors not reported: the bit error ratio cannot be judged"
            out.append(item("bit_error_ratio", None, "BER", objective, source, said))
        elif errors == 0:
            said = (
                f"no errored frames in {frames:,.0f} received: bit error ratio below "
                f"{hi:.0e} (95%); the {name} objective is {objective:.0e}"
            )
            out.append(item("bit_error_ratio", 0.0, "BER", objective, source, said))
        elif lo > objective:
            said = (
                f"bit error ratio {ber:.1e}, at least {lo:.1e} (95%), from {errors:,.0f} "
                f"errored frames in {frames:,.0f} received: {times(lo / objective)} the "
                f"{name} objective of {objective:.0e}"
            )
            out.append(item("bit_error_ratio", _six(ber), "BER", objective, source, said))
        else:
            said = (
                f"bit error ratio {ber:.1e} from {errors:,.0f} errored frames in "
                f"{frames:,.0f} received; not significantly over the {name} objective of "
                f"{objective:.0e}"
            )
            out.append(item("bit_error_ratio", _six(ber), "BER", objective, source, said))
    return out


def _errored_frames(c: Columns) -> MaybeItems:
    out: MaybeItems = []
    for errors, fer, where in zip(c["rx_errors"], c["fer"], c["error_source"], strict=True):
        if not errors > 0:  # none, or not reported (NaN)
            out.append(None)
            continue
        what = "received frames failed the FCS check" if where == 1.0 else "receive errors counted"
        said = f"{errors:,.0f} {what} ({_ratio_words(fer)})"
        out.append(item("rx_errored_frames", errors, "frames", None, _ERROR_SOURCE[where], said))
    return out


def _symbols(c: Columns) -> MaybeItems:
    # A zero is weak evidence: many devices never count symbol errors, so only a count shows.
    source = "RFC 3635 dot3StatsSymbolErrors"
    return [
        item("symbol_errors", n, "events", None, source,
              f"{n:,.0f} symbol errors: the PHY saw invalid code groups")
        if n == n and n > 0 else None
        for n in c["symbol_errors"]
    ]  # fmt: skip


def _flaps(c: Columns) -> MaybeItems:
    out: MaybeItems = []
    for changes, window in zip(c["link_changes"], c["window_s"], strict=True):
        if not changes >= 2:  # also NaN
            out.append(None)
            continue
        said = f"link went down or up {changes:,.0f} times in {_window_words(window)}" + (
            " (flapping)" if changes >= FLAPPING_CHANGES else ""
        )
        reference = float(FLAPPING_CHANGES)
        out.append(item("link_changes", changes, "changes", reference, "common practice", said))
    return out


def _speed(c: Columns) -> MaybeItems:
    source = "IEEE 802.3 clause 28 (autonegotiation)"
    return [
        item("speed", speed, "b/s", top, source,
              f"{speed_words(speed)} on a {speed_words(top)} port")
        if speed < top else None  # False where either is NaN
        for speed, top in zip(c["speed_bps"], c["max_speed_bps"], strict=True)
    ]  # fmt: skip


def _duplex(c: Columns) -> Items:
    source = "RFC 3635 dot3StatsDuplexStatus"
    out: Items = []
    for reported, seen in zip(c["half_duplex"], c["half_duplex_seen"], strict=True):
        if seen == 1.0 and reported != 1.0:
            said = "half duplex: collisions are counted, which full duplex never does"
            out.append(item("duplex", "half", "state", None, f"{source}; RFC 3635", said))
        elif seen == 1.0:
            out.append(item("duplex", "half", "state", None, source, "half duplex"))
        elif reported != reported:
            out.append(item("duplex", None, "state", None, source, "duplex not reported"))
        else:
            out.append(item("duplex", "full", "state", None, source, "full duplex"))
    return out


def _medium(c: Columns) -> Items:
    source = "IEEE 802.3: half duplex up to 1000 Mb/s only (clause 44.1.1, from memory)"
    out: Items = []
    for speed, fiber in zip(c["speed_bps"], c["fiber"], strict=True):
        medium = {1.0: "fiber", 0.0: "copper"}.get(fiber, "medium not reported")
        where = speed_words(speed) if speed == speed else "speed not reported"
        said = f"{where}, {medium}: half duplex exists here"
        shown = speed if speed == speed else None
        out.append(item("half_duplex_exists", shown, "b/s", 1e9, source, said))
    return out


def _counted(
    c: Columns, feature: str, column: str, ratio: str, noun: str, per: str, source: str,
    extra: list[str] | None = None,
) -> Items:  # fmt: skip
    """A count and its share of the frames of its direction, for each port."""
    out: Items = []
    extras = extra or [""] * len(c)
    for value, share, more in zip(c[column], c[ratio], extras, strict=True):
        if value != value:
            out.append(item(feature, None, "frames", None, source, f"{noun}: not reported"))
        elif value == 0:
            out.append(item(feature, 0.0, "frames", None, source, f"no {noun}"))
        else:
            said = f"{value:,.0f} {noun} ({_ratio_words(share)} {per}){more}"
            out.append(item(feature, value, "frames", None, source, said))
    return out


def _late(c: Columns) -> Items:
    return _counted(
        c, "late_collisions", "late_collisions", "late_ratio", "late collisions", "sent frames",
        "RFC 3635 dot3StatsLateCollisions; IEEE 802.3 clause 4.4.2",
        [": never normal"] * len(c),
    )  # fmt: skip


def _collisions(c: Columns) -> Items:
    return _counted(
        c, "collisions", "collisions", "collision_ratio", "collisions", "sent frames",
        "RFC 3635 dot3StatsSingle/MultipleCollisionFrames",
    )  # fmt: skip


def _runts(c: Columns) -> Items:
    source = "RFC 2819 etherStatsFragments + etherStatsUndersizePkts"
    out: Items = []
    for runts, share in zip(c["runts"], c["runt_share"], strict=True):
        if runts != runts:
            out.append(item("runts", None, "frames", None, source, "runts: not reported"))
        elif runts == 0:
            out.append(item("runts", 0.0, "frames", None, source, "no runts"))
        else:
            said = f"{runts:,.0f} runts, {sig(share * 100)}% of the receive errors"
            out.append(item("runts", runts, "frames", None, source, said))
    return out


def _giants(c: Columns) -> Items:
    extra = [f" for an MTU of {mtu:.0f}" if mtu == mtu else "" for mtu in c["mtu"]]
    return _counted(
        c, "frames_too_long", "giants", "giant_ratio", "frames too long", "received frames",
        "RFC 3635 dot3StatsFrameTooLongs; RFC 2819 etherStatsOversizePkts", extra,
    )  # fmt: skip


_REFERENCE = {1.0: "the module's low warning", 2.0: "the module's low alarm"}


def _rx_light(c: Columns) -> MaybeItems:
    out: MaybeItems = []
    for rx, reference, kind, alarm, phy in zip(
        c["rx_dbm"], c["rx_reference_dbm"], c["rx_reference_kind"], c["rx_alarm_dbm"], c.phy,
        strict=True,
    ):  # fmt: skip
        if rx != rx:
            out.append(None)
            continue
        if reference != reference:
            said = f"receiving {rx:.1f} dBm; the module reports no thresholds"
            out.append(item("rx_power", rx, "dBm", None, "SFF-8472 digital diagnostics", said))
            continue
        against = _REFERENCE.get(kind, f"the receiver's sensitivity ({phy or 'this PHY'})")
        margin = rx - reference
        side = "above" if margin >= 0 else "under"
        also = f"; low alarm {alarm:.1f} dBm" if kind == 1.0 and alarm == alarm else ""
        where = f"{abs(margin):.1f} dB {side} {against} ({reference:.1f} dBm)"
        said = f"receiving {rx:.1f} dBm, {where}{also}"
        source = "SFF-8472 thresholds" if kind in _REFERENCE else "IEEE 802.3 receiver sensitivity"
        out.append(item("rx_power", rx, "dBm", reference, source, said))
    return out


def _tx_light(c: Columns) -> MaybeItems:
    out: MaybeItems = []
    for tx, alarm in zip(c["tx_dbm"], c["tx_alarm_dbm"], strict=True):
        if tx != tx:
            out.append(None)
        elif alarm != alarm:
            out.append(item("tx_power", tx, "dBm", None, "SFF-8472", f"transmitting {tx:.1f} dBm"))
        else:
            margin = tx - alarm
            said = (
                f"transmitting {tx:.1f} dBm, {abs(margin):.1f} dB "
                f"{'above' if margin >= 0 else 'under'} the module's low alarm ({alarm:.1f} dBm)"
            )
            out.append(item("tx_power", tx, "dBm", alarm, "SFF-8472 thresholds", said))
    return out


def _temperature(c: Columns) -> MaybeItems:
    out: MaybeItems = []
    for t in c["temperature_c"]:
        if t != t:
            out.append(None)
            continue
        said = f"module at {t:.0f} \u00b0C" + (
            f", over the {HOT_C:.0f} \u00b0C of commercial-grade modules" if t > HOT_C else ""
        )
        out.append(item("temperature", t, "\u00b0C", HOT_C, "common practice", said))
    return out


def _bias(c: Columns) -> MaybeItems:
    source = "SFF-8472 digital diagnostics"
    return [
        item("bias", b, "mA", None, source, f"laser bias {b:.1f} mA") if b == b else None
        for b in c["bias_ma"]
    ]


def _fps(c: Columns) -> list[Items]:
    source = "RFC 2863 ifHCIn/OutUcastPkts; common practice"
    out: list[Items] = []
    for rx, tx, rx_fps, tx_fps, window in zip(
        c["rx_frames"], c["tx_frames"], c["rx_fps"], c["tx_fps"], c["window_s"], strict=True
    ):
        if rx <= tx:
            quiet, feature, busy_fps, busy_feature = rx, "rx_frames", tx_fps, "tx_frames_per_second"
            said = (
                f"receive direction silent: {quiet:,.0f} frames received in "
                f"{_window_words(window)}, while {sig(busy_fps, 3)} frames/s are sent"
            )
            alive = "the send direction is alive"
        else:
            quiet, feature, busy_fps, busy_feature = tx, "tx_frames", rx_fps, "rx_frames_per_second"
            said = (
                f"send direction silent: {quiet:,.0f} frames sent in {_window_words(window)}, "
                f"while {sig(busy_fps, 3)} frames/s are received"
            )
            alive = "the receive direction is alive"
        out.append([
            item(feature, quiet, "frames", float(SILENT_FRAMES), source, said),
            item(busy_feature, _six(busy_fps), "frames/s", ALIVE_FPS, source, alive),
        ])  # fmt: skip
    return out


def _discards(c: Columns) -> list[Items]:
    out: list[Items] = []
    for outbound, discarded, ratio, util in zip(
        c["discard_outbound"], c["discards"], c["discard_ratio"], c["discard_util"], strict=True
    ):
        way, counter = (
            ("outbound", "ifOutDiscards") if outbound == 1.0 else ("inbound", "ifInDiscards")
        )
        said = f"{way}: {discarded:,.0f} frames discarded ({_ratio_words(ratio)})"
        load = f"{way} load {sig(util * 100)}% of line rate"
        out.append([
            item(f"{way}_discards", discarded, "frames", None, f"RFC 2863 {counter}", said),
            item(f"{way}_utilisation", _six(util), "share", CONGESTED_UTILISATION,
                  "common practice", load),
        ])  # fmt: skip
    return out


def _traffic(c: Columns) -> Items:
    source = "rule of three (exact binomial bound at 95%)"
    out: Items = []
    for frames, window, needed, resolution in zip(
        c["rx_frames"], c["window_s"], c["frames_needed"], c["resolution"], strict=True
    ):
        said = (
            f"{frames:,.0f} frames received in {_window_words(window)}; a clean window needs "
            f"about {sig(needed)} to bound the error ratio at {_ratio_words(resolution)}"
        )
        out.append(item("rx_frames", frames, "frames", needed, source, said))
    return out


def _present(*items: EvidenceRecord | None) -> Items:
    return [i for i in items if i is not None]


def _healthy(c: Columns) -> list[Items]:
    return [[e] for e in bit_errors(c)]


def _cable(c: Columns) -> list[Items]:
    out: list[Items] = []
    rows = zip(
        bit_errors(c), _errored_frames(c), _flaps(c), _symbols(c), _speed(c), _rx_light(c),
        c["ber_lo"], c["objective"], c["fiber"], strict=True,
    )  # fmt: skip
    for errors, frames, flaps, symbols, speed, light, lo, objective, fiber in rows:
        # Significant errors lead; where there are none, the flapping does.
        if lo > objective or flaps is None:
            head, later = [errors], flaps
        else:
            head, later = [flaps, errors], None
        seen = light if fiber == 1.0 else None
        out.append([*head, *_present(frames, symbols, later, speed, seen)])
    return out


def _duplex_mismatch(c: Columns) -> list[Items]:
    out: list[Items] = []
    for late, duplex, collisions, runts, frames, medium in zip(
        _late(c), _duplex(c), _collisions(c), _runts(c), _errored_frames(c), _medium(c), strict=True
    ):
        head = [late, duplex] if late["value"] else [duplex, late]
        out.append([*head, collisions, runts, *_present(frames), medium])
    return out


def _negotiation(c: Columns) -> list[Items]:
    return [
        [*_present(speed), *([duplex] if half == 1.0 else []), collisions, errors]
        for speed, duplex, half, collisions, errors in zip(
            _speed(c),
            _duplex(c),
            c["half_duplex_seen"],
            _collisions(c),
            bit_errors(c),
            strict=True,
        )
    ]


def _mtu(c: Columns) -> list[Items]:
    return [[giants, errors] for giants, errors in zip(_giants(c), bit_errors(c), strict=True)]


def _optic(c: Columns) -> list[Items]:
    return [
        [*_present(rx, tx, hot, bias), errors]
        for rx, tx, hot, bias, errors in zip(
            _rx_light(c), _tx_light(c), _temperature(c), _bias(c), bit_errors(c), strict=True
        )
    ]


def _one_way(c: Columns) -> list[Items]:
    return _fps(c)


def _congestion(c: Columns) -> list[Items]:
    return [[*d, e] for d, e in zip(_discards(c), bit_errors(c), strict=True)]


def _insufficient(c: Columns) -> list[Items]:
    return [[t] for t in _traffic(c)]


_BUILDERS: dict[Verdict, Callable[[Columns], list[Items]]] = {
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


def evidence_of(
    verdicts: list[Verdict],
    column: Callable[[str], list[float]],
    phy: list[str | None],
    rows: list[int],
) -> list[Items]:
    """The readings each port's verdict rests on, for the ports in ``rows`` (in that order),
    from the measures ``column(name)`` gives: ports are worded a verdict at a time. A
    verdict answered before any reading (link down, no data) has none here."""
    out: list[Items] = [[] for _ in rows]
    groups: dict[Verdict, list[int]] = {}
    for k, i in enumerate(rows):
        groups.setdefault(verdicts[i], []).append(k)
    for verdict, places in groups.items():
        build = _BUILDERS.get(verdict)
        if build is None:
            continue
        picked = [rows[k] for k in places]
        built = build(Columns(column, picked, [phy[i] for i in picked]))
        for k, items in zip(places, built, strict=True):
            out[k] = items
    return out
