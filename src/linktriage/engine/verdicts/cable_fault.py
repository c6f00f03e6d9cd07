"""cable_fault: physical-layer trouble in the cabling or its connectors, copper or fiber.

FCS, alignment and symbol errors at ordinary load, a bit error ratio significantly over the
PHY's IEEE 802.3 objective, with or without flaps (flaps alone are link_flapping since
SNAPSHOT-FORMAT 1.2); on fiber with the received light in range and no FEC evidence (a dirty
or damaged connector or patch cord). From both ends of a link: errored frames
received at one end only point at one direction's pair or strand.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.measure.measures import MIN_EVENTS
from linktriage.engine.measure.numbers import sig
from linktriage.engine.simulate.ports import (
    COPPER_1G,
    G,
    M,
    Ranges,
    Rng,
    chance,
    fault_ber,
    log_uniform,
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
from linktriage.engine.verdict_kit.ends import Ends, LinkView
from linktriage.engine.verdict_kit.readings import (
    Items,
    PortGroup,
    bit_errors,
    errored_frames,
    flaps,
    present,
    rx_light,
    speed,
    symbols,
)

if TYPE_CHECKING:
    import pandas as pd

CABLE_FAULT = Verdict("cable_fault")


def _evidence(c: PortGroup) -> list[Items]:
    out: list[Items] = []
    rows = zip(
        bit_errors(c), errored_frames(c), flaps(c), symbols(c), speed(c), rx_light(c),
        c["fiber"], strict=True,
    )  # fmt: skip
    for errors, frames, flapped, invalid, slow, light, fiber in rows:
        seen = light if fiber == 1.0 else None
        out.append([errors, *present(frames, invalid, flapped, slow, seen)])
    return out


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    # Copper or fiber as the base drew them; on fiber a dirty or damaged connector or patch
    # cord, with the light still in range.
    n = len(p)
    on_copper = p["fiber"].to_numpy() == 0.0
    # A gigabit port that lost a pair comes up at 100 Mb/s (1000BASE-T needs all four).
    downshift = on_copper & (p["speed_bps"] == G) & chance(rng, 0.3, n)
    p.loc[downshift, "max_speed_bps"] = G
    p.loc[downshift, "speed_bps"] = 100 * M
    p["rx_util"] = np.maximum(p["rx_util"], log_uniform(rng, 1e-3, 0.5, n))
    p["rx_ber"] = fault_ber(p, rng, r)
    p["alignment_share"] = rng.uniform(0.0, 0.08, n)
    # Noise rarely shortens a frame: runts are at most a few in a thousand errors.
    p["runt_ratio"] = p["rx_ber"] * p["rx_frame_octets"] * 8 * rng.uniform(0.0, 0.005, n)
    flapping = chance(rng, 0.35, n)
    p["link_changes"] = np.where(flapping, 2 * rng.integers(3, 15, n), 0).astype(float)
    # Flaps with errors between them (flaps alone are link_flapping, SNAPSHOT-FORMAT 1.2).
    p.loc[flapping, "reports_link_changes"] = True


def _errors_one_way(ends: Ends) -> LinkView | None:
    """Errored frames received at one end only (each end counts only what it receives):
    that direction's path; at both ends, the run they share."""
    rx_errors = ends.column("rx_errors")
    errs = [
        i for i in (ends.a, ends.b) if rx_errors[i] >= MIN_EVENTS and ends.verdict[i] == CABLE_FAULT
    ]
    if len(errs) == 2:
        first, second = ends.name(ends.a), ends.name(ends.b)
        said = [
            f"both ends receive errored frames: {first} {sig(rx_errors[ends.a])}, "
            f"{second} {sig(rx_errors[ends.b])}",
            *ends.losses,
        ]
        checks = [
            "the cable run both directions share: a crushed or kinked section, a bad termination",
            f"at {first} and at {second}: the connectors of both ends",
        ]
        return ends.view(CABLE_FAULT, said, checks)
    if len(errs) != 1:
        return None
    near = errs[0]
    far = ends.b if near == ends.a else ends.a
    near_end, far_end = ends.name(near), ends.name(far)
    said = [
        f"{near_end} receives errored frames ({sig(rx_errors[near])}); {far_end} receives "
        f"clean: only the {far_end} \u2192 {near_end} direction is damaged",
        *ends.losses,
    ]
    checks = [
        f"at {near_end}: its receive connector (clean and re-seat; inspect a fiber end face)",
        f"the {far_end} \u2192 {near_end} pair or strand of the cable, and its patch cords",
        f"at {far_end}: its transmit side",
    ]
    return ends.view(CABLE_FAULT, said, checks)


