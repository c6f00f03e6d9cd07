"""The ``prometheus`` collector: a device's counters as a Prometheus server already holds them.

Where a Prometheus (or a store that speaks its HTTP API) scrapes the network through an
SNMP exporter, linktriage asks it instead of polling the devices itself, answered from the
server's own storage, so a sweep of a very large network costs the devices nothing. The
server also keeps history, so a window is read at once rather than waited for
(:class:`~linktriage.network.collectors.base.HistoryCollector`).

A read is an instant query of a range selector over the device's series, reaching back
two scrape intervals (one scrape is always inside, little more is fetched than kept)::

    GET {server}/api/v1/query?query={__name__=~"ifHCInOctets|...",instance="10.20.0.1"}[120000ms]

Devices of one server asked for the same window within BATCH_WINDOW_S of each other (a
sweep, a poll round) share one such query, ``instance=~"a|b|..."``, of up to BATCH_DEVICES
devices; each device is handed the series carrying its own label value.

A range selector returns the raw samples with the times they were scraped; an instant
vector would carry the evaluation time instead, which is off by up to a scrape interval
and would bend every rate. Samples of one scrape share one time, so they become one
snapshot per port. Metric names default to the IF-MIB and EtherLike-MIB object names the
SNMP exporter publishes (ifHCInOctets, dot3StatsFCSErrors, ...), ports are told apart by
the ``ifName`` label; both are configurable per device, as is the label that names it.

Prometheus stores samples as float64: counters are exact up to 2^53 (9 PB of octets),
beyond that they keep 53 significant bits, which leaves rates over any window intact.

Each port's far end comes, in the same query, from the series an SNMP exporter publishes
when its module walks LLDP-MIB's lldpRemTable and lldpLocPortTable (IEEE 802.1AB-2005
12.1): a string object as an info series whose value is a label of the metric's own name
(``lldpRemSysName{lldpRemLocalPortNum="101",...,lldpRemSysName="core1"} 1``), the port id
already decoded by its subtype (a MAC address as 04:05:06:07:08:09, text for names, hex
``0x...`` for the rest; snmp_exporter collector/collector.go), and the subtype as a gauge.
The local port number is matched to a port as :func:`~linktriage.network.collectors.lldp.
local_ports` says, from the lldpLocPortId and lldpLocPortDesc series or from the same
labels where the module looks them up onto the remote series.

Format 1.2 adds, read from the same query where the exporter's modules publish them:
ifAdminStatus and ifLastChange (a gauge of TimeTicks, placed in time with the sysUpTime
sample of the same scrape; 0, a change before the agent started, is left out, RFC 2863);
the dot3PauseTable counters (RFC 3635), read as any other counter; POWER-ETHERNET-MIB's
pethPsePortTable and pethMainPseTable (RFC 3621), whose series carry their own indexes
(pethPsePortGroupIndex and pethPsePortIndex, pethMainPseGroupIndex) rather than a port's
name, matched to ports as the SNMP collector matches them (``poe_ports``); ifStackStatus,
with ifType (a gauge, or the ``ifType_info`` series of an EnumAsInfo override) and
dot3adAggPortAttachedAggID for each port's aggregate; and LLDP-EXT-DOT3-MIB's
lldpXdot3RemPortAutoNegAdvertisedCap for the speeds the far end advertises (an OCTET STRING
the exporter writes as ``0x`` and hex).
"""

from __future__ import annotations

import asyncio
import math
import re
from collections import defaultdict
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import Annotated, Any

import msgspec
from pydantic import Field, ValidationError, field_validator

from linktriage.engine.format.counters import COLUMN_INDEX, COUNTER64_MAX
from linktriage.engine.format.snapshot import Neighbor, PoeStatus, Snapshot
from linktriage.errors import BadAnswerError, CollectorError
from linktriage.network.collectors.base import HistoryCollector, Reading, Target
from linktriage.network.collectors.http import HttpOptions, HttpSession
from linktriage.network.collectors.lldp import FarEnd, far_end, local_ports, neighbor
from linktriage.network.collectors.mibs import (
    DELIVERING,
    DETECTION,
    LAG_IFTYPE,
    PoeMapping,
    PoePort,
    admin_status,
    advertised_speeds,
    aggregates,
    budget_left,
    last_change,
    poe_interfaces,
    poe_status,
    power_class,
)

