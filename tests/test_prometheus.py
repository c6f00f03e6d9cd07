"""The Prometheus collector against Debian's Prometheus on loopback, scraping an exporter of
the simulated fleet in the SNMP exporter's naming: what the collector reads back is what
was scraped, to the octet, at the time Prometheus stamped the scrape; the far ends one
switch publishes from LLDP-MIB; and the objects of format 1.2 another publishes (admin
status, last change, Power over Ethernet, aggregates, the far end's advertised speeds)."""

from __future__ import annotations

import itertools
import time
from collections.abc import Iterator
from datetime import timedelta
from pathlib import Path
from typing import Any

import pytest

from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.format.counters import COLUMNS
from linktriage.engine.format.snapshot import Neighbor, PoeStatus, Snapshot, iter_snapshots
from linktriage.errors import BadAnswerError, CollectorError, InputError
from linktriage.network.collectors.base import Reading, Target
from linktriage.network.collectors.prometheus import PrometheusCollector, promql_string
from linktriage.network.inventory import Defaults, DeviceEntry, Inventory
from linktriage.network.inventory_network import InventoryNetwork
from linktriage.render.replies import DiagnosisReply
from linktriage.settings import ChatSettings, Settings
from linktriage.store import Store

from agents.fleet import Fleet
from agents.prometheus import UPTIME_TICKS_AT_START, CannedApi, Exporter, Prometheus, Served
from helpers import ask_once, read_once

DEVICES = ["sw0001", "sw0002", "sw0003"]
V12 = "sw0004"  # the switch that publishes the tables of format 1.2


def lldp_row(port_number: int, **labels: str) -> str:
    """The labels of one lldpRemTable row: its indexes (LLDP-MIB lldpRemEntry INDEX), then
    the value label an info series carries."""
    row = {"lldpRemIndex": "1", "lldpRemLocalPortNum": str(port_number), "lldpRemTimeMark": "0"}
    return "{" + ",".join(f'{k}="{v}"' for k, v in sorted((row | labels).items())) + "}"


#: What sw0002 publishes through an SNMP exporter module walking LLDP-MIB's lldpRemTable and
#: lldpLocPortTable, in the exporter's own form (snmp_exporter collector/collector.go: a
#: string object is a series of value 1 with the string in a label named as the metric;
#: lldpRemPortId decoded by lldpRemPortIdSubtype, a MAC address written 02:00:5e:...; the
#: subtype a gauge). Its local port numbers are 100 above the ifIndex, so lldpLocPortId
#: tells which port each is; number 4 has no lldpLocPortTable row and is taken for ifIndex 4.
LLDP_SERIES = f"""\
# TYPE lldpLocPortId gauge
lldpLocPortId{{lldpLocPortId="port1",lldpLocPortNum="101"}} 1
lldpLocPortId{{lldpLocPortId="port2",lldpLocPortNum="102"}} 1
# TYPE lldpRemSysName gauge
lldpRemSysName{lldp_row(101, lldpRemSysName="lark-core1")} 1
lldpRemSysName{lldp_row(102, lldpRemSysName="lark-lab-ap3")} 1
lldpRemSysName{lldp_row(4, lldpRemSysName="lark-lab-printer2")} 1
# TYPE lldpRemPortIdSubtype gauge
lldpRemPortIdSubtype{lldp_row(101)} 5
lldpRemPortIdSubtype{lldp_row(102)} 3
lldpRemPortIdSubtype{lldp_row(4)} 5
# TYPE lldpRemPortId gauge
lldpRemPortId{lldp_row(101, lldpRemPortId="xe-0/0/1")} 1
lldpRemPortId{lldp_row(102, lldpRemPortId="02:00:5e:10:00:03")} 1
lldpRemPortId{lldp_row(4, lldpRemPortId="lan0")} 1
# TYPE lldpRemPortDesc gauge
lldpRemPortDesc{lldp_row(102, lldpRemPortDesc="eth0")} 1
"""


