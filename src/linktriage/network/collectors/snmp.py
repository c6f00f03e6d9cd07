"""The ``snmp`` collector: IF-MIB and EtherLike-MIB counters over SNMP v2c or v3 (pysnmp).

Each poll walks the columns it needs with GETBULK, all at once, by numeric OID (no MIB is
compiled at run time): ifTable and ifXTable of IF-MIB (RFC 2863), dot3StatsTable of
EtherLike-MIB (RFC 3635, indexed by ifIndex), and sysUpTime to turn
ifCounterDiscontinuityTime into a moment. Ports are named by ifName (ifDescr where a device
has no ifName). A device without the 64-bit objects still answers with its Counter32 ones;
objects a device lacks are left out of the snapshot. SNMPv1 is not offered: Counter64
cannot travel over it (RFC 3584 section 4.2.2.1).

The far end of each port comes from LLDP's remote table: LLDP-V2-MIB's (IEEE 802.1AB-2009)
where the device answers it, indexed by the local ifIndex itself, else LLDP-MIB's
(IEEE 802.1AB-2005), whose local port numbers are matched to ports through
lldpLocPortTable (:func:`~linktriage.network.collectors.lldp.local_ports`). The system
names are walked with the counters, the rest of the table only where a device has some:
a device without LLDP costs two short walks. Neighbors are read again only every
``neighbors_every_s`` (300 s unless set), and kept in between. Where the device has
LLDP-EXT-DOT3-MIB's remote port table (IEEE 802.1AB-2005 annex G), the speeds each far end
advertises (lldpXdot3RemPortAutoNegAdvertisedCap, RFC 3636 bits: up to 1 Gb/s) come too.

Format 1.2 adds, from the same walk: ifAdminStatus, and ifLastChange placed in time with
the sysUpTime read at the start of the poll (0, a change before the agent started, is left
out); the pause frames of EtherLike-MIB's dot3PauseTable (RFC 3635, indexed by ifIndex);
POWER-ETHERNET-MIB's PSE ports and power budget (RFC 3621; the table is indexed by group
and port, matched to interfaces as ``poe_ports`` says, see
:func:`~linktriage.network.collectors.mibs.poe_interfaces`); and each port's aggregate,
from IF-MIB's ifStackTable (an ieee8023adLag interface stacked above it) or
IEEE8023-LAG-MIB's dot3adAggPortAttachedAggID. A table is probed by one column and walked
in full only where the device has rows in it: a device without it costs one short walk,
and reads as before.
"""

from __future__ import annotations

import asyncio
import time
from collections.abc import Awaitable, Callable, Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import Annotated, Any, Literal

from pydantic import Field

from linktriage.engine.format.snapshot import Neighbor, PoeStatus, Snapshot
from linktriage.errors import BadAnswerError, CollectorError, DeviceTimeoutError
from linktriage.network.collectors.base import Collector, Options, Reading, SecretRef, Target
from linktriage.network.collectors.lldp import (
    NEIGHBORS_EVERY_S,
    FarEnd,
    Remembered,
    far_end,
    local_ports,
    neighbor,
)
from linktriage.network.collectors.mibs import (
    DELIVERING,
    DETECTION,
    PoeMapping,
    admin_status,
    advertised_speeds,
    aggregates,
    budget_left,
    last_change,
    poe_interfaces,
    poe_status,
    power_class,
)

IF_ENTRY = "1.3.6.1.2.1.2.2.1"
IFX_ENTRY = "1.3.6.1.2.1.31.1.1.1"
DOT3_ENTRY = "1.3.6.1.2.1.10.7.2.1"
SYS_UPTIME = "1.3.6.1.2.1.1.3.0"

