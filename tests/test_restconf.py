"""The RESTCONF collector against a real HTTP(S) server on loopback serving RFC 8343 JSON,
and ieee802-dot1ab-lldp (IEEE 802.1ABcu) where a device has it; for format 1.2 the same
document's admin-status, last-change and higher-layer-if, and IEEE 802.3.2's augmentations
(ieee802-ethernet-interface, ieee802-ethernet-pse, ieee802-ethernet-lldp)."""

from __future__ import annotations

import base64
import ssl
import subprocess
from collections.abc import Iterator
from datetime import UTC, datetime
from pathlib import Path

import pytest

from linktriage.engine.format.counters import COLUMN_INDEX
from linktriage.engine.format.snapshot import Neighbor, PoeStatus
from linktriage.errors import BadAnswerError, CollectorError, DeviceRefusedError, DeviceTimeoutError
from linktriage.network.collectors.base import Target
from linktriage.network.collectors.restconf import RestconfCollector, interfaces_to_snapshots
from linktriage.network.inventory import DeviceEntry, Inventory, problems

from agents.fleet import Fleet
from agents.restconf import RestconfAgent
from helpers import ask_once, read_once


@pytest.fixture(scope="module")
def agent() -> Iterator[RestconfAgent]:
    running = RestconfAgent(Fleet(devices=3, ports=8), slow_s=3.0).start()
    yield running
    running.stop()


def collector(agent: RestconfAgent, device: str, **options: object) -> RestconfCollector:
    settings = {"scheme": "http", "port": agent.port, "root": f"/{device}/restconf", **options}
    return RestconfCollector(Target(device, "127.0.0.1", settings, timeout_s=1.0, retries=1))


def test_a_read_gives_every_interface_with_its_counters(agent: RestconfAgent) -> None:
    before = agent.fleet.read("sw0001")
    reading = read_once(collector(agent, "sw0001"))
    after = agent.fleet.read("sw0001")
    assert [s.port for s in reading.snapshots] == agent.fleet.ports
    assert reading.problems == {}
    column = COLUMN_INDEX["ifHCInOctets"]
    for i, snap in enumerate(reading.snapshots):
        # The counters were read between the two direct reads of the same switch.
        assert (
            int(before.counters[i, column])
            <= snap.counters["ifHCInOctets"]
            <= int(after.counters[i, column])
        )
        assert snap.speed_bps == int(before.state["speed_bps"][i])
        assert "dot3StatsFCSErrors" not in snap.counters  # ietf-interfaces has no FCS count
        assert snap.neighbor is None  # the device has no LLDP module: 404, counters all the same
    assert "/sw0001/restconf/data/ietf-interfaces:interfaces?content=nonconfig" in agent.requests
    assert "/sw0001/restconf/data/ieee802-dot1ab-lldp:lldp?content=nonconfig" in agent.requests


def test_64_bit_counters_arrive_as_strings_and_keep_every_bit() -> None:
    # RFC 7951 section 6.1: uint64 is a JSON string; uint32 a number. Member names may be
    # namespace-qualified (section 4).
    document = {
        "ietf-interfaces:interfaces": {
            "ietf-interfaces:interface": [
                {
                    "name": "eth1/1",
                    "oper-status": "lower-layer-down",
                    "speed": "10000000000",
                    "statistics": {
                        "discontinuity-time": "2026-03-01T06:00:00+01:00",
                        "in-octets": "18446744073709551615",
                        "in-errors": 4294967295,
                    },
                }
            ]
        }
    }
    (snap,), problems_found = interfaces_to_snapshots(document, "sw", datetime.now(UTC))
    assert problems_found == {}
    assert snap.counters == {"ifHCInOctets": 2**64 - 1, "ifInErrors": 2**32 - 1}
    assert snap.oper_status == "lowerLayerDown" and snap.speed_bps == 10**10
    assert snap.discontinuity_time is not None and snap.discontinuity_time.hour == 6


