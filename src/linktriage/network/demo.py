"""The demo network: Larkmoor Civic Library, an invented organisation with a few faults planted.

Two sites: the central library (a core switch and wiring closets in the east and west
wings) and a branch annex. Most ports are healthy; a handful carry one planted fault each,
so the demo and the documentation can show every verdict on ports with a story behind
them. Counters come from :mod:`linktriage.engine.simulate`, deterministically for a given seed,
and grow with time: the network can be polled at any moment, like real switches.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import numpy.typing as npt
import pandas as pd

from linktriage.engine.format.answers import Verdict
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.prior import sample_parameters
from linktriage.engine.simulate.polled import LiveCounters
from linktriage.engine.simulate.ports import COPPER_1G, DEFAULT_START, FIBER_10G, M
from linktriage.engine.verdicts import KINDS, TREE_VERDICTS
from linktriage.engine.verdicts.healthy import HEALTHY
from linktriage.errors import PollError
from linktriage.network.watched import Network, PortRef

ORGANISATION = "Larkmoor Civic Library"
DEFAULT_SEED = 7


@dataclass(frozen=True, slots=True)
class DemoPort:
    """One port of the demo network, and what is planted on it (None: nothing, healthy)."""

    site: str
    device: str
    port: str
    serves: str
    planted: Verdict | None = None
    overrides: dict[str, Any] = field(default_factory=dict)
    since_s: float | None = None  # the fault began this long before the demo's moment


#: Every port planted with a verdict, as each verdict's module declares it.
PLANTED: tuple[DemoPort, ...] = tuple(
    DemoPort(
        kind.demo.site,
        kind.demo.device,
        port,
        kind.demo.serves,
        kind.verdict,
        dict(kind.demo.parameters),
        kind.demo.since_s,
    )
    for kind in KINDS
    if kind.demo is not None
    for port in (kind.demo.port, *kind.demo.also)
)

#: Ports on devices other than switches, at the far end of a demo link.
FAR_ENDS: tuple[DemoPort, ...] = (
    DemoPort(
        "central",
        "lark-circ-prn1",
        "eth0",
        "label printer at the circulation desk, fixed at 100 Mb/s full duplex",
        None,
        # The full-duplex end of port7's mismatch: it receives frames cut short by the half
        # end's collisions, as FCS errors and runts (IEEE 802.3 clause 4; common practice).
        {**COPPER_1G, "speed_bps": 100 * M, "max_speed_bps": 100 * M, "poe": 0.0,
         "rx_ber": 4e-7, "runt_ratio": 2e-4, "rx_util": 0.05, "tx_util": 0.08},
    ),
)  # fmt: skip


@dataclass(frozen=True, slots=True)
class DemoLink:
    """Two demo ports cabled to each other, each naming the other over LLDP; ``deaf`` is
    the end that receives nothing of what the other sends (a broken direction)."""

    a: tuple[str, str]
    b: tuple[str, str]
    deaf: tuple[str, str] | None = None


LINKS: tuple[DemoLink, ...] = (
    # The strand toward lark-east-idf1 has a damaged connector: its light arrives low.
    DemoLink(("lark-core1", "up1"), ("lark-east-idf1", "up1")),
    DemoLink(("lark-core1", "up2"), ("lark-east-idf2", "up1")),
    # A one-way fiber: lark-core1 up3 hears nothing of what lark-west-idf1 sends.
    DemoLink(("lark-core1", "up3"), ("lark-west-idf1", "up1"), deaf=("lark-core1", "up3")),
    DemoLink(("lark-core1", "up5"), ("lark-annex-sw1", "up1")),
    # The duplex mismatch: the switch port auto-negotiated to half, the printer is fixed.
    DemoLink(("lark-east-idf2", "port7"), ("lark-circ-prn1", "eth0")),
)
#: The light a healthy fiber direction loses, connectors and patch cords included.
HEALTHY_LOSS_DB = 1.5

_ACCESS = {
    "lark-east-idf1": ("central", 24),
    "lark-east-idf2": ("central", 24),
    "lark-west-idf1": ("central", 24),
    "lark-annex-sw1": ("annex", 12),
}


def demo_ports() -> list[DemoPort]:
    """Every port of the demo network: the planted ones and healthy ones around them."""
    planted = {(p.device, p.port): p for p in PLANTED}
    ports: list[DemoPort] = []
    for device, (site, count) in _ACCESS.items():
        names = [f"port{i}" for i in range(1, count + 1)] + ["up1"]
        for name in names:
            uplink = name.startswith("up")
            serves = "uplink to lark-core1" if uplink else "desk outlet"
            default = DemoPort(site, device, name, serves, None, FIBER_10G if uplink else {})
            ports.append(planted.get((device, name), default))
    for n in range(1, 7):
        name = f"up{n}"
        default = DemoPort("central", "lark-core1", name, "fiber link", None, FIBER_10G)
        ports.append(planted.get(("lark-core1", name), default))
    return ports


# Counters start this long before the fixed demo time, so every poll finds them running.
_RUNNING_S = 86_400.0


class DemoClock:
    """Simulated time for the simulated network: waiting for a second poll takes no time."""

    def __init__(self, start: float) -> None:
        self.now = start

    def __call__(self) -> float:
        return self.now

    def sleep(self, seconds: float) -> None:
        self.now += seconds


class DemoNetwork(Network):
    """Larkmoor's ports with counters that grow smoothly with time: poll it at any moment.

    Each port's counters rise at the mean rates of its simulated parameters, so two polls
    any time apart give the window a real switch would; ``clock`` says what time it is.
    """

    def __init__(self, *, seed: int = DEFAULT_SEED, clock: Callable[[], float] = time.time) -> None:
        self.clock = clock
        switches, others = demo_ports(), list(FAR_ENDS)
        self._ports = switches + others
        self._refs = [PortRef(p.site, p.device, p.port, p.serves) for p in self._ports]
        # The switches and the devices at the far end of their links draw from streams of
        # their own, so that adding a far end leaves every switch port's counters as they were.
        rng, rng_far = np.random.default_rng(seed), np.random.default_rng(seed + 1)
        params, params_far = _parameters(switches, rng), _parameters(others, rng_far)
        _cabled(self._ports, params, params_far)
        self.counters = _live(switches, params, rng, seed)
        self.far_counters = _live(others, params_far, rng_far, seed + 1)
        self._rows = {(p.device, p.port): i for i, p in enumerate(self._ports)}
        self._far = {
            self._rows[near]: far
            for link in LINKS
            for near, far in ((link.a, link.b), (link.b, link.a))
            if link.deaf != near
        }

    @property
    def rates(self) -> dict[str, np.ndarray]:
        return self.counters.rates

    def ports(self) -> list[PortRef]:
        return list(self._refs)

    def poll(self, device: str, ports: Sequence[str] | None = None) -> PollTable:
        refs = self.devices().get(device)
        if refs is None:
            raise PollError(device, "not part of the demo network")
        names = [r.port for r in refs] if ports is None else list(ports)
        unknown = [name for name in names if (device, name) not in self._rows]
        if unknown:
            raise PollError(device, f"has no port {unknown[0]!r}")
        rows = np.array([self._rows[(device, name)] for name in names], np.intp)
        return self._read(rows, self.clock())

    def poll_all(self, at: float) -> PollTable:
        """Every port of the network, read at ``at``."""
        return self._read(np.arange(len(self._ports)), at)

    def _read(self, rows: npt.NDArray[np.intp], at: float) -> PollTable:
        """The rows' counters at ``at`` (switch ports, then far ends), with neighbors."""
        n = len(self.counters.device)
        parts = [self.counters.at(rows[rows < n], at)]
        if (rows >= n).any():
            parts.append(self.far_counters.at(rows[rows >= n] - n, at))
        order = np.concatenate([rows[rows < n], rows[rows >= n]])
        return self._with_neighbors(PollTable.concat(parts), order)

    def _with_neighbors(self, table: PollTable, rows: npt.NDArray[np.intp]) -> PollTable:
        """The polls with each cabled port's far end, as its LLDP would name it: an end
        that hears nothing of the other hears no LLDP frame either (IEEE 802.1AB: a
        neighbor's entry not refreshed within its time to live is removed; the clause
        from memory), so it names no neighbor."""
        far = [self._far.get(int(row)) for row in rows]
        table.neighbor_device = np.array([f and f[0] for f in far], dtype=object)
        table.neighbor_port = np.array([f and f[1] for f in far], dtype=object)
        return table


