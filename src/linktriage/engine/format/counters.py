"""The counter catalogue: every counter name the snapshot format knows, its width, what it counts.

Names are the MIB object names (RFC 2863 IF-MIB, RFC 3635 EtherLike-MIB, RFC 2819 RMON-MIB,
RFC 3621 POWER-ETHERNET-MIB) and, for FEC, the IEEE 802.3 clause 30 attribute names (since
format 1.2). A name without ``HC`` is a Counter32 and wraps at 2^32; the ``ifHC...``,
``dot3HC...`` and FEC names are Counter64 and wrap at 2^64 (RFC 2578 sections 7.1.6 and
7.1.10; SNAPSHOT-FORMAT 1.2 for FEC).

Counters are grouped into *quantities*: one physical count that a device may report as a
Counter64, a Counter32, or both. The window prefers the 64-bit form where both polls have it.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum

#: Octets of preamble, start-of-frame delimiter (8) and minimum inter-frame gap (12) that every
#: frame costs on the wire beyond its own length (IEEE 802.3 clause 4.4.2; the 96-bit gap is
#: from memory, the frame-rate arithmetic is in the shared standards notes).
WIRE_OVERHEAD_OCTETS = 20
#: Minimum frame, FCS included (IEEE 802.3 clause 4.4.2 minFrameSize 512 bits; RFC 2819:
#: etherStatsUndersizePkts counts frames "less than 64 octets long").
MIN_FRAME_OCTETS = 64
#: Largest untagged frame, FCS included (IEEE 802.3 clause 4.4.2 maxUntaggedFrameSize, as
#: quoted; RFC 2819: etherStatsOversizePkts counts frames "longer than 1518 octets").
MAX_UNTAGGED_FRAME_OCTETS = 1518
#: Ethernet header and FCS around the payload: 1500-octet MTU (RFC 3635 section 3.2.7)
#: plus 18 gives the 1518-octet frame.
FRAME_OVERHEAD_OCTETS = 18
#: slotTime at 10 and 100 Mb/s: a collision later than this is a late collision
#: (IEEE 802.3 clause 4.4.2, as quoted; RFC 3635 dot3StatsLateCollisions).
SLOT_TIME_BITS = 512


class Unit(StrEnum):
    """What one increment of a counter stands for; sets the fastest it can possibly grow."""

    OCTETS = "octets"
    PACKETS = "packets"  # traffic: at most one per minimum-size frame
    EVENTS = "events"  # errors, discards, collisions: also at most one per frame
    BITS = "bits"  # bits FEC corrected: at most every bit the line carries

    @property
    def traffic(self) -> bool:
        """Traffic counters can really run at line rate; exception counters in practice cannot."""
        return self in (Unit.OCTETS, Unit.PACKETS)


@dataclass(frozen=True, slots=True)
class Quantity:
    """One count a port may report, under its Counter64 name, its Counter32 name, or both."""

    key: str
    unit: Unit
    hc: str | None
    c32: str | None
    since: str = "1.0"  # the format version that added it


QUANTITIES: tuple[Quantity, ...] = (
    Quantity("in_octets", Unit.OCTETS, "ifHCInOctets", "ifInOctets"),
    Quantity("out_octets", Unit.OCTETS, "ifHCOutOctets", "ifOutOctets"),
    Quantity("in_ucast", Unit.PACKETS, "ifHCInUcastPkts", "ifInUcastPkts"),
    Quantity("in_mcast", Unit.PACKETS, "ifHCInMulticastPkts", "ifInMulticastPkts"),
    Quantity("in_bcast", Unit.PACKETS, "ifHCInBroadcastPkts", "ifInBroadcastPkts"),
    Quantity("out_ucast", Unit.PACKETS, "ifHCOutUcastPkts", "ifOutUcastPkts"),
    Quantity("out_mcast", Unit.PACKETS, "ifHCOutMulticastPkts", "ifOutMulticastPkts"),
    Quantity("out_bcast", Unit.PACKETS, "ifHCOutBroadcastPkts", "ifOutBroadcastPkts"),
    Quantity("in_errors", Unit.EVENTS, None, "ifInErrors"),
    Quantity("out_errors", Unit.EVENTS, None, "ifOutErrors"),
    Quantity("in_discards", Unit.EVENTS, None, "ifInDiscards"),
    Quantity("out_discards", Unit.EVENTS, None, "ifOutDiscards"),
    Quantity("fcs_errors", Unit.EVENTS, "dot3HCStatsFCSErrors", "dot3StatsFCSErrors"),
    Quantity(
        "alignment_errors", Unit.EVENTS, "dot3HCStatsAlignmentErrors", "dot3StatsAlignmentErrors"
    ),
    Quantity("symbol_errors", Unit.EVENTS, "dot3HCStatsSymbolErrors", "dot3StatsSymbolErrors"),
    Quantity("late_collisions", Unit.EVENTS, None, "dot3StatsLateCollisions"),
    Quantity("single_collisions", Unit.EVENTS, None, "dot3StatsSingleCollisionFrames"),
    Quantity("multiple_collisions", Unit.EVENTS, None, "dot3StatsMultipleCollisionFrames"),
    Quantity("excessive_collisions", Unit.EVENTS, None, "dot3StatsExcessiveCollisions"),
    Quantity("frame_too_longs", Unit.EVENTS, "dot3HCStatsFrameTooLongs", "dot3StatsFrameTooLongs"),
    Quantity(
        "mac_receive_errors",
        Unit.EVENTS,
        "dot3HCStatsInternalMacReceiveErrors",
        "dot3StatsInternalMacReceiveErrors",
    ),
    Quantity("undersize", Unit.EVENTS, None, "etherStatsUndersizePkts"),
    Quantity("fragments", Unit.EVENTS, None, "etherStatsFragments"),
    Quantity("oversize", Unit.EVENTS, None, "etherStatsOversizePkts"),
    Quantity("jabbers", Unit.EVENTS, None, "etherStatsJabbers"),
    # Since format 1.2: pause frames (RFC 3635 dot3PauseTable).
    Quantity("in_pause", Unit.EVENTS, "dot3HCInPauseFrames", "dot3InPauseFrames", "1.2"),
    Quantity("out_pause", Unit.EVENTS, "dot3HCOutPauseFrames", "dot3OutPauseFrames", "1.2"),
    # FEC (IEEE 802.3 clause 30, 30.5.1.1.17 and 30.5.1.1.18, summed over lanes; corrected
    # bits are no IEEE attribute, but many devices count them): all 64-bit. A codeword is
    # far longer than a minimum frame, so blocks are bounded as events are.
    Quantity("fec_corrected_blocks", Unit.EVENTS, "aFECCorrectedBlocks", None, "1.2"),
    Quantity("fec_uncorrectable_blocks", Unit.EVENTS, "aFECUncorrectableBlocks", None, "1.2"),
    Quantity("fec_corrected_bits", Unit.BITS, "FECCorrectedBits", None, "1.2"),
    # Power over Ethernet (RFC 3621 pethPsePortTable), Counter32.
    Quantity("poe_mps_absent", Unit.EVENTS, None, "pethPsePortMPSAbsentCounter", "1.2"),
    Quantity(
        "poe_invalid_signature", Unit.EVENTS, None, "pethPsePortInvalidSignatureCounter", "1.2"
    ),
    Quantity("poe_power_denied", Unit.EVENTS, None, "pethPsePortPowerDeniedCounter", "1.2"),
    Quantity("poe_overload", Unit.EVENTS, None, "pethPsePortOverLoadCounter", "1.2"),
    Quantity("poe_short", Unit.EVENTS, None, "pethPsePortShortCounter", "1.2"),
)

QUANTITY_KEYS: tuple[str, ...] = tuple(q.key for q in QUANTITIES)


@dataclass(frozen=True, slots=True)
class CounterColumn:
    """One counter name as it appears in a snapshot, with its width and unit."""

    name: str
    bits: int
    unit: Unit


def _columns() -> tuple[CounterColumn, ...]:
    columns: list[CounterColumn] = []
    for q in QUANTITIES:
        if q.hc is not None:
            columns.append(CounterColumn(q.hc, 64, q.unit))
        if q.c32 is not None:
            columns.append(CounterColumn(q.c32, 32, q.unit))
    return tuple(columns)


#: Every counter column of the format, in a fixed order (the column order of poll tables).
COLUMNS: tuple[CounterColumn, ...] = _columns()
COLUMN_INDEX: dict[str, int] = {c.name: i for i, c in enumerate(COLUMNS)}
COUNTER32_MAX = 2**32 - 1
COUNTER64_MAX = 2**64 - 1


def max_rate_per_second(unit: Unit, speed_bps: float) -> float:
    """The fastest a counter of ``unit`` can grow on a link of ``speed_bps``.

    Octets: line rate over 8; bits: line rate. Packets and events: one per minimum-size frame
    and its overhead,
    1,488,095 per second at 1 Gb/s (64 + 20 octets per frame, IEEE 802.3 clause 4.4.2).
    """
    if unit is Unit.OCTETS:
        return speed_bps / 8.0
    if unit is Unit.BITS:
        return speed_bps
    return speed_bps / ((MIN_FRAME_OCTETS + WIRE_OVERHEAD_OCTETS) * 8.0)
