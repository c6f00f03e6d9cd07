"""The Linux collector on this host's own interfaces, checked against /proc/net/dev and the
kernel's SIOCGIFMTU, and on sysfs folders laid out as the kernel lays out a NIC's; for
format 1.2, the admin state from sysfs and what ``ethtool --json`` prints, replayed from
the recordings in fixtures/ethtool (see its README for where their shape comes from)."""

from __future__ import annotations

import asyncio
import fcntl
import math
import socket
import stat
import struct
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import pytest

from linktriage.engine.format.snapshot import Lane, Snapshot
from linktriage.errors import InputError
from linktriage.network.collectors import ethtool
from linktriage.network.collectors.base import Reading, Target
from linktriage.network.collectors.linux import LinuxCollector, Runner, parse_ethtool_stats

RECORDED = Path(__file__).resolve().parent.parent / "fixtures" / "ethtool"

SIOCGIFMTU = 0x8921  # linux/sockios.h


def read(
    options: dict[str, Any] | None = None,
    ports: list[str] | None = None,
    runner: Runner | None = None,
) -> Reading:
    collector = LinuxCollector(Target("lark-hv1", None, options or {}), runner=runner)
    return asyncio.run(collector.read(ports))


def proc_net_dev() -> dict[str, list[int]]:
    """/proc/net/dev: per interface, the 8 receive then 8 transmit columns (proc(5))."""
    rows = {}
    for line in Path("/proc/net/dev").read_text().splitlines()[2:]:
        name, _, numbers = line.partition(":")
        rows[name.strip()] = [int(n) for n in numbers.split()]
    return rows


def test_every_interface_agrees_with_proc_net_dev() -> None:
    before = proc_net_dev()
    reading = read()
    after = proc_net_dev()
    assert {s.port for s in reading.snapshots} == set(before) and "lo" in before
    for snap in reading.snapshots:
        c = snap.counters
        low, high = before[snap.port], after[snap.port]
        # proc(5): bytes packets errs drop fifo frame compressed multicast | bytes packets
        # errs drop fifo colls carrier compressed.
        pairs = {
            0: c["ifHCInOctets"],
            1: c["ifHCInUcastPkts"] + c["ifHCInMulticastPkts"],
            2: c["ifInErrors"],
            7: c["ifHCInMulticastPkts"],
            8: c["ifHCOutOctets"],
            9: c["ifHCOutUcastPkts"],
            10: c["ifOutErrors"],
            11: c["ifOutDiscards"],
        }
        for column, value in pairs.items():
            assert low[column] <= value <= high[column], (snap.port, column)
        assert c["ifInDiscards"] <= high[3]  # the proc column adds rx_missed_errors


def test_loopback_is_up_with_the_mtu_the_kernel_reports() -> None:
    (lo,) = read(ports=["lo"]).snapshots
    # operstate "unknown" with carrier: usable (Documentation/networking/operstates.rst).
    assert lo.oper_status == "up"
    with socket.socket(socket.AF_INET, socket.SOCK_DGRAM) as s:
        answer = fcntl.ioctl(s.fileno(), SIOCGIFMTU, struct.pack("16si12x", b"lo", 0))
    assert lo.mtu == struct.unpack("16si12x", answer)[1]
    # Loopback has no wire: no Ethernet error counters rather than zeros.
    assert not any(name.startswith(("dot3", "etherStats")) for name in lo.counters)


def nic(root: Path, name: str, bus: str, **values: str) -> Path:
    """An interface folder as sysfs shows one, its device on ``bus``."""
    folder = root / "net" / name
    (folder / "statistics").mkdir(parents=True)
    (root / "bus" / bus).mkdir(parents=True, exist_ok=True)
    (folder / "device").mkdir()
    (folder / "device" / "subsystem").symlink_to(root / "bus" / bus)
    attributes = {"operstate": "up", "carrier": "1", "speed": "1000", "duplex": "full",
                  "mtu": "9000", "carrier_changes": "4", "flags": "0x1003"}  # fmt: skip
    for key, value in {**attributes, **values}.items():
        target = folder / key if key in attributes else folder / "statistics" / key
        target.write_text(value + "\n")
    return folder


@pytest.fixture
def sysfs(tmp_path: Path) -> Path:
    nic(tmp_path, "eno1", "pci", rx_bytes="5000", rx_packets="40", multicast="4",
        rx_crc_errors="7", rx_frame_errors="1", tx_window_errors="2", tx_packets="30")  # fmt: skip
    nic(tmp_path, "ens3", "virtio", rx_bytes="10", rx_packets="1", rx_crc_errors="0")
    return tmp_path / "net"


def by_port(reading: Reading) -> dict[str, Snapshot]:
    return {s.port: s for s in reading.snapshots}


