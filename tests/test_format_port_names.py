"""Interface names written the ways engineers write them are one name: the type long or
short, in any case. The short forms are common practice of switch command lines (what
their ``show`` output prints and their parsers take back); no standard defines them, and
the pairs below are written from memory."""

from __future__ import annotations

import pytest

from linktriage.engine.format.port_names import TYPES, normalise

#: Each type written short and long, with the numbers after it (common practice, from
#: memory).
PAIRS = [
    ("Fa0/1", "FastEthernet0/1"),
    ("Gi1/0/5", "GigabitEthernet1/0/5"),
    ("Tw1/0/3", "TwoGigabitEthernet1/0/3"),
    ("Fi1/0/2", "FiveGigabitEthernet1/0/2"),
    ("Te1/1/1", "TenGigabitEthernet1/1/1"),
    ("Twe1/0/25", "TwentyFiveGigE1/0/25"),
    ("Fo1/1/1", "FortyGigabitEthernet1/1/1"),
    ("Hu1/0/49", "HundredGigE1/0/49"),
    ("Eth1/1", "Ethernet1/1"),
    ("Et3", "Ethernet3"),
    ("Po1", "Port-channel1"),
    ("mgmt0", "Management0"),
    ("Ma1", "Management1"),
    ("Vl10", "Vlan10"),
    ("Lo0", "Loopback0"),
]


@pytest.mark.parametrize(("short", "long"), PAIRS)
def test_a_type_written_short_or_long_is_one_name(short: str, long: str) -> None:
    assert normalise(short) == normalise(long)


@pytest.mark.parametrize(("short", "long"), PAIRS)
def test_case_does_not_matter(short: str, long: str) -> None:
    for written in (short.upper(), short.lower(), long.upper(), long.lower()):
        assert normalise(written) == normalise(long)


def test_the_numbers_after_the_type_tell_ports_apart() -> None:
    assert normalise("Gi1/0/5") != normalise("GigabitEthernet1/0/50")
    assert normalise("Gi1/0/5") != normalise("Gi1/0/24")
    assert normalise("Gi1/0/5") != normalise("Te1/0/5")
    assert normalise("Gi1/0/5.100") == normalise("GigabitEthernet1/0/5.100")  # a subinterface
    assert normalise("Gi1/0/5.100") != normalise("Gi1/0/5")


def test_types_that_share_their_first_letters_stay_apart() -> None:
    # Tw is TwoGigabitEthernet and Twe TwentyFiveGigE; Fa, Fi and Fo three speeds apart.
    assert normalise("Tw1/0/1") == normalise("TwoGigabitEthernet1/0/1")
    assert normalise("Twe1/0/1") == normalise("TwentyFiveGigE1/0/1")
    assert normalise("Tw1/0/1") != normalise("Twe1/0/1")
    assert len({normalise(f"{short}1/0/1") for short in ("Fa", "Fi", "Fo")}) == 3


def test_a_space_between_type_and_numbers_is_no_difference() -> None:
    # Some command lines list "Port-channel 1" or "TenGigabitEthernet 0/1" (common practice).
    assert normalise("Port-channel 1") == normalise("Po1")
    assert normalise("TenGigabitEthernet 0/1") == normalise("te0/1")


@pytest.mark.parametrize("name", ["xe-0/0/1", "et-0/0/0", "ge-0/0/0"])
def test_junos_names_are_short_already_and_only_their_case_is_set_aside(name: str) -> None:
    # Junos writes type, hyphen, FPC/PIC/port (common practice, from memory): no long form,
    # and not one of the table's types ("et-" is not Arista's "Et").
    assert normalise(name.upper()) == normalise(name) == name
    assert normalise("et-0/0/0") != normalise("Ethernet0/0/0")
    assert normalise("ge-0/0/0") != normalise("GigabitEthernet0/0/0")


@pytest.mark.parametrize("name", ["port14", "up1", "enp3s0", "lo", "bond0"])
def test_names_of_other_types_are_only_put_in_lower_case(name: str) -> None:
    assert normalise(name.upper()) == name


def test_every_short_form_names_one_type() -> None:
    spelt = [form.casefold() for long, shorts in TYPES.items() for form in (long, *shorts)]
    assert len(spelt) == len(set(spelt))
