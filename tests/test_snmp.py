"""The SNMP collector against real agents on loopback: net-snmp's snmpd (v2c and v3) for
the machine's own interfaces, and snmpsim serving a recorded 48-port switch, with and
without LLDP's tables; and the objects of format 1.2 (admin status, last change, pause
frames, Power over Ethernet, aggregates, the far end's advertised speeds) from snmpd's own
IF-MIB, tables it serves through pass_persist, and a recording with all of them."""

from __future__ import annotations

import json
from collections.abc import Iterator
from datetime import timedelta
from pathlib import Path

import pytest
from click.testing import CliRunner

from linktriage.cli import main
from linktriage.engine.format.counters import COLUMN_INDEX
from linktriage.engine.format.snapshot import Neighbor, PoeStatus, Snapshot
from linktriage.engine.verdicts import VERDICTS
from linktriage.errors import CollectorError, DeviceTimeoutError
from linktriage.network.collectors.base import Reading, Target
from linktriage.network.collectors.snmp import IF_ENTRY, IFX_ENTRY, SnmpCollector

from agents.fleet import Fleet
from agents.snmp import (
    COMMUNITY,
    IF_STACK_ENTRY,
    LAG_PORT_ENTRY,
    LLDP_XDOT3_REM_ENTRY,
    PAUSE_ENTRY,
    PETH_MAIN_ENTRY,
    PETH_PORT_ENTRY,
    SHIPPED,
    V3_AUTH,
    V3_PRIV,
    V3_USER,
    PsePort,
    Remote,
    Snmpd,
    Snmpsim,
    by_oid,
    lldp_v2_walk,
    lldp_walk,
    pause_walk,
    peth_walk,
    recorded_walk,
)
from helpers import ask_once, read_once


@pytest.fixture(scope="module")
def snmpd(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Snmpd]:
    agent = Snmpd(tmp_path_factory.mktemp("snmpd"))
    yield agent
    agent.stop()


@pytest.fixture
def community(monkeypatch: pytest.MonkeyPatch) -> dict[str, object]:
    monkeypatch.setenv("LARK_SNMP_COMMUNITY", COMMUNITY)
    return {"community": {"env": "LARK_SNMP_COMMUNITY"}}


def collector(port: int, options: dict[str, object], **target: object) -> SnmpCollector:
    settings = {"port": port, **options}
    return SnmpCollector(Target("localhost-agent", "127.0.0.1", settings, **target))  # type: ignore[arg-type]


def test_the_collector_reads_what_snmpbulkwalk_reads(
    snmpd: Snmpd, community: dict[str, object]
) -> None:
    names = snmpd.walk(f"{IFX_ENTRY}.1")
    before = snmpd.walk(f"{IFX_ENTRY}.6")  # ifHCInOctets
    reading = read_once(collector(snmpd.port, community))
    after = snmpd.walk(f"{IFX_ENTRY}.6")
    assert sorted(s.port for s in reading.snapshots) == sorted(names.values())
    mtu = snmpd.walk(f"{IF_ENTRY}.4")
    status = snmpd.walk(f"{IF_ENTRY}.8")
    speed = snmpd.walk(f"{IFX_ENTRY}.15")
    by_name = {name: index for index, name in names.items()}
    for snap in reading.snapshots:
        index = by_name[snap.port]
        assert snap.mtu == int(mtu[index])
        assert snap.oper_status == {"1": "up", "2": "down"}.get(status[index], snap.oper_status)
        if int(speed[index]):
            assert snap.speed_bps == int(speed[index]) * 1_000_000
        # Read between two walks of the same object: counters only grow.
        assert int(before[index]) <= snap.counters["ifHCInOctets"] <= int(after[index])
        assert "ifInErrors" in snap.counters


def test_snmpd_serving_lldp_mib_gives_the_loopback_its_neighbor(
    snmpd: Snmpd, community: dict[str, object], tmp_path: Path
) -> None:
    # net-snmp has no LLDP-MIB of its own: a pass_persist program serves the tables
    # (snmpd.conf(5)); the interfaces are this machine's own.
    assert "lo" in snmpd.walk(f"{IFX_ENTRY}.1").values()
    rem, loc = "1.0.8802.1.1.2.1.4.1.1", "1.0.8802.1.1.2.1.3.7.1"  # LLDP-MIB, 802.1AB-2005
    row = "0.1001.1"  # lldpRemTimeMark 0, lldpRemLocalPortNum 1001 (not an ifIndex), index 1
    lldp = {
        f"{loc}.2.1001": ("integer", "5"),  # lldpLocPortIdSubtype: interfaceName(5)
        f"{loc}.3.1001": ("string", "lo"),  # lldpLocPortId: port 1001 is lo
        f"{loc}.4.1001": ("string", "loopback"),  # lldpLocPortDesc
        f"{rem}.6.{row}": ("integer", "3"),  # lldpRemPortIdSubtype: macAddress(3)
        f"{rem}.7.{row}": ("octet", "02 00 5e 10 00 03"),  # lldpRemPortId, six octets
        f"{rem}.8.{row}": ("string", "eth0"),  # lldpRemPortDesc
        f"{rem}.9.{row}": ("string", "lark-lab-ap3"),  # lldpRemSysName
    }
    agent = Snmpd(tmp_path, lldp=lldp)
    try:
        reading = read_once(collector(agent.port, community))
    finally:
        agent.stop()
    neighbors = {s.port: s.neighbor for s in reading.snapshots}
    assert neighbors.pop("lo") == Neighbor(device="lark-lab-ap3", port="eth0")
    assert set(neighbors.values()) <= {None}  # every other interface: none


