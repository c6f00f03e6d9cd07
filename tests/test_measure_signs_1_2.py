"""The signs of format 1.2, each from its standard's arithmetic, diagnosed end to end with
the packaged model: FEC against its code's high level (IEEE 802.3 clauses 74, 91, 119), pause
frames as a share of time (IEEE 802.3 annex 31B: 65,535 quanta of 512 bit times at most),
light above the receiver's most (SFF-8472 thresholds, IEEE 802.3 PMD tables), broadcast
storms and loops, flaps without errors, and a speed judged against what the port, its module
and the far end all support (SNAPSHOT-FORMAT 1.2)."""

from __future__ import annotations

from typing import Any

from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.answers import DiagnosisRecord
from linktriage.engine.measure.signs import PAUSE_SHARE

from helpers import grown, line, polls

G = 10**9
GIG_COPPER = {"speed_bps": G, "max_speed_bps": G, "duplex": "full", "media": "copper"}
TEN_G = {"speed_bps": 10 * G, "max_speed_bps": 10 * G, "duplex": "full", "media": "fiber"}
TWENTY_FIVE_G = {**TEN_G, "speed_bps": 25 * G, "max_speed_bps": 25 * G, "fec_mode": "rs528"}
WINDOW_S = 300


def frames(received: int, sent: int, octets: int = 1000) -> dict[str, int]:
    return {
        "ifHCInOctets": received * octets, "ifHCInUcastPkts": received,
        "ifHCOutOctets": sent * octets, "ifHCOutUcastPkts": sent,
        "dot3StatsFCSErrors": 0, "ifInErrors": 0, "ifInDiscards": 0, "ifOutDiscards": 0,
    }  # fmt: skip


def one(model: Model, grow: dict[str, int], **state: Any) -> DiagnosisRecord:
    return diagnose(polls(*grown(grow, window_s=WINDOW_S, **state)), model).record(0)


BUSY = frames(30_000_000, 30_000_000)


def test_pre_fec_errors_over_the_rs528_level_are_fec_degraded(model: Model) -> None:
    # 25 Gb/s for 300 s carries 7.5e12 bits: 1.5e8 corrected bits is a pre-FEC BER of 2e-5,
    # twice the 1e-5 held high for RS(528,514); 3e6 is 4e-7, a low steady rate (normal).
    light = {"optics": {"rx_power_dbm": -3.0, "rx_power_low_warn_dbm": -10.0}}
    high = one(model, {**BUSY, "FECCorrectedBits": 150_000_000, "aFECCorrectedBlocks": 10**8},
               **TWENTY_FIVE_G, **light)  # fmt: skip
    assert high["verdict"] == "fec_degraded"
    assert "2.0e-05" in high["evidence"][0]["said"]
    low = one(model, {**BUSY, "FECCorrectedBits": 3_000_000, "aFECCorrectedBlocks": 2_000_000},
              **TWENTY_FIVE_G, **light)  # fmt: skip
    assert low["verdict"] == "healthy"


def test_lost_codewords_need_significance(model: Model) -> None:
    # 7.5e12 bits / 5,140 data bits a codeword = 1.46e9 codewords; 6.2e-10 of them is 0.9
    # expected. 3 lost is P = 6% by chance (not significant at 99%); 12 is far past it.
    base = {**BUSY, "aFECCorrectedBlocks": 1000, "aFECUncorrectableBlocks": 3}
    assert one(model, base, **TWENTY_FIVE_G)["verdict"] == "healthy"
    lost = one(model, {**base, "aFECUncorrectableBlocks": 12}, **TWENTY_FIVE_G)
    assert lost["verdict"] == "fec_degraded"


def test_low_light_makes_optic_degraded_over_fec_degraded(model: Model) -> None:
    # SNAPSHOT-FORMAT 1.2: light under the low thresholds names the cause.
    dim = {"optics": {"rx_power_dbm": -12.5, "rx_power_low_warn_dbm": -10.0,
                      "rx_power_low_alarm_dbm": -13.0}}  # fmt: skip
    record = one(model, {**BUSY, "FECCorrectedBits": 150_000_000}, **TWENTY_FIVE_G, **dim)
    assert record["verdict"] == "optic_degraded"


