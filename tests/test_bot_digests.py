"""Lists of suspects and the digest: ranked worst first, per site, unread devices named,
what is new and what cleared."""

from __future__ import annotations

from collections.abc import Sequence

from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.verdicts import SEVERITY
from linktriage.errors import PollError
from linktriage.network.demo import DemoClock, DemoNetwork
from linktriage.render.replies import (
    ErrorReply,
    SuspectsReply,
)
from linktriage.settings import Settings
from linktriage.store import Store


def test_suspects_are_ranked_worst_first(triage: Triage) -> None:
    reply = triage.handle("suspects")
    assert isinstance(reply, SuspectsReply)
    verdicts = [i.record["verdict"] for i in reply.items]
    assert SEVERITY[verdicts[0]] == max(SEVERITY.values())
    # Worst first: by severity, then the surer answer first (SEVERITY; confidence).
    order = [
        (-SEVERITY[v], -(i.record["confidence"] or 0.0))
        for v, i in zip(verdicts, reply.items, strict=True)
    ]
    assert order == sorted(order)
    assert "healthy" not in verdicts and "link_down" not in verdicts
    assert [i.rank for i in reply.items] == list(range(1, len(reply.items) + 1))
    assert reply.ports_judged + sum(reply.not_judged.values()) == len(triage.network.ports())
    assert reply.not_judged["down"] == 1 and reply.failed == {}


def test_suspects_of_one_site(triage: Triage) -> None:
    reply = triage.handle("suspects annex")
    assert isinstance(reply, SuspectsReply)
    assert {i.record["device"] for i in reply.items} == {"lark-annex-sw1"}


def test_a_unique_part_of_a_site_name_names_the_site(triage: Triage) -> None:
    reply = triage.handle("suspects CENT")
    assert isinstance(reply, SuspectsReply)
    assert reply.title == "Suspect links at central"
    assert "lark-annex-sw1" not in {i.record["device"] for i in reply.items}


def test_a_part_of_device_names_lists_the_suspects_of_those_devices(triage: Triage) -> None:
    # No site is called "east", but two devices are: their suspects are listed.
    reply = triage.handle("suspects east")
    assert isinstance(reply, SuspectsReply)
    assert reply.title == "Suspect links on lark-east-idf1 and lark-east-idf2"
    assert {(i.record["device"], i.record["port"]) for i in reply.items} == {
        ("lark-east-idf1", "port19"),
        ("lark-east-idf1", "up1"),
        ("lark-east-idf2", "port7"),
        ("lark-east-idf2", "port14"),
        ("lark-east-idf2", "port23"),  # the camera whose PoE port reports a fault
    }
    assert reply.ports_judged + sum(reply.not_judged.values()) == 50


def test_a_name_that_fits_no_site_and_no_device_is_refused_with_what_fits(
    triage: Triage,
) -> None:
    reply = triage.handle("suspects mars")
    assert isinstance(reply, ErrorReply)
    assert reply.message == "No site or device named 'mars'."
    assert reply.hint == (
        "Sites: annex, central; a unique part of a site's name will do, or a part of some "
        "devices' names."
    )


class Flaky(DemoNetwork):
    """The demo network with one switch that never answers."""

    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        if device == "lark-west-idf1":
            raise PollError(device, "no answer within 2 s")
        return super().poll(device, ports)


def test_a_device_that_does_not_answer_is_named_and_the_rest_still_answer(
    store: Store, model: Model, clock: DemoClock
) -> None:
    triage = Triage(Flaky(clock=clock), store, model, Settings(), clock=clock, sleep=clock.sleep)
    reply = triage.handle("suspects")
    assert isinstance(reply, SuspectsReply)
    assert reply.failed == {"lark-west-idf1": "no answer within 2 s"}
    assert "1 device not read (lark-west-idf1: no answer within 2 s)" in reply.coverage
    assert any(i.record["verdict"] == "cable_fault" for i in reply.items)
    asked = triage.handle("lark-west-idf1 port1")
    assert isinstance(asked, ErrorReply)
    assert asked.message == "lark-west-idf1: no answer within 2 s"
    assert triage.poller.poll_round().failed == {"lark-west-idf1": "no answer within 2 s"}


