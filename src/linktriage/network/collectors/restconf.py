"""The ``restconf`` collector: interface statistics over RESTCONF (RFC 8040) with httpx.

It reads the ietf-interfaces module (RFC 8343) in one request per poll::

    GET {scheme}://{address}{root}/data/ietf-interfaces:interfaces?content=nonconfig
    Accept: application/yang-data+json

(or ``{root}/ds/ietf-datastores:operational/ietf-interfaces:interfaces``, the NMDA
operational datastore of RFC 8527). JSON follows RFC 7951: 64-bit counters (counter64,
gauge64 speed) arrive as strings, 32-bit ones as numbers; member names may carry their
module's prefix. Statistics map to the IF-MIB objects RFC 8343 section 4 names
(in-octets: ifHCInOctets, in-errors: ifInErrors, ...). TLS certificates are verified
unless the inventory says otherwise; credentials (basic or a bearer token) are references.

Beside it, in the same family of standard models, each port's far end comes from IEEE's
LLDP module, ieee802-dot1ab-lldp (IEEE 802.1ABcu; ``lldp/port[name][dest-mac-address]/
remote-systems-data``), asked for at the same time::

    GET {scheme}://{address}{root}/data/ieee802-dot1ab-lldp:lldp?content=nonconfig

Its ports are named by ``if:interface-ref``, so they are the ietf-interfaces names
themselves. A device without the module (404), or one whose answer cannot be read, still
gives its counters, with no neighbors. Neighbors are asked for again only every
``neighbors_every_s`` (300 s unless set), and kept in between. Where a remote entry carries
ieee802-ethernet-lldp's ``auto-negotiation-cap`` (IEEE 802.3.2; two octets of RFC 3636's
ifMauAutoNegCapAdvertisedBits, base64 in JSON, RFC 7951 section 6.6), the speeds the far
end advertises come with it.

Format 1.2 adds, from the same ietf-interfaces document: ``admin-status`` and
``last-change`` (RFC 8343, ifAdminStatus and ifLastChange); each port's aggregate, the
interface among its ``higher-layer-if`` (RFC 8343, ifStackTable) whose ``type`` is
ieee8023adLag; and where the device implements IEEE 802.3.2's augmentations of it
(ieee802-ethernet-interface, ieee802-ethernet-pse), the PAUSE frame counters
(``ethernet/flow-control/pause/statistics``, IEEE 802.3 30.3.4.2 and 30.3.4.3, read as
dot3HCOut/InPauseFrames), the duplex (``ethernet/duplex``, 30.3.1.1.32) and the PSE port
(``ethernet/pse/multi-pair``: detection status, class, actual power, and its counters as the
POWER-ETHERNET-MIB objects they mirror; being counter64, their low 32 bits, as a Counter32
reports them, RFC 2863 section 3.1.6). OpenConfig paths are not read: the collector asks
for the IETF and IEEE modules only.
"""

from __future__ import annotations

import asyncio
import base64
from collections.abc import Sequence
from datetime import UTC, datetime
from typing import Annotated, Any, Literal

from pydantic import Field, ValidationError

from linktriage.engine.format.snapshot import Neighbor, PoeStatus, Snapshot
from linktriage.errors import BadAnswerError, CollectorError
from linktriage.network.collectors.base import Collector, Reading, Target
from linktriage.network.collectors.http import HttpOptions, HttpSession
from linktriage.network.collectors.lldp import (
    NEIGHBORS_EVERY_S,
    FarEnd,
    Remembered,
    far_end,
    neighbor,
)
from linktriage.network.collectors.mibs import DELIVERING, advertised_speeds, poe_status

#: RFC 8343 statistics leaves and the IF-MIB counters they are (RFC 8343 section 4).
STATISTICS = {
    "in-octets": "ifHCInOctets",
    "in-unicast-pkts": "ifHCInUcastPkts",
    "in-broadcast-pkts": "ifHCInBroadcastPkts",
    "in-multicast-pkts": "ifHCInMulticastPkts",
    "in-discards": "ifInDiscards",
    "in-errors": "ifInErrors",
    "out-octets": "ifHCOutOctets",
    "out-unicast-pkts": "ifHCOutUcastPkts",
    "out-broadcast-pkts": "ifHCOutBroadcastPkts",
    "out-multicast-pkts": "ifHCOutMulticastPkts",
    "out-discards": "ifOutDiscards",
    "out-errors": "ifOutErrors",
}
#: RFC 8343 oper-status enumeration to the snapshot format's (RFC 2863) names.
OPER_STATUS = {
    "up": "up",
    "down": "down",
    "testing": "testing",
    "unknown": "unknown",
    "dormant": "dormant",
    "not-present": "notPresent",
    "lower-layer-down": "lowerLayerDown",
}
MEDIA_TYPE = "application/yang-data+json"
#: RFC 8343 admin-status: the same names as the format's.
ADMIN_STATUS = ("up", "down", "testing")
#: ieee802-ethernet-interface (IEEE 802.3.2) PAUSE statistics -> the EtherLike-MIB objects
#: counting the same IEEE 802.3 attributes (RFC 3635; both 64-bit). The module's text calls
#: in-frames-pause "transmitted" too, but its reference, 30.3.4.3
#: aPAUSEMACCtrlFramesReceived, says which it is.
PAUSE = {"in-frames-pause": "dot3HCInPauseFrames", "out-frames-pause": "dot3HCOutPauseFrames"}
#: ieee802-ethernet-pse multi-pair statistics -> POWER-ETHERNET-MIB (RFC 3621) counters.
PSE_COUNTERS = {
    "mps-absent": "pethPsePortMPSAbsentCounter",
    "invalid-signature": "pethPsePortInvalidSignatureCounter",
    "power-denied": "pethPsePortPowerDeniedCounter",
    "overload": "pethPsePortOverLoadCounter",
    "short": "pethPsePortShortCounter",
}
#: ieee802-ethernet-pse detection-status: the POWER-ETHERNET-MIB names the format uses.
DETECTION = ("disabled", "searching", "deliveringPower", "fault", "test", "otherFault")
#: iana-if-type's identity of an IEEE 802.1AX link aggregate.
LAG_TYPE = "ieee8023adLag"
DUPLEX = ("full", "half", "unknown")


