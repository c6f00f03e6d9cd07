"""Reading and writing the snapshot format: every bad line reported, nothing else lost."""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pytest
from pydantic import ValidationError

from linktriage.engine.format import snapshot
from linktriage.engine.format.counters import COLUMN_INDEX
from linktriage.engine.format.snapshot import (
    Snapshot,
    iter_snapshots,
    polls_of,
    read_snapshot_file,
    read_snapshot_stream,
    read_snapshots,
    write_snapshots,
)
from linktriage.errors import SnapshotFileError

from helpers import line, named, polls


def test_the_format_example_reads_as_two_polls_of_one_port(snapshots: Path) -> None:
    result = read_snapshot_file(snapshots / "format-example.jsonl")
    assert result.problems == []
    table = result.polls
    assert len(table) == 2
    assert set(table.device) == {"lib-east-idf2"}
    assert table.time[1] - table.time[0] == 300.0
    assert int(table.counters[1, COLUMN_INDEX["dot3StatsFCSErrors"]]) == 4779


def test_bad_lines_are_reported_with_their_numbers_and_good_lines_kept(snapshots: Path) -> None:
    result = read_snapshot_file(snapshots / "bad-lines.jsonl")
    assert [p.line for p in result.problems] == [2, 3, 5, 6, 7, 8, 10, 11]
    messages = {p.line: p.message for p in result.problems}
    # Which field, what was expected, what was found: in the product's words, never the
    # validating library's ("Input should ...", "Field required", "Invalid JSON").
    assert messages == {
        2: "time: expected a time with its zone (Z, or an offset such as +01:00), got "
        "'2026-03-02T08:02:30'",  # RFC 3339 times carry Z or an offset
        3: "not valid JSON: it ends before its value is complete",
        5: "counters.ifHCInOctets: expected 0 or more, got -5",
        6: "counters.ifInErrors: expected a whole number, got 12.5",
        7: "oper_status: expected 'up', 'down', 'testing', 'dormant', 'notPresent', "
        "'lowerLayerDown' or 'unknown', got 'flapping'",  # RFC 2863 ifOperStatus
        8: "counters.ifInErrors: a Counter32 cannot exceed 4294967295 (RFC 2578)",
        10: "expected an object, got a list",
        11: "counters: required, but missing",
    }
    assert len(result.polls) == 3  # lines 1, 9 and 12; line 4 is blank


def test_a_time_with_an_offset_is_the_same_instant_in_utc() -> None:
    table = polls(line("2026-03-02T09:00:00+01:00"), line("2026-03-02T08:05:00Z"))
    assert table.time[1] - table.time[0] == 300.0


def test_a_counter_the_device_does_not_report_is_missing_not_zero() -> None:
    table = polls(line(counters={"ifHCInOctets": 5}))
    assert table.present[0, COLUMN_INDEX["ifHCInOctets"]]
    assert not table.present[0, COLUMN_INDEX["dot3StatsFCSErrors"]]


def test_unknown_fields_and_counter_names_are_ignored() -> None:
    table = polls(line(counters={"ifHCInOctets": 5, "vendorMagic": 7}, colour="teal"))
    assert table.present[0].sum() == 1


def test_counter64_values_keep_every_bit() -> None:
    top = 2**64 - 1  # RFC 2578 section 7.1.10: the largest Counter64
    table = polls(line(counters={"ifHCInOctets": top}))
    assert int(table.counters[0, COLUMN_INDEX["ifHCInOctets"]]) == top


def test_a_counter_above_the_counter64_range_is_refused() -> None:
    result = read_snapshots([line(counters={"ifHCInOctets": 2**64})])
    assert len(result.polls) == 0
    assert result.problems[0].line == 1


def test_invalid_utf8_is_reported_not_raised() -> None:
    good = line().encode()
    result = read_snapshots([good, b'{"device": "\xff\xfe"}', good])
    assert [p.line for p in result.problems] == [2]
    assert len(result.polls) == 2


