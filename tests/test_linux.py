"""The Linux collector on this host's own interfaces, checked against /proc/net/dev and the
kernel's SIOCGIFMTU, and on sysfs folders laid out as the kernel lays out a NIC's."""

from __future__ import annotations

import asyncio
import fcntl
import socket
import stat
import struct
from pathlib import Path
from typing import Any

import pytest

from linktriage.engine.format.snapshot import Snapshot
from linktriage.errors import InputError
from linktriage.network.collectors.base import Reading, Target
from linktriage.network.collectors.linux import LinuxCollector, parse_ethtool_stats

SIOCGIFMTU = 0x8921  # linux/sockios.h


def read(options: dict[str, Any] | None = None, ports: list[str] | None = None) -> Reading:
    collector = LinuxCollector(Target("lark-hv1", None, options or {}))
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
                  "mtu": "9000", "carrier_changes": "4"}  # fmt: skip
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
