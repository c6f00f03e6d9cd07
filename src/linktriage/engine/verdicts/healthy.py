"""healthy: no fault signature in the window.

Healthy is the one verdict the tree answers that is not a fault. It needs more of a port's
readings than any other: enough frames to bound the error ratio at the PHY's resolution (the
rule of three), and none of the states or signs any fault rests on. Its signature in the
simulator is the base every simulated port starts from, nuisances of real networks included.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from linktriage.engine.format.answers import Verdict
from linktriage.engine.simulate.ports import Ranges, Rng, by_design
from linktriage.engine.verdict_kit.declaration import Need, TreeVerdict, check
from linktriage.engine.verdict_kit.readings import Items, PortGroup, also_seen, bit_errors

if TYPE_CHECKING:
    import pandas as pd

HEALTHY = Verdict("healthy")


def _evidence(c: PortGroup) -> list[Items]:
    return [[e, *more] for e, more in zip(bit_errors(c), also_seen(c), strict=True)]


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    """A healthy port is the simulator's base port as drawn, and speeds below the port's
    that are designs (a module or a far end that does less)."""
    by_design(p, rng, r)


#: Phrases of the trade that name this verdict in a thread reply, each with a weight.
_PHRASES: tuple[tuple[str, int], ...] = (
    ("healthy", 3), ("false alarm", 3), ("nothing wrong", 3), ("no fault", 3), ("all good", 2),
    ("works fine", 2),
)  # fmt: skip

KIND = TreeVerdict(
    verdict=HEALTHY,
    listed=1,
    title="healthy",
    meaning="No fault signature in the window.",
    checks=(
        check(
            "Nothing to fix on this link. If users still report trouble, look beyond it: the "
            "uplink, the far-end device, or the application."
        ),
        check("A fault that comes and goes shows up in later windows: ask again if it recurs."),
    ),
    cautions=(),
    evidence=_evidence,
    demo=None,
    severity=None,
    needs=(
        Need(
            "enough received frames to bound the error ratio at the PHY's resolution",
            "rule of three (exact binomial bound at 95%)",
            lambda s: s.enough_frames,
        ),
        Need(
            "no bit error ratio over the PHY's objective by an exact one-sided test at 99%, "
            "and ten times it or more",
            "IEEE 802.3 bit-error-ratio objectives; Clopper-Pearson bound",
            lambda s: ~s.errors,
        ),
        Need(
            "no discards at high load, nor output discards over 1 in 10,000 frames sent",
            "SNAPSHOT-FORMAT 1.2 congestion; common practice",
            lambda s: ~s.congested,
        ),
        Need(
            "no late collisions, which are never normal",
            "RFC 3635 dot3StatsLateCollisions; IEEE 802.3 clause 4.4.2",
            lambda s: ~s.late,
        ),
        Need(
            "full duplex at the port's top speed",
            "SNAPSHOT-FORMAT verdicts: below capability is negotiation_degraded",
            lambda s: ~(s.half | s.slow),
        ),
        Need(
            "received and transmitted light above the module's low alarm and under its high "
            "one, the laser bias within its alarm thresholds, and the module not running hot",
            "SFF-8472 alarm thresholds",
            lambda s: (
                ~(s.light_under_alarm | (s.tx_low & s.optics) | s.bias_out | s.overload | s.hot)
            ),
        ),
        Need(
            "a link that stays up (fewer than two down/up cycles in the window)",
            "common practice",
            lambda s: ~s.flapping,
        ),
        Need("frames in both directions", "common practice", lambda s: ~s.silent),
        Need(
            "FEC correcting under its code's high level, and no codeword lost",
            "IEEE 802.3 clauses 74, 91 and 119; SNAPSHOT-FORMAT 1.2",
            lambda s: ~s.fec,
        ),
        Need(
            "no flood of pause frames and no broadcast storm",
            "IEEE 802.3 annex 31B; common practice",
            lambda s: ~(s.pause | s.storm),
        ),
    ),
    bit_errors=True,
    phrases=_PHRASES,
    signature=_signature,
    prior_share=0.30,
    shown_by=(),
)
