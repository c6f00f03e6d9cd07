"""Packed polls: a pack unpacks to the very table it was made from, in a fraction of the
bytes of a JSON line; damaged bytes are refused, never read as counters."""

from __future__ import annotations

from pathlib import Path
from typing import get_args

import numpy as np
import pytest

from linktriage.packed import STATUSES, PackError, pack, unpack
from linktriage.polls import PollTable
from linktriage.snapshot import OperStatus, read_snapshot_file

from helpers import line, polls

FIXTURES = Path(__file__).parents[1] / "fixtures" / "snapshots"


def assert_same(back: PollTable, table: PollTable) -> None:
    assert back.device.tolist() == table.device.tolist()
    assert back.port.tolist() == table.port.tolist()
    assert back.oper_status.tolist() == table.oper_status.tolist()
    np.testing.assert_array_equal(back.time, table.time)
    np.testing.assert_array_equal(back.present, table.present)
    np.testing.assert_array_equal(back.counters[back.present], table.counters[table.present])
    for name in table.state:
        np.testing.assert_array_equal(back.state[name], table.state[name])  # NaN == NaN here
    for name in table.optics:
        np.testing.assert_array_equal(back.optics[name], table.optics[name])


def by_device(table: PollTable) -> list[tuple[str, PollTable]]:
    return [
        (device, table.take(np.flatnonzero(table.device == device)))
        for device in sorted(set(table.device.tolist()))
    ]


@pytest.mark.parametrize(
    "name", ["demo-network.jsonl", "counter32-device.jsonl", "format-example.jsonl"]
)
def test_every_recorded_device_comes_back_exactly(name: str) -> None:
    for device, rows in by_device(read_snapshot_file(FIXTURES / name).polls):
        assert_same(unpack(pack(rows), device), rows)


def test_every_verdicts_file_comes_back_exactly() -> None:
    files = sorted((FIXTURES / "verdicts").glob("*.jsonl"))
    assert files
    for path in files:
        for device, rows in by_device(read_snapshot_file(path).polls):
            assert_same(unpack(pack(rows), device), rows)


def test_counters_at_their_limits_come_back_exactly() -> None:
    # RFC 2578: Counter32 runs to 2^32 - 1, Counter64 to 2^64 - 1. A column whose values
    # all fit 32 bits is packed in 4 bytes; one value beyond keeps the column in 8.
    table = polls(
        line(counters={"ifHCInOctets": 2**64 - 1, "ifInOctets": 2**32 - 1, "ifInErrors": 3}),
        line(counters={"ifHCInOctets": 0, "ifInOctets": 0, "ifHCOutOctets": 2**32}, port="p2"),
    )
    assert_same(unpack(pack(table), "lark-test-sw1"), table)


def test_port_names_of_any_text_come_back() -> None:
    names = ["Gi1/0/1", "Ethernet1/1.100", "WAN \u00fcbergabe", "port\x1b[2J", ""]
    table = polls(*(line(port=name or "p") for name in names))
    assert_same(unpack(pack(table), "lark-test-sw1"), table)


def test_every_status_of_the_snapshot_format_has_a_code() -> None:
    assert set(STATUSES) == set(get_args(OperStatus)) and len(set(STATUSES)) == len(STATUSES)
    table = polls(*(line(port=f"p{i}", oper_status=s) for i, s in enumerate(STATUSES)))
    assert unpack(pack(table), "lark-test-sw1").oper_status.tolist() == list(STATUSES)


def test_a_pack_takes_a_fraction_of_a_json_line() -> None:
    table = read_snapshot_file(FIXTURES / "demo-network.jsonl").polls
    json_bytes = (FIXTURES / "demo-network.jsonl").stat().st_size
    packed_bytes = sum(len(pack(rows)) for _, rows in by_device(table))
    assert packed_bytes / len(table) <= 200  # the store's target per port per poll
    assert packed_bytes < json_bytes / 3


@pytest.mark.parametrize(
    "damage",
    [
        lambda b: b[:5],  # cut inside the header
        lambda b: b[:-10],  # cut inside the compressed body
        lambda b: bytes([9]) + b[1:],  # a format this version does not read
        lambda b: b[:21] + bytes(len(b) - 21),  # the body zeroed
    ],
)
def test_damaged_bytes_are_refused(damage: object) -> None:
    blob = pack(polls(line(counters={"ifHCInOctets": 7})))
    with pytest.raises(PackError):
        unpack(damage(blob), "lark-test-sw1")  # type: ignore[operator]


def test_neighbors_come_back_and_a_table_without_them_packs_as_before() -> None:
    # A pack of a table naming no neighbor is format 1, byte for byte as before neighbors
    # existed; one naming some is format 2 and brings their names back, None included.
    plain = polls(line(), line(port="port2"))
    assert pack(plain)[0] == 1
    linked = polls(line(neighbor={"device": "lark-core1", "port": "up3"}), line(port="port2"))
    blob = pack(linked)
    assert blob[0] == 2
    back = unpack(blob, "lark-test-sw1")
    assert_same(back, linked)
    assert back.neighbor_device.tolist() == ["lark-core1", None]
    assert back.neighbor_port.tolist() == ["up3", None]