def v12_series() -> str:
    """What sw0004 publishes through SNMP exporter modules walking the tables of format
    1.2, each series named as its MIB object with the object's indexes as labels (the
    exporter's naming; snmp_exporter collector/collector.go: TimeTicks as the raw ticks, an
    OCTET STRING as 0x and hex, an EnumAsInfo override as a _info series)."""

    def port(n: int, name: str | None = None) -> str:
        name = name or f"port{n}"
        return f'{{ifDescr="{name}",ifIndex="{n}",ifName="{name}"}}'

    def pse(n: int) -> str:
        return f'{{pethPsePortGroupIndex="1",pethPsePortIndex="{n}"}}'

    cap = "0x2401"  # RFC 3636 bits 2, 5, 15: 10BASE-T, 100BASE-TX, 1000BASE-T full duplex
    return f"""\
# TYPE ifAdminStatus gauge
ifAdminStatus{port(1)} 1
ifAdminStatus{port(2)} 2
# TYPE ifLastChange gauge
ifLastChange{port(1)} {UPTIME_TICKS_AT_START - 6000}
ifLastChange{port(2)} 0
# TYPE ifOperStatus gauge
ifOperStatus{port(100, "ae1")} 1
# TYPE dot3HCInPauseFrames counter
dot3HCInPauseFrames{port(1)} 12000000000
# TYPE dot3InPauseFrames counter
dot3InPauseFrames{port(1)} {12_000_000_000 % 2**32}
# TYPE ifType_info gauge
ifType_info{{ifDescr="ae1",ifIndex="100",ifName="ae1",ifType="ieee8023adLag"}} 1
# TYPE ifStackStatus gauge
ifStackStatus{{ifStackHigherLayer="100",ifStackLowerLayer="7"}} 1
ifStackStatus{{ifStackHigherLayer="100",ifStackLowerLayer="8"}} 1
# TYPE dot3adAggPortAttachedAggID gauge
dot3adAggPortAttachedAggID{{dot3adAggPortIndex="6"}} 100
# TYPE pethPsePortDetectionStatus gauge
pethPsePortDetectionStatus{pse(1)} 3
pethPsePortDetectionStatus{pse(2)} 4
# TYPE pethPsePortPowerClassifications gauge
pethPsePortPowerClassifications{pse(1)} 5
# TYPE pethPsePortOverLoadCounter counter
pethPsePortOverLoadCounter{pse(1)} 0
pethPsePortOverLoadCounter{pse(2)} 17
# TYPE pethMainPsePower gauge
pethMainPsePower{{pethMainPseGroupIndex="1"}} 370
# TYPE pethMainPseConsumptionPower gauge
pethMainPseConsumptionPower{{pethMainPseGroupIndex="1"}} 61
# TYPE lldpRemSysName gauge
lldpRemSysName{lldp_row(3, lldpRemSysName="lark-east-ap7")} 1
# TYPE lldpRemPortIdSubtype gauge
lldpRemPortIdSubtype{lldp_row(3)} 5
# TYPE lldpRemPortId gauge
lldpRemPortId{lldp_row(3, lldpRemPortId="eth0")} 1
# TYPE lldpXdot3RemPortAutoNegAdvertisedCap gauge
lldpXdot3RemPortAutoNegAdvertisedCap{lldp_row(3, lldpXdot3RemPortAutoNegAdvertisedCap=cap)} 1
"""


@pytest.fixture(scope="module")
def exporter() -> Iterator[Exporter]:
    served = Exporter(
        Fleet(len(DEVICES) + 1, 8, seed=23),
        lldp={"sw0002": LLDP_SERIES},
        more={V12: v12_series()},
        # Its PSE counters carry their own indexes, not ifName; its pause counters are the
        # ones its own series give.
        skip={V12: ("peth", "dot3InPause", "dot3OutPause", "dot3HCInPause", "dot3HCOutPause")},
    )
    yield served
    served.close()


