"""The ``linux`` collector: the interfaces of the host linktriage runs on, from sysfs.

Each interface is a folder of /sys/class/net (Documentation/ABI/testing/sysfs-class-net and
sysfs-class-net-statistics in the kernel tree): ``statistics/`` holds the kernel's 64-bit
counters (struct rtnl_link_stats64), beside ``operstate``, ``carrier_changes``, ``speed``
(Mb/s), ``duplex`` and ``mtu``. ``ethtool -S``, where it is installed and the driver has
statistics, adds the NIC's own Ethernet counters under driver-chosen names.

The counters map to the IF-MIB and EtherLike-MIB objects that count the same thing (the
descriptions in include/uapi/linux/if_link.h, quoted from memory): rx_crc_errors are FCS
errors, rx_frame_errors alignment errors, tx_window_errors late collisions and
tx_aborted_errors frames aborted after excessive collisions. Linux counts received
multicast apart but not sent; sent packets of every kind are read as ifHCOutUcastPkts,
which is harmless because the engine uses only the sum of the three kinds. The Ethernet
error counters are read only from NICs on a hardware bus: a virtual NIC (virtio, Xen,
Hyper-V) or a software interface (loopback, bridge, bond, veth) cannot see a bad frame,
so its zeros would be claims it cannot make.

Format 1.2 adds, for every interface, its administrative state: IFF_UP in ``flags``
(include/uapi/linux/if.h; the flag ``ip link set DEV up`` sets), up or down, as
ifAdminStatus has it. And, for NICs on a hardware bus, what ``ethtool --json`` tells (see
:mod:`~linktriage.network.collectors.ethtool`, also for which release prints which): the
FEC mode and its counters, the pause frames, the module's light, thresholds, lanes and
PMD, the port's highest speed and medium. The partner's advertised speeds are read too,
but the format carries them only inside ``neighbor``, which needs the far end's name and
port, and this collector has no LLDP: they are not reported. ethtool is run through a runner that
can be injected (``LinuxCollector(target, runner=...)``): tests replay recorded outputs.
A command that fails (an older ethtool, a driver without the statistics, no module) adds
nothing.
"""

from __future__ import annotations

import asyncio
import os
import shutil
import socket
import time
from collections.abc import Awaitable, Callable, Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Literal

from pydantic import Field, ValidationError, field_validator

from linktriage.engine.format.counters import COLUMN_INDEX
from linktriage.engine.format.snapshot import FecMode, Optics, Snapshot
from linktriage.errors import BadAnswerError, InputError
from linktriage.network.collectors import ethtool as ethtool_json
from linktriage.network.collectors.base import Collector, Options, Reading, Target

#: Runs ethtool with these arguments (the binary left out); its standard output, or None
#: where it failed.
Runner = Callable[[Sequence[str]], Awaitable[str | None]]
#: IFF_UP (include/uapi/linux/if.h): the interface is administratively up.
IFF_UP = 0x1

#: sysfs statistics of every interface -> the snapshot counter (RFC 2863 IF-MIB names).
TRAFFIC = {
    "rx_bytes": "ifHCInOctets",
    "tx_bytes": "ifHCOutOctets",
    "multicast": "ifHCInMulticastPkts",
    "tx_packets": "ifHCOutUcastPkts",
    "rx_errors": "ifInErrors",
    "tx_errors": "ifOutErrors",
    "rx_dropped": "ifInDiscards",
    "tx_dropped": "ifOutDiscards",
}
#: sysfs statistics of a NIC on a hardware bus -> the EtherLike-MIB object (RFC 3635).
ETHERNET = {
    "rx_crc_errors": "dot3StatsFCSErrors",
    "rx_frame_errors": "dot3StatsAlignmentErrors",
    "tx_window_errors": "dot3StatsLateCollisions",
    "tx_aborted_errors": "dot3StatsExcessiveCollisions",
}
#: ``ethtool -S`` names that common NIC drivers use for EtherLike counters (common practice,
#: names from memory of the e1000e, igb, ixgbe, mlx5 and bnxt drivers); the first a driver
#: lists wins, and the inventory can name others (option ``ethtool_names``).
ETHTOOL_NAMES: dict[str, tuple[str, ...]] = {
    "dot3StatsFCSErrors": ("rx_crc_errors", "rx_fcs_errors", "rx_crc_errors_phy"),
    "dot3StatsAlignmentErrors": ("rx_align_errors", "rx_alignment_errors"),
    "dot3StatsSymbolErrors": ("rx_symbol_err_phy", "rx_symbol_errors", "rx_symbol_err"),
    "dot3StatsFrameTooLongs": ("rx_long_length_errors", "rx_oversize_pkts_phy", "rx_oversize"),
    "dot3StatsSingleCollisionFrames": ("tx_single_coll_ok", "tx_single_collisions"),
    "dot3StatsMultipleCollisionFrames": ("tx_multi_coll_ok", "tx_multiple_collisions"),
    "dot3StatsLateCollisions": ("tx_late_collisions", "late_collisions"),
    "dot3StatsExcessiveCollisions": ("tx_excessive_collisions", "excess_coll"),
    "etherStatsUndersizePkts": ("rx_short_length_errors", "rx_undersize_pkts_phy", "rx_runts"),
    "etherStatsFragments": ("rx_fragments", "rx_fragments_phy"),
    "etherStatsJabbers": ("rx_jabbers", "rx_jabbers_phy"),
}
#: Buses of virtual NICs: no wire, so no Ethernet errors to count.
VIRTUAL_BUSES = frozenset({"virtio", "xen", "vmbus"})
#: operstate (Documentation/networking/operstates.rst) -> ifOperStatus names (RFC 2863).
OPERSTATE = {
    "up": "up",
    "down": "down",
    "testing": "testing",
    "dormant": "dormant",
    "notpresent": "notPresent",
    "lowerlayerdown": "lowerLayerDown",
}
LOCAL_NAMES = frozenset({"localhost", "127.0.0.1", "::1"})


