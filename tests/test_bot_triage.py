"""The bot's front: commands routed, bad requests answered short and audited, one port
answered with where it is and what it serves, named as engineers name it."""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from pathlib import Path

import pytest

from linktriage.bot.commands import ShowTree
from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.format.poll_table import PollTable
from linktriage.errors import PollError
from linktriage.network.demo import DemoClock, DemoNetwork
from linktriage.network.inventory import DeviceEntry, Inventory
from linktriage.network.inventory_network import InventoryNetwork
from linktriage.render.replies import (
    DiagnosisReply,
    ErrorReply,
    HelpReply,
    HistoryReply,
    ModelReply,
)
from linktriage.settings import Settings
from linktriage.store import Store

from helpers import line, polls, stepped


@pytest.mark.parametrize(
    ("text", "said"),
    [
        ("lark-east-idf9 port1", "No device named 'lark-east-idf9'."),
        ("east port1", "'east' fits 2 devices."),
        ("lark-core1 up99", "lark-core1 has no port named 'up99'."),
        ("lark-core1", "Name one device and one port"),
        ("suspects mars", "No site or device named 'mars'."),
    ],
)
def test_bad_requests_get_a_short_answer_and_are_audited(
    triage: Triage, text: str, said: str
) -> None:
    reply = triage.handle(text, user="U1", channel="C1")
    assert isinstance(reply, ErrorReply)
    assert reply.message.startswith(said)
    assert reply.visibility == "ephemeral"
    (entry,) = triage.store.audit_log()
    assert entry["command"] == text and entry["outcome"].startswith("error: ")


def test_help_and_model_are_answered_privately(triage: Triage) -> None:
    assert isinstance(triage.handle("help"), HelpReply)
    card = triage.handle("model")
    assert isinstance(card, ModelReply) and card.visibility == "ephemeral"
    assert card.card["version"] == triage.model.version


class FarEndSilent(DemoNetwork):
    """The demo network whose lark-west-idf1 never answers: the far end of lark-core1 up3."""

    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        if device == "lark-west-idf1":
            raise PollError(device, "no answer within 2 s")
        return super().poll(device, ports)


def test_an_answer_reads_its_far_end_and_stands_without_it_when_it_cannot_be_read(
    triage: Triage, store: Store, model: Model, clock: DemoClock
) -> None:
    # lark-core1 up3 hears nothing of lark-west-idf1 up1, so no LLDP either; the far end
    # still hears it and names it. After the poll job has read it, the link is judged from
    # both ends; where it could not be read, the port is answered alone, never with a view
    # of what was not read.
    alone_before = triage.handle("lark-core1 up3")
    assert isinstance(alone_before, DiagnosisReply) and "far_end" not in alone_before.record
    triage.poller.poll_round()
    both = triage.handle("lark-core1 up3")
    assert isinstance(both, DiagnosisReply)
    assert both.record["far_end"]["device"] == "lark-west-idf1"
    assert both.record["link"]["verdict"] == "unidirectional"
    silent = Triage(FarEndSilent(clock=clock), store, model, Settings(), clock=clock,
                    sleep=clock.sleep)  # fmt: skip
    silent.poller.poll_round()
    alone = silent.handle("lark-core1 up3")
    assert isinstance(alone, DiagnosisReply)
    assert alone.record["verdict"] == "unidirectional"
    assert "far_end" not in alone.record and "link" not in alone.record