def test_a_nic_on_a_hardware_bus_gives_its_ethernet_errors(sysfs: Path) -> None:
    ports = by_port(read({"sysfs": str(sysfs), "ethtool": False}))
    eno1 = ports["eno1"]
    assert eno1.counters["dot3StatsFCSErrors"] == 7
    assert eno1.counters["dot3StatsAlignmentErrors"] == 1
    assert eno1.counters["dot3StatsLateCollisions"] == 2
    assert eno1.counters["ifHCInUcastPkts"] == 36 and eno1.counters["ifHCInMulticastPkts"] == 4
    assert (eno1.speed_bps, eno1.duplex, eno1.mtu, eno1.link_changes) == (
        1_000_000_000, "full", 9000, 4)  # fmt: skip
    # A virtual NIC sees no wire: its zero CRC count is left out, not believed.
    assert "dot3StatsFCSErrors" not in ports["ens3"].counters


def test_a_link_that_is_down_has_no_speed(sysfs: Path) -> None:
    eno1 = sysfs / "eno1"
    (eno1 / "operstate").write_text("down\n")
    (eno1 / "speed").write_text("-1\n")  # the kernel says -1, or EINVAL, while down
    (eno1 / "duplex").unlink()
    snap = by_port(read({"sysfs": str(sysfs), "ethtool": False}))["eno1"]
    assert (snap.oper_status, snap.speed_bps, snap.duplex) == ("down", None, None)


ETHTOOL_OUTPUT = """NIC statistics:
     rx_packets: 40
     rx_crc_errors: 9
     rx_long_length_errors: 3
     rx_giant_frames: 5
     tx_queue_0_restart: 0
"""


def fake_ethtool(folder: Path, output: str) -> Path:
    """An executable that answers ``ethtool -S eno1`` as a NIC driver's statistics would."""
    script = folder / "ethtool"
    script.write_text(
        f'#!/bin/sh\n[ "$1" = "-S" ] && [ "$2" = "eno1" ] || exit 94\ncat <<EOF\n{output}EOF\n'
    )
    script.chmod(script.stat().st_mode | stat.S_IEXEC)
    return script


def test_ethtool_statistics_add_the_nics_own_counters(sysfs: Path, tmp_path: Path) -> None:
    ethtool = fake_ethtool(tmp_path, ETHTOOL_OUTPUT)
    ports = by_port(read({"sysfs": str(sysfs), "ethtool_path": str(ethtool)}))
    eno1 = ports["eno1"]
    assert eno1.counters["dot3StatsFCSErrors"] == 9  # the driver's count wins over sysfs
    assert eno1.counters["dot3StatsFrameTooLongs"] == 3
    renamed = read(
        {"sysfs": str(sysfs), "ethtool_path": str(ethtool),
         "ethtool_names": {"dot3StatsFrameTooLongs": ["rx_giant_frames"]}},
    )  # fmt: skip
    assert by_port(renamed)["eno1"].counters["dot3StatsFrameTooLongs"] == 5
    # ethtool is asked only about NICs on a hardware bus (it exits 94 for anything else).
    assert "dot3StatsFCSErrors" not in ports["ens3"].counters


def test_ethtool_output_is_read_line_by_line() -> None:
    assert parse_ethtool_stats(ETHTOOL_OUTPUT) == {
        "rx_packets": 40,
        "rx_crc_errors": 9,
        "rx_long_length_errors": 3,
        "rx_giant_frames": 5,
        "tx_queue_0_restart": 0,
    }


def test_an_interface_that_does_not_exist_is_that_ports_problem(sysfs: Path) -> None:
    reading = read({"sysfs": str(sysfs), "ethtool": False}, ports=["eno1", "eth9"])
    assert [s.port for s in reading.snapshots] == ["eno1"]
    assert "no such interface" in reading.problems["eth9"]


def test_only_this_host_is_read() -> None:
    with pytest.raises(InputError, match="reads only the host linktriage runs on"):
        LinuxCollector(Target("lark-hv2", "10.20.4.12", {}))
    assert LinuxCollector(Target("here", "localhost", {})).root == Path("/sys/class/net")


def test_an_unknown_counter_in_ethtool_names_is_refused() -> None:
    with pytest.raises(InputError, match="not a counter of the snapshot format"):
        LinuxCollector(Target("here", None, {"ethtool_names": {"crcErrors": ["x"]}}))


# --- format 1.2: the admin state, and ethtool --json replayed from recordings

#: The four commands the collector runs for a NIC, and the recording of each.
COMMANDS = {
    ("--json",): "settings.out",
    ("--json", "-I", "--show-fec"): "fec.out",
    ("--json", "-I", "-a"): "pause.out",
    ("--json", "-m"): "module.out",
}