def test_pause_share_is_an_upper_bound_from_annex_31b(model: Model) -> None:
    # One pause frame holds a 1 Gb/s transmitter off at most 65,535 x 512 bits = 33.6 ms.
    # 900 of them in 300 s: 30.2 s, 10.07% of the window; 800: 8.9%.
    full = 900
    assert full * 65_535 * 512 / (G * WINDOW_S) >= PAUSE_SHARE
    flood = one(model, {**BUSY, "dot3InPauseFrames": full}, **GIG_COPPER)
    assert flood["verdict"] == "pause_flood"
    assert one(model, {**BUSY, "dot3InPauseFrames": 800}, **GIG_COPPER)["verdict"] == "healthy"


def test_pause_frames_that_explain_output_discards_are_pause_flood_not_congestion(
    model: Model,
) -> None:
    grow = {**frames(30_000_000, 3_000_000), "dot3InPauseFrames": 5_000, "ifOutDiscards": 9_000}
    assert one(model, grow, **GIG_COPPER)["verdict"] == "pause_flood"


def test_light_over_the_pmd_maximum_is_optic_overload_not_cable_fault(model: Model) -> None:
    # The case: +1.5 dBm received on a 10GBASE-LR module with FCS errors. 10GBASE-LR
    # takes at most +0.5 dBm (IEEE 802.3 clause 52, from memory): an attenuator, not cleaning.
    optics = {"rx_power_dbm": 1.5, "rx_power_low_warn_dbm": -14.1, "pmd": "10GBASE-LR"}
    grow = {**BUSY, "dot3StatsFCSErrors": 400, "ifInErrors": 400}
    record = one(model, grow, **TEN_G, optics=optics)
    assert record["verdict"] == "optic_overload"
    assert "above the most a 10GBASE-LR receiver takes (+0.5 dBm)" in record["evidence"][0]["said"]
    # The module's own high warning, where it has one, is the reference.
    warned = {**optics, "rx_power_high_warn_dbm": 2.0, "rx_power_high_alarm_dbm": 3.0}
    assert one(model, BUSY, **TEN_G, optics=warned)["verdict"] == "healthy"


def test_overload_is_judged_per_lane(model: Model) -> None:
    # SFF-8636: the module's thresholds apply to every lane; one lane over is overload even
    # where the module-level reading holds the weakest.
    lanes = [{"rx_power_dbm": -2.0}, {"rx_power_dbm": 3.9}, {"rx_power_dbm": -1.0},
             {"rx_power_dbm": -1.5}]  # fmt: skip
    optics = {"rx_power_dbm": -2.0, "rx_power_high_warn_dbm": 3.0, "lanes": lanes}
    hundred = {**TEN_G, "speed_bps": 100 * G, "max_speed_bps": 100 * G}
    record = one(model, BUSY, **hundred, optics=optics)
    assert record["verdict"] == "optic_overload"
    assert "on lane 2 of 4" in record["evidence"][0]["said"]


def test_a_storm_is_broadcasts_not_a_steady_multicast_stream(model: Model) -> None:
    # 1,200 broadcasts a second, 40% of what arrives: a storm. 50,000 multicast frames a
    # second of video with 5 broadcasts: the look-alike.
    storm = {**frames(900_000, 300_000, 200), "ifHCInBroadcastPkts": 360_000}
    assert one(model, storm, **GIG_COPPER)["verdict"] == "broadcast_storm"
    video = {**frames(400_000, 300_000, 1300), "ifHCInMulticastPkts": 15_000_000,
             "ifHCInBroadcastPkts": 1_500}  # fmt: skip
    assert one(model, video, **GIG_COPPER)["verdict"] == "healthy"


def test_several_ports_of_one_device_surging_together_name_each_other(model: Model) -> None:
    storm = {**frames(900_000, 300_000, 200), "ifHCInBroadcastPkts": 360_000}
    lines = [*grown(storm, port="port3", **GIG_COPPER), *grown(storm, port="port4", **GIG_COPPER)]
    batch = diagnose(polls(*lines), model)
    for i, other in ((0, "port4"), (1, "port3")):
        loop = [e for e in batch.record(i)["evidence"] if e["feature"] == "loop_ports"]
        assert loop and f"lark-test-sw1 {other}" in loop[0]["said"]


