"""negotiation_degraded: the link came up slower, or at half duplex, than the port supports.

A speed below the port's capability, or half duplex (reported, or shown by collisions, which
full duplex never counts), without an error signature: one end forced, an advertisement
limited to lower speeds, autonegotiation incomplete (IEEE 802.3 clause 28). A state reading:
it holds on an idle port too.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.simulate.ports import (
    G,
    M,
    Ranges,
    Rng,
    chance,
    copper,
    log_uniform,
    optics_for,
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
    collisions,
    duplex,
    present,
    speed,
)

if TYPE_CHECKING:
    import pandas as pd

NEGOTIATION_DEGRADED = Verdict("negotiation_degraded")


def _evidence(c: PortGroup) -> list[Items]:
    return [
        [*present(slow), *([state] if half == 1.0 else []), collided, errors]
        for slow, state, half, collided, errors in zip(
            speed(c),
            duplex(c),
            c["half_duplex_seen"],
            collisions(c),
            bit_errors(c),
            strict=True,
        )
    ]


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    copper(p, rng, ((10 * M, 20), (100 * M, 80)))
    half = chance(rng, 0.3, n)
    p["max_speed_bps"] = np.where(half & chance(rng, 0.5, n), p["speed_bps"], G)
    # A 10G port at 1 Gb/s: copper or fiber.
    fast = ~half & chance(rng, 0.2, n)
    optic = fast & chance(rng, 0.6, n)
    p.loc[fast, ["speed_bps", "max_speed_bps"]] = [G, 10 * G]
    p.loc[optic, ["fiber", "poe"]] = [1.0, 0.0]
    optics_for(p, optic, rng, r)
    p["half_duplex"] = half.astype(float)
    # Half duplex shows as reported, or as the collisions of the EtherLike table.
    p.loc[half & ~p["duplex_reported"].to_numpy(), "dot3"] = True
    # Both ends half duplex: ordinary (early) collisions growing with load, no late ones.
    p["collision_ratio"] = np.where(half, log_uniform(rng, 0.02, 0.3, n) * p["rx_util"], 0.0)
    # A state reading: it holds on idle ports too.
    idle = chance(rng, 0.2, n)
    p.loc[idle, "rx_util"] = log_uniform(rng, 1e-6, 1e-4, int(idle.sum()))
    p.loc[idle, "tx_util"] = log_uniform(rng, 1e-6, 1e-4, int(idle.sum()))


#: Phrases of the trade that name this verdict in a thread reply, each with a weight.
_PHRASES: tuple[tuple[str, int], ...] = (
    ("autoneg", 3), ("auto-neg", 3), ("negotiat", 3), ("forced speed", 3),
    ("hard-coded speed", 3), ("hardcoded speed", 3), ("speed", 1),
)  # fmt: skip

KIND = TreeVerdict(
    verdict=NEGOTIATION_DEGRADED,
    listed=4,
    title="negotiation degraded",
    meaning="The link came up slower, or at half duplex, below what the port supports.",
    checks=(
        check(
            "Check both ends' settings: a fixed speed or duplex, or an advertisement "
            "limited to lower speeds."
        ),
        check(
            "Check what the far end supports: an older device may only run at this speed, "
            "in which case the link is as fast as it can be."
        ),
        check(
            "If both ends auto-negotiate and still come up slow, test the cable: a missing "
            "or broken pair leaves a gigabit link at 100 Mb/s.",
            Touch.UNPLUG,
        ),
    ),
    cautions=((Caution.POE_POWER, When.POE), (Caution.SERVICE_BREAK, When.ALWAYS)),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-east-idf1",
        "port19",
        "catalogue kiosk, east wing lobby",
        {"speed_bps": 100 * M, "max_speed_bps": G, "half_duplex": 0.0, "rx_util": 0.15},
    ),
    severity=2,
    needs=(
        Need(
            "a speed below the port's capability, or half duplex (reported, or shown by "
            "collisions)",
            "IEEE 802.3 clause 28 (autonegotiation)",
            lambda s: s.slow | s.half,
        ),
    ),
    bit_errors=False,
    phrases=_PHRASES,
    signature=_signature,
    prior_share=0.10,
    shown_by=(Shows("speed_ratio", higher=False), Shows("half_duplex", higher=True)),
    one_end_only="a port's speed is what its own negotiation settled on",
)
