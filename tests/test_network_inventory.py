"""The inventory: devices, collectors, options and credential references, checked offline."""

from __future__ import annotations

from pathlib import Path

import pytest

from linktriage.errors import InventoryError
from linktriage.network.inventory import demo_inventory, load_inventory, problems


def write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "inventory.toml"
    path.write_text(text, encoding="utf-8")
    return path


GOOD = """
[defaults]
timeout_s = 1.5
retries = 1

[[devices]]
name = "lark-annex-old1"
site = "annex"
collector = "file"
serves = { port1 = "the old copier" }
[devices.options]
path = "PATH"

[[devices]]
name = "lark-core1"
site = "central"
collector = "demo"
ports = ["up3", "up5"]
timeout_s = 0.5
"""


def test_an_inventory_reads_with_defaults_and_overrides(tmp_path: Path, snapshots: Path) -> None:
    inventory = load_inventory(
        write(tmp_path, GOOD.replace("PATH", str(snapshots / "counter32-device.jsonl")))
    )
    old, core = inventory.devices
    assert inventory.target(old).timeout_s == 1.5 and inventory.target(old).retries == 1
    assert inventory.target(core).timeout_s == 0.5
    assert problems(inventory) == {}


DEVICE = '[[devices]]\nname = "{name}"\nsite = "s"\ncollector = "demo"\n'


def test_each_device_with_an_address_is_found_by_it(tmp_path: Path) -> None:
    text = DEVICE.format(name="lark-circ-sw1") + 'address = "10.20.0.5"\n'
    text += DEVICE.format(name="lark-annex-sw2") + 'address = "2001:db8:20::5"\n'
    text += DEVICE.format(name="lark-core1")  # the demo collector needs no address
    assert load_inventory(write(tmp_path, text)).addresses() == {
        "lark-circ-sw1": "10.20.0.5",
        "lark-annex-sw2": "2001:db8:20::5",
    }


@pytest.mark.parametrize(
    ("text", "complaint"),
    [
        (DEVICE.format(name="a") + "port = 1\n", "devices.0.port: not known here"),
        (DEVICE.format(name="bad name!"), "devices.0.name"),
        (DEVICE.format(name="a") + DEVICE.format(name="A"), "listed twice"),
        ("[[devices]\n", "is not valid TOML"),
    ],
)
def test_a_bad_inventory_is_refused_with_the_reason(
    tmp_path: Path, text: str, complaint: str
) -> None:
    with pytest.raises(InventoryError, match=complaint):
        load_inventory(write(tmp_path, text))


def test_problems_are_found_without_contacting_anything(tmp_path: Path) -> None:
    text = """
[[devices]]
name = "a"
site = "s"
collector = "carrier-pigeon"

[[devices]]
name = "b"
site = "s"
collector = "file"
[devices.options]
colour = "red"
"""
    found = problems(load_inventory(write(tmp_path, text)))
    assert "No collector named 'carrier-pigeon'" in found["a"]
    assert "bad collector options" in found["b"]


def test_the_demo_network_is_an_inventory_too() -> None:
    inventory = demo_inventory()
    assert {d.collector for d in inventory.devices} == {"demo"}
    assert problems(inventory) == {}
