"""The far end of a link as LLDP reports it (IEEE 802.1AB), read the same way by every
collector: which port ids name a port, MAC addresses written out, one neighbor per port,
and LLDP-MIB's local port numbers matched to interfaces.

A remote entry (LLDP-MIB lldpRemEntry, LLDP-V2-MIB lldpV2RemEntry, ieee802-dot1ab-lldp
remote-systems-data, or the SNMP exporter's series of them) gives the far end's system name,
a port id with the subtype that says what the id is, and a port description. The snapshot
format names the far port by the id where the id is a name, and by the description where
the id is a MAC address; an id of any other kind falls back to the description too.
Where the remote entry also carries LLDP's IEEE 802.3 MAC/PHY TLV (IEEE 802.1AB-2005
annex G, IEEE 802.3 clause 79; LLDP-EXT-DOT3-MIB), the speeds the far end advertises for
autonegotiation come with it.
"""

from __future__ import annotations

import re
import time
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any, Generic, TypeVar

from linktriage.engine.format.snapshot import Neighbor

K = TypeVar("K")
#: How long a device's neighbors are kept before they are asked for again. LLDP follows the
#: cabling, which changes far more rarely than counters are read; a change shows in the
#: far end's tables within its hold time, 120 s by default (msgTxInterval 30 s times
#: msgTxHold 4, ieee802-dot1ab-lldp defaults).
NEIGHBORS_EVERY_S = 300.0

#: LldpPortIdSubtype (LLDP-MIB, IEEE 802.1AB-2005 12.1; the same numbers in LLDP-V2-TC-MIB
#: of IEEE 802.1AB-2009 and in ieee802-types' port-id-subtype-type, whose names these are).
PORT_ID_SUBTYPES = {
    "interface-alias": 1,  # ifAlias (RFC 2863)
    "port-component": 2,  # entPhysicalAlias (RFC 2737)
    "mac-address": 3,
    "network-address": 4,  # an IANA address family octet, then the address
    "interface-name": 5,  # ifName (RFC 2863)
    "agent-circuit-id": 6,  # RFC 3046
    "local": 7,
}
MAC_ADDRESS = PORT_ID_SUBTYPES["mac-address"]
#: Subtypes whose id is a name when it is printable text: ifName, ifAlias, entPhysicalAlias,
#: and a locally assigned id (which may also be a binary port number).
NAMED_BY = {PORT_ID_SUBTYPES[kind] for kind in ("interface-name", "interface-alias",
                                               "port-component", "local")}  # fmt: skip
#: A MAC address written as text: six octets in hex, colon, hyphen (IEEE 802 canonical
#: form, ieee802-types mac-address) or nothing between them.
_MAC_TEXT = re.compile(r"^[0-9A-Fa-f]{2}([:-]?)(?:[0-9A-Fa-f]{2}\1){4}[0-9A-Fa-f]{2}$")


def mac_address(octets: bytes) -> str:
    """Six octets (network byte order, LLDP-MIB LldpPortId) as aa:bb:cc:dd:ee:ff."""
    return ":".join(f"{octet:02x}" for octet in octets)


def _text(value: bytes | str) -> str | None:
    """An id as printable text, or None where it is not text (binary octets)."""
    if isinstance(value, bytes):
        try:
            value = value.decode("utf-8")
        except UnicodeDecodeError:
            return None
    value = value.rstrip("\x00").strip()  # some agents end DisplayStrings with a NUL
    return value if value and value.isprintable() else None


@dataclass(frozen=True, slots=True)
class FarEnd:
    """One remote entry as read: the id is kept as the device gave it, a MAC address
    written aa:bb:cc:dd:ee:ff, so a record of it reads the same whatever carried it."""

    system_name: str
    port_id: str
    subtype: int | None
    port_desc: str
    id_is_name: bool
    speeds: tuple[int, ...] | None = None  # advertised for autonegotiation, b/s

    @property
    def port(self) -> str | None:
        """The far port's name: the id where it is a name, else the description."""
        return self.port_id if self.id_is_name else (self.port_desc or None)