@pytest.fixture(scope="module")
def prometheus(
    tmp_path_factory: pytest.TempPathFactory, exporter: Exporter
) -> Iterator[Prometheus]:
    server = Prometheus(tmp_path_factory.mktemp("prometheus"), exporter, [*DEVICES, V12])
    for device in [*DEVICES, V12]:
        server.wait_for_scrapes(device, 4)
    yield server
    server.stop()


@pytest.fixture
def api() -> Iterator[CannedApi]:
    canned = CannedApi()
    yield canned
    canned.close()


def collector(server: str, device: str = "sw0001", **options: Any) -> PrometheusCollector:
    """A collector of one device of the scrape job, as an inventory entry would build it."""
    settings = {"server": server, "matchers": {"job": "snmp"}, **options}
    return PrometheusCollector(Target(device, None, settings, timeout_s=2.0, retries=1))


def history(c: PrometheusCollector, start: float, end: float) -> Reading:
    return ask_once(c, lambda c: c.history(None, start, end))


def assert_is_what_was_scraped(snap: Snapshot, scrape: Served, row: int) -> None:
    table = scrape.table
    expected = {
        column.name: int(table.counters[row, i]) % 2**column.bits
        for i, column in enumerate(COLUMNS)
        if table.present[row, i]
    }
    assert snap.counters == expected
    assert snap.speed_bps == int(table.state["speed_bps"][row]) // 1_000_000 * 1_000_000
    assert snap.oper_status == ("up" if table.oper_status[row] == "up" else "down")
    assert snap.mtu == 1500


def test_a_read_gives_every_ports_newest_scrape_to_the_octet(
    prometheus: Prometheus, exporter: Exporter
) -> None:
    reading = read_once(collector(prometheus.url))
    assert reading.problems == {}
    assert sorted(s.port for s in reading.snapshots) == sorted(exporter.fleet.ports)
    stamped = {s.time for s in reading.snapshots}
    assert len(stamped) == 1  # one scrape, one time for every port
    at = stamped.pop().timestamp()
    assert time.time() - at < 3  # scraped every second
    scrape = exporter.scrape_near("sw0001", at)
    assert abs(scrape.at - at) < 0.5  # Prometheus stamps the start of its scrape
    for snap in reading.snapshots:
        assert_is_what_was_scraped(snap, scrape, exporter.fleet.ports.index(snap.port))
        # ifCounterDiscontinuityTime 0: since the agent started, sysUpTime ago (RFC 2863).
        booted = scrape.at - scrape.uptime_ticks / 100
        assert snap.discontinuity_time is not None
        assert abs(snap.discontinuity_time.timestamp() - booted) < 0.5
        assert snap.neighbor is None  # sw0001 publishes no LLDP series


def test_the_far_ends_a_switch_publishes_from_lldp_mib_land_on_its_ports(
    prometheus: Prometheus,
) -> None:
    reading = read_once(collector(prometheus.url, "sw0002"))
    assert reading.problems == {} and len(reading.snapshots) == 8
    assert {s.port: s.neighbor for s in reading.snapshots if s.neighbor} == {
        "port1": Neighbor(device="lark-core1", port="xe-0/0/1"),  # interfaceName(5)
        # A far end naming its port by MAC address: lldpRemPortDesc names it (SNAPSHOT-FORMAT).
        "port2": Neighbor(device="lark-lab-ap3", port="eth0"),
        "port4": Neighbor(device="lark-lab-printer2", port="lan0"),
    }