def _live(
    ports: list[DemoPort], params: pd.DataFrame, rng: np.random.Generator, seed: int
) -> LiveCounters:
    """Counters for ``ports`` that grow with time from their parameters."""
    return LiveCounters(
        params,
        rng,
        device=[p.device for p in ports],
        port=[p.port for p in ports],
        epoch=DEFAULT_START - _RUNNING_S,
        seed=seed,
        before=_before(ports, params),
        onset=np.array([np.nan if p.since_s is None else DEFAULT_START - p.since_s for p in ports]),
    )


def _parameters(ports: list[DemoPort], rng: np.random.Generator) -> pd.DataFrame:
    """Simulation parameters of every demo port, with the planted overrides applied."""
    # The guard verdicts are planted on healthy-looking ports; the tree's classes are sampled.
    labels = [p.planted if p.planted in TREE_VERDICTS else HEALTHY for p in ports]
    params = sample_parameters(labels, rng)
    params["window_s"] = 300.0
    params["stray_errors"] = 0.0
    params["cleared"] = False
    # Office hours on gigabit desk outlets: every healthy port carries enough to be judged,
    # on a clean line with no flaps and no stray frames too long. The live network turns
    # the simulator's few-per-window nuisances into steady rates, which over a longer
    # stored window add up to a fault the demo never planted.
    background = [row for row, p in enumerate(ports) if p.planted is None]
    quiet_line = {
        "half_duplex": 0.0, "mtu": 1500.0, "rx_ber": 1e-13, "burst_errors": 0.0,
        "link_changes": 0.0, "stray_giants": 0.0, "in_discard_ratio": 0.0,
        "out_discard_ratio": 0.0, "in_pause_fps": 0.0, "media_reported": True,
        "duplex_reported": True,
    }  # fmt: skip
    for key, value in {**COPPER_1G, **quiet_line}.items():
        params.loc[background, key] = value
    params.loc[background, "rx_util"] = rng.uniform(0.02, 0.25, len(background))
    params.loc[background, "tx_util"] = rng.uniform(0.02, 0.25, len(background))
    for row, port in enumerate(ports):
        for key, value in port.overrides.items():
            params.loc[row, key] = value
    return params