class RestconfOptions(HttpOptions):
    scheme: Literal["https", "http"] = "https"
    port: int | None = None
    root: str = "/restconf"
    datastore: Literal["data", "operational"] = "data"
    neighbors_every_s: Annotated[float, Field(ge=0)] = NEIGHBORS_EVERY_S


def _local(name: str) -> str:
    """A member name without its module prefix (RFC 7951 section 4)."""
    return name.rsplit(":", 1)[-1]


def _members(node: Any) -> dict[str, Any]:
    if not isinstance(node, dict):
        return {}
    if not any(":" in k for k in node):  # the usual case: nothing to strip
        return node
    return {_local(k): v for k, v in node.items()}


def _counter(value: Any) -> int:
    """A counter as RFC 7951 writes it: a string for 64 bits, a number for 32."""
    kind = type(value)
    if kind is str and value.isdigit():
        return int(value)
    if kind is int and value >= 0:  # not bool: type() is exact
        return int(value)
    raise ValueError(f"{value!r} is not a counter")


def lldp_neighbors(document: Any) -> dict[str, Neighbor]:
    """The neighbor of each port an ieee802-dot1ab-lldp document names (port name ->
    neighbor): its remote-systems-data entries' system-name, and port-id by its
    port-id-subtype, or port-desc (ieee802-types port-id-subtype-type). A port is listed
    once per destination address it runs LLDP for; all of its entries are one port's."""
    ports = _members(_members(document).get("lldp")).get("port")
    heard: dict[str, list[FarEnd]] = {}
    for raw in ports if isinstance(ports, list) else []:
        entry = _members(raw)
        name, remote = entry.get("name"), entry.get("remote-systems-data")
        if not isinstance(name, str) or not isinstance(remote, list):
            continue
        for far in map(_members, remote):
            system, subtype, port_id, desc = values = [
                far.get(leaf) for leaf in ("system-name", "port-id-subtype", "port-id", "port-desc")
            ]
            if all(value is None or isinstance(value, str) for value in values):
                speeds = _speeds(far.get("auto-negotiation-cap"))
                heard.setdefault(name, []).append(far_end(system, subtype, port_id, desc, speeds))
    found = {name: neighbor(ends) for name, ends in heard.items()}
    return {name: far for name, far in found.items() if far is not None}


def _speeds(value: Any) -> list[int] | None:
    """The speeds a base64 ``auto-negotiation-cap`` (RFC 7951 binary) advertises."""
    if not isinstance(value, str):
        return None
    try:
        return advertised_speeds(base64.b64decode(value, validate=True))
    except ValueError:
        return None


def _aggregates(interfaces: list[Any]) -> dict[str, str]:
    """Each port's aggregate: the one interface among its ``higher-layer-if`` (RFC 8343)
    whose type is iana-if-type's ieee8023adLag."""
    entries = [_members(raw) for raw in interfaces]
    lags = {e.get("name") for e in entries if _local(str(e.get("type", ""))) == LAG_TYPE}
    found: dict[str, str] = {}
    for entry in entries:
        higher = entry.get("higher-layer-if")
        above = {h for h in higher if h in lags} if isinstance(higher, list) else set()
        if isinstance(entry.get("name"), str) and len(above) == 1:
            found[entry["name"]] = str(above.pop())
    return found