#: Columns walked, by numeric OID, and the snapshot name each becomes.
COUNTER_COLUMNS: dict[str, str] = {
    f"{IF_ENTRY}.10": "ifInOctets",
    f"{IF_ENTRY}.11": "ifInUcastPkts",
    f"{IF_ENTRY}.13": "ifInDiscards",
    f"{IF_ENTRY}.14": "ifInErrors",
    f"{IF_ENTRY}.16": "ifOutOctets",
    f"{IF_ENTRY}.17": "ifOutUcastPkts",
    f"{IF_ENTRY}.19": "ifOutDiscards",
    f"{IF_ENTRY}.20": "ifOutErrors",
    f"{IFX_ENTRY}.6": "ifHCInOctets",
    f"{IFX_ENTRY}.7": "ifHCInUcastPkts",
    f"{IFX_ENTRY}.8": "ifHCInMulticastPkts",
    f"{IFX_ENTRY}.9": "ifHCInBroadcastPkts",
    f"{IFX_ENTRY}.10": "ifHCOutOctets",
    f"{IFX_ENTRY}.11": "ifHCOutUcastPkts",
    f"{IFX_ENTRY}.12": "ifHCOutMulticastPkts",
    f"{IFX_ENTRY}.13": "ifHCOutBroadcastPkts",
    f"{DOT3_ENTRY}.2": "dot3StatsAlignmentErrors",
    f"{DOT3_ENTRY}.3": "dot3StatsFCSErrors",
    f"{DOT3_ENTRY}.4": "dot3StatsSingleCollisionFrames",
    f"{DOT3_ENTRY}.5": "dot3StatsMultipleCollisionFrames",
    f"{DOT3_ENTRY}.8": "dot3StatsLateCollisions",
    f"{DOT3_ENTRY}.9": "dot3StatsExcessiveCollisions",
    f"{DOT3_ENTRY}.13": "dot3StatsFrameTooLongs",
    f"{DOT3_ENTRY}.16": "dot3StatsInternalMacReceiveErrors",
    f"{DOT3_ENTRY}.18": "dot3StatsSymbolErrors",
}
STATE_COLUMNS: dict[str, str] = {
    f"{IF_ENTRY}.2": "ifDescr",
    f"{IF_ENTRY}.3": "ifType",
    f"{IF_ENTRY}.4": "ifMtu",
    f"{IF_ENTRY}.5": "ifSpeed",
    f"{IF_ENTRY}.7": "ifAdminStatus",
    f"{IF_ENTRY}.8": "ifOperStatus",
    f"{IF_ENTRY}.9": "ifLastChange",
    f"{IFX_ENTRY}.1": "ifName",
    f"{IFX_ENTRY}.15": "ifHighSpeed",
    f"{IFX_ENTRY}.19": "ifCounterDiscontinuityTime",
    f"{DOT3_ENTRY}.19": "dot3StatsDuplexStatus",
}
#: EtherLike-MIB dot3PauseTable (RFC 3635): dot3PauseEntry, indexed by dot3StatsIndex (the
#: ifIndex). dot3InPauseFrames probes for the table; the rest is walked where it has rows.
PAUSE_ENTRY = "1.3.6.1.2.1.10.7.10.1"
PAUSE_COLUMNS: dict[str, str] = {
    f"{PAUSE_ENTRY}.3": "dot3InPauseFrames",
    f"{PAUSE_ENTRY}.4": "dot3OutPauseFrames",
    f"{PAUSE_ENTRY}.5": "dot3HCInPauseFrames",
    f"{PAUSE_ENTRY}.6": "dot3HCOutPauseFrames",
}
PAUSE_PROBE = f"{PAUSE_ENTRY}.3"
#: POWER-ETHERNET-MIB (RFC 3621): pethPsePortEntry, indexed by pethPsePortGroupIndex and
#: pethPsePortIndex, and pethMainPseEntry, indexed by pethMainPseGroupIndex (the same
#: group numbers). pethPsePortDetectionStatus probes for the tables.
PETH_PORT_ENTRY = "1.3.6.1.2.1.105.1.1.1"
PETH_DETECTION = f"{PETH_PORT_ENTRY}.6"  # pethPsePortDetectionStatus
PETH_CLASS = f"{PETH_PORT_ENTRY}.10"  # pethPsePortPowerClassifications
PETH_COUNTERS: dict[str, str] = {
    f"{PETH_PORT_ENTRY}.8": "pethPsePortMPSAbsentCounter",
    f"{PETH_PORT_ENTRY}.11": "pethPsePortInvalidSignatureCounter",
    f"{PETH_PORT_ENTRY}.12": "pethPsePortPowerDeniedCounter",
    f"{PETH_PORT_ENTRY}.13": "pethPsePortOverLoadCounter",
    f"{PETH_PORT_ENTRY}.14": "pethPsePortShortCounter",
}
PETH_MAIN_ENTRY = "1.3.6.1.2.1.105.1.3.1.1"
PETH_MAIN_POWER = f"{PETH_MAIN_ENTRY}.2"  # pethMainPsePower, watts
PETH_MAIN_CONSUMPTION = f"{PETH_MAIN_ENTRY}.4"  # pethMainPseConsumptionPower, watts
#: IF-MIB ifStackStatus (RFC 2863), indexed by ifStackHigherLayer and ifStackLowerLayer;
#: IEEE8023-LAG-MIB dot3adAggPortAttachedAggID (IEEE 802.1AX), indexed by the member's ifIndex.
IF_STACK_STATUS = "1.3.6.1.2.1.31.1.2.1.3"
LAG_ATTACHED = "1.2.840.10006.300.43.1.2.1.1.13"
#: LLDP-MIB (IEEE 802.1AB-2005 12.1): lldpRemEntry, indexed by lldpRemTimeMark,
#: lldpRemLocalPortNum, lldpRemIndex; lldpLocPortEntry, indexed by lldpLocPortNum.
LLDP_REM_ENTRY = "1.0.8802.1.1.2.1.4.1.1"
LLDP_LOC_PORT_ENTRY = "1.0.8802.1.1.2.1.3.7.1"
LLDP_REM = {
    "subtype": f"{LLDP_REM_ENTRY}.6",  # lldpRemPortIdSubtype
    "port_id": f"{LLDP_REM_ENTRY}.7",  # lldpRemPortId
    "port_desc": f"{LLDP_REM_ENTRY}.8",  # lldpRemPortDesc
}
LLDP_REM_SYS_NAME = f"{LLDP_REM_ENTRY}.9"
#: LLDP-EXT-DOT3-MIB (IEEE 802.1AB-2005 annex G): lldpXdot3RemPortEntry, indexed as
#: lldpRemEntry; column 3 is lldpXdot3RemPortAutoNegAdvertisedCap, two octets of RFC 3636
#: ifMauAutoNegCapAdvertisedBits.
LLDP_XDOT3_REM_CAP = "1.0.8802.1.1.2.1.5.4623.1.3.1.1.3"
LLDP_LOC = {
    "subtype": f"{LLDP_LOC_PORT_ENTRY}.2",  # lldpLocPortIdSubtype
    "port_id": f"{LLDP_LOC_PORT_ENTRY}.3",  # lldpLocPortId
    "port_desc": f"{LLDP_LOC_PORT_ENTRY}.4",  # lldpLocPortDesc
}
#: LLDP-V2-MIB (IEEE 802.1AB-2009): lldpV2RemEntry, indexed by lldpV2RemTimeMark,
#: lldpV2RemLocalIfIndex, lldpV2RemLocalDestMACAddress, lldpV2RemIndex; each column sits one
#: above its LLDP-MIB counterpart (the ifIndex is column 2).
LLDP_V2_REM_ENTRY = "1.3.111.2.802.1.1.13.1.4.1.1"
LLDP_V2_REM = {
    "subtype": f"{LLDP_V2_REM_ENTRY}.7",  # lldpV2RemPortIdSubtype
    "port_id": f"{LLDP_V2_REM_ENTRY}.8",  # lldpV2RemPortId
    "port_desc": f"{LLDP_V2_REM_ENTRY}.9",  # lldpV2RemPortDesc
}
LLDP_V2_REM_SYS_NAME = f"{LLDP_V2_REM_ENTRY}.10"
#: ifOperStatus values (RFC 2863) and dot3StatsDuplexStatus values (RFC 3635).
OPER_STATUS = {1: "up", 2: "down", 3: "testing", 4: "unknown", 5: "dormant", 6: "notPresent",
               7: "lowerLayerDown"}  # fmt: skip
