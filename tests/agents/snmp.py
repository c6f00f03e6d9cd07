"""SNMP agents on loopback: net-snmp's snmpd (the machine's own interfaces) and snmpsim
serving a recorded walk of a 48-port switch with EtherLike counters, and LLDP's tables
where a test adds them."""

from __future__ import annotations

import json
import os
import shutil
import socket
import subprocess
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

import pytest

from linktriage.engine.format.counters import COLUMN_INDEX
from linktriage.network.collectors.snmp import (
    COUNTER_COLUMNS,
    DOT3_ENTRY,
    IF_ENTRY,
    IFX_ENTRY,
    SYS_UPTIME,
)

from agents.fleet import Fleet

COMMUNITY = "lark-test"
V3_USER, V3_AUTH, V3_PRIV = "larkops", "authpass123", "privpass123"


def require(binary: str) -> str:
    """The path of a binary the test needs; CI installs it, so there it must be found.

    ``LINKTRIAGE_AGENT_PATH``, where set, is the only place searched: `.ci/run` sets it empty
    to run the suite as a machine without the agents would.
    """
    only = os.environ.get("LINKTRIAGE_AGENT_PATH")
    if only is not None:
        found = shutil.which(binary, path=only) if only else None
    else:
        found = shutil.which(binary) or shutil.which(binary, path="/usr/sbin:/usr/bin")
    if found is None:
        if os.environ.get("LINKTRIAGE_REQUIRE_AGENTS"):
            pytest.fail(f"{binary} is not installed (.ci/run installs it)")
        pytest.skip(f"{binary} is not installed")
    return found


def free_udp_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_DGRAM) as probe:
        probe.bind(("127.0.0.1", 0))
        return int(probe.getsockname()[1])


def wait_for_agent(port: int, community: str, process: subprocess.Popen[bytes], log: Path) -> None:
    # GETNEXT from the top of MIB-2: any agent answers it, one without sysUpTime too.
    probe = require("snmpgetnext")
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        if process.poll() is not None:
            raise RuntimeError(f"the agent exited: {log.read_text(errors='replace')}")
        done = subprocess.run(
            [probe, "-v2c", "-c", community, "-On", "-t", "0.5", "-r", "0",
             f"127.0.0.1:{port}", "1.3.6.1.2.1"],
            capture_output=True, text=True, check=False,
        )  # fmt: skip
        if done.returncode == 0:
            return
        time.sleep(0.2)
    raise RuntimeError("the SNMP agent did not answer within 30 s")


def stop(process: subprocess.Popen[bytes]) -> None:
    """Stop an agent politely, then firmly."""
    process.terminate()
    try:
        process.wait(timeout=10)
    except subprocess.TimeoutExpired:
        process.kill()
        process.wait()


def start_agent(
    command: list[str], env: dict[str, str], log: Path, port: int, community: str
) -> subprocess.Popen[bytes]:
    """Start an agent and wait until it answers; stop it again if it never does.

    The probe (snmpgetnext) is looked up before the agent starts, and the agent is stopped
    whatever ends the wait (a skip or a failure is an exception too), so nothing leaks."""
    require("snmpgetnext")
    # The agent logs to a file: a pipe nobody reads fills up and stops the agent.
    with open(log, "wb") as out:
        process = subprocess.Popen(command, env=env, stdout=out, stderr=subprocess.STDOUT)
    try:
        wait_for_agent(port, community, process, log)
    except BaseException:
        stop(process)
        raise
    return process


#: LLDP-MIB's subtree, lldpMIB (IEEE 802.1AB-2005 12.1); LLDP-EXT-DOT3-MIB lies within it.
LLDP_SUBTREE = "1.0.8802.1.1.2"