def _ethernet(entry: dict[str, Any]) -> tuple[dict[str, int], PoeStatus | None, str | None]:
    """What IEEE 802.3.2's ieee802-ethernet-interface and ieee802-ethernet-pse say of an
    interface: PAUSE and PSE counters, the PSE port's state, and the duplex."""
    ethernet = _members(entry.get("ethernet"))
    if not ethernet:
        return {}, None, None
    pause = _members(
        _members(_members(_members(ethernet.get("flow-control")).get("pause")).get("statistics"))
    )
    counters = {name: _counter(pause[leaf]) for leaf, name in PAUSE.items() if leaf in pause}
    pse = _members(_members(ethernet.get("pse")).get("multi-pair"))
    statistics = _members(pse.get("statistics"))
    counters |= {
        name: _counter(statistics[leaf]) % 2**32
        for leaf, name in PSE_COUNTERS.items()
        if leaf in statistics
    }
    detection = pse.get("detection-status")
    found = detection if detection in DETECTION else None
    power_class = None
    named = pse.get("classifications")  # class0 .. class4; present only while powering
    if found == DELIVERING and isinstance(named, str) and named in {f"class{n}" for n in range(5)}:
        power_class = int(named[5:])
    actual = pse.get("actual-power")  # decimal64 milliwatts: a JSON string (RFC 7951)
    watts = float(actual) / 1000 if isinstance(actual, str | int) else None
    duplex = ethernet.get("duplex")
    return (
        counters,
        poe_status(found, power_class, watts),
        duplex if duplex in DUPLEX else None,
    )


def interfaces_to_snapshots(
    document: Any, device: str, at: datetime, neighbors: dict[str, Neighbor] | None = None
) -> tuple[list[Snapshot], dict[str, str]]:
    """Snapshots of every interface in an ietf-interfaces document, with each port's
    neighbor (port name -> neighbor), and per-port problems."""
    neighbors = neighbors or {}
    top = _members(document).get("interfaces")
    interfaces = _members(top).get("interface")
    if not isinstance(interfaces, list):
        raise ValueError("no ietf-interfaces:interfaces/interface list")
    aggregates = _aggregates(interfaces)
    snapshots: list[Snapshot] = []
    problems: dict[str, str] = {}
    for raw in interfaces:
        entry = _members(raw)
        name = entry.get("name")
        if not isinstance(name, str) or not name:
            problems[f"#{len(snapshots) + len(problems) + 1}"] = "an interface without a name"
            continue
        try:
            statistics = _members(entry.get("statistics"))
            counters = {
                name: _counter(statistics[leaf])
                for leaf, name in STATISTICS.items()
                if leaf in statistics
            }
            speed = entry.get("speed")
            more, powered, duplex = _ethernet(entry)
            counters |= more
            admin = entry.get("admin-status")
            snapshots.append(
                Snapshot(
                    device=device,
                    port=name,
                    time=at,
                    oper_status=OPER_STATUS.get(str(entry.get("oper-status")), "unknown"),
                    counters=counters,
                    speed_bps=None if speed is None else _counter(speed),
                    discontinuity_time=statistics.get("discontinuity-time"),
                    neighbor=neighbors.get(name),
                    admin_status=admin if admin in ADMIN_STATUS else None,
                    last_change=entry.get("last-change"),
                    aggregate=aggregates.get(name),
                    duplex=duplex,
                    poe_status=powered,
                    poe=None if powered is None else powered.detection == DELIVERING,
                )
            )
        except (ValueError, ValidationError) as exc:
            problems[name] = f"malformed statistics: {exc}".splitlines()[0]
    return snapshots, problems


class RestconfCollector(Collector[RestconfOptions]):
    """Reads a device's interfaces over RESTCONF."""

    def __init__(self, target: Target) -> None:
        super().__init__(target)
        o = self.options
        port = f":{o.port}" if o.port else ""
        host = f"[{target.address}]" if target.address and ":" in target.address else target.address
        data = "/data/" if o.datastore == "data" else "/ds/ietf-datastores:operational/"
        base = f"{o.scheme}://{host}{port}{o.root.rstrip('/')}{data}"
        self.url = base + "ietf-interfaces:interfaces"
        self.lldp_url = base + "ieee802-dot1ab-lldp:lldp"
        self.params = {"content": "nonconfig"} if o.datastore == "data" else {}
        self.http = HttpSession(self, o, MEDIA_TYPE)
        self.lldp: Remembered[str] = Remembered(o.neighbors_every_s)

    async def close(self) -> None:
        await self.http.close()

    async def _get(self) -> Any:
        return await self.http.get_json(self.url, self.params)

    async def ports(self) -> list[str]:
        return [s.port for s in (await self.read()).snapshots]

    async def _neighbors(self) -> dict[str, Neighbor]:
        """Each port's neighbor; none where the device has no LLDP module or its answer
        cannot be read: the counters do not depend on it."""
        try:
            return lldp_neighbors(await self.http.get_json(self.lldp_url, self.params))
        except CollectorError:
            return {}

    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        # Asked at once, beside the counters, when due.
        lldp = asyncio.create_task(self._neighbors()) if self.lldp.due() else None
        try:
            document = await self._get()
        except BaseException:
            if lldp is not None:
                lldp.cancel()
            raise
        if lldp is not None:
            self.lldp.keep(await lldp)
        try:
            snapshots, problems = interfaces_to_snapshots(
                document, self.target.name, datetime.now(UTC), self.lldp.neighbors
            )
        except ValueError as exc:
            raise self.error(BadAnswerError, f"answered without interface data: {exc}") from exc
        return Reading(snapshots, problems).only(ports)
