"""congestion: discards with no error signature, at high utilisation of that direction.

A capacity problem, not a fault: output (or input) discards where the direction's average
load over the window is 60% of line rate or more. Input discards at low load come from
filtering (ifInDiscards counts VLAN, STP and unknown-protocol drops, RFC 2863), not from a
full link.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.format.counters import WIRE_OVERHEAD_OCTETS
from linktriage.engine.measure.numbers import sig
from linktriage.engine.measure.signs import CONGESTED_UTILISATION
from linktriage.engine.simulate.ports import (
    FIBER_10G,
    Ranges,
    Rng,
    at_least,
    chance,
    frames,
    log_uniform,
)
from linktriage.engine.verdict_kit.declaration import (
    DemoPlant,
    Need,
    Shows,
    Touch,
    TreeVerdict,
    check,
)
from linktriage.engine.verdict_kit.readings import (
    LOAD_UNKNOWN,
    Items,
    PortGroup,
    bit_errors,
    item,
    ratio_words,
    six,
)

if TYPE_CHECKING:
    import pandas as pd

CONGESTION = Verdict("congestion")


def _discards(c: PortGroup) -> list[Items]:
    out: list[Items] = []
    for outbound, discarded, ratio, util in zip(
        c["discard_outbound"], c["discards"], c["discard_ratio"], c["discard_util"], strict=True
    ):
        way, counter = (
            ("outbound", "ifOutDiscards") if outbound == 1.0 else ("inbound", "ifInDiscards")
        )
        said = f"{way}: {discarded:,.0f} frames discarded ({ratio_words(ratio)})"
        load = LOAD_UNKNOWN if util != util else f"{way} load {sig(util * 100)}% of line rate"
        out.append([
            item(f"{way}_discards", discarded, "frames", None, f"RFC 2863 {counter}", said),
            item(f"{way}_utilisation", six(util), "share", CONGESTED_UTILISATION,
                  "common practice", load),
        ])  # fmt: skip
    return out


def _evidence(c: PortGroup) -> list[Items]:
    return [[*d, e] for d, e in zip(_discards(c), bit_errors(c), strict=True)]


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    inbound = chance(rng, 0.25, n)
    big = rng.uniform(400, 1500, n)
    # The load as IF-MIB octets measure it (frames only); the wire carries 20 octets more each.
    hot = rng.uniform(*r.congested_load, n) * (big + WIRE_OVERHEAD_OCTETS) / big
    # The other direction carries the acknowledgements: many small frames, little load.
    small = rng.uniform(64, 200, n)
    ack = (
        hot
        * rng.uniform(0.3, 1.0, n)
        * (small + WIRE_OVERHEAD_OCTETS)
        / (big + WIRE_OVERHEAD_OCTETS)
    )
    p["tx_util"] = np.where(inbound, ack, hot)
    p["rx_util"] = np.where(inbound, hot, ack)
    p["tx_frame_octets"] = np.where(inbound, small, big)
    p["rx_frame_octets"] = np.where(inbound, big, small)
    drop_out = at_least(log_uniform(rng, *r.discard_ratio, n), r.min_events, frames(p, "tx"))
    drop_in = at_least(log_uniform(rng, *r.discard_ratio, n), r.min_events, frames(p, "rx"))
    p["out_discard_ratio"] = np.where(inbound, 0.0, drop_out)
    p["in_discard_ratio"] = np.where(inbound, drop_in, 0.0)
    # Bursts the egress buffer cannot absorb at a lower average load: output discards over
    # one in 5,000 frames sent (SNAPSHOT-FORMAT 1.2).
    bursts = ~inbound & chance(rng, 0.3, n)
    calm = rng.uniform(0.05, 0.55, n)
    p.loc[bursts, "tx_util"] = calm[bursts]
    p.loc[bursts, "out_discard_ratio"] = at_least(
        log_uniform(rng, 5e-4, 5e-2, n), r.min_events, frames(p, "tx")
    )[bursts]


#: Phrases of the trade that name this verdict in a thread reply, each with a weight.
_PHRASES: tuple[tuple[str, int], ...] = (
    ("congest", 3), ("capacity", 2), ("saturat", 2), ("oversubscri", 2), ("bandwidth", 1),
    ("backup job", 2),
)  # fmt: skip

KIND = TreeVerdict(
    verdict=CONGESTION,
    listed=8,
    title="congestion",
    meaning=(
        "Discards at high utilisation with no error signature: a capacity problem, not a fault."
    ),
    checks=(
        check("Find what fills the link: the busiest hosts and flows on this port."),
        check(
            "Look at utilisation across the day: a nightly backup peak may be acceptable, "
            "a sustained one needs capacity."
        ),
        check(
            "Options: aggregate or upgrade the link, move heavy users, or prioritise voice "
            "and interactive traffic.",
            Touch.CONFIGURE,
        ),
    ),
    cautions=(),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-core1",
        "up5",
        "link to the annex",
        {**FIBER_10G, "rx_margin_db": 7.5, "tx_util": 0.94, "out_discard_ratio": 4e-3},
    ),
    severity=3,
    needs=(
        Need(
            f"discards in a direction running at {CONGESTED_UTILISATION:.0%} of line rate or more",
            "RFC 2863 ifInDiscards/ifOutDiscards; common practice",
            lambda s: s.congested,
        ),
        Need(
            "no flood of pause frames holding the transmitter off (that is pause_flood, which "
            "explains the port's own output discards)",
            "SNAPSHOT-FORMAT 1.2; IEEE 802.3 annex 31B",
            lambda s: ~s.pause,
        ),
    ),
    bit_errors=False,
    phrases=_PHRASES,
    signature=_signature,
    prior_share=0.10,
    shown_by=(Shows("discard_ratio", higher=True), Shows("discard_utilisation", higher=True)),
    one_end_only="discards are counted where a queue overflows, on one side of the link",
)
