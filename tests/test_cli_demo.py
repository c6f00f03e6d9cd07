"""`linktriage demo` leaves the poll job's last hour of the demo network in the settings'
store, so the README's next commands answer from it; never in a real network's store, and
never a round a copy running the store's jobs polls already."""

from __future__ import annotations

import time
from pathlib import Path

from click.testing import CliRunner

from linktriage.cli import main
from linktriage.paths import data_dir
from linktriage.store import JOBS_LEASE, Store


def run(*args: str) -> tuple[int, str, str]:
    result = CliRunner().invoke(main, list(args))
    return result.exit_code, result.stdout, result.stderr


def test_after_the_demo_the_readmes_history_and_suspects_answer_from_the_store() -> None:
    code, out, _ = run("demo")
    assert code == 0
    store = f"sqlite:///{data_dir() / 'linktriage.sqlite'}"  # the built-in settings' store
    assert f"The store of your settings, {store}: 13 poll rounds of the demo network's " in out
    code, out, err = run("history", "lark-east-idf2", "port14")
    assert code == 0, err
    lines = out.splitlines()
    assert lines[0] == "lark-east-idf2 port14: the last 24 h"
    # An hour of five-minute polls: twelve windows, the cable fault in each.
    assert lines[1].startswith("cable_fault throughout, 12 windows since ")
    code, out, _ = run("suspects", "east")
    assert code == 0
    assert out.splitlines()[2].startswith(
        "  1. lark-east-idf2 port14: cable or connector fault (cable_fault)"
    )


def test_the_demo_keeps_no_simulated_polls_in_the_store_of_an_inventory(
    tmp_path: Path, snapshots: Path
) -> None:
    inventory = tmp_path / "inventory.toml"
    inventory.write_text(
        '[[devices]]\nname = "lark-annex-old1"\nsite = "annex"\ncollector = "file"\n'
        f'[devices.options]\npath = "{snapshots / "counter32-device.jsonl"}"\n'
    )
    store = tmp_path / "s.sqlite"
    config = tmp_path / "c.toml"
    config.write_text(
        f'[store]\nurl = "sqlite:///{store}"\n'
        f'[network]\nsource = "inventory"\ninventory = "{inventory}"\n'
    )
    code, out, _ = run("demo", "--config", str(config))
    assert code == 0
    assert "Your settings read an inventory: the demo keeps no simulated polls" in out
    assert not store.exists()


def test_the_demo_polls_nothing_into_a_store_whose_jobs_another_copy_runs(
    tmp_path: Path,
) -> None:
    store_path = tmp_path / "s.sqlite"
    config = tmp_path / "c.toml"
    config.write_text(f'[store]\nurl = "sqlite:///{store_path}"\n')
    store = Store(f"sqlite:///{store_path}")
    assert store.take_lease(JOBS_LEASE, "lark-ops2:4242:1a2b3c", now=time.time(), hold_s=600)
    code, out, _ = run("demo", "--config", str(config))
    assert code == 0
    assert "another copy (lark-ops2:4242:1a2b3c) runs the poll job on it now" in out
    assert store.poll_history().packs == 0
    store.close()


def test_a_store_the_demo_cannot_open_is_said_at_its_end_and_the_demo_still_runs(
    tmp_path: Path,
) -> None:
    blocker = tmp_path / "a-file"
    blocker.write_text("")
    config = tmp_path / "c.toml"
    config.write_text(f'[store]\nurl = "sqlite:///{blocker / "s.sqlite"}"\n')
    code, out, _ = run("demo", "--config", str(config))
    assert code == 0  # the demo itself needs no store of the settings'
    assert "Larkmoor Civic Library" in out
    assert f"could not keep the demo's polls: Cannot open the store at sqlite:///{blocker}" in out