def test_the_tables_of_format_1_2_a_switch_publishes_land_on_its_ports(
    prometheus: Prometheus, exporter: Exporter
) -> None:
    reading = read_once(collector(prometheus.url, V12))
    assert reading.problems == {}
    ports = {s.port: s for s in reading.snapshots}
    assert sorted(ports) == sorted([*exporter.fleet.ports, "ae1"])
    # ifAdminStatus (RFC 2863): up(1), down(2); unpublished: unknown.
    assert [ports[p].admin_status for p in ("port1", "port2", "port3")] == ["up", "down", None]
    # ifLastChange is the sysUpTime of the change: placed with the sysUpTime sample of the
    # same scrape, so the change is (uptime - ifLastChange) ticks before the scrape.
    one = ports["port1"]
    scrape = exporter.scrape_near(V12, one.time.timestamp())
    age = timedelta(seconds=(scrape.uptime_ticks - (UPTIME_TICKS_AT_START - 6000)) / 100)
    assert one.last_change == one.time - age
    assert ports["port2"].last_change is None  # 0: before the agent started (RFC 2863)
    # ifStackTable under ae1 (ieee8023adLag, published as ifType_info by an EnumAsInfo
    # override), and dot3adAggPortAttachedAggID (IEEE8023-LAG-MIB) for port6.
    assert {p: s.aggregate for p, s in ports.items() if s.aggregate} == {
        "port6": "ae1", "port7": "ae1", "port8": "ae1"}  # fmt: skip
    # One PSE group whose port numbers are ifIndexes the names end with (common practice
    # for RFC 3621's implementation-specific numbering); class4(5) is class 4, valid only
    # while delivering power; the budget left is pethMainPsePower less consumption.
    assert ports["port1"].poe_status == PoeStatus(
        detection="deliveringPower", power_class=4, budget_left_w=309.0
    )
    assert ports["port2"].poe_status == PoeStatus(detection="fault", budget_left_w=309.0)
    assert [ports[p].poe for p in ("port1", "port2", "port3")] == [True, False, None]
    assert ports["port2"].counters["pethPsePortOverLoadCounter"] == 17
    assert not any(name.startswith("peth") for name in ports["port3"].counters)
    # LLDP-EXT-DOT3-MIB's advertised capability, 0x2401 (RFC 3636 bits 2, 5 and 15).
    assert ports["port3"].neighbor == Neighbor(
        device="lark-east-ap7", port="eth0", speeds_bps=[10**7, 10**8, 10**9]
    )
    # dot3PauseTable's counters, named as RFC 3635 names them, by the port's ifName (a
    # module looking ifName up by dot3StatsIndex, which is the ifIndex): the Counter32 form
    # holds the low 32 bits of the Counter64 one (RFC 2863 section 3.1.6).
    pause = {k: v for k, v in one.counters.items() if "Pause" in k}
    assert pause == {"dot3HCInPauseFrames": 12 * 10**9, "dot3InPauseFrames": 12 * 10**9 % 2**32}
    assert not any("Pause" in name for name in ports["port2"].counters)


def test_a_stacked_switchs_pse_ports_are_matched_by_name_and_an_iftype_gauge_counts(
    api: CannedApi,
) -> None:
    # Two PSE groups (boxes of a stack, RFC 3621): a port index is the number a name ends
    # with, the group the number it begins with (common practice). Without an EnumAsInfo
    # override, ifType is a plain gauge of its IANAifType number, ieee8023adLag(161).
    def port(name: str, index: int, metric: str, value: str) -> dict[str, Any]:
        labels = {"__name__": metric, "instance": "sw0001", "job": "snmp", "ifName": name,
                  "ifIndex": str(index)}  # fmt: skip
        return {"metric": labels, "values": [[100.0, value]]}

    def table(metric: str, value: str, **labels: str) -> dict[str, Any]:
        own = {"__name__": metric, "instance": "sw0001", "job": "snmp", **labels}
        return {"metric": own, "values": [[100.0, value]]}

    api.body = matrix(
        port("Gi1/0/3", 1003, "ifOperStatus", "1"),
        port("Gi2/0/3", 2003, "ifOperStatus", "1"),
        port("Po1", 5001, "ifType", "161"),
        port("Po1", 5001, "ifOperStatus", "1"),
        table("pethPsePortDetectionStatus", "3", pethPsePortGroupIndex="2",
              pethPsePortIndex="3"),
        table("pethPsePortDetectionStatus", "2", pethPsePortGroupIndex="1",
              pethPsePortIndex="3"),
        table("ifStackStatus", "1", ifStackHigherLayer="5001", ifStackLowerLayer="2003"),
        table("ifStackStatus", "NaN", ifStackHigherLayer="5001", ifStackLowerLayer="1003"),
    )  # fmt: skip
    reading = read_once(collector(api.url))
    assert reading.problems == {}
    ports = {s.port: s for s in reading.snapshots}
    assert ports["Gi2/0/3"].poe_status == PoeStatus(detection="deliveringPower")
    assert ports["Gi1/0/3"].poe_status == PoeStatus(detection="searching")
    # A stack row whose status is not a number names no member; the other does.
    assert {p: s.aggregate for p, s in ports.items()} == {
        "Gi1/0/3": None, "Gi2/0/3": "Po1", "Po1": None}  # fmt: skip