def test_credentials_come_by_reference_and_a_refusal_is_named(
    agent: RestconfAgent, monkeypatch: pytest.MonkeyPatch
) -> None:
    agent.behaviour["sw0002"] = "auth"
    with pytest.raises(DeviceRefusedError, match="sw0002: refused the credentials \\(401\\)"):
        read_once(collector(agent, "sw0002"))
    monkeypatch.setenv("LARK_RESTCONF_PASSWORD", "s3cret")
    reading = read_once(
        collector(agent, "sw0002", username="netops", password={"env": "LARK_RESTCONF_PASSWORD"})
    )
    assert len(reading.snapshots) == 8
    inline = DeviceEntry(
        name="sw0002", site="s", collector="restconf", address="x", options={"password": "s3cret"}
    )
    inventory = Inventory(devices=[inline])
    assert "by reference only" in problems(inventory)["sw0002"]


def test_a_server_error_is_retried_then_named(agent: RestconfAgent) -> None:
    agent.behaviour["sw0003"] = "error"
    count = len(agent.requests)
    with pytest.raises(CollectorError, match=r"answered 500 for .*\(2 tries\)"):
        read_once(collector(agent, "sw0003"))
    asked = [path for path in agent.requests[count:] if "ietf-interfaces" in path]
    assert len(asked) == 2


def test_an_answer_slower_than_the_timeout_is_a_timeout(agent: RestconfAgent) -> None:
    agent.behaviour["sw0003"] = "slow"
    with pytest.raises(DeviceTimeoutError, match=r"no answer to GET .* within 1 s \(2 tries\)"):
        read_once(collector(agent, "sw0003"))


def test_garbage_is_a_bad_answer(agent: RestconfAgent) -> None:
    agent.behaviour["sw0003"] = "garbage"
    with pytest.raises(BadAnswerError, match="not JSON"):
        read_once(collector(agent, "sw0003"))


def test_a_malformed_counter_costs_only_its_port(agent: RestconfAgent) -> None:
    agent.behaviour["sw0003"] = "bad-types"
    reading = read_once(collector(agent, "sw0003"))
    assert "port2" not in [s.port for s in reading.snapshots]
    assert "'lots' is not a counter" in reading.problems["port2"]
    assert len(reading.snapshots) == 7
    agent.behaviour.pop("sw0003")


def remote(system: str, subtype: str, port_id: str, desc: str | None = None) -> dict[str, object]:
    """One remote-systems-data entry of ieee802-dot1ab-lldp (leaves as the module names them;
    port-id-subtype is ieee802-types' port-id-subtype-type enumeration)."""
    entry: dict[str, object] = {"time-mark": 0, "remote-index": 1, "system-name": system,
                                "port-id-subtype": subtype, "port-id": port_id}  # fmt: skip
    return entry | ({} if desc is None else {"port-desc": desc})


#: The nearest bridge and nearest customer bridge group addresses (IEEE 802.1AB-2016 7.1, from
#: memory): a port may run LLDP for each, and then is listed once for each.
NEAREST_BRIDGE, NEAREST_CUSTOMER_BRIDGE = "01-80-C2-00-00-0E", "01-80-C2-00-00-00"


def test_each_port_gets_its_neighbor_from_the_ieee_lldp_module() -> None:
    running = RestconfAgent(Fleet(devices=1, ports=8)).start()
    core = remote("lark-core1", "interface-name", "xe-0/0/1")
    running.lldp["sw0001"] = {
        "ieee802-dot1ab-lldp:lldp": {
            "port": [
                {"name": "port1", "dest-mac-address": NEAREST_BRIDGE,
                 "remote-systems-data": [core]},
                {"name": "port1", "dest-mac-address": NEAREST_CUSTOMER_BRIDGE,
                 "remote-systems-data": [core]},
                # A far end naming its port by MAC address: port-desc names it (SNAPSHOT-FORMAT).
                {"name": "port2", "dest-mac-address": NEAREST_BRIDGE, "remote-systems-data": [
                    remote("lark-lab-ap3", "mac-address", "02-00-5E-10-00-03", "eth0")]},
                {"name": "port3", "dest-mac-address": NEAREST_BRIDGE, "remote-systems-data": [
                    remote("lark-lab-cam1", "mac-address", "02-00-5E-10-00-10")]},
                {"name": "port4", "dest-mac-address": NEAREST_BRIDGE, "remote-systems-data": [
                    remote("lark-lab-phone4", "interface-name", "lan"),
                    remote("lark-lab-pc9", "interface-name", "eno1")]},
                {"name": "port5", "dest-mac-address": NEAREST_BRIDGE},  # nothing heard
            ]
        }
    }  # fmt: skip
    try:
        reading = read_once(collector(running, "sw0001"))
    finally:
        running.stop()
    assert len(reading.snapshots) == 8 and reading.problems == {}
    assert {s.port: s.neighbor for s in reading.snapshots if s.neighbor} == {
        "port1": Neighbor(device="lark-core1", port="xe-0/0/1"),
        "port2": Neighbor(device="lark-lab-ap3", port="eth0"),
    }  # port3: a MAC and no description; port4: two far ends; neither names one


