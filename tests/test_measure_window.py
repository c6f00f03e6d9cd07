"""Counter deltas over a window: wrap-around, resets, gaps, order, partial polls."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from linktriage.engine.format.snapshot import read_snapshot_file
from linktriage.engine.measure.window import WindowStatus, compute_windows

from helpers import grown, line, polls

GIG = {"speed_bps": 10**9, "max_speed_bps": 10**9}
FAST = {"speed_bps": 10**8}
T5 = "2026-03-02T08:05:00Z"
T10 = "2026-03-02T08:10:00Z"


def one(*lines: str, **kwargs: float):  # type: ignore[no-untyped-def]
    w = compute_windows(polls(*lines), **kwargs)
    assert len(w) == 1
    return w


def test_counter32_wraps_modulo_2_to_the_32() -> None:
    # RFC 2578 section 7.1.6: a Counter32 wraps to zero after 2^32-1.
    w = one(
        line(counters={"ifInUcastPkts": 2**32 - 1000}, **FAST),
        line(T5, counters={"ifInUcastPkts": 500}, **FAST),
    )
    assert w.deltas["in_ucast"][0] == 1500


def test_counter64_wraps_modulo_2_to_the_64() -> None:
    # RFC 2578 section 7.1.10: a Counter64 wraps after 2^64-1.
    w = one(
        line(counters={"ifHCInOctets": 2**64 - 10}, **GIG),
        line(T5, counters={"ifHCInOctets": 5}, **GIG),
    )
    assert w.deltas["in_octets"][0] == 15


def test_the_counter32_worked_example_of_the_fixtures(snapshots: Path) -> None:
    # fixtures/snapshots/counter32-device.jsonl, worked by hand: port1 runs at 100 Mb/s and
    # its ifInOctets wraps between the first two polls.
    w = compute_windows(read_snapshot_file(snapshots / "counter32-device.jsonl").polls)
    port1 = list(w.port).index("port1")
    assert w.deltas["in_octets"][port1] == 910_000_000
    assert w.deltas["in_ucast"][port1] == 1_210_000
    assert w.deltas["out_octets"][port1] == 610_000_000
    assert w.window_s[port1] == 600.0
    # port2 runs at 1 Gb/s: its Counter32 octets can wrap in 34 s (RFC 2863 section 3.1.6),
    # so over 300 s their difference is unknowable, while its packet counters are fine.
    port2 = list(w.port).index("port2")
    assert math.isnan(w.deltas["in_octets"][port2])
    assert w.deltas["in_ucast"][port2] == 294_000_000


def test_a_changed_discontinuity_time_restarts_the_window() -> None:
    # RFC 2863 ifCounterDiscontinuityTime: counters before and after are not comparable.
    d1, d2 = "2026-01-01T00:00:00Z", "2026-03-02T08:07:00Z"
    w = one(
        line(counters={"ifHCInOctets": 1000}, discontinuity_time=d1, **GIG),
        line(T5, counters={"ifHCInOctets": 2000}, discontinuity_time=d1, **GIG),
        line(T10, counters={"ifHCInOctets": 50}, discontinuity_time=d2, **GIG),
    )
    assert w.status[0] == WindowStatus.NO_DATA
    assert w.note[0] == "the counters were reset between the last two polls"
    assert w.resets[0] == 1


def test_a_counter64_going_backwards_is_a_reset_not_a_wrap() -> None:
    w = one(
        line(counters={"ifHCInOctets": 10_000}),
        line(T5, counters={"ifHCInOctets": 2_000}),
        line(T10, counters={"ifHCInOctets": 7_000}),
    )
    assert w.status[0] == WindowStatus.OK
    assert w.deltas["in_octets"][0] == 5_000
    assert w.window_s[0] == 300.0


def test_a_jump_faster_than_line_rate_is_a_reset() -> None:
    # 100 Mb/s for 300 s is at most 3.75e9 octets; 4e9 more cannot have been received.
    w = one(
        line(counters={"ifHCInOctets": 10**6}, **FAST),
        line(T5, counters={"ifHCInOctets": 10**6 + 4 * 10**9}, **FAST),
    )
    assert w.status[0] == WindowStatus.NO_DATA
    assert w.resets[0] == 1


def test_error_counters_are_read_across_one_wrap_even_at_ten_gigabit() -> None:
    # At 10 Gb/s a Counter32 could in principle wrap in under 5 minutes (RFC 3635), but
    # only with errors on every minimum-size frame at line rate: one wrap is assumed.
    ten = {"speed_bps": 10**10}
    w = one(
        line(counters={"dot3StatsFCSErrors": 2**32 - 3, "ifHCInUcastPkts": 0}, **ten),
        line(T5, counters={"dot3StatsFCSErrors": 4, "ifHCInUcastPkts": 10**9}, **ten),
    )
    assert w.deltas["fcs_errors"][0] == 7


def test_lines_in_any_order_give_the_same_window() -> None:
    lines = [
        line(counters={"ifHCInOctets": 0}, **GIG),
        line(T5, counters={"ifHCInOctets": 100}, **GIG),
        line(T10, counters={"ifHCInOctets": 300}, **GIG),
    ]
    forward = one(*lines)
    backward = one(*reversed(lines))
    assert forward.deltas["in_octets"][0] == backward.deltas["in_octets"][0] == 300
    assert forward.polls_used[0] == backward.polls_used[0] == 3


def test_two_polls_at_the_same_time_keep_the_later_line() -> None:
    w = one(
        line(counters={"ifHCInOctets": 0}),
        line(T5, counters={"ifHCInOctets": 100}),
        line(T5, counters={"ifHCInOctets": 400}),
    )
    assert w.deltas["in_octets"][0] == 400


def test_the_window_reaches_back_at_most_max_window_s() -> None:
    lines = [
        line(f"2026-03-02T{h:02d}:00:00Z", counters={"ifHCInOctets": 1000 * h}) for h in range(8)
    ]
    w = one(*lines, max_window_s=7200.0)
    assert w.window_s[0] == 7200.0
    assert w.deltas["in_octets"][0] == 2000
    assert w.polls_used[0] == 3


def test_a_long_gap_still_gives_one_interval_when_that_is_all_there_is() -> None:
    w = one(
        line(counters={"ifHCInOctets": 0}),
        line("2026-03-03T08:00:00Z", counters={"ifHCInOctets": 86_400}),
        max_window_s=3600.0,
    )
    assert w.window_s[0] == 86_400.0
    assert w.deltas["in_octets"][0] == 86_400


def test_a_partial_poll_between_complete_ones_is_skipped_and_named() -> None:
    # A walk that timed out half way: the EtherLike table did not answer at 08:05.
    w = one(
        line(counters={"ifHCInOctets": 0, "dot3StatsFCSErrors": 0}),
        line(T5, counters={"ifHCInOctets": 100}),
        line(T10, counters={"ifHCInOctets": 250, "dot3StatsFCSErrors": 2}),
    )
    assert w.status[0] == WindowStatus.OK
    assert w.window_s[0] == 600.0
    assert w.deltas["in_octets"][0] == 250
    assert w.deltas["fcs_errors"][0] == 2
    assert (w.polls_used[0], w.polls_seen[0]) == (2, 3)
    assert w.note[0] == (
        "skipped a poll that lacks counters the latest reports (2026-03-02T08:05:00Z)"
    )


def test_several_partial_polls_are_skipped_and_all_named() -> None:
    w = one(
        line(counters={"ifHCInOctets": 0, "ifInErrors": 0}),
        line(T5, counters={"ifHCInOctets": 100}),
        line(T10, counters={"ifHCInOctets": 250, "ifInErrors": 1}),
        line("2026-03-02T08:15:00Z", counters={"ifInErrors": 1}),
        line("2026-03-02T08:20:00Z", counters={"ifHCInOctets": 400, "ifInErrors": 3}),
    )
    assert w.status[0] == WindowStatus.OK
    assert w.polls_used[0] == 3
    assert w.deltas["in_errors"][0] == 3
    assert w.note[0] == (
        "skipped 2 polls that lack counters the latest reports "
        "(2026-03-02T08:05:00Z, 2026-03-02T08:15:00Z)"
    )


def test_a_partial_poll_outside_the_window_goes_unmentioned() -> None:
    w = one(
        line(counters={"ifHCInOctets": 0}),  # before the window: the errors did not answer
        line(T5, counters={"ifHCInOctets": 100, "ifInErrors": 0}),
        line(T10, counters={"ifHCInOctets": 250, "ifInErrors": 2}),
    )
    assert w.status[0] == WindowStatus.OK
    assert w.window_s[0] == 300.0
    assert w.note[0] == ""


def test_a_port_whose_earlier_polls_are_all_partial_has_no_window() -> None:
    w = one(
        line(counters={"ifHCInOctets": 0}),
        line(T5, counters={"ifHCInOctets": 100}),  # the errors counter did not answer
        line(T10, counters={"ifHCInOctets": 250, "ifInErrors": 2}),
    )
    assert w.status[0] == WindowStatus.NO_DATA
    assert w.note[0] == "every earlier poll lacks counters the latest reports"


def test_the_64_bit_form_wins_where_both_are_reported() -> None:
    # RFC 2863 section 3.1.6: the Counter32 reports the low 32 bits of the Counter64.
    hc0, hc1 = 5 * 2**32 + 10, 6 * 2**32 + 20
    w = one(
        line(counters={"ifHCInOctets": hc0, "ifInOctets": hc0 % 2**32}, **GIG),
        line(T5, counters={"ifHCInOctets": hc1, "ifInOctets": hc1 % 2**32}, **GIG),
    )
    assert w.deltas["in_octets"][0] == 2**32 + 10


def test_the_latest_poll_decides_whether_the_link_is_down() -> None:
    w = one(line(counters={"ifHCInOctets": 0}), line(T5, oper_status="lowerLayerDown"))
    assert w.status[0] == WindowStatus.LINK_DOWN
    assert w.note[0] == "the port is lowerLayerDown at the latest poll"


def test_a_single_poll_is_no_data() -> None:
    w = one(line(counters={"ifHCInOctets": 0}))
    assert w.status[0] == WindowStatus.NO_DATA
    assert w.note[0] == "only one poll of this port"


def test_ports_come_out_in_the_order_they_first_appear() -> None:
    w = compute_windows(
        polls(line(port="b"), line(port="a"), line(T5, port="a"), line(T5, port="b"))
    )
    assert list(w.port) == ["b", "a"]


def test_link_changes_count_within_the_window() -> None:
    w = one(
        line(counters={"ifHCInOctets": 0}, link_changes=4),
        line(T5, counters={"ifHCInOctets": 9}, link_changes=10),
    )
    assert w.link_changes[0] == 6


def test_status_flips_are_counted_when_link_changes_are_not_reported() -> None:
    w = one(
        line(counters={"ifHCInOctets": 0}),
        line(T5, counters={"ifHCInOctets": 0}, oper_status="down"),
        line(T10, counters={"ifHCInOctets": 0}),
    )
    assert np.isnan(w.link_changes[0])
    assert w.status_changes[0] == 2


def test_a_counter64_going_backwards_at_a_known_speed_is_a_reset_too() -> None:
    # The wrapped difference, about 2^64, is far beyond what 1 Gb/s moves in 300 s.
    w = one(
        line(counters={"ifHCInOctets": 10_000}, **GIG),
        line(T5, counters={"ifHCInOctets": 2_000}, **GIG),
    )
    assert w.status[0] == WindowStatus.NO_DATA
    assert w.resets[0] == 1


def test_a_discontinuity_time_read_with_other_rounding_is_not_a_reset() -> None:
    w = one(
        line(counters={"ifHCInOctets": 0}, discontinuity_time="2026-01-01T00:00:00.297663Z"),
        line(T5, counters={"ifHCInOctets": 9}, discontinuity_time="2026-01-01T00:00:00.3Z"),
    )
    assert w.status[0] == WindowStatus.OK and w.resets[0] == 0


def test_the_counters_of_format_1_2_are_read_and_differenced() -> None:
    # SNAPSHOT-FORMAT 1.2: pause frames (RFC 3635 dot3PauseTable), FEC (IEEE 802.3 clause 30)
    # and Power over Ethernet (RFC 3621) counters grow like the others. FEC corrects up to
    # 7 of 514 ten-bit symbols a codeword at 25 Gb/s (RS(528,514), clause 91, quoted in the
    # shared notes): millions of corrected bits in a minute are no counter reset.
    grow = {"ifHCInOctets": 6 * 10**10, "ifHCInUcastPkts": 5 * 10**7,
            "dot3HCInPauseFrames": 120, "dot3OutPauseFrames": 3,
            "aFECCorrectedBlocks": 4_000_000, "aFECUncorrectableBlocks": 2,
            "FECCorrectedBits": 9_000_000_000, "pethPsePortMPSAbsentCounter": 1}  # fmt: skip
    fast = {"speed_bps": 25 * 10**9, "max_speed_bps": 25 * 10**9, "media": "fiber"}
    w = compute_windows(polls(*grown(grow, window_s=60.0, **fast)))
    assert w.resets.tolist() == [0]
    assert w.deltas["in_pause"][0] == 120 and w.deltas["out_pause"][0] == 3
    assert w.deltas["fec_corrected_blocks"][0] == 4_000_000
    assert w.deltas["fec_uncorrectable_blocks"][0] == 2
    assert w.deltas["fec_corrected_bits"][0] == 9_000_000_000
    assert w.deltas["poe_mps_absent"][0] == 1
    assert np.isnan(w.deltas["poe_short"][0])  # not reported: unknown, never zero