#: Port state the collector reads, by the IF-MIB / EtherLike-MIB object (RFC 2863, RFC 3635)
#: whose value the metric carries.
STATE_OBJECTS = (
    "ifOperStatus",
    "ifHighSpeed",
    "ifSpeed",
    "ifMtu",
    "dot3StatsDuplexStatus",
    "ifCounterDiscontinuityTime",
    "ifAdminStatus",  # since format 1.2
    "ifLastChange",
    "ifType",
)
#: Series of the device rather than a port: its agent's sysUpTime (RFC 3418), to place
#: ifCounterDiscontinuityTime in time, and ``up``, Prometheus's own record of whether the
#: last scrape worked (0: what it holds is stale).
DEVICE_OBJECTS = ("sysUpTime", "up")
#: LLDP-MIB objects (IEEE 802.1AB-2005 12.1) of the remote table, indexed by the labels
#: lldpRemTimeMark, lldpRemLocalPortNum and lldpRemIndex, and of the local port table,
#: indexed by lldpLocPortNum.
LLDP_REMOTE = ("lldpRemSysName", "lldpRemPortIdSubtype", "lldpRemPortId", "lldpRemPortDesc")
LLDP_LOCAL = ("lldpLocPortId", "lldpLocPortDesc")
LLDP_ROW = ("lldpRemTimeMark", "lldpRemLocalPortNum", "lldpRemIndex")
#: LLDP-EXT-DOT3-MIB (IEEE 802.1AB-2005 annex G), indexed as lldpRemTable.
LLDP_REMOTE_DOT3 = ("lldpXdot3RemPortAutoNegAdvertisedCap",)
#: POWER-ETHERNET-MIB (RFC 3621): the PSE port objects that are not counters, indexed by
#: pethPsePortGroupIndex and pethPsePortIndex, and the main PSE objects, by
#: pethMainPseGroupIndex.
POE_PORT_STATE = ("pethPsePortDetectionStatus", "pethPsePortPowerClassifications")
POE_MAIN = ("pethMainPsePower", "pethMainPseConsumptionPower")
POE_PORT_LABELS = ("pethPsePortGroupIndex", "pethPsePortIndex")
POE_PORT_OBJECTS = frozenset(
    {*POE_PORT_STATE, *(name for name in COLUMN_INDEX if name.startswith("pethPsePort"))}
)
#: Aggregation: IF-MIB ifStackStatus (labels ifStackHigherLayer, ifStackLowerLayer) and
#: IEEE8023-LAG-MIB dot3adAggPortAttachedAggID (label dot3adAggPortIndex), and ifType as the
#: SNMP exporter's EnumAsInfo override publishes it (its enum name in the ifType label).
STACK_OBJECTS = ("ifStackStatus", "dot3adAggPortAttachedAggID")
IFTYPE_INFO = "ifType_info"
TABLE_OBJECTS = (*POE_MAIN, *STACK_OBJECTS, IFTYPE_INFO)
#: Objects whose series the collector reads, beyond the counters.
READ_OBJECTS = (*STATE_OBJECTS, *DEVICE_OBJECTS, *LLDP_REMOTE, *LLDP_LOCAL, *LLDP_REMOTE_DOT3,
                *POE_PORT_STATE, *TABLE_OBJECTS)  # fmt: skip
OPER_STATUS = {1: "up", 2: "down", 3: "testing", 4: "unknown", 5: "dormant", 6: "notPresent",
               7: "lowerLayerDown"}  # fmt: skip
DUPLEX = {1: "unknown", 2: "half", 3: "full"}
IFSPEED_MAX = 4_294_967_295
_METRIC_NAME = re.compile(r"^[a-zA-Z_:][a-zA-Z0-9_:]*$")  # the Prometheus data model
_LABEL_NAME = re.compile(r"^[a-zA-Z_][a-zA-Z0-9_]*$")
MEDIA_TYPE = "application/json"


class Series(msgspec.Struct):
    """One series of a range query's answer (Prometheus HTTP API, "matrix")."""

    metric: dict[str, str] = {}
    values: list[tuple[float, str | float]] = []


