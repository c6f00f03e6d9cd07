"""The composition root: parts opened once, handed over, and closed, also when a later part
fails to open; the inventory a command reads; the network the settings name."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from linktriage.assembly import inventory_for, network_for, opened, opened_store
from linktriage.errors import ModelError, StoreError
from linktriage.network.demo import DemoClock, DemoNetwork
from linktriage.settings import NetworkSettings, Settings, StoreSettings


def open_files_under(folder: Path) -> list[str]:
    """Files under ``folder`` this process holds open (Linux: /proc/self/fd)."""
    held = []
    for fd in os.listdir("/proc/self/fd"):
        try:
            target = os.readlink(f"/proc/self/fd/{fd}")
        except OSError:  # closed while listing
            continue
        if target.startswith(str(folder)):
            held.append(target)
    return held


class Watched(DemoNetwork):
    """The demo network, remembering whether it was closed."""

    closed = False

    def close(self) -> None:
        self.closed = True


def settings_in(folder: Path) -> Settings:
    return Settings(store=StoreSettings(url=f"sqlite:///{folder / 'store.sqlite'}"))


@pytest.mark.skipif(not Path("/proc/self/fd").is_dir(), reason="needs Linux's /proc")
def test_the_store_is_opened_once_used_and_closed(tmp_path: Path) -> None:
    with opened(settings_in(tmp_path), simulated_time=True) as parts:
        triage = parts.triage()
        assert parts.triage() is triage  # one service per set of parts
        assert triage.store is parts.store and triage.network is parts.network
        triage.handle("lark-east-idf2 port14")
        assert parts.store.audit_log()  # the store was really written
    assert open_files_under(tmp_path) == []


def test_a_network_given_is_used_and_closed(tmp_path: Path) -> None:
    network = Watched()
    with opened(settings_in(tmp_path), network=network) as parts:
        assert parts.network is network and not network.closed
    assert network.closed


def test_a_model_that_cannot_be_loaded_opens_nothing(tmp_path: Path) -> None:
    network = Watched()
    with (
        pytest.raises(ModelError),
        opened(settings_in(tmp_path), model_path=tmp_path / "missing.json", network=network),
    ):
        pytest.fail("parts were handed over without a model")
    assert network.closed  # what was handed in is closed all the same
    assert not (tmp_path / "store.sqlite").exists()


def test_a_store_that_cannot_be_opened_closes_the_network(tmp_path: Path) -> None:
    network = Watched()
    broken = Settings(store=StoreSettings(url="nosuchdb://nowhere"))
    with pytest.raises(StoreError), opened(broken, network=network):
        pytest.fail("parts were handed over without a store")
    assert network.closed


@pytest.mark.skipif(not Path("/proc/self/fd").is_dir(), reason="needs Linux's /proc")
def test_a_store_alone_is_closed_on_leaving(tmp_path: Path) -> None:
    with opened_store(settings_in(tmp_path)) as store:
        assert store.labels() == []
    assert open_files_under(tmp_path) == []


def test_the_inventory_given_wins_then_the_settings_then_the_demo(tmp_path: Path) -> None:
    given = tmp_path / "given.toml"
    given.write_text('[[devices]]\nname = "lark-core1"\nsite = "lab"\ncollector = "demo"\n')
    assert [d.name for d in inventory_for(given, None).devices] == ["lark-core1"]
    config = tmp_path / "config.toml"
    config.write_text(f'[network]\nsource = "inventory"\ninventory = "{given}"\n')
    assert [d.name for d in inventory_for(None, config).devices] == ["lark-core1"]
    empty = tmp_path / "defaults.toml"
    empty.write_text("")
    every_demo_switch = {d.name for d in inventory_for(None, empty).devices}
    assert every_demo_switch == set(DemoNetwork().device_names())


def test_the_demo_network_on_simulated_time_waits_without_waiting() -> None:
    network, clock, sleep = network_for(Settings(), simulated_time=True)
    assert isinstance(network, DemoNetwork) and isinstance(clock, DemoClock)
    before = clock()
    sleep(30.0)
    assert clock() == before + 30.0


def test_an_inventory_in_the_settings_is_read_on_real_time(tmp_path: Path) -> None:
    inventory = tmp_path / "inventory.toml"
    inventory.write_text('[[devices]]\nname = "lark-core1"\nsite = "lab"\ncollector = "demo"\n')
    settings = Settings(network=NetworkSettings(source="inventory", inventory=inventory))
    network, clock, _ = network_for(settings, simulated_time=True)
    try:
        assert network.device_names() == ["lark-core1"]
        assert not isinstance(clock, DemoClock)
    finally:
        network.close()
