"""Standard objects of format 1.2, read the same way by every collector that reaches them.

* IF-MIB (RFC 2863): ifAdminStatus, and ifLastChange turned into a moment with sysUpTime.
* RFC 3636's ifMauAutoNegCapAdvertisedBits, as LLDP's IEEE 802.3 extension carries the far
  end's (LLDP-EXT-DOT3-MIB lldpXdot3RemPortAutoNegAdvertisedCap): the speeds it offers.
* POWER-ETHERNET-MIB (RFC 3621): detection status, class, the power budget left, and which
  interface a PSE port is (the MIB does not say: see :func:`poe_interfaces`).
* Link aggregation: IF-MIB ifStackTable (an ieee8023adLag(161) interface stacked above a
  port) and IEEE8023-LAG-MIB dot3adAggPortAttachedAggID.

The SNMP and Prometheus collectors read the same MIB objects, one by walking them, the other
as an SNMP exporter publishes them, so both decode them here.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from datetime import datetime, timedelta
from typing import Literal

from linktriage.engine.format.snapshot import AdminStatus, Detection, PoeStatus

#: ifAdminStatus (RFC 2863 section 6, ifEntry 7).
ADMIN_STATUS: dict[int, AdminStatus] = {1: "up", 2: "down", 3: "testing"}
#: TimeTicks count hundredths of a second modulo 2^32 (RFC 2578 section 7.1.8).
TIMETICKS_WRAP = 2**32

#: ifMauAutoNegCapAdvertisedBits (RFC 3636, the same bits in RFC 4836): bit -> speed. Bits
#: 0 (bOther) and 8 to 11 (PAUSE) name no speed; nothing above 1000BASE-T is in the bitmap.
AUTONEG_SPEEDS = {
    1: 10_000_000,  # b10baseT
    2: 10_000_000,  # b10baseTFD
    3: 100_000_000,  # b100baseT4
    4: 100_000_000,  # b100baseTX
    5: 100_000_000,  # b100baseTXFD
    6: 100_000_000,  # b100baseT2
    7: 100_000_000,  # b100baseT2FD
    12: 1_000_000_000,  # b1000baseX
    13: 1_000_000_000,  # b1000baseXFD
    14: 1_000_000_000,  # b1000baseT
    15: 1_000_000_000,  # b1000baseTFD
}

#: pethPsePortDetectionStatus (RFC 3621).
DETECTION: dict[int, Detection] = {1: "disabled", 2: "searching", 3: "deliveringPower",
                                   4: "fault", 5: "test", 6: "otherFault"}  # fmt: skip
DELIVERING = "deliveringPower"
#: ifType ieee8023adLag (IANAifType-MIB): an IEEE 802.1AX link aggregate.
LAG_IFTYPE = 161
#: RowStatus active(1) (RFC 2579), the value of an ifStackStatus row in use.
ACTIVE = 1

PoePort = tuple[int, int]  # (pethPsePortGroupIndex, pethPsePortIndex)
PoeMapping = Literal["auto", "ifindex", "name"]


def admin_status(value: int | None) -> AdminStatus | None:
    """ifAdminStatus as the format names it; None where absent or not a value of the MIB."""
    return None if value is None else ADMIN_STATUS.get(value)


def last_change(
    at: datetime, uptime_ticks: int | None, changed_ticks: int | None
) -> datetime | None:
    """When a port entered its current state, from ifLastChange and sysUpTime read at ``at``.

    ifLastChange is "the value of sysUpTime at the time the interface entered its current
    operational state", and 0 where that was before the agent last started (RFC 2863): such
    a port's change is unknown, so None, not the agent's start, which would be a moment
    made up. The age is taken modulo 2^32, so a sysUpTime that wrapped since (after 497
    days) still places it; a change read as later than the sysUpTime (the state changed
    between reading sysUpTime and walking the table) is placed at ``at``.
    """
    if uptime_ticks is None or changed_ticks is None or changed_ticks == 0:
        return None
    age = (uptime_ticks - changed_ticks) % TIMETICKS_WRAP
    if age >= TIMETICKS_WRAP // 2:
        return at
    return at - timedelta(seconds=age / 100)


def advertised_speeds(octets: bytes) -> list[int] | None:
    """The speeds an autonegotiation bitmap advertises (bit 0 is the first octet's most
    significant bit, SMIv2 BITS, RFC 2578 section 7.1.4), lowest first; None where it
    names no speed."""
    speeds = {
        speed
        for bit, speed in AUTONEG_SPEEDS.items()
        if bit // 8 < len(octets) and octets[bit // 8] & (0x80 >> (bit % 8))
    }
    return sorted(speeds) or None


def power_class(value: int | None, detection: Detection | None) -> int | None:
    """pethPsePortPowerClassifications (class0(1) to class4(5)) as a class number; RFC 3621
    says it "is valid only while a PD is being powered", so None otherwise."""
    if value is None or detection != DELIVERING or not 1 <= value <= 5:
        return None
    return value - 1


def poe_status(
    detection: Detection | None,
    class_number: int | None,
    watts: float | None = None,
    budget_left_w: float | None = None,
) -> PoeStatus | None:
    """The format's poe_status object; None where none of its parts is known."""
    if detection is None and class_number is None and watts is None and budget_left_w is None:
        return None
    return PoeStatus(
        detection=detection,
        power_class=class_number,
        power_w=watts,
        budget_left_w=budget_left_w,
    )