class QueryData(msgspec.Struct):
    resultType: str = ""  # noqa: N815 (the API's own name)
    result: list[Series] = []


class QueryAnswer(msgspec.Struct):
    """A query's answer, decoded straight into these types: a large fleet's answer is
    millions of samples, and typed decoding takes about 40% less time than json.loads."""

    status: str = ""
    data: QueryData | None = None
    error: str | None = None


_decode_answer = msgspec.json.Decoder(QueryAnswer).decode


#: A Prometheus server's base URL, path prefix included.
_SERVER = re.compile(r"^https?://[^\s/]+(/\S*)?$")


class PrometheusOptions(HttpOptions):
    #: The server's base URL, path prefix included (``http://prom.example:9090``).
    server: str
    #: The device's value of ``device_label``; default: its address, else its name.
    instance: str | None = None
    device_label: str = "instance"
    port_label: str = "ifName"
    #: More label matchers that select the device's series, e.g. ``{ job = "snmp" }``.
    matchers: dict[str, str] = Field(default_factory=dict)
    #: Metric names where they differ from the object names (object -> metric).
    metrics: dict[str, str] = Field(default_factory=dict)
    #: How often Prometheus scrapes the device (its scrape_interval).
    scrape_interval_s: Annotated[float, Field(gt=0, le=3600)] = 60.0
    #: How far back a read looks for the newest scrape; default two scrape intervals, so
    #: one scrape is always inside and little more is fetched than is kept.
    lookback_s: Annotated[float | None, Field(gt=0, le=86_400)] = None
    #: How POWER-ETHERNET-MIB's PSE ports are matched to ports (see mibs.poe_interfaces).
    poe_ports: PoeMapping = "auto"

    @field_validator("server")
    @classmethod
    def _server(cls, url: str) -> str:
        if not _SERVER.match(url):
            raise ValueError(f"expected an http:// or https:// URL, got {url!r}")
        return url

    @field_validator("device_label", "port_label")
    @classmethod
    def _label(cls, name: str) -> str:
        if not _LABEL_NAME.match(name) or name.startswith("__"):
            raise ValueError(f"{name!r} is not a Prometheus label name")
        return name

    @field_validator("matchers")
    @classmethod
    def _labels(cls, matchers: dict[str, str]) -> dict[str, str]:
        for name in matchers:
            cls._label(name)
        return matchers

    @field_validator("metrics")
    @classmethod
    def _metric_names(cls, metrics: dict[str, str]) -> dict[str, str]:
        known = {*COLUMN_INDEX, *READ_OBJECTS}
        for obj, metric in metrics.items():
            if obj not in known:
                raise ValueError(f"{obj!r} is not a counter or state object linktriage reads")
            if not _METRIC_NAME.match(metric):
                raise ValueError(f"{metric!r} is not a Prometheus metric name")
        return metrics


def promql_string(value: str) -> str:
    """A PromQL double-quoted string literal (Go escaping rules)."""
    escaped = value.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
    return f'"{escaped}"'


def selector(
    metric_names: Sequence[str], labels: dict[str, str], any_of: tuple[str, list[str]] | None = None
) -> str:
    """A series selector for these metrics and these label values; ``any_of`` (a label and
    its values) matches any of several values, as one query for several devices does."""
    names = "|".join(sorted(set(metric_names)))
    parts = [f"__name__=~{promql_string(names)}"]
    parts += [f"{name}={promql_string(value)}" for name, value in labels.items()]
    if any_of is not None:
        label, values = any_of
        # PromQL regexes are RE2, anchored at both ends; every value is matched literally.
        pattern = "|".join(re.escape(value) for value in sorted(set(values)))
        parts.append(f"{label}=~{promql_string(pattern)}")
    return "{" + ",".join(parts) + "}"


def _maybe_integer(text: Any) -> int | None:
    """A sample value as an integer; None where it is absent or not one."""
    try:
        return None if text is None else _integer(text)
    except ValueError:
        return None