class Snmpd:
    """net-snmp's snmpd in the foreground, our own config, v2c and a v3 user; with
    ``lldp`` (OID -> pass type and value), LLDP's tables served by a pass_persist program,
    and with ``tables`` (subtree -> such a table) any other tables net-snmp does not
    implement itself (dot3PauseTable, POWER-ETHERNET-MIB, IEEE8023-LAG-MIB, ifStackTable),
    one pass_persist program per subtree."""

    def __init__(
        self,
        folder: Path,
        lldp: dict[str, tuple[str, str]] | None = None,
        tables: dict[str, dict[str, tuple[str, str]]] | None = None,
    ) -> None:
        binary = require("snmpd")
        self.port = free_udp_port()
        config = folder / "snmpd.conf"
        served = ""
        subtrees = dict(tables or {})
        if lldp is not None:
            subtrees[LLDP_SUBTREE] = lldp
        program = Path(__file__).with_name("lldp_pass.py")
        for number, (subtree, table) in enumerate(sorted(subtrees.items())):
            data = folder / f"pass{number}.json"
            data.write_text(json.dumps(table))
            served += f"pass_persist .{subtree.strip('.')} {sys.executable} {program} {data}\n"
        config.write_text(
            f"rocommunity {COMMUNITY} 127.0.0.1\n"
            f'createUser {V3_USER} SHA "{V3_AUTH}" AES "{V3_PRIV}"\n'
            f"rouser {V3_USER} priv\n" + served
        )
        (folder / "persist").mkdir(exist_ok=True)
        env = {**os.environ, "SNMP_PERSISTENT_DIR": str(folder / "persist")}
        self.log = folder / "snmpd.log"
        self.process = start_agent(
            [binary, "-f", "-Lo", "-C", "-c", str(config), "-p", str(folder / "snmpd.pid"),
             "-m", "", f"udp:127.0.0.1:{self.port}"],
            env, self.log, self.port, COMMUNITY,
        )  # fmt: skip

    def walk(self, oid: str) -> dict[int, str]:
        """snmpbulkwalk's answer for one column: ifIndex -> value as text (enumerations and
        TimeTicks as numbers)."""
        numbered = subprocess.run(
            [require("snmpbulkwalk"), "-v2c", "-c", COMMUNITY, "-On", "-Oq", "-Oe", "-Ot",
             f"127.0.0.1:{self.port}", oid],
            capture_output=True, text=True, check=True,
        ).stdout  # fmt: skip
        rows = {}
        for line in numbered.splitlines():
            name, _, value = line.partition(" ")
            rows[int(name.rsplit(".", 1)[1])] = value.strip().strip('"')
        return rows

    def stop(self) -> None:
        stop(self.process)


#: snmprec tags (snmpsim): 2 Integer, 4 OCTET STRING, 65 Counter32, 66 Gauge32,
#: 67 TimeTicks, 70 Counter64.
def recorded_walk(
    fleet: Fleet, device: str, when: float, uptime_ticks: int = 8_640_000
) -> list[str]:
    """A 48-port switch's walk as snmprec lines, from the simulated fleet at ``when``."""
    table = fleet.read(device, when)
    lines = [f"{SYS_UPTIME}|67|{uptime_ticks}"]
    for row in range(len(table)):
        index = row + 1
        name = str(table.port[row])
        lines += [
            f"{IF_ENTRY}.2.{index}|4|{name}",
            f"{IF_ENTRY}.4.{index}|2|1500",
            f"{IF_ENTRY}.5.{index}|66|{min(int(table.state['speed_bps'][row]), 4294967295)}",
            f"{IF_ENTRY}.8.{index}|2|1",
            f"{IFX_ENTRY}.1.{index}|4|{name}",
            f"{IFX_ENTRY}.15.{index}|66|{int(table.state['speed_bps'][row]) // 1_000_000}",
            f"{IFX_ENTRY}.19.{index}|67|0",
            f"{DOT3_ENTRY}.19.{index}|2|3",
        ]
        for oid, counter in COUNTER_COLUMNS.items():
            value = int(table.counters[row, COLUMN_INDEX[counter]])
            wide = counter.startswith("ifHC")
            tag = 70 if wide else 65
            lines.append(f"{oid}.{index}|{tag}|{value if wide else value % 2**32}")
    return by_oid(lines)


def by_oid(lines: list[str]) -> list[str]:
    """snmprec lines in the order snmpsim needs: by OID, compared component by component."""
    return sorted(lines, key=lambda line: [int(p) for p in line.split("|")[0].split(".")])


#: LLDP's tables, numbered from the MIB texts themselves (not taken from the collector):
#: LLDP-MIB, IEEE 802.1AB-2005 12.1 (lldpRemEntry columns 6 lldpRemPortIdSubtype,
#: 7 lldpRemPortId, 8 lldpRemPortDesc, 9 lldpRemSysName; lldpLocPortEntry columns
#: 2 lldpLocPortIdSubtype, 3 lldpLocPortId, 4 lldpLocPortDesc), and LLDP-V2-MIB,
#: IEEE 802.1AB-2009 (lldpV2RemEntry columns 7 to 10, the same four objects).
LLDP_REM_ENTRY = "1.0.8802.1.1.2.1.4.1.1"
LLDP_LOC_PORT_ENTRY = "1.0.8802.1.1.2.1.3.7.1"
LLDP_V2_REM_ENTRY = "1.3.111.2.802.1.1.13.1.4.1.1"