class LinuxOptions(Options):
    sysfs: Path = Path("/sys/class/net")
    ethtool: bool = True
    ethtool_path: str = "ethtool"
    #: Ask ``ethtool --json`` for FEC, pause, module and link-mode state (format 1.2).
    ethtool_json: bool = True
    #: More ``ethtool -S`` names per counter, tried before the built-in ones.
    ethtool_names: dict[str, list[str]] = Field(default_factory=dict)

    @field_validator("ethtool_names")
    @classmethod
    def _counters(cls, names: dict[str, list[str]]) -> dict[str, list[str]]:
        for counter in names:
            if counter not in COLUMN_INDEX:
                raise ValueError(f"{counter!r} is not a counter of the snapshot format")
        return names


def _read(path: Path) -> str | None:
    """A sysfs attribute's text; None where the kernel will not say (EINVAL while down)."""
    try:
        return path.read_text().strip()
    except OSError:
        return None


def _number(path: Path) -> int | None:
    text = _read(path)
    if text is None or not text.lstrip("-").isdigit():
        return None
    return int(text)


def on_hardware_bus(folder: Path) -> bool:
    """Whether the interface is a NIC on a hardware bus (PCI, USB, a SoC), not virtual."""
    bus = folder / "device" / "subsystem"
    if not bus.exists():
        return False  # loopback, bridges, bonds, veth, tunnels: no device behind them
    return os.path.basename(os.path.realpath(bus)) not in VIRTUAL_BUSES


def parse_ethtool_stats(text: str) -> dict[str, int]:
    """``ethtool -S`` output (``NIC statistics:`` then ``name: value`` lines) as a dict."""
    stats: dict[str, int] = {}
    for line in text.splitlines():
        name, colon, value = line.strip().rpartition(":")
        value = value.strip()
        if colon and name and value.isdigit():
            stats[name.strip()] = int(value)
    return stats


@dataclass(frozen=True, slots=True)
class Ethtool:
    """What ``ethtool --json`` says of one NIC (format 1.2); nothing where it said nothing."""

    counters: dict[str, int] = field(default_factory=dict)
    fec_mode: FecMode | None = None
    optics: Optics | None = None
    module_max_speed_bps: int | None = None
    max_speed_bps: int | None = None
    media: Literal["copper", "fiber"] | None = None
    partner_speeds_bps: list[int] | None = None


def ethtool_reading(
    settings: str | None, fec: str | None, pause: str | None, module: str | None
) -> Ethtool:
    """The four outputs of ``ethtool --json`` (None: the command failed) read together: the
    FEC mode needs the link's speed and lanes."""
    modes = ethtool_json.link_modes(settings or "")
    coded = ethtool_json.fec(fec or "", modes.speed_mbps, modes.lanes)
    plugged = ethtool_json.module(module or "")
    return Ethtool(
        counters={**coded.counters, **ethtool_json.pause_counters(pause or "")},
        fec_mode=coded.mode,
        optics=plugged.optics,
        module_max_speed_bps=plugged.max_speed_bps,
        max_speed_bps=modes.max_speed_bps,
        media=modes.media,
        partner_speeds_bps=modes.partner_speeds_bps,
    )


def admin_status(folder: Path) -> Literal["up", "down"] | None:
    """up or down from IFF_UP in the interface's ``flags`` (hex); None where unreadable."""
    text = _read(folder / "flags")
    try:
        flags = int(text, 16) if text else None
    except ValueError:
        return None
    if flags is None:
        return None
    return "up" if flags & IFF_UP else "down"


