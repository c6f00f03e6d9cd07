"""duplex_mismatch: the two ends disagree on duplex.

The half-duplex end defers and counts late collisions (a collision after the 512-bit slot
time, IEEE 802.3 clause 4.4.2), growing with the load the far end sends; the full-duplex end
receives the frames those collisions cut short, as FCS errors and runts, growing with the
load it sends itself. Half duplex exists only at 10, 100 and 1000 Mb/s on copper.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.measure.measures import MIN_COLLISIONS
from linktriage.engine.measure.numbers import sig
from linktriage.engine.measure.signs import CUT_ALIGNMENT_SHARE
from linktriage.engine.simulate.ports import (
    G,
    M,
    Ranges,
    Rng,
    at_least,
    chance,
    copper,
    frames,
    log_uniform,
    objective,
)
from linktriage.engine.verdict_kit.declaration import (
    Caution,
    DemoPlant,
    LinkJudge,
    Need,
    Shows,
    Touch,
    TreeVerdict,
    When,
    check,
)
from linktriage.engine.verdict_kit.ends import Ends, LinkView, counted_words, listed
from linktriage.engine.verdict_kit.readings import (
    Items,
    MaybeItems,
    PortGroup,
    collisions,
    count_and_share,
    duplex,
    errored_frames,
    item,
    present,
    six,
    speed_words,
)

if TYPE_CHECKING:
    import pandas as pd

DUPLEX_MISMATCH = Verdict("duplex_mismatch")


def _late(c: PortGroup) -> Items:
    return count_and_share(
        c, "late_collisions", "late_collisions", "late_ratio", "late collisions", "sent frames",
        "RFC 3635 dot3StatsLateCollisions; IEEE 802.3 clause 4.4.2",
        [": never normal"] * len(c),
    )  # fmt: skip


def _runts(c: PortGroup) -> Items:
    source = "RFC 2819 etherStatsFragments + etherStatsUndersizePkts"
    out: Items = []
    for runts, share in zip(c["runts"], c["runt_share"], strict=True):
        if runts != runts:
            out.append(item("runts", None, "frames", None, source, "runts: not reported"))
        elif runts == 0:
            out.append(item("runts", 0.0, "frames", None, source, "no runts"))
        else:
            said = f"{runts:,.0f} runts, {sig(share * 100)}% of the receive errors"
            out.append(item("runts", runts, "frames", None, source, said))
    return out


def _cut(c: PortGroup) -> MaybeItems:
    """Where no runts are counted: alignment errors beside FCS errors with clean symbols,
    frames a half-duplex far end cut short (see measure.signs.CUT_ALIGNMENT_SHARE)."""
    source = "RFC 3635 dot3StatsAlignmentErrors, dot3StatsSymbolErrors"
    out: MaybeItems = []
    for share, symbols, runts in zip(
        c["alignment_share"], c["symbol_errors"], c["runts"], strict=True
    ):
        if runts == runts or not share > 0:
            out.append(None)
            continue
        clean = (
            "no symbol errors" if symbols == 0 else
            "symbol errors not reported" if symbols != symbols else f"{symbols:,.0f} symbol errors"
        )  # fmt: skip
        said = (
            f"{sig(share * 100)}% of the errored frames also fail alignment, with {clean}: "
            "frames cut short at a nibble boundary by a far end that aborts on collision, "
            "not line noise (which corrupts code groups)"
        )
        out.append(item("alignment_share", six(share), "share", CUT_ALIGNMENT_SHARE, source, said))
    return out


def _medium(c: PortGroup) -> Items:
    source = "IEEE 802.3: half duplex up to 1000 Mb/s only (clause 44.1.1, from memory)"
    out: Items = []
    for speed, fiber in zip(c["speed_bps"], c["fiber"], strict=True):
        medium = {1.0: "fiber", 0.0: "copper"}.get(fiber, "medium not reported")
        where = speed_words(speed) if speed == speed else "speed not reported"
        said = f"{where}, {medium}: half duplex exists here"
        shown = speed if speed == speed else None
        out.append(item("half_duplex_exists", shown, "b/s", 1e9, source, said))
    return out


def _evidence(c: PortGroup) -> list[Items]:
    out: list[Items] = []
    for late, state, collided, runts, frames_, cut, medium in zip(
        _late(c), duplex(c), collisions(c), _runts(c), errored_frames(c), _cut(c), _medium(c),
        strict=True,
    ):  # fmt: skip
        head = [late, state] if late["value"] else [state, late]
        out.append([*head, collided, runts, *present(frames_, cut), medium])
    return out


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    copper(p, rng, ((10 * M, 15), (100 * M, 75), (G, 10)))
    p["max_speed_bps"] = np.where(chance(rng, 0.5, n), G, p["speed_bps"])
    p["max_speed_bps"] = np.maximum(p["max_speed_bps"], p["speed_bps"])
    p["rx_util"] = log_uniform(rng, 3e-3, 0.5, n)
    p["tx_util"] = log_uniform(rng, 3e-3, 0.5, n)
    half_end = chance(rng, 0.5, n)
    strength = log_uniform(rng, *r.duplex_strength, n)
    p["half_duplex"] = half_end.astype(float)
    # The evidence lives in the EtherLike table at the half end (late collisions) and in
    # RMON at the full end (fragments): without them no reading could tell.
    p.loc[half_end, "dot3"] = True
    p.loc[~half_end, "rmon"] = True
    # Half-duplex end: the peer transmits regardless, so collisions follow the receive load.
    late = at_least(strength * p["rx_util"].to_numpy(), r.min_events / 2, frames(p, "tx"))
    p["late_ratio"] = np.where(half_end, late, 0.0)
    p["collision_ratio"] = np.where(half_end, late * rng.uniform(1.5, 5.0, n), 0.0)
    # Full-duplex end: the half end aborts our frames, so errors follow our transmit load;
    # the aborted frames arrive as runts (RMON fragments) beside the FCS errors.
    crc = at_least(strength * p["tx_util"].to_numpy(), r.min_events, frames(p, "rx"))
    p["extra_crc_ratio"] = np.where(half_end, 0.05 * crc, crc)
    # A collision cuts a frame at a random point: the cut lands within the 64-octet slot,
    # leaving a runt, about slot / frame of the time (IEEE 802.3 clause 4.4.2 slotTime).
    cut_early = np.clip(
        64.0 / p["rx_frame_octets"].to_numpy() * rng.uniform(0.5, 2.0, n), 0.005, 0.9
    )
    runts = at_least(crc * cut_early / (1.0 - cut_early), r.min_events, frames(p, "rx"))
    p["runt_ratio"] = np.where(half_end, 0.0, runts)
    p["symbols_per_error"] = 0.0  # a clean signal: the damage is in the MAC, not the PHY
    p["rx_ber"] = objective(p["speed_bps"].to_numpy(), p["fiber"].to_numpy()) * 1e-4


def _half_and_full(ends: Ends) -> LinkView | None:
    """One end at half duplex, the other at full (IEEE 802.3 clause 4: the half end defers
    and collides late; the full end receives frames cut short by those collisions, as FCS
    errors and runts)."""
    half = ends.column("half_duplex_seen")
    for h, f in ends.both():
        if half[h] == 1.0 and half[f] == 0.0:
            half_end, full_end = ends.name(h), ends.name(f)
            late = counted_words(
                ends.column("late_collisions")[h], "late collision", MIN_COLLISIONS
            )
            seen = [
                counted_words(ends.column("rx_errors")[f], "errored frame", 1),
                counted_words(ends.column("runts")[f], "runt", 1),
            ]
            said = [
                f"{half_end} runs half duplex" + listed([late]),
                f"{full_end} runs full duplex" + listed(seen),
            ]
            checks = [
                f"at {half_end}: it is the auto-negotiating end left at half duplex; set both "
                "ends alike (auto-negotiation on both, or the same fixed speed and full duplex)",
                f"at {full_end}: if it is fixed at full duplex, return it to auto-negotiation",
            ]
            return ends.view(DUPLEX_MISMATCH, said, checks)
    return None


KIND = TreeVerdict(
    verdict=DUPLEX_MISMATCH,
    listed=3,
    title="duplex mismatch",
    meaning="The two ends disagree on duplex: one sends while the other thinks the wire is shared.",
    checks=(
        check(
            "Compare speed and duplex on both ends: a fixed setting at one end and "
            "auto-negotiation at the other leaves the auto end at half duplex."
        ),
        check(
            "Configure both ends alike: auto-negotiation on both (1000BASE-T requires it), "
            "or the same fixed speed and full duplex on both.",
            Touch.CONFIGURE,
        ),
        check(
            "After the change, late collisions at the half-duplex end and FCS errors at the "
            "full-duplex end should stop."
        ),
    ),
    cautions=((Caution.POE_POWER, When.POE), (Caution.SERVICE_BREAK, When.ALWAYS)),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-east-idf2",
        "port7",
        "label printer, circulation desk",
        # The switch's end fell back to half duplex (parallel detection): late collisions.
        {
            "speed_bps": 100 * M,
            "max_speed_bps": G,
            "rx_util": 0.08,
            "tx_util": 0.05,
            "half_duplex": 1.0,
            "dot3": True,
            "late_ratio": 0.05,
            "collision_ratio": 0.12,
            "runt_ratio": 0.0,
            "extra_crc_ratio": 0.0,
            "duplex_reported": True,
        },
    ),
    severity=4,
    needs=(
        Need(
            "a port where half duplex exists (10, 100 or 1000 Mb/s copper) or one that reports it",
            "IEEE 802.3 clause 44.1.1: 10 Gb/s and faster are full duplex only (from memory)",
            lambda s: s.half_exists | s.half,
        ),
        Need(
            "late collisions, or runts beside FCS errors, or (at 100 Mb/s with no runt "
            "counter) FCS errors with alignment errors and no symbol errors",
            "RFC 3635 dot3StatsLateCollisions, dot3StatsSymbolErrors; RFC 2819 etherStatsFragments",
            lambda s: s.late | s.runts | s.cut_frames,
        ),
    ),
    bit_errors=False,  # frames are damaged by collision, not by bit errors on the wire
    phrases=(("duplex", 3), ("late collision", 3)),
    signature=_signature,
    prior_share=0.10,
    shown_by=(
        Shows("late_collision_ratio", higher=True),
        Shows("collision_ratio", higher=True),
        Shows("runts_vs_collisions", higher=True),
        Shows("half_duplex", higher=True),
    ),
    link=LinkJudge(10, _half_and_full),
    one_end_only="a port's duplex is its own setting",
)