def inventory_of(server: str, devices: list[str], **options: Any) -> InventoryNetwork:
    entries = [
        DeviceEntry(
            name=device,
            site="east",
            collector="prometheus",
            options={"server": server, "matchers": {"job": "snmp"}, **options},
        )
        for device in devices
    ]
    return InventoryNetwork(Inventory(defaults=Defaults(timeout_s=2.0), devices=entries))


def test_devices_read_together_each_get_their_own_scrape_to_the_octet(
    prometheus: Prometheus, exporter: Exporter
) -> None:
    network = inventory_of(prometheus.url, DEVICES)
    try:
        gathered = network.poll_many(dict.fromkeys(DEVICES))
    finally:
        network.close()
    assert gathered.failed == {} and sorted(gathered.tables) == DEVICES
    for device, table in gathered.tables.items():
        assert set(table.device.tolist()) == {device}
        assert sorted(table.port.tolist()) == sorted(exporter.fleet.ports)
        at = float(table.time[0])
        scrape = exporter.scrape_near(device, at)
        assert abs(scrape.at - at) < 0.5
        for snap in iter_snapshots(table):
            assert_is_what_was_scraped(snap, scrape, exporter.fleet.ports.index(snap.port))


def test_devices_read_together_share_one_query_of_two_scrape_intervals(api: CannedApi) -> None:
    api.body = matrix(
        *(
            {**series("ifHCInOctets", "port1", (100.0, str(n))), "metric": {
                "__name__": "ifHCInOctets", "instance": device, "ifName": "port1"}}
            for n, device in enumerate(DEVICES)
        )
    )  # fmt: skip
    network = inventory_of(api.url, DEVICES, scrape_interval_s=30)
    try:
        gathered = network.poll_many(dict.fromkeys(DEVICES))
    finally:
        network.close()
    (sent,) = api.queries  # one query for the three
    query = sent["query"][0]
    assert query.endswith("}[60000ms]")  # two scrape intervals back, no more
    assert 'instance=~"sw0001|sw0002|sw0003"' in query
    assert {d: int(t.counters[0, 0]) for d, t in gathered.tables.items()} == {
        device: n for n, device in enumerate(DEVICES)
    }


def test_a_failed_shared_query_fails_each_device_by_its_own_name(api: CannedApi) -> None:
    api.status = 401
    network = inventory_of(api.url, DEVICES)
    try:
        gathered = network.poll_many(dict.fromkeys(DEVICES))
    finally:
        network.close()
    assert sorted(gathered.failed) == DEVICES
    assert all("refused the credentials" in why for why in gathered.failed.values())
    assert len(api.queries) == 1


def test_history_gives_every_scrape_of_the_window_at_the_time_it_was_scraped(
    prometheus: Prometheus, exporter: Exporter
) -> None:
    end = time.time()
    reading = history(collector(prometheus.url, "sw0002"), end - 3.5, end)
    times = sorted({s.time.timestamp() for s in reading.snapshots})
    assert len(times) >= 3
    gaps = [b - a for a, b in itertools.pairwise(times)]
    assert all(0.5 < gap < 1.5 for gap in gaps)  # scrape_interval 1s
    assert len(reading.snapshots) == len(times) * len(exporter.fleet.ports)
    for snap in reading.snapshots:
        scrape = exporter.scrape_near("sw0002", snap.time.timestamp())
        assert abs(scrape.at - snap.time.timestamp()) < 0.5
        assert_is_what_was_scraped(snap, scrape, exporter.fleet.ports.index(snap.port))


