"""The demo network: an invented organisation, every verdict planted once, deterministic."""

from __future__ import annotations

import numpy as np
import pytest

from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.counters import COLUMN_INDEX
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.simulate.ports import DEFAULT_START
from linktriage.engine.verdicts import VERDICTS
from linktriage.errors import PollError
from linktriage.network.demo import (
    LINKS,
    ORGANISATION,
    PLANTED,
    DemoNetwork,
    demo_polls,
    demo_ports,
)


def test_every_verdict_but_healthy_is_planted_once_a_loop_on_the_ports_it_spans() -> None:
    planted = [p.planted for p in PLANTED]
    assert set(planted) == set(VERDICTS) - {"healthy"}
    spans = {"broadcast_storm": 2}  # the loop: two jacks cabled together
    for verdict in set(planted):
        assert planted.count(verdict) == spans.get(verdict, 1), verdict


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


def test_the_live_network_grows_its_counters_with_time() -> None:
    clock = [DEFAULT_START]
    network = DemoNetwork(clock=lambda: clock[0])
    first = network.poll("lark-east-idf2", ["port1", "port14"])
    clock[0] += 300.0
    second = network.poll("lark-east-idf2", ["port1", "port14"])
    assert (second.time - first.time == 300.0).all()
    column = COLUMN_INDEX["ifHCInOctets"]
    assert (second.counters[:, column] > first.counters[:, column]).all()


def test_polls_five_minutes_apart_are_the_recorded_demo(model: Model) -> None:
    clock = [DEFAULT_START - 300.0]
    network = DemoNetwork(clock=lambda: clock[0])
    before = network.poll("lark-east-idf2")
    clock[0] = DEFAULT_START
    after = network.poll("lark-east-idf2")
    live = diagnose(PollTable.concat([before, after]), model)
    recorded = diagnose(demo_polls(), model)
    for i, port in enumerate(live.port):
        row = recorded.index_of("lark-east-idf2", port)
        assert row is not None
        # The device alone: its ports' own answers, without the far ends the whole network's
        # polls add (both ends of a link, issue 12).
        both = recorded.record(row)
        assert live.record(i) == {k: v for k, v in both.items() if k not in ("far_end", "link")}


def test_polling_a_device_outside_the_network_names_it() -> None:
    with pytest.raises(PollError, match="lark-nowhere"):
        DemoNetwork().poll("lark-nowhere")


def test_a_long_window_finds_the_same_suspects_as_five_minutes(model: Model) -> None:
    # A longer stored window (polls six hours apart, as after a day of asking in one data
    # directory) must not turn healthy ports into suspects: their lines are clean, they do
    # not flap and they receive no stray frames too long, whatever the window.
    network = DemoNetwork()

    def suspects(seconds: float) -> list[tuple[str, str, str]]:
        polls = [network.poll_all(DEFAULT_START - seconds), network.poll_all(DEFAULT_START)]
        batch = diagnose(PollTable.concat(polls), model)
        found = zip(batch.device, batch.port, batch.verdict, strict=True)
        return sorted((d, p, v) for d, p, v in found if v != "healthy")

    short = suspects(300.0)
    planted = {(p.device, p.port) for p in PLANTED}
    linked = {end for link in LINKS for end in (link.a, link.b)}
    assert {(d, p) for d, p, _ in short} <= planted | linked
    assert suspects(6 * 3600.0) == short


def test_an_end_that_hears_nothing_names_no_lldp_neighbor() -> None:
    # The demo's one-way fiber: lark-core1 up3 receives nothing from lark-west-idf1 up1, so
    # no LLDP frame either (IEEE 802.1AB: an entry not refreshed is removed); the sending
    # end still hears the core's LLDP and names it.
    (deaf,) = [link for link in LINKS if link.deaf is not None]
    network = DemoNetwork()
    polls = network.poll_all(DEFAULT_START)
    rows = {(d, p): i for i, (d, p) in enumerate(zip(polls.device, polls.port, strict=True))}
    deaf_end = deaf.b if deaf.deaf == deaf.b else deaf.a
    other = deaf.a if deaf_end == deaf.b else deaf.b
    assert polls.neighbor_device[rows[deaf_end]] is None
    assert (polls.neighbor_device[rows[other]], polls.neighbor_port[rows[other]]) == deaf_end