DUPLEX = {1: "unknown", 2: "half", 3: "full"}
IFSPEED_MAX = 4_294_967_295  # ifSpeed saturates here; ifHighSpeed must be read (RFC 2863)


class SnmpOptions(Options):
    version: Literal["2c", "3"] = "2c"
    port: int = 161
    community: SecretRef | None = None
    user: str | None = None
    auth_protocol: Literal["SHA", "SHA256", "SHA512", "MD5"] = "SHA"
    auth_key: SecretRef | None = None
    priv_protocol: Literal["AES", "AES256", "DES", "none"] = "AES"
    priv_key: SecretRef | None = None
    max_repetitions: int = 25
    #: Walks in flight at once to one device: a switch's agent is a small, busy process.
    parallel_walks: Annotated[int, Field(ge=1, le=32)] = 4
    neighbors_every_s: Annotated[float, Field(ge=0)] = NEIGHBORS_EVERY_S
    #: How POWER-ETHERNET-MIB's PSE ports are matched to interfaces (see mibs.poe_interfaces).
    poe_ports: PoeMapping = "auto"


@dataclass(frozen=True, slots=True)
class PortExtras:
    """What other tables than the interface tables say of each port (by ifIndex)."""

    aggregates: dict[int, str] = field(default_factory=dict)
    poe_counters: dict[int, dict[str, int]] = field(default_factory=dict)
    poe_status: dict[int, PoeStatus] = field(default_factory=dict)


