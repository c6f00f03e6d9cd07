"""mtu_mismatch: frames dropped as too long (giants, oversize) with no FCS errors.

A port counts a received frame longer than its MTU plus 18 octets of header and FCS as too
long (RFC 3635 dot3StatsFrameTooLongs); at the standard 1500-octet MTU, RMON's
etherStatsOversizePkts counts the same frames (longer than 1518 octets, RFC 2819).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from linktriage.engine.format.answers import Verdict
from linktriage.engine.simulate.ports import (
    COPPER_1G,
    Ranges,
    Rng,
    at_least,
    choice,
    frames,
    log_uniform,
)
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
from linktriage.engine.verdict_kit.readings import (
    Items,
    PortGroup,
    bit_errors,
    count_and_share,
)

if TYPE_CHECKING:
    import pandas as pd

MTU_MISMATCH = Verdict("mtu_mismatch")


def _giants(c: PortGroup) -> Items:
    extra = [f" for an MTU of {mtu:.0f}" if mtu == mtu else "" for mtu in c["mtu"]]
    return count_and_share(
        c, "frames_too_long", "giants", "giant_ratio", "frames too long", "received frames",
        "RFC 3635 dot3StatsFrameTooLongs; RFC 2819 etherStatsOversizePkts", extra,
    )  # fmt: skip


def _evidence(c: PortGroup) -> list[Items]:
    return [[giants, errors] for giants, errors in zip(_giants(c), bit_errors(c), strict=True)]


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    p["giant_ratio"] = at_least(log_uniform(rng, *r.giant_ratio, n), r.min_events, frames(p, "rx"))
    p["mtu"] = choice(rng, ((1500, 85), (9000, 15)), n)
    p["jumbo_share"] = 0.0
    # The too-long frames are counted by the EtherLike table, or by RMON where the MTU is
    # the standard 1500 (etherStatsOversizePkts counts every frame over 1518 octets).
    jumbo = p["mtu"].to_numpy() > 1500
    neither = ~p["dot3"].to_numpy() & ~p["rmon"].to_numpy()
    p.loc[jumbo, "dot3"] = True
    p.loc[neither & ~jumbo, "rmon"] = True


KIND = TreeVerdict(
    verdict=MTU_MISMATCH,
    listed=5,
    title="MTU mismatch",
    meaning="Frames arrive longer than this port accepts and are dropped, with no FCS errors.",
    checks=(
        check(
            "Compare the MTU at both ends and along the path: switch ports, VLAN and routed "
            "interfaces, virtual switches, storage and tunnel endpoints."
        ),
        check(
            "Confirm with a do-not-fragment ping at the size in question from a host on each "
            "side (8972 octets of payload for a 9000-octet IPv4 MTU)."
        ),
        check(
            "Use one MTU across the layer-2 domain; jumbo frames only where every hop agrees.",
            Touch.CONFIGURE,
        ),
    ),
    cautions=((Caution.SERVICE_BREAK, When.ALWAYS),),
    evidence=_evidence,
    demo=DemoPlant(
        "annex",
        "lark-annex-sw1",
        "port3",
        "archive storage server",
        {**COPPER_1G, "poe": 0.0, "mtu": 1500.0, "giant_ratio": 0.02, "rx_util": 0.2},
    ),
    severity=3,
    needs=(
        Need(
            "frames too long counted (dot3StatsFrameTooLongs or etherStatsOversizePkts)",
            "RFC 3635 dot3StatsFrameTooLongs; RFC 2819 etherStatsOversizePkts",
            lambda s: s.giants,
        ),
    ),
    bit_errors=False,
    phrases=(("mtu", 3), ("jumbo", 3), ("frame size", 2), ("giant", 2)),
    signature=_signature,
    prior_share=0.10,
    shown_by=(Shows("giant_ratio", higher=True),),
)