def test_snmp_v3_with_authentication_and_privacy(
    snmpd: Snmpd, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("LARK_SNMP_AUTH", V3_AUTH)
    monkeypatch.setenv("LARK_SNMP_PRIV", V3_PRIV)
    v3 = {"version": "3", "user": V3_USER, "auth_protocol": "SHA", "priv_protocol": "AES",
          "auth_key": {"env": "LARK_SNMP_AUTH"}, "priv_key": {"env": "LARK_SNMP_PRIV"}}  # fmt: skip
    reading = read_once(collector(snmpd.port, v3))
    assert "lo" in {s.port for s in reading.snapshots}
    monkeypatch.setenv("LARK_SNMP_AUTH", "wrong-pass")
    with pytest.raises(CollectorError):
        read_once(collector(snmpd.port, v3, timeout_s=0.5, retries=0))


def test_a_wrong_community_gets_no_answer_and_is_named(
    snmpd: Snmpd, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("LARK_SNMP_COMMUNITY", "guessed")
    with pytest.raises(
        DeviceTimeoutError, match=r"localhost-agent: no answer to SNMP within 0\.3 s"
    ):
        read_once(
            collector(
                snmpd.port, {"community": {"env": "LARK_SNMP_COMMUNITY"}}, timeout_s=0.3, retries=0
            )
        )


RECORDED_AT = 1_772_438_400.0


@pytest.fixture(scope="module")
def fleet() -> Fleet:
    return Fleet(devices=1, ports=48, seed=21)


@pytest.fixture(scope="module")
def switch48(tmp_path_factory: pytest.TempPathFactory, fleet: Fleet) -> Iterator[Snmpsim]:
    agent = Snmpsim(tmp_path_factory.mktemp("snmpsim"), recorded_walk(fleet, "sw0001", RECORDED_AT))
    yield agent
    agent.stop()


def test_a_recorded_48_port_switch_reads_back_exactly(
    switch48: Snmpsim, fleet: Fleet, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("LARK48_COMMUNITY", switch48.community)
    reading = read_once(collector(switch48.port, {"community": {"env": "LARK48_COMMUNITY"}}))
    assert reading.problems == {}
    assert [s.port for s in reading.snapshots] == fleet.ports
    recorded = fleet.read("sw0001", RECORDED_AT)  # the walk was recorded from this switch
    for row, snap in enumerate(reading.snapshots):
        for name in ("ifHCInOctets", "dot3StatsFCSErrors", "dot3StatsLateCollisions", "ifInErrors"):
            expected = int(recorded.counters[row, COLUMN_INDEX[name]])
            assert snap.counters[name] == (
                expected if name.startswith("ifHC") else expected % 2**32
            )
        assert snap.duplex == "full" and snap.mtu == 1500
        assert snap.neighbor is None  # the recording has no LLDP tables
        # A device without the tables of format 1.2 reads as before: nothing of them, no
        # zeros (SNAPSHOT-FORMAT: a missing counter means "not supported", never zero).
        assert (snap.admin_status, snap.last_change, snap.aggregate, snap.poe_status) == (
            None, None, None, None)  # fmt: skip
        assert not any("Pause" in name or name.startswith("peth") for name in snap.counters)


def test_only_the_ports_asked_for(switch48: Snmpsim, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("LARK48_COMMUNITY", switch48.community)
    reading = read_once(
        collector(switch48.port, {"community": {"env": "LARK48_COMMUNITY"}}), ["port3", "port40"]
    )
    assert [s.port for s in reading.snapshots] == ["port3", "port40"]


#: What the 48-port switch heard on its ports, as LLDP-MIB's lldpRemTable holds it. Its
#: local port numbers are bridge port numbers (LLDP-MIB LldpPortNumber: a bridge numbers
#: ports as dot1dBasePort), 100 above the ifIndex, so only lldpLocPortTable tells which
#: port each is; port20's number has no row there and is taken for its ifIndex.
MAC_OF_AP3 = bytes.fromhex("02005e100003")  # a port id of subtype macAddress(3): 6 octets
HEARD = [
    Remote(101, "lark-core1", 5, "xe-0/0/1", desc="to lark-lab-sw1"),  # interfaceName(5)
    Remote(102, "lark-lab-ap3", 3, MAC_OF_AP3, desc="eth0"),  # macAddress(3): the desc names it
    Remote(107, "lark-lab-sw2", 7, "24"),  # local(7), printable
    Remote(110, "lark-lab-cam1", 3, bytes.fromhex("02005e100010")),  # a MAC and no desc
    Remote(112, "lark-lab-phone4", 5, "lan", index=1),  # two far ends on one port
    Remote(112, "lark-lab-pc9", 5, "eno1", index=2),
    Remote(114, "lark-lab-sw3", 5, "ge-0/0/47", time_mark=0),  # one far end, two time marks
    Remote(114, "lark-lab-sw3", 5, "ge-0/0/47", time_mark=4521),
    Remote(20, "lark-lab-printer2", 5, "lan0"),  # no lldpLocPortTable row: ifIndex 20
    Remote(160, "lark-lab-ghost", 5, "x1"),  # no row, and no ifIndex 160
]
#: lldpLocPortTable: the id is the ifName (interfaceName(5)), except port7's, a MAC
#: address, whose description is its ifDescr as LLDP-MIB lldpLocPortDesc says it should be.
LOCAL = {100 + i: (5, f"port{i}", f"port{i}") for i in range(1, 49) if i not in (7, 20)} | {
    107: (3, bytes.fromhex("02005e1000a7"), "Ethernet Interface 7")
}


@pytest.fixture(scope="module")
def lldp_switches(tmp_path_factory: pytest.TempPathFactory, fleet: Fleet) -> Iterator[Snmpsim]:
    """The 48-port switch with LLDP-MIB's tables (community lark-lldp), and with
    LLDP-V2-MIB's beside them (lark-lldp2); port7's ifDescr differs from its ifName."""
    walk = [
        f"{IF_ENTRY}.2.7|4|Ethernet Interface 7" if line.startswith(f"{IF_ENTRY}.2.7|") else line
        for line in recorded_walk(fleet, "sw0001", RECORDED_AT)
    ]
    v1 = by_oid(walk + lldp_walk(HEARD, LOCAL))
    # LLDP-V2-MIB indexes by the ifIndex itself (lldpV2RemLocalIfIndex).
    v2 = lldp_v2_walk(
        [Remote(3, "lark-core2", 5, "et-0/0/3"), Remote(5, "lark-core2", 5, "et-0/0/5")]
    )
    agent = Snmpsim(
        tmp_path_factory.mktemp("lldp"), v1, community="lark-lldp",
        more={"lark-lldp2": "\n".join(by_oid(v1 + v2)) + "\n"},
    )  # fmt: skip
    yield agent
    agent.stop()


def neighbors_of(
    agent: Snmpsim, community: str, monkeypatch: pytest.MonkeyPatch
) -> dict[str, Neighbor]:
    monkeypatch.setenv("LARK_LLDP_COMMUNITY", community)
    reading = read_once(collector(agent.port, {"community": {"env": "LARK_LLDP_COMMUNITY"}}))
    assert reading.problems == {} and len(reading.snapshots) == 48
    return {s.port: s.neighbor for s in reading.snapshots if s.neighbor is not None}


def test_lldp_mib_neighbors_land_on_the_ports_the_local_port_table_names(
    lldp_switches: Snmpsim, monkeypatch: pytest.MonkeyPatch
) -> None:
    assert neighbors_of(lldp_switches, "lark-lldp", monkeypatch) == {
        # lldpLocPortId 101 is "port1" (interfaceName): the far end's id is its ifName.
        "port1": Neighbor(device="lark-core1", port="xe-0/0/1"),
        # A far end naming its port by MAC address: lldpRemPortDesc names it (SNAPSHOT-FORMAT 1.1).
        "port2": Neighbor(device="lark-lab-ap3", port="eth0"),
        # Local port 107 has a MAC id; its lldpLocPortDesc is port7's ifDescr.
        "port7": Neighbor(device="lark-lab-sw2", port="24"),
        # Two time marks of one far end (lldpRemTimeMark, RFC 2021 TimeFilter) are one neighbor.
        "port14": Neighbor(device="lark-lab-sw3", port="ge-0/0/47"),
        # No lldpLocPortTable row for 20: LldpPortNumber is the ifIndex (not a bridge).
        "port20": Neighbor(device="lark-lab-printer2", port="lan0"),
    }  # port10 (a MAC and no description) and port12 (two far ends) name none


def test_lldp_v2_mib_is_read_where_the_device_answers_it(
    lldp_switches: Snmpsim, monkeypatch: pytest.MonkeyPatch
) -> None:
    # LLDP-V2-MIB (IEEE 802.1AB-2009) indexes its remote table by ifIndex: ifIndex 3 is port3.
    assert neighbors_of(lldp_switches, "lark-lldp2", monkeypatch) == {
        "port3": Neighbor(device="lark-core2", port="et-0/0/3"),
        "port5": Neighbor(device="lark-core2", port="et-0/0/5"),
    }


def test_a_second_read_within_the_interval_keeps_the_neighbors_the_first_read(
    lldp_switches: Snmpsim, monkeypatch: pytest.MonkeyPatch
) -> None:
    # The second read walks no LLDP table (neighbors_every_s, 300 s by default) and still
    # gives each port its far end.
    monkeypatch.setenv("LARK_LLDP_COMMUNITY", "lark-lldp")
    c = collector(lldp_switches.port, {"community": {"env": "LARK_LLDP_COMMUNITY"}})

    async def two_reads(c: SnmpCollector) -> list[dict[str, Neighbor | None]]:
        return [{s.port: s.neighbor for s in (await c.read()).snapshots} for _ in range(2)]

    first, second = ask_once(c, two_reads)
    assert second == first and first["port1"] == Neighbor(device="lark-core1", port="xe-0/0/1")


def test_an_older_switch_answers_with_counter32_and_a_bad_value_spoils_only_its_port(
    tmp_path: Path, fleet: Fleet, monkeypatch: pytest.MonkeyPatch
) -> None:
    hc_columns = tuple(f"{IFX_ENTRY}.{column}." for column in (*range(6, 14), 15))
    walk = [
        line
        for line in recorded_walk(fleet, "sw0001", RECORDED_AT)
        if not line.startswith(hc_columns)  # no ifHC* counters, no ifHighSpeed
    ]
    walk = [
        f"{IF_ENTRY}.14.5|4|n/a" if line.startswith(f"{IF_ENTRY}.14.5|") else line for line in walk
    ]  # ifInErrors of port5 as an OCTET STRING
    agent = Snmpsim(tmp_path, walk, community="lark-old")
    try:
        monkeypatch.setenv("LARK_OLD_COMMUNITY", "lark-old")
        reading = read_once(collector(agent.port, {"community": {"env": "LARK_OLD_COMMUNITY"}}))
    finally:
        agent.stop()
    assert "malformed answer" in reading.problems["port5"]
    assert len(reading.snapshots) == 47
    recorded = fleet.read("sw0001", RECORDED_AT)
    for snap in reading.snapshots:
        row = fleet.ports.index(snap.port)
        assert not any(name.startswith("ifHC") for name in snap.counters)
        expected = int(recorded.counters[row, COLUMN_INDEX["ifInOctets"]]) % 2**32
        assert snap.counters["ifInOctets"] == expected  # the Counter32 object, as recorded
        speed = int(recorded.state["speed_bps"][row])
        # ifSpeed stands in for the missing ifHighSpeed (RFC 2863).
        assert snap.speed_bps == (speed if speed < 2**32 - 1 else None)


def test_v2c_without_a_community_reference_is_refused_offline() -> None:
    with pytest.raises(CollectorError, match="needs community"):
        SnmpCollector(Target("x", "127.0.0.1", {}))


def test_collect_records_the_local_agent_and_diagnose_reads_the_recording(
    snmpd: Snmpd, community: dict[str, object], tmp_path: Path
) -> None:
    """The recorder path end to end: SNMP answers become snapshot lines the engine reads."""
    inventory = tmp_path / "inventory.toml"
    inventory.write_text(
        "[[devices]]\n"
        'name = "lark-lab-host"\nsite = "lab"\ncollector = "snmp"\naddress = "127.0.0.1"\n'
        "[devices.options]\n"
        f'port = {snmpd.port}\ncommunity = {{ env = "LARK_SNMP_COMMUNITY" }}\n'
    )
    out = tmp_path / "recorded.jsonl"
    runner = CliRunner()
    recorded = runner.invoke(
        main,
        ["collect", "--inventory", str(inventory), "--device", "lab-host",
         "--polls", "2", "--every", "1", "--out", str(out)],
    )  # fmt: skip
    assert recorded.exit_code == 0, recorded.stderr
    lines = out.read_text().splitlines()
    ports = sorted(snmpd.walk(f"{IFX_ENTRY}.1").values())
    assert len(lines) == 2 * len(ports)
    assert f"wrote {len(lines)} snapshots of lark-lab-host in 2 polls" in recorded.stderr

    diagnosed = runner.invoke(main, ["diagnose", "--snapshots", str(out), "--json"])
    assert diagnosed.exit_code == 0, diagnosed.stderr
    records = [json.loads(line) for line in diagnosed.stdout.splitlines()]
    assert sorted(r["port"] for r in records) == ports
    assert {r["device"] for r in records} == {"lark-lab-host"}
    assert all(r["verdict"] in VERDICTS for r in records)
    assert "0 lines skipped" in diagnosed.stderr


@pytest.fixture(scope="module")
def shipped(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Snmpsim]:
    """snmpsim serving recordings of real agents from its own package: a Linux host, a
    Windows XP host, and an agent without sysUpTime."""
    texts = {name: path.read_text() for name, path in SHIPPED.items()}
    first = "linux-full-walk"
    agent = Snmpsim(
        tmp_path_factory.mktemp("shipped"),
        texts[first].splitlines(),
        community=first,
        more={k: v for k, v in texts.items() if k != first},
    )
    yield agent
    agent.stop()


def _recorded(name: str, oid: str) -> str:
    for line in SHIPPED[name].read_text().splitlines():
        if line.startswith(oid + "|"):
            return line.split("|", 2)[2]
    raise KeyError(oid)


def read_shipped(agent: Snmpsim, community: str, monkeypatch: pytest.MonkeyPatch) -> Reading:
    monkeypatch.setenv("SHIPPED_COMMUNITY", community)
    return read_once(collector(agent.port, {"community": {"env": "SHIPPED_COMMUNITY"}}))


def test_a_recorded_linux_host_reads_as_recorded(
    shipped: Snmpsim, monkeypatch: pytest.MonkeyPatch
) -> None:
    reading = read_shipped(shipped, "linux-full-walk", monkeypatch)
    assert reading.problems == {}
    ports = {s.port: s for s in reading.snapshots}
    assert set(ports) == {"lo", "eth0"}  # ifName (RFC 2863 ifXTable), as recorded
    expected = int(_recorded("linux-full-walk", f"{IF_ENTRY}.10.2"))  # ifInOctets of eth0
    assert ports["eth0"].counters["ifInOctets"] == expected
    assert ports["eth0"].discontinuity_time is not None  # placed by the recorded sysUpTime
    # Recorded ifAdminStatus up(1) and ifLastChange 0: "entered prior to the last
    # re-initialization" (RFC 2863), so no moment is made up for it.
    assert {p: (s.admin_status, s.last_change) for p, s in ports.items()} == {
        "lo": ("up", None), "eth0": ("up", None)}  # fmt: skip


def test_a_recorded_windows_host_reads_with_clean_names(
    shipped: Snmpsim, monkeypatch: pytest.MonkeyPatch
) -> None:
    # This agent has no ifName and ends each ifDescr with a NUL byte, C style.
    reading = read_shipped(shipped, "winxp-full-walk", monkeypatch)
    names = [s.port for s in reading.snapshots]
    assert "MS TCP Loopback interface" in names
    assert all(name.isprintable() for name in names)


def test_an_agent_without_sysuptime_still_reads(
    shipped: Snmpsim, monkeypatch: pytest.MonkeyPatch
) -> None:
    # noSuchObject for sysUpTime (RFC 3416 exception value): the counters still read, but no
    # discontinuity time can be placed without the agent's clock.
    reading = read_shipped(shipped, "multiplex-00000", monkeypatch)
    assert [s.port for s in reading.snapshots] == ["lo0", "gif0", "stf0", "en0", "p2p0"]
    assert all(s.discontinuity_time is None for s in reading.snapshots)
    # Its ifAdminStatus as recorded (RFC 2863: up(1), down(2)); no last change without
    # the agent's clock.
    assert [s.admin_status for s in reading.snapshots] == ["up", "down", "down", "up", "up"]
    assert all(s.last_change is None for s in reading.snapshots)


def test_suspects_over_recorded_hosts_and_a_dead_device_names_the_dead_one(
    shipped: Snmpsim, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    devices = ""
    for name in SHIPPED:
        env = name.upper().replace("-", "_")
        monkeypatch.setenv(env, name)
        devices += (
            f'[[devices]]\nname = "lark-lab-{name}"\nsite = "lab"\ncollector = "snmp"\n'
            f'address = "127.0.0.1"\n[devices.options]\nport = {shipped.port}\n'
            f'community = {{ env = "{env}" }}\n'
        )
    monkeypatch.setenv("DEAD_COMMUNITY", "nobody-home")
    devices += (
        '[[devices]]\nname = "lark-lab-dead"\nsite = "lab"\ncollector = "snmp"\n'
        f'address = "127.0.0.1"\ntimeout_s = 0.3\nretries = 0\n[devices.options]\n'
        f'port = {shipped.port}\ncommunity = {{ env = "DEAD_COMMUNITY" }}\n'
    )
    inventory = tmp_path / "inventory.toml"
    inventory.write_text(devices)
    settings = tmp_path / "config.toml"
    settings.write_text("[chat]\nquick_window_s = 2\n")  # the second poll need not wait long
    runner = CliRunner()
    swept = runner.invoke(
        main, ["suspects", "--inventory", str(inventory), "--config", str(settings)]
    )
    assert swept.exception is None or isinstance(swept.exception, SystemExit)
    assert swept.exit_code == 3, swept.output  # some devices not read
    assert "lark-lab-dead: no answer" in swept.stdout
    assert "No suspects" not in swept.stdout or "not read" in swept.stdout
    reached = runner.invoke(main, ["inventory", "check", "--reach", "--inventory", str(inventory)])
    assert reached.exit_code == 3, reached.output
    for name in SHIPPED:
        assert f"lark-lab-{name}: answers" in reached.stdout


# --- format 1.2: admin state, last change, pause frames, PoE, aggregates, far-end speeds


def test_snmpd_serving_the_tables_of_format_1_2_gives_the_loopback_all_of_them(
    snmpd: Snmpd, community: dict[str, object], tmp_path: Path
) -> None:
    # net-snmp implements IF-MIB itself (ifAdminStatus, ifLastChange of this machine's own
    # interfaces) but none of dot3PauseTable, POWER-ETHERNET-MIB, IEEE8023-LAG-MIB or
    # LLDP-EXT-DOT3-MIB: pass_persist programs serve them (snmpd.conf(5)).
    names = snmpd.walk(f"{IFX_ENTRY}.1")
    lo = next(index for index, name in names.items() if name == "lo")
    other = max(index for index in names if index != lo)
    rem, loc, row = "1.0.8802.1.1.2.1.4.1.1", "1.0.8802.1.1.2.1.3.7.1", "0.1001.1"
    lldp = {
        f"{loc}.2.1001": ("integer", "5"),  # lldpLocPortIdSubtype interfaceName(5): lo
        f"{loc}.3.1001": ("string", "lo"),
        f"{rem}.6.{row}": ("integer", "5"),  # lldpRemPortIdSubtype interfaceName(5)
        f"{rem}.7.{row}": ("string", "ge-0/0/9"),
        f"{rem}.9.{row}": ("string", "lark-east-idf2"),
        # RFC 3636 bits 2 b10baseTFD, 5 b100baseTXFD, 15 b1000baseTFD; bit 0 is the first
        # octet's most significant bit (RFC 2578 section 7.1.4): 0x24 0x01.
        f"{LLDP_XDOT3_REM_ENTRY}.3.{row}": ("octet", "24 01"),
    }
    tables = {
        PAUSE_ENTRY: {
            f"{PAUSE_ENTRY}.3.{lo}": ("counter", "1200"),  # dot3InPauseFrames, Counter32
            f"{PAUSE_ENTRY}.4.{lo}": ("counter", "30"),
            f"{PAUSE_ENTRY}.5.{lo}": ("counter64", "5000000000"),  # past what 32 bits hold
            f"{PAUSE_ENTRY}.6.{lo}": ("counter64", "30"),
        },
        # One PSE group (RFC 3621: 1 on a non-modular device), its port numbered as lo's
        # ifIndex: read with poe_ports = "ifindex".
        "1.3.6.1.2.1.105": {
            f"{PETH_PORT_ENTRY}.6.1.{lo}": ("integer", "3"),  # deliveringPower(3)
            f"{PETH_PORT_ENTRY}.8.1.{lo}": ("counter", "2"),  # pethPsePortMPSAbsentCounter
            f"{PETH_PORT_ENTRY}.10.1.{lo}": ("integer", "5"),  # class4(5)
            f"{PETH_PORT_ENTRY}.12.1.{lo}": ("counter", "1"),  # pethPsePortPowerDeniedCounter
            f"{PETH_MAIN_ENTRY}.2.1": ("gauge", "370"),  # pethMainPsePower, W
            f"{PETH_MAIN_ENTRY}.4.1": ("gauge", "122"),  # pethMainPseConsumptionPower, W
        },
        # lo attached to the aggregator whose ifIndex is `other` (IEEE 802.1AX).
        LAG_PORT_ENTRY: {f"{LAG_PORT_ENTRY}.13.{lo}": ("integer", str(other))},
    }
    agent = Snmpd(tmp_path, lldp=lldp, tables=tables)
    try:
        reading = read_once(collector(agent.port, {**community, "poe_ports": "ifindex"}))
    finally:
        agent.stop()
    admin = snmpd.walk(f"{IF_ENTRY}.7")
    changed = snmpd.walk(f"{IF_ENTRY}.9")
    ports = {s.port: s for s in reading.snapshots}
    for index, name in names.items():
        snap = ports[name]
        # ifAdminStatus up(1), down(2), testing(3) (RFC 2863), as snmpbulkwalk reads it.
        assert snap.admin_status == {"1": "up", "2": "down", "3": "testing"}[admin[index]]
        # ifLastChange 0: the change came before the agent started (RFC 2863): unknown.
        assert (snap.last_change is None) == (changed[index] == "0")
    loopback = ports.pop("lo")
    assert {k: v for k, v in loopback.counters.items() if "Pause" in k} == {
        "dot3InPauseFrames": 1200, "dot3OutPauseFrames": 30,
        "dot3HCInPauseFrames": 5_000_000_000, "dot3HCOutPauseFrames": 30}  # fmt: skip
    assert loopback.counters["pethPsePortMPSAbsentCounter"] == 2
    assert loopback.counters["pethPsePortPowerDeniedCounter"] == 1
    # class4(5) is class 4; the budget left is pethMainPsePower less the consumption.
    assert loopback.poe_status == PoeStatus(
        detection="deliveringPower", power_class=4, budget_left_w=248.0
    )
    assert loopback.poe is True
    assert loopback.aggregate == names[other]  # the aggregator's own ifName
    assert loopback.neighbor == Neighbor(
        device="lark-east-idf2", port="ge-0/0/9", speeds_bps=[10**7, 10**8, 10**9]
    )
    for snap in ports.values():  # every other interface: none of the tables has its row
        assert not any("Pause" in k or k.startswith("peth") for k in snap.counters)
        assert (snap.poe_status, snap.poe, snap.aggregate, snap.neighbor) == (
            None, None, None, None)  # fmt: skip


UPTIME = 8_640_000  # sysUpTime of the recordings: one day, in TimeTicks (1/100 s)
AE1 = 100  # the ifIndex of the recorded aggregate


def v12_walk(fleet: Fleet) -> list[str]:
    """The 48-port switch with the tables of format 1.2, as snmprec lines (tags: 2 INTEGER,
    4x OCTET STRING in hex, 65 Counter32, 66 Gauge32, 67 TimeTicks, 70 Counter64)."""
    walk = recorded_walk(fleet, "sw0001", RECORDED_AT, uptime_ticks=UPTIME)
    lines = [f"{IF_ENTRY}.3.{i}|2|6" for i in range(1, 49)]  # ethernetCsmacd(6)
    admin = dict.fromkeys(range(1, 49), 1) | {5: 2, 6: 3}  # port5 down, port6 testing
    lines += [f"{IF_ENTRY}.7.{i}|2|{value}" for i, value in admin.items()]
    changed = {1: UPTIME - 6000, 2: 0, 3: UPTIME + 50}  # a minute ago; before boot; later
    lines += [f"{IF_ENTRY}.9.{i}|67|{value}" for i, value in changed.items()]
    # ae1: an IEEE 802.1AX aggregate, ifType ieee8023adLag(161) (IANAifType-MIB).
    lines += [f"{IF_ENTRY}.2.{AE1}|4|ae1", f"{IFX_ENTRY}.1.{AE1}|4|ae1",
              f"{IF_ENTRY}.3.{AE1}|2|161", f"{IF_ENTRY}.7.{AE1}|2|1",
              f"{IF_ENTRY}.8.{AE1}|2|1"]  # fmt: skip
    # ifStackTable: ae1 above port47 and port48, active(1); rows with 0 name no layer.
    lines += [f"{IF_STACK_ENTRY}.3.{AE1}.47|2|1", f"{IF_STACK_ENTRY}.3.{AE1}.48|2|1",
              f"{IF_STACK_ENTRY}.3.0.{AE1}|2|1", f"{IF_STACK_ENTRY}.3.47.0|2|1",
              f"{IF_STACK_ENTRY}.3.{AE1}.44|2|2"]  # notInService(2): not a member  # fmt: skip
    # IEEE8023-LAG-MIB: port46 attached to ae1, port45 attached to none (0).
    lines += [f"{LAG_PORT_ENTRY}.13.46|2|{AE1}", f"{LAG_PORT_ENTRY}.13.45|2|0"]
    lines += pause_walk({
        1: {"dot3InPauseFrames": 4_000_000_000, "dot3OutPauseFrames": 7,
            "dot3HCInPauseFrames": 12_000_000_000, "dot3HCOutPauseFrames": 7},
        2: {"dot3InPauseFrames": 0, "dot3OutPauseFrames": 0},
    })  # fmt: skip
    lines += peth_walk(
        [
            PsePort(1, 1, 3, 4, {"pethPsePortMPSAbsentCounter": 0, "pethPsePortShortCounter": 0}),
            PsePort(1, 2, 2, 4),  # searching: the class is not valid (RFC 3621)
            PsePort(1, 3, 4, counters={"pethPsePortOverLoadCounter": 9}),  # fault(4)
            PsePort(1, 4, 6),  # otherFault(6)
            PsePort(1, 5, 1),  # disabled(1)
        ],
        {1: (740, 125)},
    )
    # LLDP: port10's far end (no lldpLocPortTable: its port number is the ifIndex) offers
    # 100BASE-TX full duplex only: bit 5 b100baseTXFD, 0x04 0x00 (RFC 3636).
    lines += lldp_walk([Remote(10, "lark-east-cam4", 5, "eth0")], {})
    lines.append(f"{LLDP_XDOT3_REM_ENTRY}.3.0.10.1|4x|0400")
    return by_oid(walk + lines)


@pytest.fixture(scope="module")
def v12_switch(tmp_path_factory: pytest.TempPathFactory, fleet: Fleet) -> Iterator[Snmpsim]:
    agent = Snmpsim(tmp_path_factory.mktemp("v12"), v12_walk(fleet), community="lark-v12")
    yield agent
    agent.stop()


def read_v12(agent: Snmpsim, monkeypatch: pytest.MonkeyPatch) -> dict[str, Snapshot]:
    monkeypatch.setenv("LARK_V12_COMMUNITY", agent.community)
    reading = read_once(collector(agent.port, {"community": {"env": "LARK_V12_COMMUNITY"}}))
    assert reading.problems == {}
    return {s.port: s for s in reading.snapshots}


def test_admin_status_and_last_change_read_as_rfc_2863_defines_them(
    v12_switch: Snmpsim, monkeypatch: pytest.MonkeyPatch
) -> None:
    ports = read_v12(v12_switch, monkeypatch)
    assert [ports[f"port{i}"].admin_status for i in (4, 5, 6)] == ["up", "down", "testing"]
    # ifLastChange is the sysUpTime of the change: 6000 ticks (60 s) before the sysUpTime
    # read at the poll's time.
    assert ports["port1"].time - ports["port1"].last_change == timedelta(seconds=60)
    assert ports["port2"].last_change is None  # 0: before the agent started (RFC 2863)
    # Later than the sysUpTime read first: the state changed while the poll walked.
    assert ports["port3"].last_change == ports["port3"].time
    assert ports["port4"].last_change is None  # no ifLastChange recorded


def test_pause_frames_come_from_dot3_pause_table_in_both_widths(
    v12_switch: Snmpsim, monkeypatch: pytest.MonkeyPatch
) -> None:
    ports = read_v12(v12_switch, monkeypatch)
    pause = {
        port: {k: v for k, v in s.counters.items() if "Pause" in k} for port, s in ports.items()
    }
    # RFC 3635: dot3In/OutPauseFrames are Counter32, the HC forms Counter64.
    assert pause["port1"] == {
        "dot3InPauseFrames": 4_000_000_000, "dot3OutPauseFrames": 7,
        "dot3HCInPauseFrames": 12_000_000_000, "dot3HCOutPauseFrames": 7}  # fmt: skip
    assert pause["port2"] == {"dot3InPauseFrames": 0, "dot3OutPauseFrames": 0}  # zero, reported
    assert pause["port3"] == {}  # no row: not reported, never zero


def test_pse_ports_are_matched_to_interfaces_and_the_budget_left_is_shared(
    v12_switch: Snmpsim, monkeypatch: pytest.MonkeyPatch
) -> None:
    ports = read_v12(v12_switch, monkeypatch)
    # One group whose port numbers are ifIndexes that the names end with: both readings
    # of RFC 3621's implementation-specific numbering agree (common practice).
    left = 740.0 - 125.0  # pethMainPsePower less pethMainPseConsumptionPower, group 1
    assert {p: ports[p].poe_status for p in ("port1", "port2", "port3", "port4", "port5")} == {
        "port1": PoeStatus(detection="deliveringPower", power_class=3, budget_left_w=left),
        "port2": PoeStatus(detection="searching", budget_left_w=left),  # class not valid
        "port3": PoeStatus(detection="fault", budget_left_w=left),
        "port4": PoeStatus(detection="otherFault", budget_left_w=left),
        "port5": PoeStatus(detection="disabled", budget_left_w=left),
    }
    assert [ports[f"port{i}"].poe for i in range(1, 7)] == [True, False, False, False, False, None]
    assert ports["port3"].counters["pethPsePortOverLoadCounter"] == 9
    assert ports["port1"].counters["pethPsePortShortCounter"] == 0  # reported as zero
    assert not any(k.startswith("peth") for k in ports["port2"].counters)
    assert ports["port6"].poe_status is None  # no PSE row


def test_aggregates_come_from_the_stack_table_and_the_lag_mib(
    v12_switch: Snmpsim, monkeypatch: pytest.MonkeyPatch
) -> None:
    ports = read_v12(v12_switch, monkeypatch)
    members = {port: s.aggregate for port, s in ports.items() if s.aggregate}
    # ifStackTable (RFC 2863): ae1, an ieee8023adLag(161) interface, above port47 and
    # port48; dot3adAggPortAttachedAggID (IEEE8023-LAG-MIB): port46 attached to ae1.
    # notInService rows and rows with a 0 layer name no member.
    assert members == {"port46": "ae1", "port47": "ae1", "port48": "ae1"}
    assert ports["ae1"].aggregate is None


def test_the_far_ends_advertised_speeds_come_from_lldp_ext_dot3(
    v12_switch: Snmpsim, monkeypatch: pytest.MonkeyPatch
) -> None:
    ports = read_v12(v12_switch, monkeypatch)
    # lldpXdot3RemPortAutoNegAdvertisedCap 0x0400: b100baseTXFD alone (RFC 3636).
    assert ports["port10"].neighbor == Neighbor(
        device="lark-east-cam4", port="eth0", speeds_bps=[100_000_000]
    )