@pytest.mark.parametrize(("every_s", "asked"), [(None, 1), (0, 3)])
def test_neighbors_are_asked_for_again_only_when_due(every_s: float | None, asked: int) -> None:
    # LLDP follows the cabling: by default a collector keeps a device's neighbors 300 s.
    running = RestconfAgent(Fleet(devices=1, ports=2)).start()
    core = remote("lark-core1", "interface-name", "xe-0/0/1")
    port1 = {"name": "port1", "dest-mac-address": NEAREST_BRIDGE, "remote-systems-data": [core]}
    running.lldp["sw0001"] = {"ieee802-dot1ab-lldp:lldp": {"port": [port1]}}
    options = {} if every_s is None else {"neighbors_every_s": every_s}

    async def three_reads(c: RestconfCollector) -> list[Neighbor | None]:
        return [(await c.read(["port1"])).snapshots[0].neighbor for _ in range(3)]

    try:
        seen = ask_once(collector(running, "sw0001", **options), three_reads)
    finally:
        running.stop()
    assert seen == [Neighbor(device="lark-core1", port="xe-0/0/1")] * 3  # kept in between
    assert sum("ieee802-dot1ab-lldp" in path for path in running.requests) == asked


def test_an_unknown_resource_is_a_bad_answer(agent: RestconfAgent) -> None:
    with pytest.raises(BadAnswerError, match="answered 404"):
        read_once(collector(agent, "sw9999"))


@pytest.fixture(scope="module")
def tls_agent(tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[RestconfAgent, Path]]:
    folder = tmp_path_factory.mktemp("tls")
    cert, key = folder / "cert.pem", folder / "key.pem"
    subprocess.run(
        ["openssl", "req", "-x509", "-newkey", "rsa:2048", "-nodes", "-days", "1",
         "-subj", "/CN=127.0.0.1", "-addext", "subjectAltName=IP:127.0.0.1",
         "-keyout", str(key), "-out", str(cert)],
        check=True, capture_output=True,
    )  # fmt: skip
    running = RestconfAgent(Fleet(devices=1, ports=2)).start()
    assert running._server is not None
    context = ssl.SSLContext(ssl.PROTOCOL_TLS_SERVER)
    context.load_cert_chain(cert, key)
    running._server.socket = context.wrap_socket(running._server.socket, server_side=True)
    yield running, cert
    running.stop()


def test_tls_certificates_are_verified_unless_told_otherwise(
    tls_agent: tuple[RestconfAgent, Path],
) -> None:
    agent, cert = tls_agent
    https = {"scheme": "https"}
    with pytest.raises(CollectorError, match=r"certificate verify failed"):
        read_once(collector(agent, "sw0001", **https))
    assert len(read_once(collector(agent, "sw0001", **https, ca_file=str(cert))).snapshots) == 2
    assert len(read_once(collector(agent, "sw0001", **https, verify_tls=False)).snapshots) == 2


ETHERNET = "ieee802-ethernet-interface:ethernet"  # IEEE 802.3.2 augments ietf-interfaces
PSE = "ieee802-ethernet-pse:pse"  # and augments that container in turn