def _integer(text: Any) -> int:
    """A sample value (a JSON string such as ``"1234"`` or ``"1.5e+15"``) as an integer."""
    value = float(text)
    if not math.isfinite(value) or value < 0 or value != math.floor(value):
        raise ValueError(f"{text} is not a counter or status value")
    return int(value)


class Samples:
    """A matrix answer sorted out: per port, per scrape time, object -> value."""

    def __init__(self, answer: QueryAnswer, objects: dict[str, str], port_label: str) -> None:
        if answer.data is None or answer.data.resultType != "matrix":
            raise ValueError("the answer holds no matrix of samples")
        self.ports: dict[str, dict[float, dict[str, Any]]] = defaultdict(dict)
        self.device: dict[str, list[tuple[float, Any]]] = {o: [] for o in DEVICE_OBJECTS}
        self.lldp: dict[str, list[Series]] = {
            o: [] for o in (*LLDP_REMOTE, *LLDP_LOCAL, *LLDP_REMOTE_DOT3)
        }
        self.tables: dict[str, list[Series]] = defaultdict(list)  # indexed by their own labels
        self.interfaces: dict[str, dict[str, str]] = {}  # port -> its series' labels
        self.port_label = port_label
        self.aggregates: dict[str, str] = {}  # port -> its aggregate's name
        self.problems: dict[str, str] = {}
        unlabelled = 0
        seen: dict[tuple[str, str], int] = defaultdict(int)
        for series in answer.data.result:
            labels = series.metric
            obj = objects.get(labels.get("__name__", ""))
            if obj is None:
                continue
            if obj in self.device:
                self.device[obj] += series.values
                continue
            if obj in self.lldp:
                self.lldp[obj].append(series)
                continue
            port = labels.get(port_label)
            if obj in TABLE_OBJECTS or (
                obj in POE_PORT_OBJECTS
                and (not port or all(name in labels for name in POE_PORT_LABELS))
            ):
                self.tables[obj].append(series)  # placed on ports by attach_tables
                continue
            if not port:
                unlabelled += 1
                continue
            self.interfaces.setdefault(port, labels)
            seen[(port, obj)] += 1
            times = self.ports[port]
            for t, v in series.values:
                at = times.get(t)
                if at is None:
                    times[t] = {obj: v}
                else:
                    at[obj] = v
        for (port, obj), count in seen.items():
            if count > 1:  # two series for one port and metric: which one is the port?
                self.problems[port] = (
                    f"{count} series of {obj} carry {port_label}={port!r}; add matchers "
                    "that select one"
                )
                self.ports.pop(port, None)
        if unlabelled:
            self.problems[f"(no {port_label})"] = (
                f"{unlabelled} series carry no {port_label} label; is port_label right?"
            )
        for samples in self.device.values():
            samples.sort()

    def booted(self, at: float) -> float | None:
        """When the device's agent started, from the sysUpTime sample nearest ``at``."""
        nearest = self._uptime(at)
        return None if nearest is None else nearest[0] - nearest[1] / 100.0

    def uptime_at(self, at: float) -> int | None:
        """The agent's sysUpTime (TimeTicks) at ``at``, from the sample nearest it (the one
        of the same scrape), counted on to ``at``."""
        nearest = self._uptime(at)
        return None if nearest is None else nearest[1] + round((at - nearest[0]) * 100)

    def _uptime(self, at: float) -> tuple[float, int] | None:
        uptime = self.device["sysUpTime"]
        if not uptime:
            return None
        t, ticks = min(uptime, key=lambda sample: abs(sample[0] - at))
        return t, _integer(ticks)

    def _by_index(self) -> dict[int, str]:
        """Each port by the ifIndex label of its series, as the exporter sets it."""
        return {
            int(labels["ifIndex"]): port
            for port, labels in self.interfaces.items()
            if labels.get("ifIndex", "").isdigit()
        }

    def attach_tables(self, how: PoeMapping) -> None:
        """Place on the ports what tables of their own indexes say: PSE ports (RFC 3621,
        by their own port label where a module looks it up, else matched as ``how``
        says) with their group's power budget, and each port's aggregate."""
        by_index = self._by_index()
        poe: dict[PoePort, dict[float, dict[str, Any]]] = defaultdict(lambda: defaultdict(dict))
        named: dict[PoePort, str] = {}
        main: dict[str, dict[float, dict[str, Any]]] = defaultdict(lambda: defaultdict(dict))
        for obj, all_series in self.tables.items():
            for series in all_series:
                labels = series.metric
                if obj in POE_MAIN:
                    for t, v in series.values:
                        main[labels.get("pethMainPseGroupIndex", "")][t][obj] = v
                    continue
                if obj not in POE_PORT_OBJECTS:
                    continue
                key = tuple(labels.get(name, "") for name in POE_PORT_LABELS)
                if not all(part.isdigit() for part in key):
                    continue
                row = (int(key[0]), int(key[1]))
                if labels.get(self.port_label):
                    named[row] = labels[self.port_label]
                for t, v in series.values:
                    poe[row][t][obj] = v
        mapped = poe_interfaces([r for r in poe if r not in named], by_index, how)
        ports = named | {row: by_index[index] for row, index in mapped.items()}
        for row, port in ports.items():
            times = self.ports.get(port, {})
            for t, objects in poe[row].items():
                if t in times:  # a scrape of the port's own series
                    times[t].update(objects)
                    times[t].update(main.get(str(row[0]), {}).get(t, {}))
        self.aggregates = self._aggregates(by_index)

    def _aggregates(self, by_index: dict[int, str]) -> dict[str, str]:
        """Each port's aggregate (port -> the aggregate's port name), from the newest
        samples of ifStackStatus, dot3adAggPortAttachedAggID and ifType."""
        types: dict[int, int] = {}
        for index, port in by_index.items():
            newest = self.ports[port][max(self.ports[port])] if self.ports.get(port) else {}
            if (kind := _maybe_integer(newest.get("ifType"))) is not None:
                types[index] = kind
        stack: list[tuple[int, int]] = []
        attached: dict[int, int] = {}
        for series in self.tables.get(IFTYPE_INFO, []):
            label = series.metric.get("ifIndex", "")
            if label.isdigit() and series.metric.get("ifType") == "ieee8023adLag":
                types[int(label)] = LAG_IFTYPE
        for series in self.tables.get("ifStackStatus", []):
            layers = (series.metric.get("ifStackHigherLayer", ""),
                      series.metric.get("ifStackLowerLayer", ""))  # fmt: skip
            status = _maybe_integer(max(series.values)[1]) if series.values else None
            if all(x.isdigit() for x in layers) and status == 1:  # RowStatus active(1)
                stack.append((int(layers[0]), int(layers[1])))
        for series in self.tables.get("dot3adAggPortAttachedAggID", []):
            member = series.metric.get("dot3adAggPortIndex", "")
            aggregator = _maybe_integer(max(series.values)[1]) if series.values else None
            if member.isdigit() and aggregator is not None:
                attached[int(member)] = aggregator
        found = aggregates(stack, types, attached, by_index)
        return {by_index[member]: name for member, name in found.items() if member in by_index}

    def neighbors(self) -> dict[str, Neighbor]:
        """Each port's neighbor from the LLDP-MIB series (port -> neighbor); a port is
        known here by its series' ifIndex and ifDescr labels, as the exporter sets them."""
        remote: dict[tuple[str, ...], dict[str, Any]] = defaultdict(dict)
        local: dict[str, dict[str, Any]] = defaultdict(dict)  # lldpLocPortNum -> objects
        for obj in LLDP_REMOTE:
            for series in self.lldp[obj]:
                labels = series.metric
                row = tuple(labels.get(name, "") for name in LLDP_ROW)
                remote[row][obj] = _lldp_value(series, obj)
                for looked_up in LLDP_LOCAL:  # a module may look them up onto this series
                    if labels.get(looked_up):
                        local[row[1]].setdefault(looked_up, _exported(labels[looked_up]))
        for obj in LLDP_LOCAL:
            for series in self.lldp[obj]:
                number = series.metric.get("lldpLocPortNum", "")
                local[number].setdefault(obj, _lldp_value(series, obj))
        speeds: dict[tuple[str, ...], list[int] | None] = {}
        for series in self.lldp[LLDP_REMOTE_DOT3[0]]:
            octets = _lldp_value(series, LLDP_REMOTE_DOT3[0])
            row = tuple(series.metric.get(name, "") for name in LLDP_ROW)
            speeds[row] = advertised_speeds(octets) if isinstance(octets, bytes) else None
        ends = {
            row: far_end(v.get("lldpRemSysName"), v.get("lldpRemPortIdSubtype"),
                         v.get("lldpRemPortId"), v.get("lldpRemPortDesc"), speeds.get(row))
            for row, v in remote.items()
        }  # fmt: skip
        by_index = self._by_index()
        descriptions = {
            index: self.interfaces[port].get("ifDescr", "") for index, port in by_index.items()
        }
        numbers = {int(row[1]) for row in ends if row[1].isdigit()}
        rows = {
            int(number): far_end(None, None, v.get("lldpLocPortId"), v.get("lldpLocPortDesc"))
            for number, v in local.items()
            if number.isdigit()
        }
        mapped = local_ports(numbers, rows, by_index, descriptions)
        heard: dict[str, list[FarEnd]] = defaultdict(list)
        for row, end in ends.items():
            index = mapped.get(int(row[1])) if row[1].isdigit() else None
            if index is not None:
                heard[by_index[index]].append(end)
        found = {port: neighbor(far) for port, far in heard.items()}
        return {port: far for port, far in found.items() if far is not None}

    def failed_since(self) -> float | None:
        """When the scrapes that still fail began, if the newest one failed (``up`` 0)."""
        up = self.device["up"]
        if not up or float(up[-1][1]) != 0.0:
            return None
        first = len(up) - 1
        while first > 0 and float(up[first - 1][1]) == 0.0:
            first -= 1
        return up[first][0]