def test_ports_are_the_ifname_labels_of_the_device(
    prometheus: Prometheus, exporter: Exporter
) -> None:
    c = collector(prometheus.url)
    assert ask_once(c, lambda c: c.ports()) == sorted(exporter.fleet.ports)
    assert [s.port for s in read_once(collector(prometheus.url), ["port3"]).snapshots] == ["port3"]


def test_a_device_prometheus_can_no_longer_scrape_is_named_not_read_stale(
    prometheus: Prometheus, exporter: Exporter
) -> None:
    exporter.failing.add("sw0003")
    try:
        prometheus.wait_for_scrapes("sw0003", 1, up=0)
        with pytest.raises(CollectorError, match="sw0003: Prometheus has failed to scrape it"):
            read_once(collector(prometheus.url, "sw0003"))
    finally:
        exporter.failing.discard("sw0003")


def test_label_values_are_escaped_so_prometheus_parses_any_name(prometheus: Prometheus) -> None:
    # A value with a quote and a backslash parses (no 400): there are simply no such series.
    odd = 'sw"0001\\'
    with pytest.raises(BadAnswerError, match="holds no interface series with instance="):
        read_once(collector(prometheus.url, instance=odd))
    assert promql_string(odd) == '"sw\\"0001\\\\"'  # Go string escaping, as PromQL uses


def _asking(
    prometheus: Prometheus, tmp_path: Path, model: Model, quick_window_s: float
) -> tuple[DiagnosisReply, list[float]]:
    entry = DeviceEntry(
        name="sw0001",
        site="east",
        collector="prometheus",
        options={"server": prometheus.url, "matchers": {"job": "snmp"}},
    )
    network = InventoryNetwork(Inventory(defaults=Defaults(), devices=[entry]))
    slept: list[float] = []

    def sleep(seconds: float) -> None:
        slept.append(seconds)
        time.sleep(seconds)

    triage = Triage(
        network,
        Store(f"sqlite:///{tmp_path / 's.sqlite'}"),
        model,
        Settings(chat=ChatSettings(quick_window_s=quick_window_s)),
        sleep=sleep,
    )
    try:
        reply = triage.handle("sw0001 port2")
    finally:
        network.close()
    assert isinstance(reply, DiagnosisReply)
    assert reply.record["port"] == "port2"
    return reply, slept


def test_asking_about_a_port_reads_its_window_from_prometheus_without_waiting(
    prometheus: Prometheus, tmp_path: Path, model: Model
) -> None:
    prometheus.wait_for_scrapes("sw0001", 3)
    reply, slept = _asking(prometheus, tmp_path, model, quick_window_s=2.0)
    assert slept == []  # the window came from Prometheus's own history
    assert reply.record["window_s"] >= 2.0


def test_a_history_shorter_than_the_quick_window_is_waited_out_not_answered(
    prometheus: Prometheus, tmp_path: Path, model: Model
) -> None:
    # Issue 8.6: right after start Prometheus holds seconds of counters; answering on them
    # would judge a port on a few frames.
    held = time.time() - prometheus.started
    reply, slept = _asking(prometheus, tmp_path, model, quick_window_s=held + 4.0)
    assert len(slept) == 1 and 0 < slept[0] <= held + 4.0
    assert reply.record["window_s"] >= held + 4.0 - 1.5  # within a scrape of the wait


# --- answers a real server rarely gives, from a canned one


def series(metric: str, port: str | None, *values: tuple[float, str]) -> dict[str, Any]:
    labels = {"__name__": metric, "instance": "sw0001", "job": "snmp"}
    if port is not None:
        labels["ifName"] = port
    return {"metric": labels, "values": [[t, v] for t, v in values]}


def matrix(*result: dict[str, Any]) -> dict[str, Any]:
    return {"status": "success", "data": {"resultType": "matrix", "result": list(result)}}