def far_end(
    system_name: bytes | str | None,
    subtype: int | str | None,
    port_id: bytes | str | None,
    port_desc: bytes | str | None,
    speeds: Iterable[int] | None = None,
) -> FarEnd:
    """A remote entry from its four values, however the protocol carried them: octets
    (SNMP) or text (YANG strings, exporter labels), the subtype as a number or a YANG enum
    name. Without a subtype (an exporter told not to publish it), an id that reads as a
    MAC address is taken for one, and other text for a name."""
    kind = PORT_ID_SUBTYPES.get(subtype) if isinstance(subtype, str) else subtype
    raw = b"" if port_id is None else port_id
    text = _text(raw)
    if kind is None and text is not None and _MAC_TEXT.match(text):
        kind = MAC_ADDRESS
    if kind == MAC_ADDRESS:
        shown, named = _mac(raw, text), False
    else:
        shown = text if text is not None else (raw.hex() if isinstance(raw, bytes) else raw)
        named = text is not None and (kind is None or kind in NAMED_BY)
    advertised = tuple(sorted(set(speeds))) if speeds else None
    return FarEnd(
        _text(system_name or "") or "", shown, kind, _text(port_desc or "") or "", named, advertised
    )


def _mac(raw: bytes | str, text: str | None) -> str:
    """A MAC address id written aa:bb:cc:dd:ee:ff, from octets or from any hex text form;
    an id that is neither is kept as it came (hex for octets)."""
    if isinstance(raw, bytes) and len(raw) == 6:
        return mac_address(raw)
    if text is not None and _MAC_TEXT.match(text):
        return mac_address(bytes.fromhex(re.sub(r"[:-]", "", text)))
    return raw.hex() if isinstance(raw, bytes) else raw


def neighbor(ends: Iterable[FarEnd]) -> Neighbor | None:
    """The one neighbor a local port hears: None where no entry names both a system and a
    port, or where entries name different ones (a hub, or a phone with a computer behind
    it: no single far end to pair this port with). Repeats of one far end (one per time
    mark, or per destination address in LLDP-V2-MIB) are one neighbor; the speeds it
    advertises are given where its entries that carry them agree."""
    ends = list(ends)
    named = {(end.system_name, end.port) for end in ends if end.system_name and end.port}
    if len(named) != 1:
        return None
    ((device, port),) = named
    assert port is not None
    offered = {end.speeds for end in ends if end.speeds}
    speeds = list(offered.pop()) if len(offered) == 1 else None
    return Neighbor(device=device, port=port, speeds_bps=speeds)


def local_ports(
    numbers: Iterable[int],
    local: dict[int, FarEnd],
    names: dict[int, Any],
    descriptions: dict[int, Any],
) -> dict[int, int]:
    """LLDP-MIB's local port numbers as ifIndex (lldpRemLocalPortNum -> ifIndex).

    An LldpPortNumber "has no mandatory relationship to an InterfaceIndex" (LLDP-MIB): a
    bridge numbers its ports as dot1dBasePort. So a port is matched through its
    lldpLocPortTable row (``local``, read as :func:`far_end` reads a remote entry): by
    lldpLocPortId against ifName, then by lldpLocPortDesc against ifDescr (which the MIB
    says it should equal). Only a port number the device gives nothing better for (no row,
    or a row with neither a name for an id nor a description) is taken for an ifIndex, as
    the MIB has it for a system that is not a bridge. A row whose id and description match
    no interface names no neighbor rather than a guessed one.
    """
    by_name = {str(name): index for index, name in names.items()}
    by_description = {str(text): index for index, text in descriptions.items()}
    known = set(names) | set(descriptions)
    mapped: dict[int, int] = {}
    for number in numbers:
        port = local.get(number)
        if port is not None and port.id_is_name and port.port_id in by_name:
            mapped[number] = by_name[port.port_id]
        elif port is not None and port.port_desc in by_description:
            mapped[number] = by_description[port.port_desc]
        elif (port is None or not (port.id_is_name or port.port_desc)) and number in known:
            mapped[number] = number
    return mapped


class Remembered(Generic[K]):
    """A device's neighbors as last read (by port, as the collector keys them), due to be
    read again once older than ``every_s`` (0: at every read)."""

    def __init__(self, every_s: float) -> None:
        self.every_s = every_s
        self.neighbors: dict[K, Neighbor] = {}
        self._at: float | None = None

    def due(self) -> bool:
        return self._at is None or time.monotonic() - self._at >= self.every_s

    def keep(self, neighbors: dict[K, Neighbor]) -> None:
        self.neighbors = neighbors
        self._at = time.monotonic()
