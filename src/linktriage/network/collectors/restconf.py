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
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import UTC, datetime
from typing import Any, Literal

from pydantic import ValidationError

from linktriage.errors import BadAnswerError
from linktriage.network.collectors.base import Collector, Reading, Target
from linktriage.network.collectors.http import HttpOptions, HttpSession
from linktriage.snapshot import Snapshot

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


class RestconfOptions(HttpOptions):
    scheme: Literal["https", "http"] = "https"
    port: int | None = None
    root: str = "/restconf"
    datastore: Literal["data", "operational"] = "data"


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


def interfaces_to_snapshots(
    document: Any, device: str, at: datetime
) -> tuple[list[Snapshot], dict[str, str]]:
    """Snapshots of every interface in an ietf-interfaces document, and per-port problems."""
    top = _members(document).get("interfaces")
    interfaces = _members(top).get("interface")
    if not isinstance(interfaces, list):
        raise ValueError("no ietf-interfaces:interfaces/interface list")
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
            snapshots.append(
                Snapshot(
                    device=device,
                    port=name,
                    time=at,
                    oper_status=OPER_STATUS.get(str(entry.get("oper-status")), "unknown"),
                    counters=counters,
                    speed_bps=None if speed is None else _counter(speed),
                    discontinuity_time=statistics.get("discontinuity-time"),
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
        path = (
            "/data/ietf-interfaces:interfaces"
            if o.datastore == "data"
            else "/ds/ietf-datastores:operational/ietf-interfaces:interfaces"
        )
        self.url = f"{o.scheme}://{host}{port}{o.root.rstrip('/')}{path}"
        self.params = {"content": "nonconfig"} if o.datastore == "data" else {}
        self.http = HttpSession(self, o, MEDIA_TYPE)

    async def close(self) -> None:
        await self.http.close()

    async def _get(self) -> Any:
        return await self.http.get_json(self.url, self.params)

    async def ports(self) -> list[str]:
        return [s.port for s in (await self.read()).snapshots]

    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        document = await self._get()
        try:
            snapshots, problems = interfaces_to_snapshots(
                document, self.target.name, datetime.now(UTC)
            )
        except ValueError as exc:
            raise self.error(BadAnswerError, f"answered without interface data: {exc}") from exc
        return Reading(snapshots, problems).only(ports)