def test_lldp_labels_looked_up_onto_the_remote_series_are_read_too(api: CannedApi) -> None:
    # A module with `lookups: [{source_indexes: [lldpRemLocalPortNum], lookup: lldpLocPortId}]`
    # puts the local port id on each remote series; without lldpRemPortIdSubtype walked, the
    # exporter can only write the id's octets in hex, 0x6c616e30 (snmp_exporter issue #584).
    def remote(name: str, value: str, sample: str = "1") -> dict[str, Any]:
        """A remote-table series: a string object's value in its label, a gauge's (the
        subtype's) in its sample."""
        labels = {
            "__name__": name,
            "instance": "sw0001",
            "job": "snmp",
            "lldpRemIndex": "1",
            "lldpRemLocalPortNum": "7",
            "lldpRemTimeMark": "0",
            "lldpLocPortId": "port3",
        }
        own = {name: value} if value else {}
        return {"metric": labels | own, "values": [[100.0, sample]]}

    port3 = series("ifHCInOctets", "port3", (100.0, "5"))
    port3["metric"] |= {"ifIndex": "3", "ifDescr": "port3"}
    api.body = matrix(
        port3, remote("lldpRemSysName", "lark-lab-sw2"), remote("lldpRemPortId", "0x6c616e30")
    )
    (snap,) = read_once(collector(api.url)).snapshots
    assert snap.neighbor == Neighbor(device="lark-lab-sw2", port="lan0")
    # A subtype that is no LldpPortIdSubtype number costs nothing but itself.
    api.body["data"]["result"].append(remote("lldpRemPortIdSubtype", "", sample="NaN"))
    (snap,) = read_once(collector(api.url)).snapshots
    assert snap.neighbor == Neighbor(device="lark-lab-sw2", port="lan0")
    assert "lldpRemSysName" in api.queries[0]["query"][0]  # asked in the same query


def test_the_servers_own_error_message_is_passed_on(api: CannedApi) -> None:
    api.status = 400
    api.body = {"status": "error", "errorType": "bad_data", "error": "parse error at char 7"}
    with pytest.raises(BadAnswerError, match=r"answered 400 .*: parse error at char 7"):
        read_once(collector(api.url))


def test_the_query_is_one_range_selector_of_the_device_at_the_time_asked(api: CannedApi) -> None:
    api.body = matrix(series("ifHCInOctets", "port1", (100.0, "5")))
    history(collector(api.url), 40.0, 100.0)
    (sent,) = api.queries
    assert sent["time"] == ["100.000"]
    query = sent["query"][0]
    assert query.endswith("}[60000ms]")
    assert 'instance="sw0001"' in query and 'job="snmp"' in query
    assert "ifHCInOctets|" in query and "dot3StatsFCSErrors" in query


def test_two_series_for_one_port_make_that_port_a_problem_and_the_rest_read(
    api: CannedApi,
) -> None:
    api.body = matrix(
        series("ifHCInOctets", "port1", (100.0, "5")),
        {**series("ifHCInOctets", "port1", (100.0, "9")), "metric": {
            "__name__": "ifHCInOctets", "ifName": "port1", "ifIndex": "7"}},
        series("ifHCInOctets", "port2", (100.0, "12")),
    )  # fmt: skip
    reading = read_once(collector(api.url))
    assert [(s.port, s.counters) for s in reading.snapshots] == [("port2", {"ifHCInOctets": 12})]
    assert "2 series of ifHCInOctets" in reading.problems["port1"]


def test_a_value_that_is_not_a_counter_is_that_ports_problem(api: CannedApi) -> None:
    api.body = matrix(
        series("ifInErrors", "port1", (100.0, "NaN")),
        series("ifInErrors", "port2", (100.0, "1.5")),
        series("ifInErrors", "port3", (100.0, "3")),
    )
    reading = read_once(collector(api.url))
    assert [s.port for s in reading.snapshots] == ["port3"]
    assert "NaN is not a counter" in reading.problems["port1"]
    assert "1.5 is not a counter" in reading.problems["port2"]