#: The counters of a snapshot that come from columns indexed by ifIndex.
IFINDEX_COUNTERS = (*COUNTER_COLUMNS.values(), *PAUSE_COLUMNS.values())


def _engine() -> Any:
    """One SNMP engine per event loop: engines are costly and bound to their loop."""
    from pysnmp.hlapi.v3arch.asyncio import SnmpEngine

    loop = asyncio.get_running_loop()
    engine = getattr(loop, "_linktriage_snmp_engine", None)
    if engine is None:
        engine = SnmpEngine()
        loop._linktriage_snmp_engine = engine  # type: ignore[attr-defined]
    return engine


def snapshots_from_columns(
    device: str,
    columns: dict[str, dict[int, Any]],
    uptime_s: float | None,
    now: float,
    neighbors: dict[int, Neighbor] | None = None,
    extras: PortExtras | None = None,
) -> tuple[list[Snapshot], dict[str, str]]:
    """Snapshots from walked columns (column name -> ifIndex -> value), with the far end
    of each port LLDP names (ifIndex -> neighbor) and what other tables say of it."""
    neighbors = neighbors or {}
    extras = extras or PortExtras()
    uptime_ticks = None if uptime_s is None else round(uptime_s * 100)
    names = columns.get("ifName", {})
    descriptions = columns.get("ifDescr", {})
    at = datetime.fromtimestamp(now, UTC)
    booted = None if uptime_s is None else now - uptime_s
    snapshots: list[Snapshot] = []
    problems: dict[str, str] = {}
    indices = sorted(set(names) | set(descriptions) | set(columns.get("ifOperStatus", {})))
    for index in indices:
        name = str(names.get(index) or descriptions.get(index) or "")
        if not name:
            problems[f"ifIndex {index}"] = "has neither ifName nor ifDescr"
            continue
        try:
            counters = {
                snapshot_name: int(columns[snapshot_name][index])
                for snapshot_name in IFINDEX_COUNTERS
                if index in columns.get(snapshot_name, {})
            }
            counters.update(extras.poe_counters.get(index, {}))
            state = {k: columns.get(k, {}).get(index) for k in STATE_COLUMNS.values()}
            powered = extras.poe_status.get(index)
            snapshots.append(
                Snapshot(
                    device=device,
                    port=name,
                    time=at,
                    oper_status=OPER_STATUS.get(int(state["ifOperStatus"] or 4), "unknown"),
                    counters=counters,
                    speed_bps=_speed(state["ifHighSpeed"], state["ifSpeed"]),
                    duplex=_lookup(DUPLEX, state["dot3StatsDuplexStatus"]),
                    mtu=None if state["ifMtu"] is None else int(state["ifMtu"]),
                    discontinuity_time=_moment(booted, state["ifCounterDiscontinuityTime"]),
                    neighbor=neighbors.get(index),
                    admin_status=admin_status(_int(state["ifAdminStatus"])),
                    last_change=last_change(at, uptime_ticks, _int(state["ifLastChange"])),
                    aggregate=extras.aggregates.get(index),
                    poe_status=powered,
                    poe=None if powered is None else powered.detection == DELIVERING,
                )
            )
        except (TypeError, ValueError) as exc:
            problems[name] = f"malformed answer: {exc}".splitlines()[0]
    return snapshots, problems


