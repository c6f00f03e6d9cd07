"""LLDP's far end as every collector reads it: port id subtypes (LLDP-MIB LldpPortIdSubtype,
IEEE 802.1AB-2005 12.1; ieee802-types port-id-subtype-type), MAC addresses written out, and
one neighbor per port (SNAPSHOT-FORMAT 1.1 `neighbor`)."""

from __future__ import annotations

import pytest

from linktriage.engine.format.snapshot import Neighbor
from linktriage.network.collectors.lldp import PORT_ID_SUBTYPES, far_end, mac_address, neighbor


def test_the_subtype_numbers_are_the_mibs() -> None:
    # LldpPortIdSubtype: interfaceAlias(1), portComponent(2), macAddress(3),
    # networkAddress(4), interfaceName(5), agentCircuitId(6), local(7).
    assert list(PORT_ID_SUBTYPES.values()) == [1, 2, 3, 4, 5, 6, 7]
    assert PORT_ID_SUBTYPES["mac-address"] == 3 and PORT_ID_SUBTYPES["interface-name"] == 5


def test_a_mac_address_is_written_in_network_byte_order() -> None:
    # LldpPortId macAddress(3): "a unicast source address (encoded in network byte order...)";
    # the SNMP exporter writes the same octets as 04:05:06:07:08:09 (collector_test.go).
    assert mac_address(bytes([4, 5, 6, 7, 8, 9])) == "04:05:06:07:08:09"


@pytest.mark.parametrize(
    ("subtype", "port_id", "expected"),
    [
        (5, b"xe-0/0/1", "xe-0/0/1"),  # interfaceName: the far end's ifName
        (1, b"uplink to core", "uplink to core"),  # interfaceAlias: its ifAlias
        (7, b"24", "24"),  # local, printable
        (7, b"\x00\x00\x00\x18", "desc"),  # local, a binary port number: not a name
        (3, bytes.fromhex("02005e100003"), "desc"),  # macAddress: the description names it
        (4, b"\x01\xc0\x00\x02\x07", "desc"),  # networkAddress (family 1, 192.0.2.7)
        ("interface-name", "ge-0/0/2", "ge-0/0/2"),  # the YANG enum name (ieee802-types)
        ("mac-address", "02-00-5E-10-00-03", "desc"),
        (None, "ge-0/0/3", "ge-0/0/3"),  # no subtype: text is taken for a name...
        (None, "02:00:5e:10:00:03", "desc"),  # ...unless it reads as a MAC address
    ],
)
def test_the_far_port_is_the_id_where_it_is_a_name_else_the_description(
    subtype: int | str | None, port_id: bytes | str, expected: str
) -> None:
    assert far_end(b"lark-core1", subtype, port_id, b"desc").port == expected


def test_a_mac_address_id_is_kept_written_out_whatever_carried_it() -> None:
    as_octets = far_end(b"lark-lab-ap3", 3, bytes.fromhex("02005e100003"), None)
    as_yang = far_end("lark-lab-ap3", "mac-address", "02-00-5E-10-00-03", None)
    assert as_octets.port_id == as_yang.port_id == "02:00:5e:10:00:03"
    assert as_octets.port is None  # no description: no name for the far port


def test_a_trailing_nul_is_not_part_of_a_name() -> None:
    # Some agents end SnmpAdminStrings with a NUL, C style.
    end = far_end(b"lark-core1\x00", 5, b"xe-0/0/1\x00", None)
    assert (end.system_name, end.port) == ("lark-core1", "xe-0/0/1")


def test_a_port_has_one_neighbor_or_none() -> None:
    core = far_end("lark-core1", 5, "xe-0/0/1", None)
    again = far_end("lark-core1", 5, "xe-0/0/1", "uplink")  # another time mark of it
    phone = far_end("lark-lab-phone4", 5, "lan", None)
    nameless = far_end(None, 5, "eth0", None)  # no System Name TLV
    assert neighbor([core, again, nameless]) == Neighbor(device="lark-core1", port="xe-0/0/1")
    assert neighbor([core, phone]) is None  # two far ends: nothing to pair the port with
    assert neighbor([nameless]) is None and neighbor([]) is None