def test_series_without_the_port_label_are_reported(api: CannedApi) -> None:
    api.body = matrix(series("ifHCInOctets", None, (100.0, "5")))
    reading = read_once(collector(api.url))
    assert reading.snapshots == []
    assert "carry no ifName label" in reading.problems["(no ifName)"]


def test_a_counter_float64_rounds_up_to_2_to_the_64_reads_as_the_largest_counter64(
    api: CannedApi,
) -> None:
    # Prometheus stores float64 (IEEE 754 binary64, a 53-bit significand): 2^64 - 1 is
    # written "1.8446744073709552e+19", which is 2^64 (Python's float repr agrees).
    assert float(2**64 - 1) == 2**64
    api.body = matrix(
        series("ifHCInOctets", "port1", (100.0, "1.8446744073709552e+19")),
        series("ifHCOutOctets", "port1", (100.0, "9007199254740993")),  # 2^53 + 1
    )
    (snap,) = read_once(collector(api.url)).snapshots
    assert snap.counters["ifHCInOctets"] == 2**64 - 1  # RFC 2578 7.1.10: Counter64 max
    assert snap.counters["ifHCOutOctets"] == 2**53  # the nearest binary64 value


def test_an_answer_that_is_not_a_matrix_is_a_bad_answer(api: CannedApi) -> None:
    api.body = {"status": "success", "data": {"resultType": "vector", "result": []}}
    with pytest.raises(BadAnswerError, match=r"sw0001: answered without samples: .*no matrix"):
        read_once(collector(api.url))


@pytest.mark.parametrize(
    "body",
    [
        b"<html>proxy error</html>",
        {"status": "success", "data": {"resultType": "matrix", "result": [{"values": 7}]}},
        {"status": "success", "data": {"resultType": "matrix", "result": "none"}},
    ],
)
def test_an_answer_of_another_shape_is_that_devices_bad_answer(api: CannedApi, body: Any) -> None:
    api.body = body
    with pytest.raises(
        BadAnswerError, match=r"sw0001: answered with something not JSON, or not of the shape"
    ):
        read_once(collector(api.url))


def test_sample_values_sent_as_numbers_are_read_too(api: CannedApi) -> None:
    # The API sends values as strings; a store that sends numbers is read all the same.
    answer = matrix(series("ifHCInOctets", "port1", (100.0, "5")))
    answer["data"]["result"][0]["values"] = [[100.0, 5]]
    api.body = answer
    (snapshot,) = read_once(collector(api.url)).snapshots
    assert snapshot.counters == {"ifHCInOctets": 5}


def test_metric_and_label_names_are_configurable_per_device(api: CannedApi) -> None:
    api.body = {
        "status": "success",
        "data": {
            "resultType": "matrix",
            "result": [
                {
                    "metric": {"__name__": "if_hc_in_octets", "target": "10.20.0.1", "port": "a1"},
                    "values": [[100.0, "77"]],
                }
            ],
        },
    }
    c = collector(
        api.url,
        instance="10.20.0.1",
        device_label="target",
        port_label="port",
        matchers={},
        metrics={"ifHCInOctets": "if_hc_in_octets"},
    )
    (snap,) = read_once(c).snapshots
    assert (snap.port, snap.counters) == ("a1", {"ifHCInOctets": 77})
    assert 'target="10.20.0.1"' in api.queries[0]["query"][0]


@pytest.mark.parametrize(
    ("options", "complaint"),
    [
        ({"port_label": "if-name"}, "not a Prometheus label name"),
        ({"metrics": {"ifInOctetz": "x"}}, "not a counter or state object"),
        ({"metrics": {"ifInOctets": "in octets"}}, "not a Prometheus metric name"),
        ({"server": "prom:9090"}, "server: expected an http:// or https:// URL, got 'prom:9090'"),
    ],
)
def test_bad_options_are_refused_before_anything_is_sent(
    options: dict[str, Any], complaint: str
) -> None:
    with pytest.raises(InputError, match=complaint):
        collector(**{"server": "http://127.0.0.1:9", **options})