def test_a_digest_says_what_is_new_and_what_cleared(triage: Triage, clock: DemoClock) -> None:
    first = triage.digests.digest(channel="C1")
    assert first.since is None and not any(i.new for i in first.items)
    assert triage.store.last_digest() is None  # kept only once posted
    triage.posted(first, channel="C1", ts="1.0")
    network = triage.network
    assert isinstance(network, DemoNetwork)
    # The cable is replaced on port14, and a jumbo-frame host appears on port2.
    fixed = network._rows[("lark-east-idf2", "port14")]
    broken = network._rows[("lark-east-idf2", "port2")]
    for key in ("fcs_errors", "alignment_errors", "symbol_errors", "in_errors", "fragments"):
        network.rates[key][fixed] = 0.0
    network.rates["frame_too_longs"][broken] = network.rates["in_ucast"][broken] * 0.01
    network.rates["in_errors"][broken] = network.rates["frame_too_longs"][broken]
    clock.sleep(3600.0)
    second = triage.digests.digest(channel="C1")
    assert second.since == first.at
    assert second.cleared == ["lark-east-idf2 port14"]
    new = [f"{i.record['device']} {i.record['port']}" for i in second.items if i.new]
    assert new == ["lark-east-idf2 port2"]


class Counted(DemoNetwork):
    """The demo network, counting the devices it is asked to poll."""

    def __init__(self, clock: DemoClock) -> None:
        super().__init__(clock=clock)
        self.polled: list[str] = []

    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        self.polled.append(device)
        return super().poll(device, ports)


def test_the_digest_reads_the_poll_jobs_history_without_polling_again(
    store: Store, model: Model
) -> None:
    clock = DemoClock(1_772_438_400.0)
    network = Counted(clock)
    triage = Triage(network, store, model, Settings(), clock=clock, sleep=clock.sleep)
    for _ in range(3):  # the poll job, every five minutes
        triage.poller.poll_round()
        clock.sleep(300.0)
    network.polled.clear()
    digest = triage.digests.digest(channel="C1")
    assert network.polled == []  # the stored window was enough
    assert digest.failed == {} and digest.ports_judged > 0
    asked = triage.handle("suspects")  # asked for now: read now
    assert isinstance(asked, SuspectsReply)
    assert sorted(set(network.polled)) == sorted(network.device_names())
    assert asked.ports_judged == digest.ports_judged


def test_a_digest_polls_the_devices_the_poll_job_missed(store: Store, model: Model) -> None:
    clock = DemoClock(1_772_438_400.0)
    network = Counted(clock)
    triage = Triage(network, store, model, Settings(), clock=clock, sleep=clock.sleep)
    triage.poller.poll_round()
    clock.sleep(300.0)
    triage.poller.poll_round()
    clock.sleep(1200.0)  # the poll job stopped twenty minutes ago: nothing recent
    network.polled.clear()
    digest = triage.digests.digest(channel="C1")
    assert sorted(set(network.polled)) == sorted(network.device_names())
    assert digest.ports_judged > 0


def test_a_link_read_from_both_ends_is_one_suspect_listed_at_the_end_that_sees_it(
    triage: Triage,
) -> None:
    # Issue 12: port7 and the printer it feeds are one duplex mismatch (alone, the printer
    # looks like a cable fault), lark-core1 up3 and lark-west-idf1 up1 one one-way fiber:
    # each link is one line, under the end whose own verdict is the link's (the half-duplex
    # end; the deaf receiver).
    reply = triage.digests.suspects()
    listed_ports = [f"{i.record['device']} {i.record['port']}" for i in reply.items]
    # 15 suspects, among them the PoE camera, the port the switch shut and both ports of
    # the loop; less the link ends listed once.
    assert len(listed_ports) == 15
    assert "lark-east-idf2 port7" in listed_ports and "lark-circ-prn1 eth0" not in listed_ports
    assert "lark-core1 up3" in listed_ports and "lark-west-idf1 up1" not in listed_ports
    (one_way,) = [i for i in reply.items if i.record["port"] == "up3"]
    assert one_way.reason.startswith(
        "one-way link, seen from both ends (with lark-west-idf1 up1): lark-west-idf1 up1 sends"
    )