Row = tuple[int, ...]  # a table row's index: the OID's sub-identifiers after the column


def lldp_neighbors(remote: dict[Row, FarEnd], local_port: dict[int, int]) -> dict[int, Neighbor]:
    """The neighbor of each ifIndex from remote entries keyed by their row index, whose
    second sub-identifier is the local port (``local_port`` maps it to an ifIndex)."""
    heard: dict[int, list[FarEnd]] = {}
    for row, end in remote.items():
        index = local_port.get(row[1])
        if index is not None:
            heard.setdefault(index, []).append(end)
    found = {index: neighbor(ends) for index, ends in heard.items()}
    return {index: far for index, far in found.items() if far is not None}


def _speed(high: Any, low: Any) -> int | None:
    """ifHighSpeed (Mb/s) where set, else ifSpeed unless it is saturated (RFC 2863)."""
    if high:
        return int(high) * 1_000_000
    if low is not None and int(low) < IFSPEED_MAX:
        return int(low)
    return None


def _int(value: Any) -> int | None:
    """An integer object's value; ValueError (a malformed answer) where it is text."""
    return None if value is None else int(value)


def _lookup(table: dict[int, Any], value: Any) -> Any:
    return None if value is None else table.get(int(value))


def _moment(booted: float | None, ticks: Any) -> datetime | None:
    """A TimeStamp (sysUpTime ticks, 1/100 s) as a moment; 0 means since the agent started."""
    if booted is None or ticks is None:
        return None
    return datetime.fromtimestamp(booted + int(ticks) / 100.0, UTC)