def _exported(text: str) -> bytes | str:
    """An exporter's rendering of an OCTET STRING as far as it goes: ``0x...`` is octets
    it could not decode (no subtype to go by), anything else is text."""
    if text.startswith("0x"):
        try:
            return bytes.fromhex(text[2:])
        except ValueError:
            return text
    return text


def _lldp_value(series: Series, obj: str) -> Any:
    """An LLDP object's value: the subtype is the gauge's newest sample; a string is the
    label named as the metric (the SNMP exporter's info series)."""
    if obj == "lldpRemPortIdSubtype":
        try:
            return _integer(max(series.values)[1]) if series.values else None
        except ValueError:  # not a subtype: the id is read as if none were published
            return None
    return _exported(series.metric.get(series.metric.get("__name__", ""), ""))


def _snapshot(
    device: str,
    port: str,
    at: float,
    values: dict[str, Any],
    booted: float | None,
    far: Neighbor | None,
    uptime_ticks: int | None = None,
    aggregate: str | None = None,
) -> Snapshot:
    # float64 rounds the top 1,024 Counter64 values up to 2^64: read them as the largest.
    counters = {
        name: min(_integer(values[name]), COUNTER64_MAX) for name in COLUMN_INDEX if name in values
    }
    state = {name: _integer(values[name]) for name in STATE_OBJECTS if name in values}
    speed = None
    if state.get("ifHighSpeed"):
        speed = state["ifHighSpeed"] * 1_000_000
    elif "ifSpeed" in state and state["ifSpeed"] < IFSPEED_MAX:
        speed = state["ifSpeed"]
    discontinuity = None
    if booted is not None and "ifCounterDiscontinuityTime" in state:
        moment = booted + state["ifCounterDiscontinuityTime"] / 100.0
        discontinuity = datetime.fromtimestamp(moment, UTC)
    duplex = state.get("dot3StatsDuplexStatus")
    when = datetime.fromtimestamp(at, UTC)
    powered = _poe(values)
    return Snapshot(
        device=device,
        port=port,
        time=when,
        oper_status=OPER_STATUS.get(state.get("ifOperStatus", 4), "unknown"),
        counters=counters,
        speed_bps=speed,
        duplex=None if duplex is None else DUPLEX.get(duplex),
        mtu=state.get("ifMtu"),
        discontinuity_time=discontinuity,
        neighbor=far,
        admin_status=admin_status(state.get("ifAdminStatus")),
        last_change=last_change(when, uptime_ticks, state.get("ifLastChange")),
        aggregate=aggregate,
        poe_status=powered,
        poe=None if powered is None else powered.detection == DELIVERING,
    )