def test_the_leaves_of_format_1_2_come_from_ietf_interfaces_and_ieee_802_3_2() -> None:
    running = RestconfAgent(Fleet(devices=1, ports=8)).start()
    running.more["sw0001"] = {
        "port1": {
            "admin-status": "up",  # RFC 8343, ifAdminStatus
            "last-change": "2026-03-02T07:58:30+01:00",  # RFC 8343, ifLastChange
            "higher-layer-if": ["ae1"],  # RFC 8343, ifStackTable
            ETHERNET: {
                "duplex": "full",  # IEEE 802.3 30.3.1.1.32 aDuplexStatus
                # counter64 as JSON strings (RFC 7951 section 6.1); member names qualified
                # where the module changes (section 4).
                "flow-control": {"pause": {"statistics": {
                    "in-frames-pause": "9000000000", "out-frames-pause": "12"}}},
                PSE: {"multi-pair": {
                    "detection-status": "deliveringPower",
                    "classifications": "class3",
                    "actual-power": "6480.5000",  # decimal64 milliwatts: a JSON string
                    "statistics": {"mps-absent": "3", "overload": str(2**32 + 5)},
                }},
            },
        },
        "port2": {"admin-status": "down", "higher-layer-if": ["ae1", "port2.10"]},
        "port3": {"admin-status": "testing", ETHERNET: {PSE: {"multi-pair": {
            "detection-status": "fault", "classifications": "class2"}}}},
        "ae1": {"type": "iana-if-type:ieee8023adLag", "oper-status": "up", "admin-status": "up"},
    }  # fmt: skip
    cap = base64.b64encode(bytes([0x24, 0x01])).decode()  # RFC 3636 bits 2, 5 and 15
    running.lldp["sw0001"] = {"ieee802-dot1ab-lldp:lldp": {"port": [{
        "name": "port4", "dest-mac-address": NEAREST_BRIDGE, "remote-systems-data": [
            remote("lark-east-ap7", "interface-name", "eth0")
            | {"ieee802-ethernet-lldp:auto-negotiation-cap": cap}]}]}}  # fmt: skip
    try:
        reading = read_once(collector(running, "sw0001"))
    finally:
        running.stop()
    assert reading.problems == {}
    ports = {s.port: s for s in reading.snapshots}
    assert [ports[p].admin_status for p in ("port1", "port2", "port3", "port4")] == [
        "up", "down", "testing", None]  # fmt: skip
    assert ports["port1"].last_change == datetime(2026, 3, 2, 6, 58, 30, tzinfo=UTC)
    # An ieee8023adLag interface above a port is its aggregate; port2.10 is not one.
    assert {p: s.aggregate for p, s in ports.items() if s.aggregate} == {
        "port1": "ae1", "port2": "ae1"}  # fmt: skip
    one = ports["port1"]
    # in-frames-pause is aPAUSEMACCtrlFramesReceived (IEEE 802.3 30.3.4.3), which RFC 3635's
    # dot3HCInPauseFrames counts too.
    assert one.counters["dot3HCInPauseFrames"] == 9_000_000_000
    assert one.counters["dot3HCOutPauseFrames"] == 12
    # The PSE counters mirror RFC 3621's Counter32 objects: their low 32 bits.
    assert one.counters["pethPsePortMPSAbsentCounter"] == 3
    assert one.counters["pethPsePortOverLoadCounter"] == 5
    assert one.duplex == "full"
    assert one.poe_status == PoeStatus(detection="deliveringPower", power_class=3, power_w=6.4805)
    assert one.poe is True
    # The class applies only while delivering power (the module's `when`, as RFC 3621).
    assert ports["port3"].poe_status == PoeStatus(detection="fault")
    assert ports["port2"].poe_status is None and ports["port2"].poe is None
    assert ports["port4"].neighbor == Neighbor(
        device="lark-east-ap7", port="eth0", speeds_bps=[10**7, 10**8, 10**9]
    )
    assert not any("Pause" in k or k.startswith("peth") for k in ports["port5"].counters)