class SnmpCollector(Collector[SnmpOptions]):
    """Reads a device over SNMP."""

    def __init__(self, target: Target) -> None:
        super().__init__(target)
        o = self.options
        if o.version == "2c" and o.community is None:
            raise self.error(CollectorError, 'SNMP v2c needs community = { env = "..." }')
        if o.version == "3" and o.user is None:
            raise self.error(CollectorError, "SNMP v3 needs a user")
        self.lldp: Remembered[int] = Remembered(o.neighbors_every_s)

    def _auth(self) -> Any:
        from pysnmp.hlapi.v3arch import asyncio as hlapi

        o = self.options
        if o.version == "2c":
            assert o.community is not None
            return hlapi.CommunityData(o.community.reveal(), mpModel=1)
        auth = {
            "SHA": hlapi.USM_AUTH_HMAC96_SHA,
            "SHA256": hlapi.USM_AUTH_HMAC192_SHA256,
            "SHA512": hlapi.USM_AUTH_HMAC384_SHA512,
            "MD5": hlapi.USM_AUTH_HMAC96_MD5,
        }[o.auth_protocol]
        priv = {
            "AES": hlapi.USM_PRIV_CFB128_AES,
            "AES256": hlapi.USM_PRIV_CFB256_AES,
            "DES": hlapi.USM_PRIV_CBC56_DES,
            "none": hlapi.USM_PRIV_NONE,
        }[o.priv_protocol]
        return hlapi.UsmUserData(
            o.user,
            authKey=o.auth_key.reveal() if o.auth_key else None,
            privKey=o.priv_key.reveal() if o.priv_key and o.priv_protocol != "none" else None,
            authProtocol=auth if o.auth_key else hlapi.USM_AUTH_NONE,
            privProtocol=priv if o.priv_key else hlapi.USM_PRIV_NONE,
        )

    async def _walk(self, engine: Any, auth: Any, transport: Any, column: str) -> dict[Row, Any]:
        """Every row of one column, by its index (GETBULK, stopping at the column's end),
        as the agent typed it; exception values (RFC 3416) left out."""
        from pysnmp.hlapi.v3arch.asyncio import (
            ContextData,
            ObjectIdentity,
            ObjectType,
            bulk_walk_cmd,
        )

        o = self.options
        rows: dict[Row, Any] = {}
        prefix = column + "."
        async for error, status, _index, binds in bulk_walk_cmd(
            engine, auth, transport, ContextData(), 0, o.max_repetitions,
            ObjectType(ObjectIdentity(column)), lexicographicMode=False, lookupMib=False,
        ):  # fmt: skip
            if error is not None:  # a walk goes on after a timeout unless told to stop
                if "timeout" in str(error).lower() or "No SNMP response" in str(error):
                    raise self.error(
                        DeviceTimeoutError, f"no answer to SNMP within {self.target.timeout_s:g} s"
                    )
                raise self.error(CollectorError, f"SNMP error: {error}")
            if status:
                break  # e.g. noSuchName from a device that lacks the table
            for oid, value in binds:
                text = str(oid)
                if text.startswith(prefix) and value.__class__.__name__ not in _EXCEPTIONS:
                    rows[tuple(int(part) for part in text[len(prefix) :].split("."))] = value
        return rows

    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        from pysnmp.hlapi.v3arch.asyncio import (
            ContextData,
            ObjectIdentity,
            ObjectType,
            UdpTransportTarget,
            get_cmd,
        )

        engine = _engine()
        auth = self._auth()
        o = self.options
        assert self.target.address is not None
        transport = await UdpTransportTarget.create(
            (self.target.address, o.port),
            timeout=self.target.timeout_s,
            retries=self.target.retries,
        )
        error, status, _i, binds = await get_cmd(
            engine,
            auth,
            transport,
            ContextData(),
            ObjectType(ObjectIdentity(SYS_UPTIME)),
            lookupMib=False,
        )
        now = time.time()
        if error is not None:
            raise self.error(
                DeviceTimeoutError,
                f"no answer to SNMP within {self.target.timeout_s:g} s ({error})",
            )
        if status:
            raise self.error(BadAnswerError, f"refused sysUpTime: {status.prettyPrint()}")
        # An agent without sysUpTime answers noSuchObject: the counters still read, but
        # ifCounterDiscontinuityTime cannot be placed in time without it.
        uptime = _plain(binds[0][1])
        uptime_s = uptime / 100.0 if isinstance(uptime, int) else None
        gate = asyncio.Semaphore(o.parallel_walks)

        async def walk(oids: list[str]) -> list[dict[Row, Any]]:
            async def gated(oid: str) -> dict[Row, Any]:
                async with gate:
                    return await self._walk(engine, auth, transport, oid)

            return list(await asyncio.gather(*(gated(oid) for oid in oids)))

        all_columns = {**COUNTER_COLUMNS, **STATE_COLUMNS}
        probes = [PAUSE_PROBE, PETH_DETECTION, IF_STACK_STATUS, LAG_ATTACHED]
        asking = self.lldp.due()
        lldp = [LLDP_V2_REM_SYS_NAME, LLDP_REM_SYS_NAME] if asking else []
        walked = await walk([*all_columns, *probes, *lldp])
        columns = {
            name: _by_index(rows)
            for name, rows in zip(all_columns.values(), walked[: len(all_columns)], strict=True)
        }
        pause, detection, stack, attached = walked[len(all_columns) : len(all_columns) + 4]
        if pause:  # the rest of dot3PauseTable, only where the device has it
            rest = [oid for oid in PAUSE_COLUMNS if oid != PAUSE_PROBE]
            for oid, rows in zip(rest, await walk(rest), strict=True):
                columns[PAUSE_COLUMNS[oid]] = _by_index(rows)
            columns[PAUSE_COLUMNS[PAUSE_PROBE]] = _by_index(pause)
        extras = PortExtras(
            aggregates=aggregates(
                [row for row, value in stack.items() if len(row) == 2 and _plain(value) == 1],
                columns.get("ifType", {}),
                {i: v for i, v in _by_index(attached).items() if isinstance(v, int)},
                _names(columns),
            )
        )
        if detection:
            extras = await self._poe(walk, detection, columns, extras)
        if asking:
            v2_names, v1_names = walked[len(all_columns) + 4 :]
            self.lldp.keep(await self._neighbors(walk, columns, v2_names, v1_names))
        snapshots, problems = snapshots_from_columns(
            self.target.name, columns, uptime_s, now, self.lldp.neighbors, extras
        )
        return Reading(snapshots, problems).only(ports)

    async def _poe(
        self,
        walk: Callable[[list[str]], Awaitable[list[dict[Row, Any]]]],
        detection: dict[Row, Any],
        columns: dict[str, dict[int, Any]],
        extras: PortExtras,
    ) -> PortExtras:
        """The PSE ports' state, counters and power budget (RFC 3621), by the ifIndex each
        PSE port is matched to; a value of another type than the MIB's is left out."""
        oids = [PETH_CLASS, *PETH_COUNTERS, PETH_MAIN_POWER, PETH_MAIN_CONSUMPTION]
        walked = await walk(oids)
        classes, *counter_rows, power, consumption = walked
        rows = [row for row in detection if len(row) == 2]
        matched = poe_interfaces(rows, _names(columns), self.options.poe_ports)
        main_power, main_used = _by_index(power), _by_index(consumption)
        counters: dict[int, dict[str, int]] = {}
        status: dict[int, PoeStatus] = {}
        for (group, port), index in matched.items():
            row = (group, port)
            state = _plain(detection[row])
            found = DETECTION.get(state) if isinstance(state, int) else None
            number = _plain(classes[row]) if row in classes else None
            left = budget_left(_number(main_power.get(group)), _number(main_used.get(group)))
            made = poe_status(
                found, power_class(number if isinstance(number, int) else None, found), None, left
            )
            if made is not None:
                status[index] = made
            own = {
                name: value
                for name, table in zip(PETH_COUNTERS.values(), counter_rows, strict=True)
                if row in table and isinstance(value := _plain(table[row]), int)
            }
            if own:
                counters[index] = own
        return PortExtras(extras.aggregates, counters, status)

    async def _neighbors(
        self,
        walk: Callable[[list[str]], Awaitable[list[dict[Row, Any]]]],
        columns: dict[str, dict[int, Any]],
        v2_names: dict[Row, Any],
        v1_names: dict[Row, Any],
    ) -> dict[int, Neighbor]:
        """The far end of each port (ifIndex -> neighbor) from LLDP-V2-MIB where the device
        has remote entries there, else from LLDP-MIB; none where it has neither."""
        if v2_names:
            remote = _far_ends(v2_names, await walk(list(LLDP_V2_REM.values())))
            return lldp_neighbors(remote, {row[1]: row[1] for row in remote})
        if not v1_names:
            return {}
        *rem, caps, loc_subtype, loc_id, loc_desc = await walk(
            [*LLDP_REM.values(), LLDP_XDOT3_REM_CAP, *LLDP_LOC.values()]
        )
        remote = _far_ends(v1_names, rem, caps)
        local = {
            row[0]: far_end(None, _lldp_value(loc_subtype.get(row)), _lldp_value(port_id),
                            _lldp_value(loc_desc.get(row)))
            for row, port_id in loc_id.items()
        }  # fmt: skip
        numbers = {row[1] for row in remote}
        mapped = local_ports(numbers, local, columns.get("ifName", {}), columns.get("ifDescr", {}))
        return lldp_neighbors(remote, mapped)

    async def ports(self) -> list[str]:
        return [s.port for s in (await self.read()).snapshots]

    async def close(self) -> None:
        """Close the loop's SNMP engine (shared by the SNMP collectors of this loop)."""
        loop = asyncio.get_running_loop()
        engine = getattr(loop, "_linktriage_snmp_engine", None)
        if engine is not None:
            engine.close_dispatcher()
            del loop._linktriage_snmp_engine  # type: ignore[attr-defined]