def _cabled(ports: list[DemoPort], params: pd.DataFrame, params_far: pd.DataFrame) -> None:
    """Each link's two ends made to agree: what one end sends, the other receives (its
    load, and its light less a healthy loss), except where a planted reading says
    otherwise or the direction is broken. ``ports`` are the switches' then the far ends'."""
    n = len(params)
    tables = {k: (params, k) if k < n else (params_far, k - n) for k in range(len(ports))}
    rows = {(p.device, p.port): k for k, p in enumerate(ports)}

    def get(k: int, key: str) -> float:
        table, row = tables[k]
        return float(table[key].iloc[row])

    def put(k: int, key: str, value: float) -> None:
        table, row = tables[k]
        table.at[row, key] = value

    for link in LINKS:
        a, b = rows[link.a], rows[link.b]
        for tx, rx in ((a, b), (b, a)):
            if link.deaf == (ports[rx].device, ports[rx].port):
                continue
            planted = ports[rx].overrides
            if "rx_util" in planted:  # the planted receiver's reading stands: the sender sends it
                put(tx, "tx_util", planted["rx_util"])
                put(tx, "tx_frame_octets", get(rx, "rx_frame_octets"))
            else:
                put(rx, "rx_util", get(tx, "tx_util"))
                put(rx, "rx_frame_octets", get(tx, "tx_frame_octets"))
            light = get(tx, "tx_power_dbm") - HEALTHY_LOSS_DB
            if "rx_margin_db" not in planted and light == light:  # not NaN: both read light
                put(rx, "rx_margin_db", light - get(rx, "rx_alarm_dbm"))


#: A clean line: what a port whose fault has a beginning read like before it.
_CLEAN_LINE = {"rx_ber": 1e-13, "runt_ratio": 0.0, "link_changes": 0.0, "burst_errors": 0.0}


def _before(ports: list[DemoPort], params: pd.DataFrame) -> pd.DataFrame:
    """The parameters before each fault began: those of a clean line where it has a
    beginning, the same as after elsewhere."""
    before = params.copy()
    began = [row for row, p in enumerate(ports) if p.since_s is not None]
    for key, value in _CLEAN_LINE.items():
        before.loc[began, key] = value
    return before


def demo_polls(*, seed: int = DEFAULT_SEED, end_time: float = DEFAULT_START) -> PollTable:
    """Two polls, five minutes apart, of every port of the demo network."""
    network = DemoNetwork(seed=seed)
    return PollTable.concat([network.poll_all(end_time - 300.0), network.poll_all(end_time)])