def _poe(values: dict[str, Any]) -> PoeStatus | None:
    """A PSE port's state (RFC 3621) from its samples and its group's power budget."""
    detection = None
    if "pethPsePortDetectionStatus" in values:
        detection = DETECTION.get(_integer(values["pethPsePortDetectionStatus"]))
    number = values.get("pethPsePortPowerClassifications")
    main = [values.get(obj) for obj in POE_MAIN]
    left = budget_left(*(None if v is None else float(v) for v in main))
    return poe_status(
        detection, power_class(None if number is None else _integer(number), detection), None,
        left if left is None or math.isfinite(left) else None,
    )  # fmt: skip


#: Reads of devices on one server asked for within this long are made one query...
BATCH_WINDOW_S = 0.01
#: ... of at most this many devices.
BATCH_DEVICES = 200


@dataclass
class _Batch:
    """Devices asking one server for the same window at the same moment."""

    end: float | None  # None: now, when the query is sent
    asks: list[tuple[PrometheusCollector, asyncio.Future[Any]]] = field(default_factory=list)


_pending: dict[tuple[Any, ...], _Batch] = {}
_sending: set[asyncio.Task[None]] = set()  # held until done: the loop keeps weak references


def _send(key: tuple[Any, ...], span_s: float) -> None:
    task = asyncio.get_running_loop().create_task(_ask_together(key, span_s))
    _sending.add(task)
    task.add_done_callback(_sending.discard)


