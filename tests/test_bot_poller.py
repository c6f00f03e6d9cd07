"""Polls for a question: stored history where recent, fresh polls where not, a wait where
the window is too short; and the poll job's round. On the demo network, a real store and
simulated time."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pytest

from linktriage.bot import poller
from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.format.poll_table import PollTable
from linktriage.errors import PollError
from linktriage.network.demo import DemoClock, DemoNetwork
from linktriage.render.replies import (
    DiagnosisReply,
)
from linktriage.settings import Settings
from linktriage.store import Store

from helpers import line, named, polls


def test_a_port_with_no_history_gets_two_polls_a_quick_window_apart(triage: Triage) -> None:
    waited: list[float] = []
    sleep = triage.sleep
    triage.poller.sleep = lambda s: (waited.append(s), sleep(s))[1]  # type: ignore[func-returns-value]
    reply = triage.handle("lark-east-idf2 port14", user="U1", channel="C1")
    assert isinstance(reply, DiagnosisReply)
    assert reply.record["verdict"] == "cable_fault"
    assert waited == [30.0]
    assert reply.record["window_s"] == 30.0
    assert len(triage.store.polls_since(0.0, devices=["lark-east-idf2"], port="port14")) == 2
    stored = triage.store.diagnosis(reply.diagnosis_id)
    assert stored is not None and stored.verdict == "cable_fault"
    assert stored.features["ber_over_objective"] is not None


def test_recent_history_needs_one_fresh_poll_and_no_wait(triage: Triage, clock: DemoClock) -> None:
    triage.poller.poll_round()
    clock.sleep(300.0)
    triage.poller.sleep = lambda s: pytest.fail("should not wait")
    reply = triage.handle("lark-core1 up3")
    assert isinstance(reply, DiagnosisReply)
    assert reply.record["verdict"] == "unidirectional"
    assert reply.record["window_s"] == 300.0


def test_a_stored_poll_seconds_old_is_not_a_window(triage: Triage, clock: DemoClock) -> None:
    # Issue 8.6: right after start the poll job has stored one round 2 s ago; answering on a
    # 2 s window would call a busy port "insufficient traffic". Wait out the quick window.
    waited: list[float] = []
    sleep = triage.sleep
    triage.poller.sleep = lambda s: (waited.append(s), sleep(s))[1]  # type: ignore[func-returns-value]
    triage.poller.poll_round()
    clock.sleep(2.0)
    reply = triage.handle("lark-east-idf2 port14")
    assert isinstance(reply, DiagnosisReply)
    assert waited == [28.0]
    assert reply.record["window_s"] == 30.0
    assert reply.record["verdict"] == "cable_fault"


def test_a_poll_round_keeps_every_port(triage: Triage) -> None:
    result = triage.poller.poll_round()
    assert result.failed == {}
    assert result.stored == len(triage.network.ports())


def test_history_read_back_from_the_store_diagnoses_like_the_polls_themselves(
    triage: Triage, clock: DemoClock, model: Model
) -> None:
    from linktriage.engine.diagnosis.pipeline import diagnose
    from linktriage.engine.simulate.ports import DEFAULT_START
    from linktriage.network.demo import demo_polls

    clock.now = DEFAULT_START - 300.0
    triage.poller.poll_round()
    clock.now = DEFAULT_START
    direct = diagnose(demo_polls(), model)
    for spec in ("lark-east-idf2 port7", "lark-annex-sw1 port3", "lark-core1 up5"):
        reply = triage.handle(spec)
        assert isinstance(reply, DiagnosisReply)
        device, port = spec.split()
        row = direct.index_of(device, port)
        assert row is not None
        assert reply.record == direct.record(row)


def test_the_poll_job_forgets_polls_older_than_the_settings_keep(
    triage: Triage, clock: DemoClock
) -> None:
    kept_h = triage.settings.store.keep_polls_h
    first = triage.poller.poll_round()
    assert first.forgotten == 0
    clock.sleep(kept_h * 3600.0 / 2)
    triage.poller.poll_round()
    clock.sleep(kept_h * 3600.0 / 2 + 60.0)
    last = triage.poller.poll_round()
    assert last.forgotten == first.stored  # the first round's polls, no more
    history = triage.store.poll_history()
    assert history.ports == 2 * first.stored
    assert history.oldest is not None and history.oldest >= clock() - kept_h * 3600.0


class Missed(DemoNetwork):
    """The demo network, with switches that do not answer (``down``), counting the polls
    it is asked for."""

    def __init__(self, clock: DemoClock) -> None:
        super().__init__(clock=clock)
        self.down: set[str] = set()
        self.polled: list[str] = []

    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        self.polled.append(device)
        if device in self.down:
            raise PollError(device, "no answer within 2 s")
        return super().poll(device, ports)


def rounds(triage: Triage, clock: DemoClock, n: int = 3) -> None:
    """The poll job, every five minutes."""
    for _ in range(n):
        triage.poller.poll_round()
        clock.sleep(300.0)


def test_stored_polls_read_by_device_or_by_window_are_the_same(
    triage: Triage, clock: DemoClock, monkeypatch: pytest.MonkeyPatch
) -> None:
    rounds(triage, clock)
    devices = triage.network.device_names()[:3]
    since = clock() - 900.0
    by_index = triage.poller._stored(devices, since)
    monkeypatch.setattr(poller, "FEW_DEVICES", 0)  # as for a network of many devices
    by_window = triage.poller._stored(devices, since)
    assert sorted(set(by_index.device.tolist())) == sorted(devices)
    assert len(by_index) == 3 * sum(len(triage.network.ports_of(d)) for d in devices)
    assert named(by_index) == named(
        by_window.take(np.flatnonzero(np.isin(by_window.device, devices)))
    )


@pytest.mark.parametrize("few", [poller.FEW_DEVICES, 0])
def test_a_digest_takes_the_stored_polls_of_the_ports_asked_about_and_polls_none_again(
    store: Store, model: Model, clock: DemoClock, monkeypatch: pytest.MonkeyPatch, few: int
) -> None:
    monkeypatch.setattr(poller, "FEW_DEVICES", few)  # found by device, or all read at once
    network = Missed(clock)
    triage = Triage(network, store, model, Settings(), clock=clock, sleep=clock.sleep)
    rounds(triage, clock)
    network.polled.clear()
    refs = network.ports()
    polls, failed = triage.poller.polls_for(refs, fresh=False)
    assert failed == {} and network.polled == []
    assert named(polls) == named(store.polls_since(clock() - triage.settings.chat.recent_poll_s))
    some = [r for r in refs if r.device == "lark-east-idf2"][:2] + refs[-1:]
    polls, _ = triage.poller.polls_for(some, fresh=False)
    assert network.polled == [] and len(polls) == 3 * len(some)
    assert set(zip(polls.device, polls.port, strict=True)) == {(r.device, r.port) for r in some}


def test_a_digest_polls_only_the_device_the_poll_job_missed_and_waits_for_it(
    store: Store, model: Model, clock: DemoClock
) -> None:
    network = Missed(clock)
    waited: list[float] = []
    triage = Triage(network, store, model, Settings(), clock=clock,
                    sleep=lambda s: (waited.append(s), clock.sleep(s))[1])  # fmt: skip
    network.down.add("lark-west-idf1")
    rounds(triage, clock)
    network.down.clear()  # it answers again
    network.polled.clear()
    polls, failed = triage.poller.polls_for(network.ports(), fresh=False)
    assert failed == {}
    assert network.polled == ["lark-west-idf1"] * 2  # a first poll, and one a window later
    assert waited == [triage.settings.chat.quick_window_s]
    west = polls.device == "lark-west-idf1"
    assert int(west.sum()) == 2 * len(network.ports_of("lark-west-idf1"))
    assert int((~west).sum()) == 3 * (
        len(network.ports()) - len(network.ports_of("lark-west-idf1"))
    )


def test_a_port_that_hears_no_lldp_is_found_by_the_port_that_names_it(triage: Triage) -> None:
    # The demo's one-way fiber: lark-core1 up3 hears nothing, so names no neighbor; the
    # sending end, lark-west-idf1 up1, still names it (IEEE 802.1AB lldpRemTable).
    poller = triage.poller
    assert poller.naming("lark-core1", "up3") is None  # nothing polled yet
    poller.poll_round()
    assert poller.naming("lark-core1", "up3") == ("lark-west-idf1", "up1")
    # LLDP names systems loosely: a domain name and another case find the same port.
    assert poller.naming("LARK-CORE1.larkmoor.example", "UP3") == ("lark-west-idf1", "up1")
    assert poller.naming("lark-west-idf1", "up1") is None  # the deaf end names nobody
    assert poller.naming("lark-east-idf2", "up1") == ("lark-core1", "up2")  # a sound link


def test_a_port_recabled_no_longer_stands_for_its_old_far_end(triage: Triage) -> None:
    poller = triage.poller
    polls = triage.network.poll("lark-west-idf1", ["up1"])
    poller.heard(polls)
    assert poller.naming("lark-core1", "up3") == ("lark-west-idf1", "up1")
    polls.neighbor_device[:] = "lark-core1"
    polls.neighbor_port[:] = "up6"  # re-patched to another core port
    poller.heard(polls)
    assert poller.naming("lark-core1", "up3") is None
    assert poller.naming("lark-core1", "up6") == ("lark-west-idf1", "up1")
    polls.neighbor_device[:] = None
    polls.neighbor_port[:] = None  # its LLDP entry aged out: it names nobody now
    poller.heard(polls)
    assert poller.naming("lark-core1", "up6") is None


def test_what_each_port_last_said_outlasts_a_question_about_another_port(
    triage: Triage, clock: DemoClock
) -> None:
    # A question about port14 stores a poll of lark-east-idf2 holding port14 alone (and its
    # far end's, none); what port7 heard in the round before still stands: the printer.
    triage.poller.poll_round()
    clock.sleep(120.0)
    assert isinstance(triage.handle("lark-east-idf2 port14"), DiagnosisReply)
    newest = triage.store.latest_poll("lark-east-idf2")
    assert newest.port.tolist() == ["port14"]
    said = triage.poller.last_said()
    port7 = np.flatnonzero((said.device == "lark-east-idf2") & (said.port == "port7"))
    assert said.neighbor_device[port7].tolist() == ["lark-circ-prn1"]
    answer = triage.handle("port-of lark-circ-prn1")
    assert isinstance(answer, DiagnosisReply)
    assert (answer.record["device"], answer.record["port"]) == ("lark-east-idf2", "port7")


def test_the_poll_job_forgets_a_backlog_larger_than_any_batch_in_one_round(
    triage: Triage, clock: DemoClock
) -> None:
    # Issue 21: pruning forgot at most 20,000 packs a round, so with 21,000 devices the
    # store grew by 1,000 packs every round without end. Old polls of 21,000 devices (one
    # pack each), then one round of the poll job past their keep.
    old = polls(*(line(device=f"lark-far-sw{i}") for i in range(21_000)))
    assert triage.store.add_polls(old) == 21_000
    clock.sleep(triage.settings.store.keep_polls_h * 3600.0 + float(old.time.max()) - clock())
    clock.sleep(60.0)
    result = triage.poller.poll_round()
    assert result.forgotten == 21_000
    assert triage.store.poll_history().ports == result.stored  # this round's polls alone