def interface_snapshot(
    device: str,
    folder: Path,
    at: float,
    ethtool: dict[str, int],
    names: dict[str, list[str]],
    more: Ethtool | None = None,
) -> Snapshot:
    """One interface's sysfs folder (and its ethtool statistics) as a snapshot."""
    more = more or Ethtool()
    stats = folder / "statistics"
    counters: dict[str, int] = {}
    for leaf, counter in TRAFFIC.items():
        value = _number(stats / leaf)
        if value is not None:
            counters[counter] = value
    received = _number(stats / "rx_packets")
    if received is not None:
        counters["ifHCInUcastPkts"] = max(received - counters.get("ifHCInMulticastPkts", 0), 0)
    if on_hardware_bus(folder):
        for leaf, counter in ETHERNET.items():
            value = _number(stats / leaf)
            if value is not None:
                counters[counter] = value
        for counter, builtin in ETHTOOL_NAMES.items():
            for name in (*names.get(counter, ()), *builtin):
                if name in ethtool:
                    counters[counter] = ethtool[name]
                    break
    counters.update(more.counters)
    state = _read(folder / "operstate") or "unknown"
    carrier = _read(folder / "carrier")
    # "unknown": the driver does not track operational state (loopback, many tunnels);
    # operstates.rst says to treat it as usable, so the carrier decides.
    status = OPERSTATE.get(state, "up" if carrier == "1" else "unknown")
    speed = _number(folder / "speed")
    duplex = _read(folder / "duplex")
    return Snapshot(
        device=device,
        port=folder.name,
        time=datetime.fromtimestamp(at, UTC),
        oper_status=status,
        counters=counters,
        speed_bps=speed * 1_000_000 if speed is not None and speed > 0 else None,
        duplex=duplex if duplex in ("full", "half", "unknown") else None,
        mtu=_number(folder / "mtu"),
        link_changes=_number(folder / "carrier_changes"),
        admin_status=admin_status(folder),
        fec_mode=more.fec_mode,
        optics=more.optics,
        module_max_speed_bps=more.module_max_speed_bps,
        max_speed_bps=more.max_speed_bps,
        media=more.media,
    )


class LinuxCollector(Collector[LinuxOptions]):
    """Reads this host's interfaces."""

    needs_address = False

    def __init__(self, target: Target, *, runner: Runner | None = None) -> None:
        super().__init__(target)
        self.runner = runner
        if target.address and target.address not in LOCAL_NAMES | {socket.gethostname()}:
            raise InputError(
                f"{target.name}: the linux collector reads only the host linktriage runs on, "
                f"not {target.address}.",
                hint="Run linktriage there, or read that host through its SNMP agent.",
            )
        self.root = self.options.sysfs

    async def ports(self) -> list[str]:
        try:
            return sorted(p.name for p in self.root.iterdir())
        except OSError as exc:
            raise self.error(BadAnswerError, f"cannot list {self.root}: {exc.strerror}") from exc

    async def _run(self, args: Sequence[str]) -> str | None:
        """ethtool's output for these arguments, by the injected runner or the binary;
        None where ethtool is off, missing, slow or failing."""
        o = self.options
        if not o.ethtool:
            return None
        if self.runner is not None:
            return await self.runner(args)
        binary = shutil.which(o.ethtool_path)
        if binary is None:
            return None
        process = await asyncio.create_subprocess_exec(
            binary, *args, stdout=asyncio.subprocess.PIPE, stderr=asyncio.subprocess.DEVNULL,
        )  # fmt: skip
        try:
            out, _ = await asyncio.wait_for(process.communicate(), self.target.timeout_s)
        except TimeoutError:
            process.kill()
            await process.wait()
            return None
        return out.decode(errors="replace") if process.returncode == 0 else None

    async def _ethtool(self, interface: str) -> dict[str, int]:
        """The driver's statistics, or nothing where ethtool or the driver has none."""
        text = await self._run(["-S", interface])
        return parse_ethtool_stats(text) if text is not None else {}

    async def _ethtool_json(self, interface: str) -> Ethtool:
        """What ``ethtool --json`` says of a NIC: link modes, FEC, pause, module."""
        if not self.options.ethtool_json:
            return Ethtool()
        asked = (
            ["--json", interface],
            ["--json", "-I", "--show-fec", interface],
            ["--json", "-I", "-a", interface],
            ["--json", "-m", interface],
        )
        settings, fec, pause, module = await asyncio.gather(*(self._run(a) for a in asked))
        return ethtool_reading(settings, fec, pause, module)

    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        names = await self.ports() if ports is None else list(ports)
        folders = {name: self.root / name for name in names}
        hardware = [name for name, folder in folders.items() if on_hardware_bus(folder)]
        found = await asyncio.gather(*(self._ethtool(name) for name in hardware))
        by_name = dict(zip(hardware, found, strict=True))
        told = await asyncio.gather(*(self._ethtool_json(name) for name in hardware))
        more = dict(zip(hardware, told, strict=True))
        o = self.options

        def read_all() -> Reading:
            at = time.time()
            snapshots: list[Snapshot] = []
            problems: dict[str, str] = {}
            for name, folder in folders.items():
                if not (folder / "statistics").is_dir():
                    problems[name] = f"no such interface ({folder} has no statistics)"
                    continue
                try:
                    snapshots.append(
                        interface_snapshot(
                            self.target.name,
                            folder,
                            at,
                            by_name.get(name, {}),
                            o.ethtool_names,
                            more.get(name),
                        )
                    )
                except ValidationError as exc:
                    problems[name] = f"unreadable: {exc}".splitlines()[0]
            return Reading(snapshots, problems)

        return await asyncio.to_thread(read_all)