def budget_left(power_w: float | None, consumption_w: float | None) -> float | None:
    """pethMainPsePower less pethMainPseConsumptionPower (RFC 3621, both in watts)."""
    if power_w is None or consumption_w is None:
        return None
    return float(power_w) - float(consumption_w)


def _numbers(name: str) -> list[int]:
    return [int(part) for part in re.findall(r"\d+", name)]


def poe_interfaces(
    rows: Iterable[PoePort], names: Mapping[int, str], how: PoeMapping = "auto"
) -> dict[PoePort, int]:
    """Which interface (ifIndex) each PSE port is.

    RFC 3621 indexes pethPsePortTable by group ("box in the stack, module in a rack and the
    value 1 MUST be used for non-modular devices") and port, whose "numbering scheme ... is
    implementation specific": no object ties a PSE port to an ifIndex. Two readings are
    common practice, and ``how`` chooses:

    * ``ifindex``: the port index is the ifIndex (a non-modular switch numbering both
      1 to N); only on a device of one group.
    * ``name``: the port index is the number the interface's name ends with (port5, eth5,
      Gi1/0/5) and, on a device of several groups, the group the number it begins with
      (Gi2/0/5 is group 2); where several names fit, the one on module 0 (Gi1/0/5 rather
      than the uplink Te1/1/5).
    * ``auto``: ``ifindex`` where each port index is an ifIndex whose name ends with that
      number (both readings agree), else ``name``.

    A row that matches several interfaces, or an interface that several rows match, is
    left out: its PoE state is not reported rather than given to the wrong port.
    """
    rows = sorted(set(rows))
    groups = {group for group, _ in rows}
    by_index: dict[PoePort, int] = {}
    if len(groups) == 1:
        by_index = {row: row[1] for row in rows if row[1] in names}
    if how == "ifindex":
        return by_index
    agree = all(
        row in by_index and (nums := _numbers(names[row[1]])) and nums[-1] == row[1] for row in rows
    )
    if how == "auto" and rows and agree:
        return by_index
    found: dict[PoePort, list[int]] = {}
    for index, name in names.items():
        nums = _numbers(str(name))
        if not nums:
            continue
        for row in rows:
            group, port = row
            if nums[-1] == port and (len(groups) == 1 or (len(nums) > 1 and nums[0] == group)):
                found.setdefault(row, []).append(index)
    chosen = {row: _base_module(indices, names) for row, indices in found.items()}
    single = {row: index for row, index in chosen.items() if index is not None}
    taken: dict[int, int] = {}
    for one in single.values():
        taken[one] = taken.get(one, 0) + 1
    return {row: one for row, one in single.items() if taken[one] == 1}


def _base_module(indices: list[int], names: Mapping[int, str]) -> int | None:
    """The one interface a PSE port can be among several whose names end in its number:
    the only one, or else the only one whose numbers between box and port are all 0
    (Gi1/0/5, not the uplink Te1/1/5: the copper ports on a switch's base module)."""
    if len(indices) == 1:
        return indices[0]
    base = [i for i in indices if (nums := _numbers(str(names[i])))[1:-1] and not any(nums[1:-1])]
    return base[0] if len(base) == 1 else None


def aggregates(
    stack: Iterable[tuple[int, int]],
    types: Mapping[int, int],
    attached: Mapping[int, int],
    names: Mapping[int, str],
) -> dict[int, str]:
    """Each member port's aggregate, by the aggregate's own name (ifIndex -> ifName).

    ``stack`` holds the (higher, lower) layer pairs of ifStackTable rows in use (RFC 2863:
    the aggregate is the higher layer of each member); only a higher layer of ifType
    ieee8023adLag(161) counts, so a VLAN or a tunnel above a port is not taken for one.
    ``attached`` is IEEE8023-LAG-MIB's dot3adAggPortAttachedAggID (member ifIndex ->
    aggregator ifIndex, 0 where not attached), read for ports the stack does not place: it
    names only members attached now, where ifStackTable also names a member that is down.
    A port stacked under two aggregates names neither.
    """
    above: dict[int, set[int]] = {}
    for higher, lower in stack:
        if higher and lower and types.get(higher) == LAG_IFTYPE and higher in names:
            above.setdefault(lower, set()).add(higher)
    found = {lower: names[next(iter(h))] for lower, h in above.items() if len(h) == 1}
    for member, aggregator in attached.items():
        if member not in above and aggregator and aggregator != member and aggregator in names:
            found[member] = names[aggregator]
    return {member: name for member, name in found.items() if str(name)}
