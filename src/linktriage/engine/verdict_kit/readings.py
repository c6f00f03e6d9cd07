"""The readings verdicts cite as evidence, in an engineer's units, each with the value it is
held against: the pieces several verdicts share, and the group of ports they are worded for.

A senior engineer checking a verdict looks at a few readings, not at the tree: the bit error
ratio against the PHY's objective for a cable fault; collisions, late collisions, runts and
duplex for a duplex mismatch; received power in dBm against the module's thresholds for an
optic; which direction is silent for a one-way link; the discards and the load of that same
direction for congestion. Each item is one such reading: ``feature``, ``value``, ``unit``,
``reference`` (what it is held against, or None), ``source`` and ``said`` (as it reads). The
first item of a verdict is its headline, shown in one-line summaries. Evidence is worded a
verdict at a time, for all the ports of that verdict together, so the per-port work is the
wording alone.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Protocol

from linktriage.engine.format.answers import EvidenceRecord
from linktriage.engine.measure.measures import (
    FAULT_TIMES_OBJECTIVE,
    MIN_ERROR_FRAMES,
)
from linktriage.engine.measure.numbers import format_ratio, ratio_scale, sig, times
from linktriage.engine.measure.signs import CONGESTED_UTILISATION, FLAPPING_CHANGES


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


def six(x: float) -> float:
    """A derived value (a ratio, a rate) to six significant digits; counts and readings are
    shown as they were counted or read."""
    return float(f"{x:.6g}")


def speed_words(bps: float) -> str:
    """A line rate as engineers say it: "100 Mb/s", "10 Gb/s"."""
    if bps >= 1e9:
        return f"{sig(bps / 1e9, 3)} Gb/s"
    return f"{sig(bps / 1e6, 3)} Mb/s"


def ratio_words(value: float) -> str:
    return format_ratio(value, ratio_scale(value))


def window_words(seconds: float) -> str:
    if seconds >= 5400:
        return f"{sig(seconds / 3600, 2)} h"
    if seconds >= 120:
        return f"{sig(seconds / 60, 2)} min"
    return f"{sig(seconds, 3)} s"


ERROR_SOURCE = {
    1.0: "RFC 3635 dot3StatsFCSErrors + dot3StatsAlignmentErrors",
    2.0: "RFC 2863 ifInErrors (less frames too long; may include other errors)",
}


class PortFacts(Protocol):
    """What evidence and guard questions read of each port, by row: the measures column by
    column, the PHY's name, the state at the latest poll, the window's note and polls."""

    @property
    def phy(self) -> Sequence[str | None]: ...
    @property
    def oper_status(self) -> Sequence[str]: ...
    @property
    def note(self) -> Sequence[str | None]: ...
    @property
    def polls(self) -> Sequence[int]: ...
    @property
    def window_s(self) -> Sequence[float]: ...
    @property
    def device(self) -> Sequence[str]: ...
    @property
    def port(self) -> Sequence[str]: ...
    @property
    def verdict(self) -> Sequence[str]: ...
    @property
    def far(self) -> Sequence[int]: ...  # the row at the link's other end, -1 where none
    def column(self, name: str) -> Sequence[float]: ...
    def words(self, name: str) -> Sequence[object]: ...  # an EXTRA_FIELDS column


class PortGroup:
    """The ports of one verdict, their measures column by column as Python lists, read on
    demand."""

    def __init__(self, facts: PortFacts, rows: list[int]) -> None:
        self.facts = facts
        self.rows = rows
        self.phy = [facts.phy[i] for i in rows]
        self._lists: dict[str, list[float]] = {}

    def __getitem__(self, name: str) -> list[float]:
        values = self._lists.get(name)
        if values is None:
            whole = self.facts.column(name)
            values = self._lists[name] = [whole[i] for i in self.rows]
        return values

    def __len__(self) -> int:
        return len(self.rows)

    def words(self, name: str) -> list[object]:
        """A field of words or lists of format 1.2 (the device's disable reason, ...)."""
        whole = self.facts.words(name)
        return [whole[i] for i in self.rows]


Items = list[EvidenceRecord]
MaybeItems = list[EvidenceRecord | None]


def bit_errors(c: PortGroup) -> Items:
    """The receive errors as a bit error ratio against the PHY's objective."""
    out: Items = []
    for errors, frames, ber, floor, hi, objective, phy in zip(
        c["rx_errors"], c["rx_frames"], c["ber"], c["ber_floor"], c["ber_hi"], c["objective"],
        c.phy, strict=True,
    ):  # fmt: skip
        # Where the PHY is unknown, the port is held to the loosest objective it could have.
        name = f"the {phy} objective" if phy else "the loosest objective of its speed"
        source = f"IEEE 802.3 {phy or 'Ethernet'} bit-error-ratio objective"
        if errors != errors:  # NaN: not reported
            said = "receive errors not reported: the bit error ratio cannot be judged"
            out.append(item("bit_error_ratio", None, "BER", objective, source, said))
        elif errors == 0:
            said = (
                f"no errored frames in {frames:,.0f} received: bit error ratio below "
                f"{hi:.0e} (95%); {name} is {objective:.0e}"
            )
            out.append(item("bit_error_ratio", 0.0, "BER", objective, source, said))
        else:
            measured = (
                f"bit error ratio {ber:.1e} from {errors:,.0f} errored frames in "
                f"{frames:,.0f} received"
            )
            out.append(
                item("bit_error_ratio", six(ber), "BER", objective, f"{source}; {_TEST}",
                     f"{measured}: {_judged(errors, ber, floor, objective, name)}")
            )  # fmt: skip
    return out


_TEST = "exact one-sided binomial test at 99% (Clopper-Pearson)"


def _judged(errors: float, ber: float, floor: float, objective: float, name: str) -> str:
    """What the significance test says of errors counted against the PHY's objective."""
    if errors < MIN_ERROR_FRAMES:
        return "one or two errored frames are an event (a touched plug, an ESD hit), not a rate"
    if not floor > objective:
        return f"within what {name} of {objective:.0e} allows by chance (exact test at 99%)"
    if ber < FAULT_TIMES_OBJECTIVE * objective:
        return (
            f"{times(ber / objective)} {name} of {objective:.0e}, significant "
            f"at 99% but under the {FAULT_TIMES_OBJECTIVE:.0f} times a fault shows: marginal, "
            "watch it"
        )
    return (
        f"{times(ber / objective)} {name} of {objective:.0e}, at least "
        f"{floor:.1e} by an exact test at 99%"
    )


def also_seen(c: PortGroup) -> list[Items]:
    """What a port counted that no verdict rests on, and what could not be read, so that no
    answer leaves out a significant count: errors of the device itself (RFC 3635 section
    3.2.10 names the parts of ifInErrors and ifOutErrors; what is beyond them is not the
    link), discards short of congestion, and a load that could not be measured."""
    out: list[Items] = []
    for row in zip(
        c["in_errors_other"], c["in_errors_other_over"], c["out_errors_other"],
        c["out_errors_other_over"], c["in_discards"], c["in_discard_ratio"],
        c["out_discards"], c["out_discard_ratio"], c["rx_util"], c["tx_util"], strict=True,
    ):  # fmt: skip
        in_other, in_over, out_other, out_over, in_d, in_r, out_d, out_r, rx_u, tx_u = row
        items: Items = []
        if in_over == 1.0:
            said = (
                f"ifInErrors grew by {in_other:,.0f} beyond its FCS, alignment and frame-too-long "
                "parts: errors of the device's own receive path (overruns, its own error "
                "classes), not the cabling"
            )
            items.append(item("in_errors_other", in_other, "frames", None, _PARTS, said))
        if out_over == 1.0:
            said = (
                f"ifOutErrors grew by {out_other:,.0f} with no late or excessive collisions: "
                "the device's own transmit path (line card, ASIC or driver), not the cabling"
            )
            items.append(item("out_errors_other", out_other, "frames", None, _PARTS, said))
        for way, count, share, util, counter in (
            ("inbound", in_d, in_r, rx_u, "ifInDiscards"),
            ("outbound", out_d, out_r, tx_u, "ifOutDiscards"),
        ):
            if count > 0:
                load = "an unknown load" if util != util else f"{sig(util * 100)}% load"
                said = (
                    f"{way}: {count:,.0f} frames discarded ({ratio_words(share)}) at {load}, "
                    "short of congestion (under 60% load"
                    + (", and filtering on arrival" if way == "inbound" else "")
                    + ")"
                )
                items.append(item(f"{way}_discards", count, "frames", CONGESTED_UTILISATION,
                                  f"RFC 2863 {counter}", said))  # fmt: skip
        if rx_u != rx_u or tx_u != tx_u:
            items.append(item("utilisation", None, "share", None, _LOAD, LOAD_UNKNOWN))
        out.append(items)
    return out


_PARTS = "RFC 3635 section 3.2.10"
_LOAD = "RFC 2863 section 3.1.6"
#: Said where the octet counters could not give the load.
LOAD_UNKNOWN = (
    "load could not be read: the octet counters are missing, or a Counter32 may have wrapped "
    "more than once between polls (at 1 Gb/s ifInOctets wraps in 34 s); poll the 64-bit "
    "counters (SNMPv2c or v3) or more often"
)


def errored_frames(c: PortGroup) -> MaybeItems:
    out: MaybeItems = []
    for errors, fer, where in zip(c["rx_errors"], c["fer"], c["error_source"], strict=True):
        if not errors > 0:  # none, or not reported (NaN)
            out.append(None)
            continue
        what = "received frames failed the FCS check" if where == 1.0 else "receive errors counted"
        said = f"{errors:,.0f} {what} ({ratio_words(fer)})"
        out.append(item("rx_errored_frames", errors, "frames", None, ERROR_SOURCE[where], said))
    return out


def symbols(c: PortGroup) -> MaybeItems:
    # A zero is weak evidence: many devices never count symbol errors, so only a count shows.
    source = "RFC 3635 dot3StatsSymbolErrors"
    return [
        item("symbol_errors", n, "events", None, source,
              f"{n:,.0f} symbol errors: the PHY saw invalid code groups")
        if n == n and n > 0 else None
        for n in c["symbol_errors"]
    ]  # fmt: skip


def flaps(c: PortGroup) -> MaybeItems:
    out: MaybeItems = []
    for changes, window in zip(c["link_changes"], c["window_s"], strict=True):
        if not changes >= 2:  # also NaN
            out.append(None)
            continue
        said = f"link went down or up {changes:,.0f} times in {window_words(window)}" + (
            " (flapping)" if changes >= FLAPPING_CHANGES else ""
        )
        reference = float(FLAPPING_CHANGES)
        out.append(item("link_changes", changes, "changes", reference, "common practice", said))
    return out


def speed(c: PortGroup) -> MaybeItems:
    """A speed below what the port, its module and the far end all support (SNAPSHOT-FORMAT
    1.2), said against whichever of them sets it."""
    source = "IEEE 802.3 clause 28 (autonegotiation)"
    out: MaybeItems = []
    for speed, top, expected, by in zip(
        c["speed_bps"], c["max_speed_bps"], c["expected_speed_bps"], c["speed_limited_by"],
        strict=True,
    ):  # fmt: skip
        if not speed < expected:  # also NaN
            out.append(None)
            continue
        said = f"{speed_words(speed)} on a {speed_words(top if top == top else expected)} port"
        if by == 1.0:
            said += f" whose module supports {speed_words(expected)}"
        elif by == 2.0:
            said += f" whose far end offers up to {speed_words(expected)}"
        out.append(item("speed", speed, "b/s", expected, source, said))
    return out


def duplex(c: PortGroup) -> Items:
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


def count_and_share(
    c: PortGroup, feature: str, column: str, ratio: str, noun: str, per: str, source: str,
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
            said = f"{value:,.0f} {noun} ({ratio_words(share)} {per}){more}"
            out.append(item(feature, value, "frames", None, source, said))
    return out


def collisions(c: PortGroup) -> Items:
    return count_and_share(
        c, "collisions", "collisions", "collision_ratio", "collisions", "sent frames",
        "RFC 3635 dot3StatsSingle/MultipleCollisionFrames",
    )  # fmt: skip


_REFERENCE = {1.0: "the module's low warning", 2.0: "the module's low alarm"}


def rx_light(c: PortGroup) -> MaybeItems:
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
        where = f"{abs(margin):.1f} dB {side} {against} ({reference:.1f} dBm)"
        if kind == 1.0 and alarm == alarm and rx < alarm:
            # Under the alarm too: the alarm is the news (SFF-8472 sets warning above alarm).
            where = (
                f"{alarm - rx:.1f} dB under the module's low alarm ({alarm:.1f} dBm), "
                f"{-margin:.1f} dB under its low warning ({reference:.1f} dBm)"
            )
            also = ""
        else:
            also = f"; low alarm {alarm:.1f} dBm" if kind == 1.0 and alarm == alarm else ""
        said = f"receiving {rx:.1f} dBm, {where}{also}"
        source = "SFF-8472 thresholds" if kind in _REFERENCE else "IEEE 802.3 receiver sensitivity"
        out.append(item("rx_power", rx, "dBm", reference, source, said))
    return out


def present(*items: EvidenceRecord | None) -> Items:
    return [i for i in items if i is not None]
