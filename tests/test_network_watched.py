"""Naming ports: exact, case-blind, by a unique part of the device name or its address,
with the port's type written short or long, or by the LLDP neighbor behind it; nothing
else."""

from __future__ import annotations

from collections.abc import Sequence

import pytest

from linktriage.engine.format.poll_table import PollTable
from linktriage.errors import AmbiguousNameError, UnknownPortError
from linktriage.network.watched import BEHIND, Network, PortRef, device_named

from helpers import T0, line, polls


class Two(Network):
    def ports(self) -> list[PortRef]:
        return [
            PortRef("a", "site-east-sw1", "port1"),
            PortRef("a", "site-east-sw1", "up1"),
            PortRef("a", "site-east-sw2", "port1"),
            PortRef("b", "site-core", "up1"),
        ]

    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        raise AssertionError("naming a port must not poll anything")


def test_an_exact_name_in_any_case_is_found() -> None:
    assert Two().find("SITE-EAST-SW1", "UP1") == PortRef("a", "site-east-sw1", "up1")


def test_a_unique_part_of_a_device_name_is_enough() -> None:
    assert Two().find("core", "up1").device == "site-core"


def test_a_part_that_fits_several_devices_is_ambiguous() -> None:
    with pytest.raises(AmbiguousNameError) as caught:
        Two().find("east", "port1")
    assert caught.value.candidates == ["site-east-sw1", "site-east-sw2"]


def test_unknown_names_come_back_with_close_matches() -> None:
    with pytest.raises(UnknownPortError) as caught:
        Two().find("site-east-sw3", "port1")
    assert "site-east-sw1" in caught.value.suggestions
    with pytest.raises(UnknownPortError, match="site-core has no port named 'up2'"):
        Two().find("site-core", "up2")


def test_sites_and_devices_are_listed_from_the_ports() -> None:
    assert Two().sites() == ["a", "b"]
    assert list(Two().devices()) == ["site-east-sw1", "site-east-sw2", "site-core"]


# --- names as engineers type them: a closet switch listing its ports long, one listing
# them short, one listing both, each with its management address.
CIRC = ["GigabitEthernet1/0/5", "GigabitEthernet1/0/24", "TenGigabitEthernet1/1/1", "Port-channel1"]
ANNEX = ["Gi1/0/5", "Te1/1/1", "Po1", "xe-0/0/1"]
BOTH = ["Gi1/0/5", "GigabitEthernet1/0/5", "port14"]


class Closets(Network):
    def ports(self) -> list[PortRef]:
        return [
            *(PortRef("central", "lark-circ-sw1", p) for p in CIRC),
            *(PortRef("annex", "lark-annex-sw2", p) for p in ANNEX),
            *(PortRef("annex", "lark-annex-sw3", p) for p in BOTH),
        ]

    def addresses(self) -> dict[str, str]:
        return {
            "lark-circ-sw1": "10.20.0.5",
            "lark-annex-sw2": "2001:db8:20::5",
            "lark-annex-sw3": "sw3.mgmt.larkmoor.example",
        }

    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        raise AssertionError("naming a port must not poll anything")


@pytest.mark.parametrize(
    ("typed", "listed"),
    [
        # Typed short for a name listed long (common practice: switch command lines' short
        # forms, from memory) ...
        ("Gi1/0/5", "GigabitEthernet1/0/5"),
        ("gi1/0/5", "GigabitEthernet1/0/5"),
        ("GI1/0/24", "GigabitEthernet1/0/24"),
        ("Te1/1/1", "TenGigabitEthernet1/1/1"),
        ("te1/1/1", "TenGigabitEthernet1/1/1"),
        ("Po1", "Port-channel1"),
        ("po1", "Port-channel1"),
        ("port-channel1", "Port-channel1"),
        ("TENGIGABITETHERNET1/1/1", "TenGigabitEthernet1/1/1"),
    ],
)
def test_a_port_typed_short_finds_the_port_listed_long(typed: str, listed: str) -> None:
    assert Closets().find("lark-circ-sw1", typed).port == listed


@pytest.mark.parametrize(
    ("typed", "listed"),
    [
        # ... and typed long for a name listed short.
        ("GigabitEthernet1/0/5", "Gi1/0/5"),
        ("gigabitethernet1/0/5", "Gi1/0/5"),
        ("TenGigabitEthernet1/1/1", "Te1/1/1"),
        ("Port-channel1", "Po1"),
        ("PORT-CHANNEL1", "Po1"),
        ("XE-0/0/1", "xe-0/0/1"),  # Junos: short already, any case
    ],
)
def test_a_port_typed_long_finds_the_port_listed_short(typed: str, listed: str) -> None:
    assert Closets().find("lark-annex-sw2", typed).port == listed


