"""Packed polls: a pack unpacks to the very table it was made from, in a fraction of the
bytes of a JSON line; damaged bytes are refused, never read as counters."""

from __future__ import annotations

import logging
import sqlite3
import struct
import zlib
from collections.abc import Callable
from pathlib import Path
from typing import get_args

import numpy as np
import pytest

from linktriage.engine.format.counters import COLUMN_INDEX
from linktriage.engine.format.packs import (
    FORMAT,
    LEGACY_FORMATS,
    STATUSES,
    PackError,
    pack,
    pack_columns,
    unpack,
    unpack_many,
    upgraded,
)
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.format.snapshot import OperStatus, read_snapshot_file

from helpers import line, named, polls

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


def test_neighbors_come_back_and_a_table_without_them_holds_no_neighbor_names() -> None:
    plain = polls(line(), line(port="port2"))
    assert 'neighbors":false' in _directory(pack(plain))
    linked = polls(line(neighbor={"device": "lark-core1", "port": "up3"}), line(port="port2"))
    back = unpack(pack(linked), "lark-test-sw1")
    assert_same(back, linked)
    assert back.neighbor_device.tolist() == ["lark-core1", None]
    assert back.neighbor_port.tolist() == ["up3", None]


def _directory(blob: bytes) -> str:
    """The column directory at the start of a format 3 pack's body, as text."""
    heading = struct.unpack_from("<BII", blob)[2]
    return zlib.decompress(blob[9:])[:heading].decode()


def _renamed(blob: bytes, old: str, new: str) -> bytes:
    """A format 3 pack whose directory calls column ``old`` ``new``, its values untouched."""
    version, rows, heading = struct.unpack_from("<BII", blob)
    body = zlib.decompress(blob[9:])
    directory = body[:heading].decode().replace(f'"{old}"', f'"{new}"').encode()
    return struct.pack("<BII", version, rows, len(directory)) + zlib.compress(
        directory + body[heading:]
    )


def test_a_pack_names_every_column_it_holds_by_its_snapshot_format_name() -> None:
    table = polls(
        line(counters={"ifHCInOctets": 2**40, "dot3StatsFCSErrors": 7}, speed_bps=10**9,
             optics={"rx_power_dbm": -3.1}),
    )  # fmt: skip
    blob = pack(table)
    assert blob[0] == FORMAT
    # Counters by their MIB names (RFC 2863, RFC 3635), the wide one first; readings only
    # where some row carries them (NaN everywhere is not kept).
    assert pack_columns(blob) == (
        "ifHCInOctets", "dot3StatsFCSErrors", "state.speed_bps", "optics.rx_power_dbm",
    )  # fmt: skip


def test_a_column_this_release_does_not_know_is_named_and_the_rest_reads_exactly(
    caplog: pytest.LogCaptureFixture,
) -> None:
    # As if a later release had added a counter: the pack names it, this reader has none.
    table = polls(
        line(counters={"ifHCInOctets": 5, "dot3StatsFCSErrors": 7, "ifInErrors": 9}, mtu=9000)
    )
    blob = _renamed(pack(table), "dot3StatsFCSErrors", "dot3StatsFutureCounter")
    blob = _renamed(blob, "state.mtu", "state.future_reading")
    with caplog.at_level(logging.WARNING, logger="linktriage.engine.format.packs"):
        back = unpack(blob, "lark-test-sw1")
    said = caplog.text
    assert "'dot3StatsFutureCounter'" in said and "'state.future_reading'" in said
    fcs, errors, octets = (COLUMN_INDEX[n] for n in
                           ("dot3StatsFCSErrors", "ifInErrors", "ifHCInOctets"))  # fmt: skip
    assert not back.present[0, fcs]  # not shifted onto the column it replaced
    assert back.present[0, errors] and int(back.counters[0, errors]) == 9
    assert back.present[0, octets] and int(back.counters[0, octets]) == 5
    assert int(back.present[0].sum()) == 2
    assert np.isnan(back.state["mtu"][0])


def test_a_directory_naming_one_column_twice_is_refused() -> None:
    blob = pack(polls(line(counters={"ifHCInOctets": 5, "ifInErrors": 9})))
    with pytest.raises(PackError, match="twice"):
        unpack(_renamed(blob, "ifInErrors", "ifHCInOctets"), "lark-test-sw1")