#: SNMPv2 exception values (RFC 3416 section 3): the agent has no such object or instance,
#: or the walk ran off the end of its MIB. They stand for "not reported", never for a value.
_EXCEPTIONS = frozenset({"NoSuchObject", "NoSuchInstance", "EndOfMibView"})


def _far_ends(
    names: dict[Row, Any], columns: list[dict[Row, Any]], caps: dict[Row, Any] | None = None
) -> dict[Row, FarEnd]:
    """Remote entries from the system name column and the subtype, id and description
    columns, by row, with the speeds each advertises where ``caps`` (LLDP-EXT-DOT3-MIB's
    lldpXdot3RemPortAutoNegAdvertisedCap, indexed as the remote table) has its row."""
    subtype, port_id, desc = columns
    caps = caps or {}
    return {
        row: far_end(_lldp_value(name), _lldp_value(subtype.get(row)),
                     _lldp_value(port_id.get(row)), _lldp_value(desc.get(row)),
                     _speeds(caps.get(row)))
        for row, name in names.items()
    }  # fmt: skip


def _speeds(value: Any) -> list[int] | None:
    """The speeds an lldpXdot3RemPortAutoNegAdvertisedCap value advertises (octets)."""
    octets = _lldp_value(value)
    return advertised_speeds(octets) if isinstance(octets, bytes) else None