@dataclass(frozen=True)
class Remote:
    """One remote entry: what the device heard on local port ``local`` (lldpRemLocalPortNum
    in LLDP-MIB, the ifIndex itself in LLDP-V2-MIB)."""

    local: int
    system: str
    subtype: int  # LldpPortIdSubtype: 3 macAddress, 5 interfaceName, 7 local, ...
    port_id: str | bytes
    desc: str | None = None
    time_mark: int = 0
    index: int = 1


def _octets(value: str | bytes) -> str:
    """An OCTET STRING as an snmprec tag and value: text as it is, octets in hex (4x)."""
    return f"4x|{value.hex()}" if isinstance(value, bytes) else f"4|{value}"


def lldp_walk(remote: list[Remote], local: dict[int, tuple[int, str | bytes, str]]) -> list[str]:
    """LLDP-MIB's remote table and local port table (lldpLocPortNum -> subtype, id,
    description) as snmprec lines."""
    lines = []
    for far in remote:
        row = f"{far.time_mark}.{far.local}.{far.index}"
        lines += [
            f"{LLDP_REM_ENTRY}.6.{row}|2|{far.subtype}",
            f"{LLDP_REM_ENTRY}.7.{row}|{_octets(far.port_id)}",
            f"{LLDP_REM_ENTRY}.9.{row}|4|{far.system}",
        ]
        if far.desc is not None:
            lines.append(f"{LLDP_REM_ENTRY}.8.{row}|4|{far.desc}")
    for number, (subtype, port_id, desc) in local.items():
        lines += [
            f"{LLDP_LOC_PORT_ENTRY}.2.{number}|2|{subtype}",
            f"{LLDP_LOC_PORT_ENTRY}.3.{number}|{_octets(port_id)}",
            f"{LLDP_LOC_PORT_ENTRY}.4.{number}|4|{desc}",
        ]
    return lines


def lldp_v2_walk(remote: list[Remote], dest_address_index: int = 1) -> list[str]:
    """LLDP-V2-MIB's remote table as snmprec lines (``local`` is the ifIndex)."""
    lines = []
    for far in remote:
        row = f"{far.time_mark}.{far.local}.{dest_address_index}.{far.index}"
        lines += [
            f"{LLDP_V2_REM_ENTRY}.7.{row}|2|{far.subtype}",
            f"{LLDP_V2_REM_ENTRY}.8.{row}|{_octets(far.port_id)}",
            f"{LLDP_V2_REM_ENTRY}.10.{row}|4|{far.system}",
        ]
        if far.desc is not None:
            lines.append(f"{LLDP_V2_REM_ENTRY}.9.{row}|4|{far.desc}")
    return lines


class Snmpsim:
    """snmpsim serving recordings, one community each (the community names the file)."""

    def __init__(
        self, folder: Path, lines: list[str], community: str = "lark48",
        more: dict[str, str] | None = None,
    ) -> None:  # fmt: skip
        # snmpsim comes with the test extra, beside this interpreter.
        responder = str(Path(sys.executable).parent / "snmpsim-command-responder")
        data = folder / "data"
        data.mkdir(exist_ok=True)
        (data / f"{community}.snmprec").write_text("\n".join(lines) + "\n")
        for name, text in (more or {}).items():
            (data / f"{name}.snmprec").write_text(text)
        self.port = free_udp_port()
        self.community = community
        env = {**os.environ, "SNMPSIM_ALLOW_ROOT": "true"}
        self.log = folder / "snmpsim.log"
        self.process = start_agent(
            [responder, f"--data-dir={data}", f"--agent-udpv4-endpoint=127.0.0.1:{self.port}",
             f"--cache-dir={folder / 'cache'}"],
            env, self.log, self.port, community,
        )  # fmt: skip

    def stop(self) -> None:
        stop(self.process)


#: Recordings of real agents that ship with snmpsim, in its package's data folder.
SNMPSIM_DATA = Path(__import__("snmpsim").__file__).parent / "data"
SHIPPED = {
    "linux-full-walk": SNMPSIM_DATA / "recorded" / "linux-full-walk.snmprec",
    "winxp-full-walk": SNMPSIM_DATA / "recorded" / "winxp-full-walk.snmprec",
    "multiplex-00000": SNMPSIM_DATA / "variation" / "multiplex" / "00000.snmprec",
}