async def _ask_together(key: tuple[Any, ...], span_s: float) -> None:
    """Send the batch under ``key`` as one query per BATCH_DEVICES devices, and hand each
    device the series of its own, or the error, as its own; whatever else goes wrong is
    every waiting device's error, never a wait until its deadline."""
    batch = _pending.pop(key)
    try:
        await _queries(batch, span_s)
    except Exception as exc:  # a bug here fails the devices it concerns, as in polling
        for _, answer in batch.asks:
            if not answer.done():
                answer.set_exception(exc)


async def _queries(batch: _Batch, span_s: float) -> None:
    for start in range(0, len(batch.asks), BATCH_DEVICES):
        asks = batch.asks[start : start + BATCH_DEVICES]
        first = asks[0][0]
        end = datetime.now(UTC).timestamp() if batch.end is None else batch.end
        if len(asks) == 1:
            chosen = first.selector
        else:
            label = first.options.device_label
            instances = [c.labels[label] for c, _ in asks]
            rest = {k: v for k, v in first.labels.items() if k != label}
            chosen = selector(list(first.objects), rest, any_of=(label, instances))
        query = f"{chosen}[{max(1, math.ceil(span_s * 1000))}ms]"
        try:
            params = {"query": query, "time": f"{end:.3f}"}
            answer_of_all = await first.http.get_json(first.url, params, _decode_answer)
        except CollectorError as exc:
            for collector, answer in asks:
                answer.set_exception(collector.error(type(exc), exc.reason))
            continue
        except Exception as exc:  # a timeout: every device of the query missed it
            for _, answer in asks:
                answer.set_exception(exc)
            continue
        if len(asks) == 1:  # one device's query selected its series already
            asks[0][1].set_result(answer_of_all)
            continue
        label = first.options.device_label
        own = _by_device(answer_of_all, label)
        for collector, answer in asks:
            answer.set_result(own.get(collector.labels[label], _empty(answer_of_all)))


def _by_device(answer: QueryAnswer, label: str) -> dict[str, QueryAnswer]:
    """A query's answer split into one answer per value of the device label, in one pass."""
    if answer.data is None:
        return {}  # each device's own reading refuses the answer
    split: dict[str, list[Series]] = defaultdict(list)
    for series in answer.data.result:
        split[series.metric.get(label, "")].append(series)
    kind = answer.data.resultType
    return {
        value: QueryAnswer(answer.status, QueryData(kind, own), answer.error)
        for value, own in split.items()
    }


def _empty(answer: QueryAnswer) -> QueryAnswer:
    """The answer for a device the query found nothing of."""
    if answer.data is None:
        return answer
    return QueryAnswer(answer.status, QueryData(answer.data.resultType, []), answer.error)