def test_both_ends_of_a_link_are_polled_together_with_one_wait(
    triage: Triage, clock: DemoClock
) -> None:
    # Issue 21: a port whose far end had no recent poll waited the quick window for one
    # end, then again for the other (60.3 s). The last stored poll of lark-east-idf2 port7
    # names its far end (lark-circ-prn1 eth0), so both are polled at once and wait once.
    triage.poller.poll_round()
    clock.sleep(triage.settings.chat.recent_poll_s - 1.0)  # its poll is still on record
    stale = Triage(triage.network, triage.store, triage.model, triage.settings, clock=clock,
                   sleep=clock.sleep)  # a fresh process: nothing heard yet  # fmt: skip
    clock.sleep(2.0)  # now no poll of either end is recent enough to start a window
    started = clock()
    answer = stale.handle("lark-east-idf2 port7")
    assert isinstance(answer, DiagnosisReply)
    assert answer.record["far_end"]["device"] == "lark-circ-prn1"
    assert clock() - started == triage.settings.chat.quick_window_s  # one wait, not two


# --- ports named as engineers type them, read through an inventory: two closet switches
# replayed from a recording by the file collector, each at its management address, one
# listing its ports long and one short, with the LLDP neighbors behind them.
def _neighbor(name: str, port: str = "eth0") -> dict[str, str]:
    return {"device": name, "port": port}


CLOSET = [
    ("lark-circ-sw1", "GigabitEthernet1/0/5", _neighbor("lark-circ-prn1")),
    ("lark-circ-sw1", "GigabitEthernet1/0/24", _neighbor("lark-circ-phone3.larkmoor.example")),
    ("lark-circ-sw1", "TenGigabitEthernet1/1/1", _neighbor("lark-core1", "Te1/0/1")),
    ("lark-circ-sw1", "Port-channel1", None),
    ("lark-annex-sw2", "Gi1/0/5", _neighbor("lark-annex-srv1")),
    ("lark-annex-sw2", "Te1/1/1", _neighbor("lark-core1", "Te1/0/2")),
    ("lark-annex-sw2", "Po1", None),
    ("lark-annex-sw2", "xe-0/0/1", None),
    ("lark-west-sw3", "port14", None),
]
ADDRESSES = {
    "lark-circ-sw1": "10.20.0.5",
    "lark-annex-sw2": "2001:db8:20::5",
    "lark-west-sw3": "lark-west-sw3.mgmt.larkmoor.example",
}


@pytest.fixture
def closets(tmp_path: Path, model: Model) -> Iterator[Triage]:
    """The bot on the closets, with a real SQLite store, asked five minutes after the
    recording starts; every read of a device replays its next poll."""
    recording = tmp_path / "closets.jsonl"
    steps = [{"ifHCInUcastPkts": 900_000, "ifHCOutUcastPkts": 700_000}] * 12
    recording.write_text(
        "\n".join(
            text
            for device, port, far in CLOSET
            for text in stepped(steps, device=device, port=port, speed_bps=10**9,
                                **({"neighbor": far} if far else {}))
        ) + "\n"
    )  # fmt: skip
    inventory = Inventory(
        devices=[
            DeviceEntry(name=name, site="central", collector="file", address=address,
                        options={"path": str(recording)})
            for name, address in ADDRESSES.items()
        ]
    )  # fmt: skip
    network = InventoryNetwork(inventory)
    clock = DemoClock(polls(line()).time[0] + 300.0)
    store = Store(f"sqlite:///{tmp_path / 'store.sqlite'}")
    yield Triage(network, store, model, Settings(), clock=clock, sleep=clock.sleep)
    network.close()
    store.close()


def _answered(reply: object) -> tuple[str, str]:
    assert isinstance(reply, DiagnosisReply), reply
    return reply.record["device"], reply.record["port"]