def _by_index(rows: dict[Row, Any]) -> dict[int, Any]:
    """A column indexed by an ifIndex as plain values; exception values left out."""
    return {row[0]: plain for row, value in rows.items() if (plain := _plain(value)) is not None}


def _names(columns: dict[str, dict[int, Any]]) -> dict[int, str]:
    """Each interface's name as the snapshots name it: ifName, else ifDescr."""
    names = columns.get("ifName", {})
    descriptions = columns.get("ifDescr", {})
    return {
        index: name
        for index in set(names) | set(descriptions)
        if (name := str(names.get(index) or descriptions.get(index) or ""))
    }


def _number(value: Any) -> float | None:
    return float(value) if isinstance(value, int) else None


def _lldp_value(value: Any) -> Any:
    """An LLDP object as octets (an OCTET STRING, kept whole: a port id may be a MAC
    address) or an int (a subtype); None where absent or of another type."""
    if value is None:
        return None
    if value.__class__.__name__ in ("OctetString", "DisplayString"):
        return bytes(value.asOctets())
    try:
        return int(value)
    except (TypeError, ValueError):
        return None


def _plain(value: Any) -> int | str | None:
    """An SNMP value as a plain int or str; None for an exception value or one that is
    neither (a device that answers an IpAddress where a counter belongs)."""
    name = value.__class__.__name__
    if name in _EXCEPTIONS:
        return None
    if name in ("OctetString", "DisplayString"):
        # Some agents end their DisplayStrings with a NUL, C style: it is not part of the name.
        text: str = value.asOctets().decode("utf-8", errors="replace")
        return text.rstrip("\x00")
    try:
        return int(value)
    except (TypeError, ValueError):
        return None
