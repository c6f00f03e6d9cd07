"""The demo network: an invented organisation, every verdict planted once, deterministic."""

from __future__ import annotations

import numpy as np

from linktriage.demo_network import ORGANISATION, PLANTED, demo_polls, demo_ports
from linktriage.verdicts import Verdict


def test_every_verdict_but_healthy_is_planted_exactly_once() -> None:
    planted = [p.planted for p in PLANTED]
    assert sorted(planted) == sorted(set(Verdict) - {Verdict.HEALTHY})


def test_every_planted_port_is_part_of_the_network() -> None:
    ports = {(p.device, p.port) for p in demo_ports()}
    assert {(p.device, p.port) for p in PLANTED} <= ports
    assert len(ports) == len(demo_ports())  # no port twice


def test_the_demo_is_the_same_on_every_run() -> None:
    a, b = demo_polls(), demo_polls()
    np.testing.assert_array_equal(a.counters, b.counters)
    np.testing.assert_array_equal(a.time, b.time)


def test_names_belong_to_the_invented_organisation() -> None:
    assert ORGANISATION == "Larkmoor Civic Library"
    assert all(p.device.startswith("lark-") for p in demo_ports())