class Recorded:
    """A runner answering ethtool's commands from fixtures/ethtool, keeping what it was
    asked; a command without a recording fails (None), as ethtool does without support."""

    def __init__(self) -> None:
        self.asked: list[tuple[str, ...]] = []

    async def __call__(self, args: Sequence[str]) -> str | None:
        self.asked.append(tuple(args))
        *flags, interface = args
        name = COMMANDS.get(tuple(flags))
        path = RECORDED / interface / name if name else None
        return path.read_text() if path is not None and path.is_file() else None


@pytest.fixture
def nics(tmp_path: Path) -> Path:
    """The three recorded NICs as sysfs folders, and a virtual one."""
    for name in ("eno1", "ens2f0", "ens3f0np0"):
        nic(tmp_path, name, "pci", rx_bytes="100", rx_packets="1")
    nic(tmp_path, "ens9", "virtio", rx_bytes="10", rx_packets="1")
    return tmp_path / "net"


def read_recorded(nics: Path, runner: Recorded | None = None) -> dict[str, Snapshot]:
    return by_port(read({"sysfs": str(nics)}, runner=runner or Recorded()))


def test_the_admin_state_is_iff_up_in_the_flags(nics: Path) -> None:
    # include/uapi/linux/if.h: IFF_UP is 0x1; 0x1003 is UP|BROADCAST|MULTICAST.
    (nics / "ens9" / "flags").write_text("0x1002\n")
    ports = by_port(read({"sysfs": str(nics), "ethtool": False}))
    assert ports["eno1"].admin_status == "up"
    assert ports["ens9"].admin_status == "down"


def test_loopback_is_administratively_up() -> None:
    (lo,) = read(ports=["lo"]).snapshots
    assert lo.admin_status == "up"  # a host's loopback is always up (IFF_UP)


def test_a_copper_nic_gives_pause_frames_its_top_speed_and_its_medium(nics: Path) -> None:
    eno1 = read_recorded(nics)["eno1"]
    # ethtool's pause statistics are IEEE 802.3 30.3.4.3 aPAUSEMACCtrlFramesReceived and
    # 30.3.4.2 aPAUSEMACCtrlFramesTransmitted (64-bit), what RFC 3635's HC objects count.
    assert {k: v for k, v in eno1.counters.items() if "Pause" in k} == {
        "dot3HCInPauseFrames": 1532, "dot3HCOutPauseFrames": 0}  # fmt: skip
    assert eno1.max_speed_bps == 1_000_000_000  # 1000baseT/Full, its fastest link mode
    assert eno1.media == "copper"  # port "Twisted Pair"
    # No FEC on this NIC (the command fails) and no module: absent, never zero.
    assert eno1.fec_mode is None and not any(k.startswith(("aFEC", "FEC")) for k in eno1.counters)
    assert eno1.optics is None and eno1.module_max_speed_bps is None
    # The partner advertises 10 and 100 Mb/s only, but the format carries speeds inside
    # `neighbor`, which needs the far end's name: this collector has no LLDP to give it.
    assert eno1.neighbor is None


def test_the_partners_advertised_link_modes_are_read_as_speeds() -> None:
    modes = ethtool.link_modes((RECORDED / "eno1" / "settings.out").read_text())
    # IEEE 802.3 clause 28 abilities as the kernel names them: 10baseT/Half ... 100baseT/Full.
    assert modes.partner_speeds_bps == [10_000_000, 100_000_000]
    assert (
        ethtool.link_modes((RECORDED / "ens2f0" / "settings.out").read_text()).partner_speeds_bps
        is None
    )


def test_an_sfp28_module_gives_its_light_its_thresholds_and_its_pmd(nics: Path) -> None:
    ens2f0 = read_recorded(nics)["ens2f0"]
    # RS on a 25 Gb/s link of one lane is RS(528,514) (IEEE 802.3 clause 108; SNAPSHOT-FORMAT).
    assert ens2f0.fec_mode == "rs528"
    # The kernel's FEC statistics are IEEE 802.3 30.5.1.1.17 and 30.5.1.1.18.
    assert ens2f0.counters["aFECCorrectedBlocks"] == 1289
    assert ens2f0.counters["aFECUncorrectableBlocks"] == 0
    assert "FECCorrectedBits" not in ens2f0.counters  # not reported by this NIC
    optics = ens2f0.optics
    assert optics is not None
    # The A2h diagnostics, printed as text after the JSON: mW to dBm is 10 log10(P / 1 mW)
    # (SFF-8472 via ethtool sff-common.c convert_mw_to_dbm).
    assert optics.rx_power_dbm == round(10 * math.log10(0.4012), 2)
    assert optics.tx_power_dbm == round(10 * math.log10(0.5640), 2)
    assert (optics.bias_ma, optics.temperature_c) == (6.134, 34.12)
    assert optics.rx_power_low_alarm_dbm == round(10 * math.log10(0.0251), 2)
    assert optics.rx_power_high_alarm_dbm == round(10 * math.log10(1.9953), 2)
    assert optics.tx_power_low_alarm_dbm == round(10 * math.log10(0.0794), 2)
    assert (optics.temperature_high_alarm_c, optics.bias_high_alarm_ma) == (80.0, 12.0)
    assert optics.lanes is None  # one lane: the module-level readings are its readings
    # SFF-8024 code 02h names 100GBASE-SR4 or 25GBASE-SR: an SFP is the single-lane one.
    assert (optics.pmd, ens2f0.module_max_speed_bps) == ("25GBASE-SR", 25_000_000_000)
    assert ens2f0.media == "fiber"
    assert ens2f0.counters["dot3HCInPauseFrames"] == 0  # reported as zero, so kept