#: Phrases of the trade that name this verdict in a thread reply, each with a weight.
_PHRASES: tuple[tuple[str, int], ...] = (
    ("cable", 2), ("cord", 2), ("patch", 1), ("crimp", 2), ("punch", 2), ("jack", 2),
    ("pair", 1), ("termination", 2), ("rj45", 2), ("rj-45", 2), ("keystone", 2), ("crushed", 2),
    ("kinked", 2), ("connector", 1),
)  # fmt: skip

KIND = TreeVerdict(
    verdict=CABLE_FAULT,
    listed=2,
    title="cable or connector fault",
    meaning="Physical-layer errors at ordinary load: damaged cabling, connectors or terminations.",
    checks=(
        check(
            "Look at the patch cords at both ends: kinks, crushed or stapled runs, a broken "
            "latch, a cord under a chair castor or a door."
        ),
        check(
            "Swap the patch cord at one end for a known-good one, then at the other end, and "
            "watch whether the errors stop after each swap.",
            Touch.UNPLUG,
        ),
        check(
            "If they do not, test the permanent link with a cable certifier for its category "
            "(TIA-568: at most 90 m of permanent link plus 10 m of cords in a channel).",
            Touch.UNPLUG,
        ),
        check(
            "Check the terminations at the patch panel and the outlet: untwisted or split "
            "pairs, a loose punch-down.",
            Touch.UNPLUG,
        ),
        check(
            "A gigabit port that links at 100 Mb/s usually has a broken pair: 1000BASE-T "
            "needs all four pairs, 100BASE-TX only two."
        ),
        check(
            "Look for the cable running alongside fluorescent fittings, motors or power cables.",
            Touch.HEIGHT,
            Touch.POWER_NEARBY,
        ),
    ),
    fiber_checks=(
        check("Check received power against the module's thresholds at both ends."),
        check(
            "Clean both connectors and inspect the end faces with a fiber scope before "
            "re-seating (IEC 61300-3-35 describes what a clean end face looks like).",
            Touch.UNPLUG,
            Touch.FIBER_END,
        ),
        check(
            "Swap the patch cords for known-good ones, one end at a time.",
            Touch.UNPLUG,
            Touch.FIBER_END,
        ),
    ),
    cautions=(
        (Caution.FIBER_EYES, When.LIGHT),
        (Caution.POE_POWER, When.POE),
        (Caution.WORK_AT_HEIGHT, When.ALWAYS),
        (Caution.MAINS, When.ALWAYS),
        (Caution.SERVICE_BREAK, When.ALWAYS),
    ),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-east-idf2",
        "port14",
        "desk phone and PC, east wing reading room",
        {
            **COPPER_1G,
            "poe": 1.0,
            "rx_util": 0.1,
            "tx_util": 0.04,  # a desk's phone and PC: light load both ways
            "in_discard_ratio": 0.0,
            "rx_ber": 2e-8,
            "link_changes": 8.0,
            "runt_ratio": 1e-10,
        },
        # A cord crushed by a chair at 05:40 UTC: a history shows the clean link before.
        since_s=2 * 3600.0 + 20 * 60.0,
    ),
    severity=5,
    needs=(
        Need(
            "a bit error ratio over the PHY's objective by an exact one-sided test at 99%, "
            "and ten times it or more, beyond the frames a flapping link's drops cut short",
            "IEEE 802.3 bit-error-ratio objectives; Clopper-Pearson bound; SNAPSHOT-FORMAT 1.2",
            lambda s: s.real_errors,
        ),
        Need(
            "no FEC evidence (on a link with FEC and the light in range, that is fec_degraded) "
            "and no light above the receiver's most (optic_overload: an attenuator, not "
            "cleaning)",
            "SNAPSHOT-FORMAT 1.2",
            lambda s: ~(s.fec | s.overload),
        ),
        Need(
            "errors of line noise, not frames cut short by a half-duplex far end (at 100 Mb/s: "
            "symbol errors, or few alignment errors)",
            "RFC 3635 dot3StatsSymbolErrors, dot3StatsAlignmentErrors",
            lambda s: ~s.cut_frames,
        ),
    ),
    bit_errors=True,
    phrases=_PHRASES,
    signature=_signature,
    prior_share=0.10,
    shown_by=(Shows("ber_over_objective", higher=True), Shows("flaps_per_hour", higher=True)),
    link=LinkJudge(40, _errors_one_way),
)
