"""Naming ports: exact, case-blind or by a unique part of the device name; nothing else."""

from __future__ import annotations

from collections.abc import Sequence

import pytest

from linktriage.engine.format.poll_table import PollTable
from linktriage.errors import AmbiguousNameError, UnknownPortError
from linktriage.network.watched import Network, PortRef


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