class PrometheusCollector(HistoryCollector[PrometheusOptions]):
    """Reads one device's series from a Prometheus server."""

    needs_address = False

    def __init__(self, target: Target) -> None:
        super().__init__(target)
        o = self.options
        self.url = o.server.rstrip("/") + "/api/v1/query"
        names = [*COLUMN_INDEX, *READ_OBJECTS]
        self.objects = {o.metrics.get(name, name): name for name in names}  # metric -> object
        instance = o.instance or target.address or target.name
        self.labels = {o.device_label: instance, **o.matchers}
        self.selector = selector(list(self.objects), self.labels)
        self.http = HttpSession(self, o, MEDIA_TYPE)

    async def close(self) -> None:
        await self.http.close()

    async def _samples(self, span_s: float, end: float | None) -> Samples:
        """The device's samples over ``span_s`` before ``end`` (None: now). Devices of one
        server asking together (a sweep, a poll round) share one query."""
        loop = asyncio.get_running_loop()
        o = self.options
        key = (
            loop,
            self.url,
            o.device_label,
            o.port_label,
            tuple(sorted(o.matchers.items())),
            tuple(sorted(self.objects)),
            round(span_s, 3),
            end,
        )
        batch = _pending.get(key)
        if batch is None:
            batch = _pending[key] = _Batch(end)
            loop.call_later(BATCH_WINDOW_S, _send, key, span_s)
        answer: asyncio.Future[Any] = loop.create_future()
        batch.asks.append((self, answer))
        document: QueryAnswer = await answer
        if document.status != "success":
            said = document.error or document.status or "no status"
            raise self.error(BadAnswerError, f"the query failed: {said}"[:300])
        try:
            return Samples(document, self.objects, self.options.port_label)
        except (ValueError, TypeError, AttributeError) as exc:
            raise self.error(BadAnswerError, f"answered without samples: {exc}") from exc

    def _reading(
        self, samples: Samples, ports: Sequence[str] | None, *, newest_only: bool
    ) -> Reading:
        since = samples.failed_since()
        if since is not None:
            when = datetime.fromtimestamp(since, UTC).strftime("%Y-%m-%d %H:%M:%S UTC")
            raise self.error(
                CollectorError, f"Prometheus has failed to scrape it since {when} (up is 0)"
            )
        if not samples.ports and not samples.problems:
            labels = ", ".join(f"{k}={promql_string(v)}" for k, v in self.labels.items())
            raise self.error(
                BadAnswerError,
                f"Prometheus holds no interface series with {labels} in that window; "
                "is it scraped, and are the labels right?",
            )
        wanted = None if ports is None else set(ports)
        snapshots: list[Snapshot] = []
        problems = {p: why for p, why in samples.problems.items() if wanted is None or p in wanted}
        neighbors = samples.neighbors()
        samples.attach_tables(self.options.poe_ports)
        for port, times in samples.ports.items():
            if wanted is not None and port not in wanted:
                continue
            moments = sorted(times)[-1:] if newest_only else sorted(times)
            try:
                snapshots += [
                    _snapshot(
                        self.target.name,
                        port,
                        at,
                        times[at],
                        samples.booted(at),
                        neighbors.get(port),
                        samples.uptime_at(at),
                        samples.aggregates.get(port),
                    )
                    for at in moments
                ]
            except (ValueError, TypeError, ValidationError) as exc:
                problems[port] = f"malformed samples: {exc}".splitlines()[0]
        snapshots.sort(key=lambda s: (s.time, s.port))
        return Reading(snapshots, problems)

    async def read(self, ports: Sequence[str] | None = None) -> Reading:
        o = self.options
        lookback = o.lookback_s if o.lookback_s is not None else 2 * o.scrape_interval_s
        return self._reading(await self._samples(lookback, None), ports, newest_only=True)

    async def history(self, ports: Sequence[str] | None, start: float, end: float) -> Reading:
        if end <= start:
            return Reading([])
        return self._reading(await self._samples(end - start, end), ports, newest_only=False)

    async def ports(self) -> list[str]:
        return sorted({s.port for s in (await self.read()).snapshots})