def test_flaps_with_clean_frames_are_link_flapping_and_with_errors_cable_fault(
    model: Model,
) -> None:
    # SNAPSHOT-FORMAT 1.2: flaps without errors beyond the frames each drop cuts short are
    # link_flapping; four cycles (8 changes) with 6 errored frames qualifies; 500 do not.
    flaps = {"link_changes": 10, "last": {"link_changes": 18}}
    clean = one(model, {**BUSY, "dot3StatsFCSErrors": 6, "ifInErrors": 6}, **GIG_COPPER, **flaps)
    assert clean["verdict"] == "link_flapping"
    dirty = one(model, {**BUSY, "dot3StatsFCSErrors": 500, "ifInErrors": 500}, **GIG_COPPER,
                **flaps)  # fmt: skip
    assert dirty["verdict"] == "cable_fault"


def test_last_change_moving_between_polls_counts_as_flaps(model: Model) -> None:
    # RFC 2863 ifLastChange: up at every poll, yet the last change moved each time.
    times = ["2026-03-02T07:58:00Z", "2026-03-02T08:03:10Z", "2026-03-02T08:08:20Z",
             "2026-03-02T08:13:30Z"]  # fmt: skip
    lines = [
        line(f"2026-03-02T08:{5 * k:02d}:00Z", {n: v * (k + 1) for n, v in BUSY.items()},
             last_change=t, **GIG_COPPER)
        for k, t in enumerate(times)
    ]  # fmt: skip
    assert diagnose(polls(*lines), model).record(0)["verdict"] == "link_flapping"


def test_a_speed_is_held_to_what_port_module_and_far_end_all_support(model: Model) -> None:
    # SNAPSHOT-FORMAT 1.2: a 1G module in a 10G cage, or a far end offering only 2.5G, is a
    # design; 1G on a 10G port whose module and far end do 10G is negotiation_degraded.
    ten_cage = {**TEN_G, "speed_bps": G}
    assert one(model, BUSY, **ten_cage)["verdict"] == "negotiation_degraded"
    assert one(model, BUSY, **ten_cage, module_max_speed_bps=G)["verdict"] == "healthy"
    multigig = {**GIG_COPPER, "speed_bps": 2_500_000_000, "max_speed_bps": 10 * G}
    far = {"device": "lark-ap7", "port": "eth0", "speeds_bps": [G, 2_500_000_000]}
    assert one(model, BUSY, **multigig, neighbor=far)["verdict"] == "healthy"
    far10 = {**far, "speeds_bps": [G, 2_500_000_000, 10 * G]}
    slow = one(model, BUSY, **multigig, neighbor=far10)
    assert slow["verdict"] == "negotiation_degraded"


def test_an_aggregates_own_interface_is_no_speed_drop(model: Model) -> None:
    # IEEE 802.1AX: the aggregate's interface reports the sum of its members.
    member = {**TEN_G, "aggregate": "bundle1"}
    whole = {**TEN_G, "speed_bps": 20 * G, "max_speed_bps": 40 * G, "media": "fiber"}
    lines = [*grown(BUSY, port="te1", **member), *grown(BUSY, port="te2", **member),
             *grown(BUSY, port="bundle1", **whole)]  # fmt: skip
    batch = diagnose(polls(*lines), model)
    assert batch.record(2)["verdict"] == "healthy"


def test_a_module_is_hot_against_its_own_high_alarm_where_it_reports_one(model: Model) -> None:
    # SFF-8472 thresholds (format 1.2 temperature_high_alarm_c): an industrial module rated
    # to 85 degrees C at 72 is in range; a module whose alarm is 65 is hot at 68.
    light = {"rx_power_dbm": -5.0, "rx_power_low_warn_dbm": -14.0, "tx_power_dbm": -2.0}
    rated = {**light, "temperature_c": 72.0, "temperature_high_alarm_c": 85.0}
    assert one(model, BUSY, **TEN_G, optics=rated)["verdict"] == "healthy"
    low_rated = {**light, "temperature_c": 68.0, "temperature_high_alarm_c": 65.0}
    hot = one(model, BUSY, **TEN_G, optics=low_rated)
    assert hot["verdict"] == "optic_degraded"
    assert any("its own high alarm" in e["said"] for e in hot["evidence"])