def test_a_qsfp28_module_gives_each_lane_and_the_weakest_light(nics: Path) -> None:
    ens3 = read_recorded(nics)["ens3f0np0"]
    assert ens3.fec_mode == "rs528"  # 100 Gb/s over 4 lanes: 25 Gb/s NRZ lanes
    # The totals, the first of each statistic's values (ethtool fec.c, "total").
    fec = {k: v for k, v in ens3.counters.items() if "FEC" in k}
    assert fec == {"aFECCorrectedBlocks": 4521, "aFECUncorrectableBlocks": 3,
                   "FECCorrectedBits": 9876}  # fmt: skip
    optics = ens3.optics
    assert optics is not None and optics.lanes is not None
    rx = [0.6206, 0.0204, 0.6005, 0.5812]
    assert optics.lanes[1] == Lane(
        rx_power_dbm=round(10 * math.log10(rx[1]), 2),
        tx_power_dbm=round(10 * math.log10(0.7105), 2),
        bias_ma=6.62,
    )
    assert len(optics.lanes) == 4
    # SNAPSHOT-FORMAT 1.2: with lanes, the module-level readings are the weakest light
    # and the highest bias.
    assert optics.rx_power_dbm == round(10 * math.log10(min(rx)), 2)
    assert optics.bias_ma == 6.7
    # The reading, printed before the thresholds under the same key (not the thresholds).
    assert optics.temperature_c == 38.0391
    assert optics.temperature_high_alarm_c == 75.0
    assert (optics.pmd, ens3.module_max_speed_bps) == ("100GBASE-SR4", 100_000_000_000)
    assert ens3.max_speed_bps == 100_000_000_000
    assert ens3.counters["dot3HCOutPauseFrames"] == 120


def test_a_virtual_nic_is_not_asked_and_a_failing_ethtool_adds_nothing(nics: Path) -> None:
    runner = Recorded()
    read_recorded(nics, runner)
    assert {args[-1] for args in runner.asked} == {"eno1", "ens2f0", "ens3f0np0"}

    async def failing(args: Sequence[str]) -> str | None:
        return None  # an ethtool without JSON support, or a driver without the commands

    ports = by_port(read({"sysfs": str(nics)}, runner=failing))
    for snap in ports.values():
        assert (snap.fec_mode, snap.optics, snap.module_max_speed_bps, snap.max_speed_bps) == (
            None, None, None, None)  # fmt: skip
        assert not any("Pause" in k or "FEC" in k for k in snap.counters)
    quiet = Recorded()
    read({"sysfs": str(nics), "ethtool_json": False}, runner=quiet)
    assert all("--json" not in args for args in quiet.asked)  # -S only


def test_rs_fec_on_pam4_lanes_is_rs544_and_unknown_lanes_leave_rs() -> None:
    text = '[ {\n        "ifname": "x",\n        "active": [ "RS" ]\n    } ]\n'
    # SNAPSHOT-FORMAT 1.2: RS(544,514) for 50 Gb/s lanes and faster (PAM4).
    assert ethtool.fec(text, 100_000, 2).mode == "rs544"
    assert ethtool.fec(text, 50_000, 2).mode == "rs528"  # two 25 Gb/s lanes
    assert ethtool.fec(text, 100_000, None).mode == "rs"  # which code: not known
    off = text.replace('"RS"', '"Off"')  # ethtool's rename of None
    assert ethtool.fec(off).mode == "none"
    assert ethtool.fec(text.replace('"RS"', '"BaseR"')).mode == "base_r"


def test_no_light_reads_as_the_scales_floor() -> None:
    # 0 mW has no dBm; the lowest an SFF-8472 module reports is 0.1 uW, -40 dBm.
    assert ethtool.dbm(0.0) == -40.0
    assert ethtool.dbm(1.0) == 0.0
