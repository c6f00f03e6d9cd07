"""broadcast_storm: broadcasts fill a large share of the frames received, at a high rate
(SNAPSHOT-FORMAT 1.2; the figures are measure.signs.STORM_BCAST_FPS and STORM_BCAST_SHARE).
Where the same surge shows on several ports of one device, or of devices joined by LLDP, in
the same window, a forwarding loop is the likely cause, and the answer names those ports: a
verdict that looks across ports. A steady multicast stream is a look-alike, not a storm.

The site of a device is the inventory's, which the engine does not read: ports of one site
on devices not joined by LLDP are not grouped here.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.measure.numbers import sig
from linktriage.engine.measure.signs import STORM_BCAST_FPS, STORM_BCAST_SHARE
from linktriage.engine.simulate.ports import COPPER_1G, Ranges, Rng
from linktriage.engine.verdict_kit.declaration import (
    Caution,
    DemoPlant,
    Need,
    Shows,
    Touch,
    TreeVerdict,
    When,
    check,
)
from linktriage.engine.verdict_kit.readings import Items, PortFacts, PortGroup, item

if TYPE_CHECKING:
    import pandas as pd

BROADCAST_STORM = Verdict("broadcast_storm")
_SOURCE = "RFC 2863 ifHCInBroadcastPkts; common practice"


def storm_peers(facts: PortFacts, rows: list[int]) -> list[list[str]]:
    """For each of ``rows``, the other ports answered broadcast_storm on its device, or on
    a device an LLDP link joins to it (device and port, as an answer names them): the
    batch is read once, whatever the number of rows."""
    devices, verdicts, far = facts.device, facts.verdict, facts.far
    storms: dict[str, list[int]] = {}
    joined: dict[str, set[str]] = {}
    for j, v in enumerate(verdicts):
        if v == BROADCAST_STORM:
            storms.setdefault(devices[j], []).append(j)
        if far[j] >= 0:
            joined.setdefault(devices[j], set()).add(devices[far[j]])
    out = []
    for i in rows:
        near = {devices[i], *joined.get(devices[i], ())}
        out.append(
            [
                f"{devices[j]} {facts.port[j]}"
                for d in sorted(near)
                for j in storms.get(d, ())
                if j != i
            ]
        )
    return out


def _evidence(c: PortGroup) -> list[Items]:
    out: list[Items] = []
    all_peers = storm_peers(c.facts, c.rows)
    for fps, share, mcast, peers in zip(
        c["rx_bcast_fps"], c["rx_bcast_share"], c["rx_mcast_fps"], all_peers, strict=True
    ):
        if fps != fps:
            out.append([item("broadcast_fps", None, "frames/s", None, _SOURCE,
                             "broadcasts not reported")])  # fmt: skip
            continue
        said = (
            f"{sig(fps)} broadcasts a second received, {sig(share * 100)}% of all frames "
            f"(a storm from {STORM_BCAST_FPS:,.0f} a second and {STORM_BCAST_SHARE:.0%})"
        )
        items: Items = [item("broadcast_fps", float(f"{fps:.6g}"), "frames/s", STORM_BCAST_FPS,
                             _SOURCE, said)]  # fmt: skip
        if mcast == mcast:
            items.append(item("multicast_fps", float(f"{mcast:.6g}"), "frames/s", None,
                              "RFC 2863 ifHCInMulticastPkts",
                              f"and {sig(mcast)} multicast frames a second"))  # fmt: skip
        if peers:
            said = (
                f"the same surge in the same window on {', '.join(peers)}: a forwarding loop is "
                "likely (read across ports, not from this port alone)"
            )
            items.append(item("loop_ports", ", ".join(peers), "ports", None,
                              "common practice: a loop replicates broadcasts on every port "
                              "of it", said))  # fmt: skip
        out.append(items)
    return out


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    p["rx_frame_octets"] = rng.uniform(64.0, 400.0, n)
    p["rx_bcast_share"] = rng.uniform(0.35, 0.99, n)
    p["rx_mcast_part"] = rng.uniform(0.0, 0.3, n)
    # Broadcasts at 2,000 a second or far more, whatever the speed.
    fps = 10.0 ** rng.uniform(np.log10(2.5 * STORM_BCAST_FPS), 6.0, n)
    bits = (p["rx_frame_octets"].to_numpy() + 20.0) * 8.0
    need = fps / (p["rx_bcast_share"].to_numpy() * (1.0 - p["rx_mcast_part"].to_numpy()))
    p["rx_util"] = np.clip(need * bits / p["speed_bps"].to_numpy(), 0.0, 0.97)


_PHRASES: tuple[tuple[str, int], ...] = (
    ("storm", 3), ("loop", 3), ("broadcast", 2), ("looped", 3), ("spanning tree", 1),
    ("two cables", 2),
)  # fmt: skip

KIND = TreeVerdict(
    verdict=BROADCAST_STORM,
    listed=12,
    title="broadcast storm",
    meaning=(
        "Broadcasts flood the port at a high rate: often a forwarding loop when several "
        "ports surge together, sometimes a faulty host."
    ),
    checks=(
        check(
            "Before shutting anything, find the loop: the ports listed surge together; look "
            "for a cable between two wall jacks, a small switch under a desk cabled back, or "
            "a bridged device."
        ),
        check(
            "Break it one port at a time, from the edge in, keeping a way into the device "
            "that does not cross those ports (its console or another uplink), and watch the "
            "broadcast rate fall.",
            Touch.UNPLUG,
            Touch.CONFIGURE,
        ),
        check(
            "Once quiet, check that spanning tree protects the edge ports and that storm "
            "control is set, so it cannot come back.",
            Touch.CONFIGURE,
        ),
    ),
    cautions=((Caution.LOOP, When.ALWAYS), (Caution.SERVICE_BREAK, When.ALWAYS)),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-west-idf1",
        "port3",
        "study room jacks (someone cabled two of them together)",
        {
            **COPPER_1G,
            "rx_util": 0.55,
            "rx_frame_octets": 90.0,
            "rx_bcast_share": 0.85,
            "rx_mcast_part": 0.1,
        },
        also=("port4",),
    ),
    severity=5,
    needs=(
        Need(
            f"broadcasts received at {STORM_BCAST_FPS:,.0f} a second or more, and "
            f"{STORM_BCAST_SHARE:.0%} of the frames received or more",
            "RFC 2863 broadcast counters; common practice",
            lambda s: s.storm,
        ),
    ),
    bit_errors=False,
    phrases=_PHRASES,
    signature=_signature,
    prior_share=0.06,
    shown_by=(Shows("broadcast_fps", higher=True), Shows("broadcast_share", higher=True)),
)