def test_writing_then_reading_gives_back_the_same_table() -> None:
    original = polls(
        line(counters={"ifHCInOctets": 10, "ifInErrors": 1}, speed_bps=10**9, duplex="half"),
        line(
            "2026-03-02T08:05:00Z",
            counters={"ifHCInOctets": 99, "ifInErrors": 2},
            media="fiber",
            poe=False,
            optics={"rx_power_dbm": -7.5, "rx_power_low_alarm_dbm": -14.4},
            discontinuity_time="2026-02-01T00:00:00Z",
        ),
    )
    text = io.StringIO()
    assert write_snapshots(iter_snapshots(original), text) == 2
    again = read_snapshots(text.getvalue().splitlines()).polls
    np.testing.assert_array_equal(again.counters, original.counters)
    np.testing.assert_array_equal(again.present, original.present)
    np.testing.assert_array_equal(again.time, original.time)
    for key in original.state:
        np.testing.assert_array_equal(again.state[key], original.state[key])
    for key in original.optics:
        np.testing.assert_array_equal(again.optics[key], original.optics[key])


def test_a_missing_file_is_a_clear_error(tmp_path: Path) -> None:
    with pytest.raises(SnapshotFileError, match="Cannot read snapshot file"):
        read_snapshot_file(tmp_path / "nope.jsonl")


@pytest.mark.parametrize(
    "name",
    ["bad-lines.jsonl", "counter32-device.jsonl", "format-example.jsonl", "demo-network.jsonl"],
)
def test_the_fast_reader_reads_exactly_what_the_model_accepts(snapshots: Path, name: str) -> None:
    # The C decoder is a fast path only: the pydantic model decides what a line says.
    lines = (snapshots / name).read_bytes().splitlines()
    fast = read_snapshots(lines)
    valid = []
    for raw in lines:
        try:
            valid.append(Snapshot.model_validate_json(raw))
        except ValidationError:
            continue
    reference = polls_of(valid)
    np.testing.assert_array_equal(fast.polls.counters, reference.polls.counters)
    np.testing.assert_array_equal(fast.polls.present, reference.polls.present)
    np.testing.assert_array_equal(fast.polls.time, reference.polls.time)
    for key in fast.polls.state:
        np.testing.assert_array_equal(fast.polls.state[key], reference.polls.state[key])
    for key in fast.polls.optics:
        np.testing.assert_array_equal(fast.polls.optics[key], reference.polls.optics[key])


def test_numbers_written_as_strings_still_read_through_the_model() -> None:
    # RFC 7951 writes 64-bit integers as JSON strings; the model accepts them, and a line
    # the fast decoder refuses is read by the model.
    text = line(counters={"ifHCInOctets": 5}).replace("5}", '"5"}')
    result = read_snapshots([text])
    assert result.problems == [] and len(result.polls) == 1


def test_a_byte_order_mark_at_the_start_of_a_file_is_not_part_of_the_first_line() -> None:
    first = line(counters={"ifHCInOctets": 5})
    result = read_snapshots([b"\xef\xbb\xbf" + first.encode(), line(counters={"ifHCInOctets": 9})])
    assert result.problems == [] and len(result.polls) == 2
    assert read_snapshots(["\ufeff" + first]).problems == []


def test_line_numbers_hold_across_blocks_read_whole_and_line_by_line() -> None:
    # Blocks that decode whole and blocks with a bad or blank line (read line by line)
    # give the same numbering: a problem names its own line, each row keeps its line.
    lines = [line(port=f"port{n}", counters={"ifHCInOctets": n}) for n in range(1, 9001)]
    lines[9] = ""  # blank: skipped without a word
    lines[4099] = '{"device": "lark-test-sw1"}'  # line 4100, in the second block
    result = read_snapshots([text.encode() for text in lines])
    assert [p.line for p in result.problems] == [4100]
    assert len(result.polls) == 9000 - 2
    octets = result.polls.counters[:, COLUMN_INDEX["ifHCInOctets"]]
    assert (octets == result.polls.line).all()  # each row is the line it came from


