"""The collector interface: registration by entry point, credentials by reference, retries;
and the standard objects of format 1.2 every collector decodes the same way."""

from __future__ import annotations

import asyncio
from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest

from linktriage.engine.format.snapshot import Neighbor, PoeStatus
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
from linktriage.network.collectors.lldp import far_end, neighbor
from linktriage.network.collectors.mibs import (
    advertised_speeds,
    aggregates,
    last_change,
    poe_interfaces,
    power_class,
)

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
    plugins.HangingCollector.reset()
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


def test_the_file_collector_replays_the_fields_of_format_1_2(tmp_path: Path) -> None:
    recorded = tmp_path / "v12.jsonl"
    fields = {
        "admin_status": "down", "last_change": "2026-03-02T07:59:00Z", "aggregate": "ae1",
        "fec_mode": "rs528", "module_max_speed_bps": 25_000_000_000,
        "poe_status": {"detection": "fault", "budget_left_w": 120.5},
        "neighbor": {"device": "lark-core1", "port": "xe-0/0/1", "speeds_bps": [10**9]},
    }  # fmt: skip
    recorded.write_text(line(counters={"dot3HCInPauseFrames": 7}, **fields) + "\n")
    collector = FileCollector(Target("lark-test-sw1", None, {"path": str(recorded)}))
    (snap,) = asyncio.run(collector.read()).snapshots
    assert (snap.admin_status, snap.aggregate, snap.fec_mode) == ("down", "ae1", "rs528")
    assert snap.last_change == datetime(2026, 3, 2, 7, 59, tzinfo=UTC)
    assert snap.poe_status == PoeStatus(detection="fault", budget_left_w=120.5)
    assert snap.neighbor is not None and snap.neighbor.speeds_bps == [10**9]
    assert snap.counters["dot3HCInPauseFrames"] == 7


AT = datetime(2026, 3, 2, 8, 0, tzinfo=UTC)


def test_if_last_change_is_placed_with_sysuptime_as_rfc_2863_defines_it() -> None:
    # ifLastChange is "the value of sysUpTime at the time the interface entered its
    # current operational state", 0 where that was before the agent started (RFC 2863).
    assert last_change(AT, 100_000, 94_000) == AT - timedelta(seconds=60)
    assert last_change(AT, 100_000, 0) is None
    assert last_change(AT, None, 94_000) is None
    # TimeTicks wrap at 2^32 (RFC 2578 section 7.1.8): a change 30 s before a wrap, read
    # 10 s after it, is 40 s old.
    assert last_change(AT, 1_000, 2**32 - 3_000) == AT - timedelta(seconds=40)
    # Read as later than sysUpTime: it changed while the poll was walking.
    assert last_change(AT, 100_000, 100_050) == AT


def test_autonegotiation_bits_name_speeds_up_to_a_gigabit() -> None:
    # RFC 3636 ifMauAutoNegCapAdvertisedBits: bit 0 is the first octet's most significant
    # bit (SMIv2 BITS, RFC 2578 section 7.1.4). 1 b10baseT, 5 b100baseTXFD, 14 b1000baseT.
    assert advertised_speeds(bytes([0b0100_0100, 0b0000_0010])) == [10**7, 10**8, 10**9]
    assert advertised_speeds(bytes([0b1000_0000, 0b1111_0000])) is None  # bOther, pauses
    assert advertised_speeds(b"") is None


def test_a_pse_ports_class_counts_only_while_it_delivers_power() -> None:
    # RFC 3621: class0(1) .. class4(5), "valid only while a PD is being powered".
    assert power_class(5, "deliveringPower") == 4
    assert power_class(5, "searching") is None
    assert power_class(7, "deliveringPower") is None  # not a value of the MIB


NAMES = {1001: "Gi1/0/1", 1002: "Gi1/0/2", 2001: "Gi2/0/1", 2002: "Gi2/0/2", 5001: "Te1/1/1"}


def test_pse_ports_of_a_stack_are_matched_by_the_numbers_their_names_carry() -> None:
    # RFC 3621: group is the box in the stack, port numbering implementation specific; the
    # name's first number is the box and its last the port (common practice).
    rows = [(1, 1), (1, 2), (2, 1), (2, 2)]
    assert poe_interfaces(rows, NAMES) == {(1, 1): 1001, (1, 2): 1002, (2, 1): 2001,
                                           (2, 2): 2002}  # fmt: skip
    # Two interfaces end in 1 on a device of one group: the row is left out, not guessed.
    single = {1: "Gi0/1", 2: "Gi0/2", 3: "Te0/1"}
    assert poe_interfaces([(1, 1), (1, 2)], single, "name") == {(1, 2): 2}
    # Where port numbers are ifIndexes whose names end with them, both readings agree.
    assert poe_interfaces([(1, 1), (1, 2)], {1: "port1", 2: "port2"}) == {(1, 1): 1, (1, 2): 2}
    assert poe_interfaces([(1, 2)], {2: "lo"}, "ifindex") == {(1, 2): 2}
    assert poe_interfaces([(1, 2)], {2: "lo"}) == {}  # nothing ties them together


def test_an_aggregate_is_a_lag_interface_stacked_above_a_port() -> None:
    # RFC 2863 ifStackTable; IANAifType ieee8023adLag(161); l2vlan(135) is not one.
    names = {1: "port1", 2: "port2", 3: "port3", 50: "ae1", 60: "vlan10"}
    types = {1: 6, 2: 6, 3: 6, 50: 161, 60: 135}
    stack = [(50, 1), (60, 2), (0, 50)]
    # dot3adAggPortAttachedAggID (IEEE8023-LAG-MIB): 0 where the port is attached to none.
    assert aggregates(stack, types, {3: 50, 2: 0}, names) == {1: "ae1", 3: "ae1"}


def test_a_far_ends_speeds_are_kept_where_its_entries_agree() -> None:
    # LLDP-EXT-DOT3-MIB's MAC/PHY TLV, one per remote entry of the same far end.
    one = far_end("lark-core1", 5, "xe-0/0/1", None, [10**9, 10**8])
    again = far_end("lark-core1", 5, "xe-0/0/1", None, [10**8, 10**9])
    other = far_end("lark-core1", 5, "xe-0/0/1", None, [10**8])
    assert neighbor([one, again]) == Neighbor(
        device="lark-core1", port="xe-0/0/1", speeds_bps=[10**8, 10**9]
    )
    assert neighbor([one, other]) == Neighbor(device="lark-core1", port="xe-0/0/1")