STORE = Path(__file__).parents[1] / "fixtures" / "store" / "release-0.1.0.sqlite"


def test_packs_of_the_first_release_read_exactly_through_the_catalogue_they_were_written_for(
) -> None:  # fmt: skip
    # fixtures/store/release-0.1.0.sqlite: packs of formats 1 and 2, written by release
    # 0.1.0 from the recorded files below (fixtures/store/README.md).
    with sqlite3.connect(STORE) as conn:
        rows = conn.execute("SELECT device, body FROM poll_packs ORDER BY id").fetchall()
    assert {body[0] for _, body in rows} == set(LEGACY_FORMATS)
    back = PollTable.concat([unpack(body, device) for device, body in rows])
    assert named(back) == named(_recorded())
    assert pack_columns(rows[0][1])[:2] == ("ifHCInOctets", "ifHCOutOctets")


def test_an_earlier_format_is_upgraded_to_the_same_columns_under_their_names() -> None:
    with sqlite3.connect(STORE) as conn:
        rows = conn.execute("SELECT device, body FROM poll_packs ORDER BY id").fetchall()
    for device, body in rows:
        new = upgraded(body)
        assert new[0] == FORMAT and upgraded(new) is new
        assert pack_columns(new) == pack_columns(body)
        assert named(unpack(new, device)) == named(unpack(body, device))


def _recorded() -> PollTable:
    """The polls that store holds, from the files as they were recorded then."""
    then = STORE.with_suffix("")
    files = ["demo-network.jsonl", "counter32-device.jsonl", "format-example.jsonl"]
    paths = [then / f for f in files] + sorted((then / "verdicts").glob("*.jsonl"))
    return PollTable.concat([read_snapshot_file(p).polls for p in paths])


def test_the_fields_of_format_1_2_come_back_and_a_1_1_pack_is_as_before() -> None:
    from test_format_snapshot import EVERY_1_2_FIELD

    fields = dict(EVERY_1_2_FIELD)
    counters = fields.pop("counters")
    table = polls(line(counters=counters, **fields), line("2026-03-02T08:05:00Z"))
    back = unpack(pack(table), "lark-test-sw1")
    assert named(back) == named(table)
    assert back.extra["lanes"][0] == table.extra["lanes"][0]
    plain = polls(line(), line("2026-03-02T08:05:00Z"))
    assert b"extra" not in zlib.decompress(pack(plain)[struct.calcsize("<BII") :])


def assert_identical(back: PollTable, table: PollTable) -> None:
    """Every column row for row, the far end's names and the words of format 1.2 too."""
    assert_same(back, table)
    assert back.device.tolist() == table.device.tolist()
    assert back.neighbor_device.tolist() == table.neighbor_device.tolist()
    assert back.neighbor_port.tolist() == table.neighbor_port.tolist()
    for name in table.extra:
        assert back.extra[name].tolist() == table.extra[name].tolist(), name


def one_by_one(packs: list[tuple[str, bytes]]) -> PollTable:
    return PollTable.concat([unpack(body, device) for device, body in packs])


def at_once(packs: list[tuple[str, bytes]]) -> PollTable:
    return unpack_many([body for _, body in packs], [device for device, _ in packs])


def test_many_packs_read_at_once_are_each_read_alone_one_after_the_other() -> None:
    # Packs of other column sets (8- and 4-byte counters, readings carried or not), other
    # row counts, far ends named or not, and 1.2 words in some packs, some in others,
    # none in the rest (a 1.1 pack), interleaved as a digest reads them: oldest first.
    from test_format_snapshot import EVERY_1_2_FIELD

    fields = dict(EVERY_1_2_FIELD)
    counters = fields.pop("counters")
    later = "2026-03-02T08:05:00Z"
    tables = [
        polls(line(counters={"ifHCInOctets": 2**40, "ifInErrors": 3}, speed_bps=1e9),
              line(counters={"ifHCInOctets": 7}, port="port2")),
        polls(line(counters=counters, **fields, device="lark-test-sw2"),
              line(device="lark-test-sw2", port="port2", aggregate="bundle1")),
        polls(line(later, {"ifHCInOctets": 2**40 + 5, "ifInErrors": 4}, speed_bps=1e9),
              line(later, {"ifHCInOctets": 9}, port="port2")),
        polls(line(later, device="lark-test-sw3", neighbor={"device": "lark-core1", "port": "up3"}),
              line(later, device="lark-test-sw3", port="Gi1/0/2 \u00fcbergabe",
                   optics={"rx_power_dbm": -3.1, "pmd": "10GBASE-LR"})),
        polls(line(later, counters=counters, **fields, device="lark-test-sw2")),
        polls(line(later, {"ifInErrors": 2**32 - 1}, device="lark-test-sw4")),
    ]  # fmt: skip
    packs = [(str(t.device[0]), pack(t)) for t in tables]
    layouts = [(_directory(body), struct.unpack_from("<BI", body)[1]) for _, body in packs]
    assert 1 < len(set(layouts)) < len(packs)  # some read as one block, most alone
    back = at_once(packs)
    assert_identical(back, one_by_one(packs))
    assert_identical(back, PollTable.concat(tables))
    assert back.extra["lanes"][2] == tables[1].extra["lanes"][0]  # a tuple of lanes, whole