def test_a_name_the_device_lists_is_answered_where_a_short_form_would_fit_two() -> None:
    sw3 = Closets()
    assert sw3.find("lark-annex-sw3", "Gi1/0/5").port == "Gi1/0/5"
    assert sw3.find("lark-annex-sw3", "GigabitEthernet1/0/5").port == "GigabitEthernet1/0/5"
    assert sw3.find("lark-annex-sw3", "gi1/0/5").port == "Gi1/0/5"  # only its case differs


def test_a_name_that_would_fit_two_ports_is_refused_naming_both() -> None:
    for typed in ("Gig1/0/5", "GIG1/0/5"):
        with pytest.raises(
            AmbiguousNameError, match=f"'{typed}' fits 2 ports of lark-annex-sw3"
        ) as caught:
            Closets().find("lark-annex-sw3", typed)
        assert caught.value.candidates == ["Gi1/0/5", "GigabitEthernet1/0/5"]
        assert caught.value.hint == "Which one: Gi1/0/5, GigabitEthernet1/0/5?"


def test_a_wrong_port_gets_the_closest_names_with_types_written_alike() -> None:
    with pytest.raises(
        UnknownPortError, match="lark-circ-sw1 has no port named 'Gi1/0/7'"
    ) as caught:
        Closets().find("lark-circ-sw1", "Gi1/0/7")
    assert caught.value.suggestions[:2] == ["GigabitEthernet1/0/5", "GigabitEthernet1/0/24"]
    with pytest.raises(UnknownPortError) as caught:
        Closets().find("lark-circ-sw1", "Te1/1/2")
    assert caught.value.suggestions[0] == "TenGigabitEthernet1/1/1"
    with pytest.raises(UnknownPortError) as caught:
        Closets().find("lark-circ-sw1", "Po2")
    assert caught.value.suggestions[0] == "Port-channel1"
    with pytest.raises(UnknownPortError) as caught:
        Closets().find("lark-annex-sw2", "GigabitEthernet1/0/6")
    assert caught.value.suggestions[0] == "Gi1/0/5"


def test_ports_with_names_of_no_listed_type_are_found_as_before() -> None:
    assert Closets().find("annex-sw3", "PORT14").port == "port14"
    with pytest.raises(UnknownPortError, match="no port named 'port15'") as caught:
        Closets().find("annex-sw3", "port15")
    assert caught.value.suggestions[0] == "port14"


@pytest.mark.parametrize(
    ("typed", "device"),
    [
        ("10.20.0.5", "lark-circ-sw1"),
        # One IPv6 address written several ways (RFC 4291 section 2.2; RFC 5952 section 4.3:
        # hexadecimal digits in either case).
        ("2001:db8:20::5", "lark-annex-sw2"),
        ("2001:DB8:20:0:0:0:0:5", "lark-annex-sw2"),
        ("2001:0db8:0020::0005", "lark-annex-sw2"),
        # A host name in any case (RFC 4343), with or without the root's dot (RFC 1034 3.1).
        ("sw3.mgmt.larkmoor.example", "lark-annex-sw3"),
        ("SW3.Mgmt.Larkmoor.Example.", "lark-annex-sw3"),
    ],
)
def test_a_device_is_found_by_its_management_address(typed: str, device: str) -> None:
    assert device_named(typed, list(Closets().devices()), Closets().addresses()) == device


def test_a_port_is_found_on_the_device_at_an_address() -> None:
    assert Closets().find("10.20.0.5", "Gi1/0/5") == PortRef(
        "central", "lark-circ-sw1", "GigabitEthernet1/0/5"
    )
    assert Closets().find("2001:db8:20:0::5", "te1/1/1").port == "Te1/1/1"


def test_an_address_no_device_has_is_refused_with_the_closest_addresses() -> None:
    with pytest.raises(UnknownPortError) as caught:
        Closets().find("10.20.0.6", "Gi1/0/5")
    assert caught.value.message == "No device is at 10.20.0.6."
    assert caught.value.suggestions == ["10.20.0.5"]
    with pytest.raises(UnknownPortError) as caught:
        Closets().find("2001:db8:20::6", "Gi1/0/5")
    assert caught.value.message == "No device is at 2001:db8:20::6."