def test_a_neighbor_from_lldp_is_read_with_its_line_and_written_back() -> None:
    # SNAPSHOT-FORMAT 1.1: an optional `neighbor` object, the far end as LLDP reports it
    # (IEEE 802.1AB lldpRemSysName and lldpRemPortId).
    far = {"device": "lark-core1", "port": "up3"}
    table = polls(line(neighbor=far), line("2026-03-02T08:05:00Z", port="port2"))
    assert table.neighbor_device.tolist() == ["lark-core1", None]
    assert table.neighbor_port.tolist() == ["up3", None]
    text = io.StringIO()
    write_snapshots(iter_snapshots(table), text)
    first, second = text.getvalue().splitlines()
    assert '"neighbor":{"device":"lark-core1","port":"up3"}' in first
    assert "neighbor" not in second  # a version 1 line stays one


def test_a_neighbor_without_a_name_is_reported_and_its_line_skipped() -> None:
    result = read_snapshots([line(neighbor={"device": "", "port": "up3"}), line(port="port2")])
    assert [p.line for p in result.problems] == [1]
    assert "neighbor.device" in result.problems[0].message
    assert result.polls.port.tolist() == ["port2"]


@pytest.mark.parametrize("block", [64, 300, 1 << 20])
def test_a_file_read_a_block_at_a_time_reads_as_its_lines_one_by_one(
    tmp_path: Path, snapshots: Path, monkeypatch: pytest.MonkeyPatch, block: int
) -> None:
    # Bad and blank lines, a byte-order mark, CRLF line ends, lines longer than a block and
    # no newline at the end: a block is decoded at once only where every line of it is
    # good, and every line keeps its number.
    lines = (snapshots / "bad-lines.jsonl").read_bytes().splitlines()
    lines += (snapshots / "demo-network.jsonl").read_bytes().splitlines()[:40]
    text = b"\xef\xbb\xbf" + b"\r\n".join(lines)
    path = tmp_path / "lines.jsonl"
    path.write_bytes(text)
    monkeypatch.setattr(snapshot, "_BLOCK", block)
    by_blocks = read_snapshot_file(path)
    one_by_one = read_snapshots(text.split(b"\r\n"))
    assert named(by_blocks.polls) == named(one_by_one.polls)
    assert by_blocks.polls.line.tolist() == one_by_one.polls.line.tolist()
    assert by_blocks.problems == one_by_one.problems
    assert [p.line for p in by_blocks.problems] == [2, 3, 5, 6, 7, 8, 10, 11]
    assert len(by_blocks.polls) == 3 + 40


#: A line carrying every field format 1.2 adds (SNAPSHOT-FORMAT 1.2, "Fields of one line"):
#: a 100GBASE-DR4-style module of four lanes on a port with RS-FEC, PoE state, an aggregate.
EVERY_1_2_FIELD = {
    "admin_status": "up",
    "last_change": "2026-03-02T07:58:20Z",
    "disabled_reason": "bpdu guard",
    "module_max_speed_bps": 100_000_000_000,
    "fec_mode": "rs528",
    "poe_status": {
        "detection": "deliveringPower",
        "power_class": 4,
        "power_w": 12.5,
        "budget_left_w": 210.0,
    },
    "aggregate": "bundle7",
    "neighbor": {
        "device": "lark-core1",
        "port": "up3",
        "speeds_bps": [25_000_000_000, 100_000_000_000],
    },
    "optics": {
        "rx_power_dbm": -3.1,
        "rx_power_high_alarm_dbm": 4.0,
        "rx_power_high_warn_dbm": 3.0,
        "tx_power_high_alarm_dbm": 5.0,
        "tx_power_low_warn_dbm": -6.0,
        "temperature_high_alarm_c": 75.0,
        "bias_high_alarm_ma": 13.0,
        "bias_low_alarm_ma": 2.0,
        "pmd": "100GBASE-DR",
        "lanes": [
            {"rx_power_dbm": -1.0, "tx_power_dbm": 0.5, "bias_ma": 7.0},
            {"rx_power_dbm": -3.1, "tx_power_dbm": 0.2, "bias_ma": 7.9},
            {"rx_power_dbm": -2.0, "tx_power_dbm": None, "bias_ma": 6.5},
            {"rx_power_dbm": 0.4, "tx_power_dbm": 0.1, "bias_ma": 7.2},
        ],
    },
    "counters": {
        "ifHCInOctets": 10,
        "aFECCorrectedBlocks": 99,
        "aFECUncorrectableBlocks": 0,
        "dot3HCInPauseFrames": 5,
        "pethPsePortOverLoadCounter": 1,
    },
}