def test_packs_laid_out_alike_keep_each_packs_own_names_and_values() -> None:
    # One directory, one row count: read as one block, yet each pack's names are its own,
    # even where the bytes of two packs' names are the same but cut elsewhere.
    first = polls(line(counters={"ifInErrors": 1}, port="ab"), line(counters={}, port="c"))
    second = polls(line("2026-03-02T08:05:00Z", {"ifInErrors": 2}, port="a"),
                   line("2026-03-02T08:05:00Z", {}, port="bc"))  # fmt: skip
    packs = [("lark-test-sw1", pack(first)), ("lark-test-sw9", pack(second))]
    assert _directory(packs[0][1]) == _directory(packs[1][1])
    back = at_once(packs)
    assert back.port.tolist() == ["ab", "c", "a", "bc"]
    assert back.device.tolist() == ["lark-test-sw1"] * 2 + ["lark-test-sw9"] * 2
    assert_identical(back, one_by_one(packs))


def test_packs_of_the_first_release_read_at_once_as_each_alone() -> None:
    with sqlite3.connect(STORE) as conn:
        rows = conn.execute("SELECT device, body FROM poll_packs ORDER BY id").fetchall()
    legacy = [(device, body) for device, body in rows]
    today = [(device, pack(unpack(body, device))) for device, body in legacy[:3]]
    mixed = [legacy[0], *today, *legacy[1:]]  # formats 1, 2 and 3 in one read
    assert {body[0] for _, body in mixed} == {*LEGACY_FORMATS, FORMAT}
    assert_identical(at_once(mixed), one_by_one(mixed))
    assert named(at_once(legacy)) == named(_recorded())


def test_a_column_this_release_does_not_know_is_left_out_of_a_read_of_many(
    caplog: pytest.LogCaptureFixture,
) -> None:
    table = polls(line(counters={"ifHCInOctets": 5, "dot3StatsFCSErrors": 7}, mtu=9000))
    future = _renamed(pack(table), "dot3StatsFCSErrors", "dot3StatsFutureCounter")
    future = _renamed(future, "state.mtu", "state.future_reading")
    packs = [("lark-test-sw1", pack(table)), ("lark-test-sw2", future)]
    with caplog.at_level(logging.WARNING, logger="linktriage.engine.format.packs"):
        back = at_once(packs)
    assert_identical(back, one_by_one(packs))
    fcs = COLUMN_INDEX["dot3StatsFCSErrors"]
    assert back.present[:, fcs].tolist() == [True, False]
    assert back.state["mtu"][0] == 9000 and np.isnan(back.state["mtu"][1])


def test_no_packs_read_as_an_empty_table() -> None:
    assert len(unpack_many([], [])) == 0


@pytest.mark.parametrize(
    "damage",
    [
        lambda b: b[:-10],  # cut inside the compressed body
        lambda b: b[:1] + struct.pack("<I", 3) + b[5:],  # more rows than the body holds
    ],
)
def test_one_damaged_pack_among_many_is_refused(damage: Callable[[bytes], bytes]) -> None:
    good = pack(polls(line(counters={"ifHCInOctets": 7}), line(port="port2")))
    packs = [("lark-test-sw1", good), ("lark-test-sw2", damage(good)), ("lark-test-sw3", good)]
    with pytest.raises(PackError):
        at_once(packs)
