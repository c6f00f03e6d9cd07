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
from linktriage.engine.format.snapshot import Neighbor, Snapshot
from linktriage.errors import BadAnswerError, CollectorError
from linktriage.network.collectors.base import HistoryCollector, Reading, Target
from linktriage.network.collectors.http import HttpOptions, HttpSession
from linktriage.network.collectors.lldp import FarEnd, far_end, local_ports, neighbor

#: Port state the collector reads, by the IF-MIB / EtherLike-MIB object (RFC 2863, RFC 3635)
#: whose value the metric carries.
STATE_OBJECTS = (
    "ifOperStatus",
    "ifHighSpeed",
    "ifSpeed",
    "ifMtu",
    "dot3StatsDuplexStatus",
    "ifCounterDiscontinuityTime",
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
        known = {*COLUMN_INDEX, *STATE_OBJECTS, *DEVICE_OBJECTS, *LLDP_REMOTE, *LLDP_LOCAL}
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
        self.lldp: dict[str, list[Series]] = {o: [] for o in (*LLDP_REMOTE, *LLDP_LOCAL)}
        self.interfaces: dict[str, dict[str, str]] = {}  # port -> its series' labels
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
        uptime = self.device["sysUpTime"]
        if not uptime:
            return None
        t, ticks = min(uptime, key=lambda sample: abs(sample[0] - at))
        return t - _integer(ticks) / 100.0

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
        ends = {
            row: far_end(v.get("lldpRemSysName"), v.get("lldpRemPortIdSubtype"),
                         v.get("lldpRemPortId"), v.get("lldpRemPortDesc"))
            for row, v in remote.items()
        }  # fmt: skip
        by_index = {
            int(labels["ifIndex"]): port
            for port, labels in self.interfaces.items()
            if labels.get("ifIndex", "").isdigit()
        }
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
    return Snapshot(
        device=device,
        port=port,
        time=datetime.fromtimestamp(at, UTC),
        oper_status=OPER_STATUS.get(state.get("ifOperStatus", 4), "unknown"),
        counters=counters,
        speed_bps=speed,
        duplex=None if duplex is None else DUPLEX.get(duplex),
        mtu=state.get("ifMtu"),
        discontinuity_time=discontinuity,
        neighbor=far,
    )


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
        names = [*COLUMN_INDEX, *STATE_OBJECTS, *DEVICE_OBJECTS, *LLDP_REMOTE, *LLDP_LOCAL]
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