@pytest.mark.parametrize(
    ("text", "port"),
    [
        ("10.20.0.5 Gi1/0/5", ("lark-circ-sw1", "GigabitEthernet1/0/5")),
        ("10.20.0.5 gi1/0/24", ("lark-circ-sw1", "GigabitEthernet1/0/24")),
        ("circ-sw1 TE1/1/1", ("lark-circ-sw1", "TenGigabitEthernet1/1/1")),
        ("lark-circ-sw1 po1", ("lark-circ-sw1", "Port-channel1")),
        # RFC 4291 section 2.2: one IPv6 address, written another way than the inventory's.
        ("2001:DB8:20:0::5 TenGigabitEthernet1/1/1", ("lark-annex-sw2", "Te1/1/1")),
        ("2001:db8:20::5 GIGABITETHERNET1/0/5", ("lark-annex-sw2", "Gi1/0/5")),
        ("annex-sw2 Port-channel1", ("lark-annex-sw2", "Po1")),
        ("annex-sw2 XE-0/0/1", ("lark-annex-sw2", "xe-0/0/1")),
        ("lark-west-sw3.mgmt.larkmoor.example port14", ("lark-west-sw3", "port14")),
    ],
)
def test_a_port_is_answered_by_address_and_short_or_long_type(
    closets: Triage, text: str, port: tuple[str, str]
) -> None:
    assert _answered(closets.handle(text)) == port


def test_a_port_is_answered_by_the_neighbor_its_stored_polls_name(closets: Triage) -> None:
    # Nothing stored yet: nothing is known of what is behind any port.
    early = closets.handle("port-of lark-circ-prn1")
    assert isinstance(early, ErrorReply)
    assert early.message.endswith("no stored poll names any neighbor yet.")
    closets.poller.poll_round()  # the poll job stores what every port hears
    assert _answered(closets.handle("port-of lark-circ-prn1")) == (
        "lark-circ-sw1",
        "GigabitEthernet1/0/5",
    )
    assert _answered(closets.handle("Port-Of LARK-CIRC-PHONE3")) == (
        "lark-circ-sw1",
        "GigabitEthernet1/0/24",
    )
    assert _answered(closets.handle("port-of lark-annex-srv1")) == ("lark-annex-sw2", "Gi1/0/5")
    # What each port hears is read from the store: a bot started afresh knows it too.
    fresh = Triage(closets.network, closets.store, closets.model, closets.settings,
                   clock=closets.clock, sleep=closets.sleep)  # fmt: skip
    assert isinstance(fresh.settle("tree port-of lark-circ-prn1"), ShowTree)
    history = fresh.handle("history port-of lark-circ-prn1 1h")
    assert isinstance(history, HistoryReply)
    assert (history.device, history.port) == ("lark-circ-sw1", "GigabitEthernet1/0/5")


def test_a_neighbor_two_ports_hear_or_none_hears_is_refused_naming_what_is_known(
    closets: Triage,
) -> None:
    closets.poller.poll_round()
    twice = closets.handle("port-of lark-core1")
    assert isinstance(twice, ErrorReply)
    assert twice.message == "'lark-core1' is the LLDP neighbor of 2 ports."
    assert twice.hint == "Which one: lark-annex-sw2 Te1/1/1, lark-circ-sw1 TenGigabitEthernet1/1/1?"
    nobody = closets.handle("port-of lark-circ-prn2")
    assert isinstance(nobody, ErrorReply)
    assert nobody.message == "No port has 'lark-circ-prn2' as its LLDP neighbor."
    assert nobody.hint is not None and nobody.hint.startswith("Did you mean: lark-circ-prn1, ")


def test_wrong_names_get_sensible_suggestions_and_nothing_is_polled(closets: Triage) -> None:
    wrong = closets.handle("10.20.0.5 Gi1/0/7")
    assert isinstance(wrong, ErrorReply)
    assert wrong.message == "lark-circ-sw1 has no port named 'Gi1/0/7'."
    assert wrong.hint is not None
    assert wrong.hint.startswith("Did you mean: GigabitEthernet1/0/5, GigabitEthernet1/0/24")
    elsewhere = closets.handle("10.20.0.6 Gi1/0/5")
    assert isinstance(elsewhere, ErrorReply)
    assert (elsewhere.message, elsewhere.hint) == (
        "No device is at 10.20.0.6.",
        "Did you mean: 10.20.0.5?",
    )
    assert closets.store.poll_history().ports == 0  # no name that fits nothing was polled
