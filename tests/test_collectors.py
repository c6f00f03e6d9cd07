"""The collector interface: registration by entry point, credentials by reference, retries."""

from __future__ import annotations

import asyncio
from pathlib import Path

import pytest

from linktriage.engine.format.snapshot import Neighbor
from linktriage.errors import DeviceTimeoutError, InputError, UnknownCollectorError
from linktriage.network.collectors.base import (
    Collector,
    Options,
    SecretRef,
    Target,
    collector_class,
    collector_names,
)
from linktriage.network.collectors.demo import DemoCollector
from linktriage.network.collectors.file import FileCollector, FileOptions

import plugins
from helpers import line


def test_the_built_in_collectors_register_like_any_other() -> None:
    built_in = {"demo", "file", "snmp", "restconf", "prometheus", "linux"}
    assert built_in <= set(collector_names())
    assert collector_class("demo") is DemoCollector
    assert all(issubclass(collector_class(name), Collector) for name in built_in)


def test_a_third_party_package_adds_a_collector_by_entry_point(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    plugins.install(tmp_path, monkeypatch)
    assert collector_class("hang") is plugins.HangingCollector
    with pytest.raises(UnknownCollectorError, match="not a linktriage collector"):
        collector_class("notone")


def test_an_unknown_collector_lists_the_known_ones() -> None:
    with pytest.raises(UnknownCollectorError) as caught:
        collector_class("carrier-pigeon")
    assert caught.value.hint is not None and "demo" in caught.value.hint
    assert isinstance(caught.value, LookupError)


def test_credentials_are_references_never_inline(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    with pytest.raises(ValueError, match="by reference only"):
        SecretRef.model_validate("public")
    with pytest.raises(ValueError, match="exactly one"):
        SecretRef.model_validate({})
    monkeypatch.setenv("LARK_COMMUNITY", "s3cret")
    assert SecretRef(env="LARK_COMMUNITY").reveal() == "s3cret"
    secret_file = tmp_path / "token"
    secret_file.write_text("abc\n")
    assert SecretRef(file=secret_file).reveal() == "abc"
    with pytest.raises(InputError, match="NOT_SET is not set"):
        SecretRef(env="NOT_SET").reveal()


def test_options_are_checked_when_the_collector_is_built() -> None:
    with pytest.raises(InputError, match="bad collector options"):
        FileCollector(Target("x", None, {"path": "/tmp/x", "colour": "red"}))
    with pytest.raises(InputError, match="needs an address"):
        type("Needy", (plugins.RefusingCollector,), {"needs_address": True})(Target("x", None))


def test_a_collector_names_its_options_model_as_its_type_parameter() -> None:
    assert FileCollector.options_model is FileOptions
    assert plugins.HangingCollector.options_model is plugins.SlowOptions
    hanging = plugins.HangingCollector(Target("x", None, {"seconds": 2}))
    assert isinstance(hanging.options, plugins.SlowOptions) and hanging.options.seconds == 2.0
    with pytest.raises(InputError, match="seconds"):
        plugins.HangingCollector(Target("x", None, {"seconds": "soon"}))
    # a collector without a parameter takes the base options: nothing beyond them
    assert plugins.RefusingCollector.options_model is Options


def test_timeouts_are_retried_with_backoff_then_named(monkeypatch: pytest.MonkeyPatch) -> None:
    plugins.HangingCollector.calls = 0
    collector = plugins.HangingCollector(Target("lark-slow", None, {}, timeout_s=0.05, retries=2))
    with pytest.raises(
        DeviceTimeoutError, match=r"lark-slow: no answer to a read within 0.05 s \(3 tries\)"
    ):
        asyncio.run(collector.read())
    assert plugins.HangingCollector.calls == 3


def test_the_demo_collector_reads_a_demo_switch() -> None:
    collector = DemoCollector(Target("lark-core1", None))
    assert asyncio.run(collector.ports()) == ["up1", "up2", "up3", "up4", "up5", "up6"]
    reading = asyncio.run(collector.read(["up3"]))
    (snap,) = reading.snapshots
    assert snap.port == "up3" and snap.media == "fiber" and "ifHCInOctets" in snap.counters


def test_the_file_collector_replays_recorded_polls_in_order(snapshots: Path) -> None:
    collector = FileCollector(
        Target("lark-annex-old1", None, {"path": str(snapshots / "counter32-device.jsonl")})
    )
    assert asyncio.run(collector.ports()) == ["port1", "port2"]
    times = [asyncio.run(collector.read(["port1"])).snapshots[0].time.minute for _ in range(4)]
    assert times == [0, 5, 10, 0]  # three recorded polls, then from the start again


def test_the_file_collector_replays_the_neighbor_a_line_names(tmp_path: Path) -> None:
    # SNAPSHOT-FORMAT 1.1: the optional `neighbor` object, replayed as it was recorded.
    recorded = tmp_path / "lldp.jsonl"
    far = {"device": "lark-core1", "port": "xe-0/0/1"}
    recorded.write_text(line(neighbor=far) + "\n" + line(port="port2") + "\n")
    collector = FileCollector(Target("lark-test-sw1", None, {"path": str(recorded)}))
    reading = asyncio.run(collector.read())
    assert {s.port: s.neighbor for s in reading.snapshots} == {
        "port1": Neighbor(device="lark-core1", port="xe-0/0/1"),
        "port2": None,
    }


def test_a_collector_is_an_abstract_interface() -> None:
    assert {"ports", "read"} <= Collector.__abstractmethods__