#: The tables of format 1.2, numbered from the MIB texts (not taken from the collector):
#: IF-MIB (RFC 2863) ifEntry 3 ifType, 7 ifAdminStatus, 9 ifLastChange, and ifStackEntry
#: (1.3.6.1.2.1.31.1.2.1, column 3 ifStackStatus, indexed by higher then lower layer);
#: EtherLike-MIB (RFC 3635) dot3PauseEntry 1.3.6.1.2.1.10.7.10.1, columns 3 dot3InPauseFrames,
#: 4 dot3OutPauseFrames, 5 dot3HCInPauseFrames, 6 dot3HCOutPauseFrames;
#: POWER-ETHERNET-MIB (RFC 3621) pethPsePortEntry 1.3.6.1.2.1.105.1.1.1, indexed by group and
#: port: 6 DetectionStatus, 8 MPSAbsentCounter, 10 PowerClassifications,
#: 11 InvalidSignatureCounter, 12 PowerDeniedCounter, 13 OverLoadCounter, 14 ShortCounter;
#: pethMainPseEntry 1.3.6.1.2.1.105.1.3.1.1: 2 pethMainPsePower, 4 pethMainPseConsumptionPower;
#: IEEE8023-LAG-MIB (IEEE 802.1AX) dot3adAggPortEntry 1.2.840.10006.300.43.1.2.1.1, column 13
#: dot3adAggPortAttachedAggID; LLDP-EXT-DOT3-MIB (IEEE 802.1AB-2005 annex G)
#: lldpXdot3RemPortEntry 1.0.8802.1.1.2.1.5.4623.1.3.1.1, column 3
#: lldpXdot3RemPortAutoNegAdvertisedCap, indexed as lldpRemEntry.
IF_STACK_ENTRY = "1.3.6.1.2.1.31.1.2.1"
PAUSE_ENTRY = "1.3.6.1.2.1.10.7.10.1"
PETH_PORT_ENTRY = "1.3.6.1.2.1.105.1.1.1"
PETH_MAIN_ENTRY = "1.3.6.1.2.1.105.1.3.1.1"
LAG_PORT_ENTRY = "1.2.840.10006.300.43.1.2.1.1"
LLDP_XDOT3_REM_ENTRY = "1.0.8802.1.1.2.1.5.4623.1.3.1.1"
PETH_COUNTER_COLUMNS = {
    "pethPsePortMPSAbsentCounter": 8,
    "pethPsePortInvalidSignatureCounter": 11,
    "pethPsePortPowerDeniedCounter": 12,
    "pethPsePortOverLoadCounter": 13,
    "pethPsePortShortCounter": 14,
}


@dataclass(frozen=True)
class PsePort:
    """One row of pethPsePortTable: detection status and class as the MIB numbers them
    (1 disabled ... 6 otherFault; class0(1) ... class4(5)), and its counters by name."""

    group: int
    port: int
    detection: int
    classification: int | None = None
    counters: dict[str, int] = field(default_factory=dict)


def peth_walk(ports: list[PsePort], main: dict[int, tuple[int, int]]) -> list[str]:
    """POWER-ETHERNET-MIB's port table, and its main table (group -> power, consumption in
    watts, both Gauge32), as snmprec lines."""
    lines = []
    for pse in ports:
        row = f"{pse.group}.{pse.port}"
        lines.append(f"{PETH_PORT_ENTRY}.6.{row}|2|{pse.detection}")
        if pse.classification is not None:
            lines.append(f"{PETH_PORT_ENTRY}.10.{row}|2|{pse.classification}")
        for name, value in pse.counters.items():
            lines.append(f"{PETH_PORT_ENTRY}.{PETH_COUNTER_COLUMNS[name]}.{row}|65|{value}")
    for group, (power, used) in main.items():
        lines += [
            f"{PETH_MAIN_ENTRY}.2.{group}|66|{power}",
            f"{PETH_MAIN_ENTRY}.4.{group}|66|{used}",
        ]
    return lines


def pause_walk(counters: dict[int, dict[str, int]]) -> list[str]:
    """dot3PauseTable (ifIndex -> counter name -> value) as snmprec lines: Counter32 for the
    dot3In/OutPauseFrames columns, Counter64 for the HC ones."""
    columns = {"dot3InPauseFrames": 3, "dot3OutPauseFrames": 4, "dot3HCInPauseFrames": 5,
               "dot3HCOutPauseFrames": 6}  # fmt: skip
    return [
        f"{PAUSE_ENTRY}.{columns[name]}.{index}|{70 if 'HC' in name else 65}|{value}"
        for index, named in counters.items()
        for name, value in named.items()
    ]