def test_two_devices_at_one_address_are_ambiguous() -> None:
    # One box read twice (say, by two collectors) under two names.
    addresses = {"lark-circ-sw1": "10.20.0.5", "lark-circ-sw1-linux": "10.20.0.5"}
    with pytest.raises(AmbiguousNameError) as caught:
        device_named("10.20.0.5", list(addresses), addresses)
    assert caught.value.candidates == ["lark-circ-sw1", "lark-circ-sw1-linux"]


def test_a_device_whose_name_is_typed_in_full_wins_over_an_address() -> None:
    addresses = {"core": "10.20.0.1", "10.20.0.1": "10.20.0.9"}
    assert device_named("10.20.0.1", ["core", "10.20.0.1"], addresses) == "10.20.0.1"


# --- a port by the LLDP neighbor at its far end


def heard(*said: tuple[str, str, str | None, str]) -> PollTable:
    """Polls of (device, port, the neighbor its LLDP names, when)."""
    return polls(
        *(
            line(at, device=device, port=port,
                 **({"neighbor": {"device": far, "port": "eth0"}} if far else {}))
            for device, port, far, at in said
        )
    )  # fmt: skip


T1 = "2026-03-02T08:05:00Z"


def test_a_port_is_found_by_the_neighbor_lldp_names_behind_it() -> None:
    said = heard(
        ("lark-circ-sw1", "GigabitEthernet1/0/5", "lark-circ-prn1", T0),
        ("lark-circ-sw1", "GigabitEthernet1/0/24", "lark-circ-phone3", T0),
        ("lark-annex-sw2", "Po1", None, T0),
    )
    found = Closets().find(BEHIND, "lark-circ-prn1", heard=lambda: said)
    assert found == PortRef("central", "lark-circ-sw1", "GigabitEthernet1/0/5")
    assert Closets().behind("LARK-CIRC-PRN1", said).port == "GigabitEthernet1/0/5"
    # LLDP's system name may be a full DNS name; its first label names it too (as the far
    # ends of a link are paired: engine.links).
    fqdn = heard(("lark-annex-sw2", "Gi1/0/5", "lark-annex-cam2.larkmoor.example", T0))
    assert Closets().behind("lark-annex-cam2", fqdn).port == "Gi1/0/5"
    assert Closets().behind("lark-annex-cam2.larkmoor.example", fqdn).port == "Gi1/0/5"


def test_only_what_a_port_said_last_counts() -> None:
    # The printer moved from Gi1/0/5 to Gi1/0/24; Gi1/0/5 then heard nobody.
    moved = heard(
        ("lark-circ-sw1", "GigabitEthernet1/0/5", "lark-circ-prn1", T0),
        ("lark-circ-sw1", "GigabitEthernet1/0/24", "lark-circ-prn1", T1),
        ("lark-circ-sw1", "GigabitEthernet1/0/5", None, T1),
    )
    assert Closets().behind("lark-circ-prn1", moved).port == "GigabitEthernet1/0/24"


def test_a_neighbor_two_ports_hear_is_refused_naming_both() -> None:
    twice = heard(
        ("lark-circ-sw1", "GigabitEthernet1/0/5", "lark-circ-srv1", T0),
        ("lark-annex-sw2", "Gi1/0/5", "lark-circ-srv1", T0),
    )
    with pytest.raises(AmbiguousNameError, match="LLDP neighbor of 2 ports") as caught:
        Closets().behind("lark-circ-srv1", twice)
    assert caught.value.candidates == [
        "lark-annex-sw2 Gi1/0/5",
        "lark-circ-sw1 GigabitEthernet1/0/5",
    ]


def test_a_neighbor_no_port_hears_is_refused_with_the_closest_heard() -> None:
    said = heard(("lark-circ-sw1", "GigabitEthernet1/0/5", "lark-circ-prn1", T0))
    with pytest.raises(UnknownPortError) as caught:
        Closets().behind("lark-circ-prn2", said)
    assert caught.value.message == "No port has 'lark-circ-prn2' as its LLDP neighbor."
    assert caught.value.suggestions == ["lark-circ-prn1"]
    with pytest.raises(UnknownPortError, match="no stored poll names any neighbor yet"):
        Closets().find(BEHIND, "lark-circ-prn1", heard=PollTable.empty)
    with pytest.raises(UnknownPortError, match="no stored poll names any neighbor yet"):
        Closets().find(BEHIND, "lark-circ-prn1")  # nothing to look in


def test_a_device_the_network_no_longer_lists_answers_for_no_neighbor() -> None:
    gone = heard(("lark-old-sw9", "Gi0/1", "lark-circ-prn1", T0))
    with pytest.raises(UnknownPortError, match="no stored poll names any neighbor yet"):
        Closets().behind("lark-circ-prn1", gone)