def test_every_field_of_format_1_2_is_read_and_written_back_as_it_came() -> None:
    fields = dict(EVERY_1_2_FIELD)
    counters = fields.pop("counters")
    text = line(counters=counters, **fields)
    table = polls(text)
    assert table.state["admin_down"].tolist() == [0.0]
    assert table.state["neighbor_max_speed_bps"].tolist() == [100e9]
    assert table.extra["disabled_reason"].tolist() == ["bpdu guard"]
    assert table.extra["neighbor_speeds"][0] == (25_000_000_000, 100_000_000_000)
    assert table.extra["lanes"][0][2] == (-2.0, None, 6.5)
    # The module's own reading is kept; what it leaves out is taken from its lanes as the
    # format defines them: the highest bias; beside, the strongest light and lowest bias.
    assert table.optics["rx_power_dbm"].tolist() == [-3.1]
    assert table.optics["tx_power_dbm"].tolist() == [0.1]
    assert table.optics["bias_ma"].tolist() == [7.9]
    assert table.optics["rx_power_max_dbm"].tolist() == [0.4]
    assert table.optics["bias_min_ma"].tolist() == [6.5]
    written = io.StringIO()
    write_snapshots(iter_snapshots(table), written)
    again = polls(written.getvalue())
    assert named(again) == named(table)
    back = Snapshot.model_validate_json(written.getvalue())
    assert back.poe_status is not None and back.poe_status.detection == "deliveringPower"
    assert back.fec_mode == "rs528" and back.aggregate == "bundle7"
    assert back.optics is not None and back.optics.pmd == "100GBASE-DR"


def test_the_fast_reader_and_the_model_read_a_1_2_line_alike() -> None:
    fields = dict(EVERY_1_2_FIELD)
    counters = fields.pop("counters")
    text = line(counters=counters, **fields)
    fast = read_snapshot_stream(io.BytesIO(text.encode()))
    slow = snapshot.polls_of([Snapshot.model_validate_json(text)])
    assert fast.problems == [] and named(fast.polls) == named(slow.polls)


@pytest.mark.parametrize(
    ("field", "value", "said"),
    [
        ("admin_status", "shut", "admin_status"),
        ("fec_mode", "rs999", "fec_mode"),
        ("poe_status", {"detection": "glowing"}, "poe_status.detection"),
        ("poe_status", {"power_class": 9}, "poe_status.power_class"),
        ("neighbor", {"device": "a", "port": "b", "speeds_bps": [0]}, "neighbor.speeds_bps"),
        ("last_change", "2026-03-02T07:58:20", "last_change"),
    ],
)
def test_a_bad_1_2_field_is_reported_by_name_and_its_line_skipped(
    field: str, value: object, said: str
) -> None:
    result = read_snapshots([line(**{field: value}), line(port="port2")])
    assert [p.line for p in result.problems] == [1]
    assert said in result.problems[0].message
    assert result.polls.port.tolist() == ["port2"]


def test_a_1_1_line_carries_none_of_the_1_2_fields() -> None:
    table = polls(line())
    assert all(v[0] is None for v in table.extra.values())
    for name in ("admin_down", "last_change", "fec_mode", "poe_detection"):
        assert np.isnan(table.state[name][0])
