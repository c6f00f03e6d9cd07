"""The verdict ids, what each means, the next physical checks, and the cautions that go with them.

The ids are fixed by the snapshot format. The first eight are what the tree can answer; the
last three are answered by the guards before the tree is asked. Checks and cautions are
written for an engineer about to walk to a wiring closet; cautions depend on the port (PoE,
fiber) and always defer to local codes and licensed practice.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum


class Verdict(StrEnum):
    """Every diagnosis ends in exactly one of these."""

    HEALTHY = "healthy"
    CABLE_FAULT = "cable_fault"
    DUPLEX_MISMATCH = "duplex_mismatch"
    NEGOTIATION_DEGRADED = "negotiation_degraded"
    MTU_MISMATCH = "mtu_mismatch"
    OPTIC_DEGRADED = "optic_degraded"
    UNIDIRECTIONAL = "unidirectional"
    CONGESTION = "congestion"
    INSUFFICIENT_TRAFFIC = "insufficient_traffic"
    LINK_DOWN = "link_down"
    NO_DATA = "no_data"


TREE_VERDICTS: tuple[Verdict, ...] = tuple(Verdict)[:8]
GUARD_VERDICTS: tuple[Verdict, ...] = tuple(Verdict)[8:]
#: Verdicts that mean something on the link needs a person's attention.
FAULTS: frozenset[Verdict] = frozenset(TREE_VERDICTS) - {Verdict.HEALTHY}
#: How urgently each fault wants a visit, for ranking suspect links: a link that corrupts
#: or loses traffic ranks above one that is slow or full.
SEVERITY: dict[Verdict, int] = {
    Verdict.CABLE_FAULT: 5,
    Verdict.OPTIC_DEGRADED: 5,
    Verdict.UNIDIRECTIONAL: 5,
    Verdict.DUPLEX_MISMATCH: 4,
    Verdict.MTU_MISMATCH: 3,
    Verdict.CONGESTION: 3,
    Verdict.NEGOTIATION_DEGRADED: 2,
}


class Caution(StrEnum):
    """Safety and service notes; each is shown only where it applies to the port."""

    FIBER_EYES = (
        "Never look into a fiber end, a patch cord or an open transceiver port: the light "
        "is infrared, invisible, and can injure your eyes (laser classes of IEC 60825-1). "
        "Inspect end faces with a fiber scope or video probe, and cap open ports."
    )
    POE_POWER = (
        "This port supplies Power over Ethernet: unplugging or re-patching it switches off "
        "whatever it feeds (a phone, camera, wireless access point, perhaps a door, alarm or "
        "other life-safety device). Find out what is connected and agree a time first. It "
        "carries up to 57 V DC (IEEE 802.3af/at/bt): use PoE-tolerant test equipment."
    )
    WORK_AT_HEIGHT = (
        "Tracing a cable through ceilings, risers or floor voids: follow the site's rules for "
        "ladders and work at height, and do not work alone."
    )
    MAINS = (
        "Stay with the data cabling: anything involving mains power (electrical panels, "
        "outlets, rack power distribution) is work for a licensed electrician."
    )
    SERVICE_BREAK = (
        "Re-patching, re-seating or re-configuring this port interrupts the link for "
        "everything behind it: tell its users first."
    )
    LOCAL_CODES = (
        "These are suggestions for a trained technician: local codes, site safety rules and "
        "licensed practice come first."
    )


#: A few words of each caution, for the first screen of an answer; the whole text follows
#: in its thread.
SHORT: dict[Caution, str] = {
    Caution.FIBER_EYES: (
        "Never look into a fiber end or an open port: invisible laser light can injure "
        "your eyes. Use a fiber scope; cap open ports."
    ),
    Caution.POE_POWER: (
        "PoE port: unplugging it cuts power to what it feeds (phones, cameras, access "
        "points, perhaps life-safety devices). Agree a time first."
    ),
    Caution.WORK_AT_HEIGHT: "Ceilings and risers: follow the site's rules for ladders; not alone.",
    Caution.MAINS: "Mains power is work for a licensed electrician.",
    Caution.SERVICE_BREAK: "This interrupts the link: tell its users first.",
    Caution.LOCAL_CODES: "Local codes, site rules and licensed practice come first.",
}


class Touch(StrEnum):
    """What doing a check involves, which decides the cautions it needs."""

    UNPLUG = "unplugs, re-seats or re-patches a cord or module"
    FIBER_END = "opens a fiber end or a transceiver port"
    CONFIGURE = "changes the port's configuration"
    HEIGHT = "follows a cable through ceilings or risers"
    POWER_NEARBY = "looks at power cables and fittings near the run"


#: The cautions each kind of work calls for (LOCAL_CODES goes with any of them).
NEEDS: dict[Caution, frozenset[Touch]] = {
    Caution.FIBER_EYES: frozenset({Touch.UNPLUG, Touch.FIBER_END}),
    Caution.POE_POWER: frozenset({Touch.UNPLUG}),
    Caution.WORK_AT_HEIGHT: frozenset({Touch.HEIGHT}),
    Caution.MAINS: frozenset({Touch.POWER_NEARBY}),
    Caution.SERVICE_BREAK: frozenset({Touch.UNPLUG, Touch.CONFIGURE}),
}


@dataclass(frozen=True, slots=True)
class Check:
    """One physical check, and what doing it involves."""

    text: str
    touches: frozenset[Touch] = frozenset()


def _check(text: str, *touches: Touch) -> Check:
    return Check(text, frozenset(touches))


@dataclass(frozen=True, slots=True)
class Guide:
    """What a verdict means and what to check, on copper and on fiber."""

    title: str
    meaning: str
    checks: tuple[Check, ...]
    fiber_checks: tuple[Check, ...] | None = None  # when fiber needs different steps


_CABLE_COPPER = (
    _check(
        "Look at the patch cords at both ends: kinks, crushed or stapled runs, a broken latch, a "
        "cord under a chair castor or a door."
    ),
    _check(
        "Swap the patch cord at one end for a known-good one, then at the other end, and watch "
        "whether the errors stop after each swap.",
        Touch.UNPLUG,
    ),
    _check(
        "If they do not, test the permanent link with a cable certifier for its category "
        "(TIA-568: at most 90 m of permanent link plus 10 m of cords in a channel).",
        Touch.UNPLUG,
    ),
    _check(
        "Check the terminations at the patch panel and the outlet: untwisted or split pairs, "
        "a loose punch-down.",
        Touch.UNPLUG,
    ),
    _check(
        "A gigabit port that links at 100 Mb/s usually has a broken pair: 1000BASE-T needs all "
        "four pairs, 100BASE-TX only two."
    ),
    _check(
        "Look for the cable running alongside fluorescent fittings, motors or power cables.",
        Touch.HEIGHT,
        Touch.POWER_NEARBY,
    ),
)
_CABLE_FIBER = (
    _check(
        "Clean both connectors and inspect the end faces with a fiber scope before re-seating "
        "(IEC 61300-3-35 describes what a clean end face looks like).",
        Touch.UNPLUG,
        Touch.FIBER_END,
    ),
    _check(
        "Swap the patch cords for known-good ones, one end at a time.",
        Touch.UNPLUG,
        Touch.FIBER_END,
    ),
    _check("Check received power against the module's thresholds at both ends."),
)

_ONE_WAY_FAR_END = _check(
    "Look at the far end: a one-way link usually shows there as receive-only or transmit-only too."
)
_ONE_WAY_OUT_OF_FORWARDING = _check(
    "Until it is fixed, keep the link out of forwarding: a one-way link can cause "
    "loops and black holes.",
    Touch.CONFIGURE,
)

GUIDES: dict[Verdict, Guide] = {
    Verdict.HEALTHY: Guide(
        "healthy",
        "No fault signature in the window.",
        (
            _check(
                "Nothing to fix on this link. If users still report trouble, look beyond it: the "
                "uplink, the far-end device, or the application."
            ),
            _check(
                "A fault that comes and goes shows up in later windows: ask again if it recurs."
            ),
        ),
    ),
    Verdict.CABLE_FAULT: Guide(
        "cable or connector fault",
        "Physical-layer errors at ordinary load: damaged cabling, connectors or terminations.",
        _CABLE_COPPER,
        _CABLE_FIBER,
    ),
    Verdict.DUPLEX_MISMATCH: Guide(
        "duplex mismatch",
        "The two ends disagree on duplex: one sends while the other thinks the wire is shared.",
        (
            _check(
                "Compare speed and duplex on both ends: a fixed setting at one end and "
                "auto-negotiation at the other leaves the auto end at half duplex."
            ),
            _check(
                "Configure both ends alike: auto-negotiation on both (1000BASE-T requires it), "
                "or the same fixed speed and full duplex on both.",
                Touch.CONFIGURE,
            ),
            _check(
                "After the change, late collisions at the half-duplex end and FCS errors at the "
                "full-duplex end should stop."
            ),
        ),
    ),
    Verdict.NEGOTIATION_DEGRADED: Guide(
        "negotiation degraded",
        "The link came up slower, or at half duplex, below what the port supports.",
        (
            _check(
                "Check both ends' settings: a fixed speed or duplex, or an advertisement "
                "limited to lower speeds."
            ),
            _check(
                "If both ends auto-negotiate and still come up slow, test the cable: a missing "
                "or broken pair leaves a gigabit link at 100 Mb/s.",
                Touch.UNPLUG,
            ),
            _check(
                "Check what the far end supports: an older device may only run at this speed, "
                "in which case the link is as fast as it can be."
            ),
        ),
    ),
    Verdict.MTU_MISMATCH: Guide(
        "MTU mismatch",
        "Frames arrive longer than this port accepts and are dropped, with no FCS errors.",
        (
            _check(
                "Compare the MTU at both ends and along the path: switch ports, VLAN and routed "
                "interfaces, virtual switches, storage and tunnel endpoints."
            ),
            _check(
                "Confirm with a do-not-fragment ping at the size in question from a host on each "
                "side (8972 octets of payload for a 9000-octet IPv4 MTU)."
            ),
            _check(
                "Use one MTU across the layer-2 domain; jumbo frames only where every hop agrees.",
                Touch.CONFIGURE,
            ),
        ),
    ),
    Verdict.OPTIC_DEGRADED: Guide(
        "optic degraded",
        "Received light is near or under the module's low thresholds.",
        (
            _check(
                "Compare received power with the far end's transmit power: the difference is "
                "the link's loss; set it against the link's loss budget."
            ),
            _check(
                "Clean both connectors, inspect the end faces with a fiber scope, and re-seat.",
                Touch.UNPLUG,
                Touch.FIBER_END,
            ),
            _check(
                "Check patch cords for tight bends or crush; swap for a known-good cord.",
                Touch.UNPLUG,
                Touch.FIBER_END,
            ),
            _check(
                "If the loss stays high, test the link with a light source and power meter (or "
                "an OTDR) against its design (TIA-568 cabled-fiber and connector allowances).",
                Touch.UNPLUG,
                Touch.FIBER_END,
            ),
            _check(
                "If the far end transmits low, or a module runs hot or at high bias current, "
                "replace that transceiver.",
                Touch.UNPLUG,
                Touch.FIBER_END,
            ),
        ),
    ),
    Verdict.UNIDIRECTIONAL: Guide(
        "one-way link",
        "Traffic flows one way only on a link that is up.",
        (
            _check(
                "Swap the patch cord, then test each pair of the cable run.",
                Touch.UNPLUG,
            ),
            _ONE_WAY_FAR_END,
            _ONE_WAY_OUT_OF_FORWARDING,
        ),
        (
            _check(
                "Check that transmit at each end is patched to receive at the other, and that "
                "neither strand is broken; compare received power at both ends.",
                Touch.UNPLUG,
                Touch.FIBER_END,
            ),
            _ONE_WAY_FAR_END,
            _ONE_WAY_OUT_OF_FORWARDING,
        ),
    ),
    Verdict.CONGESTION: Guide(
        "congestion",
        "Discards at high utilisation with no error signature: a capacity problem, not a fault.",
        (
            _check("Find what fills the link: the busiest hosts and flows on this port."),
            _check(
                "Look at utilisation across the day: a nightly backup peak may be acceptable, "
                "a sustained one needs capacity."
            ),
            _check(
                "Options: aggregate or upgrade the link, move heavy users, or prioritise voice "
                "and interactive traffic.",
                Touch.CONFIGURE,
            ),
        ),
    ),
    Verdict.INSUFFICIENT_TRAFFIC: Guide(
        "not enough traffic to judge",
        "Too few frames in the window to tell a healthy error rate from a faulty one.",
        (
            _check(
                "Check again in a few minutes (each poll lengthens the window) or at a busier time."
            ),
            _check("Or run a throughput test between two hosts across this link, then ask again."),
        ),
    ),
    Verdict.LINK_DOWN: Guide(
        "link down",
        "The port is not up, so there is nothing to measure.",
        (
            _check("Check that the far-end device is powered and its port enabled."),
            _check(
                "Check whether this port is administratively down or shut by a protection "
                "feature (port security, storm control, error shutdown)."
            ),
            _check(
                "Check the cable is plugged in at both ends; swap the patch cord.",
                Touch.UNPLUG,
            ),
        ),
        (
            _check("Check that the far-end device is powered and its port enabled."),
            _check(
                "Check whether this port is administratively down or shut by a protection "
                "feature (port security, storm control, error shutdown)."
            ),
            _check(
                "Check both transceivers are seated and supported, and that light arrives.",
                Touch.UNPLUG,
                Touch.FIBER_END,
            ),
        ),
    ),
    Verdict.NO_DATA: Guide(
        "no usable data",
        "Fewer than two usable polls of this port.",
        (
            _check("A window needs two polls: poll again in a few minutes."),
            _check(
                "If the counters were reset (a reboot, counters cleared), the window restarts "
                "at the next poll."
            ),
            _check("Check that the poller reads this port's counters at all."),
        ),
    ),
}


def next_checks(verdict: Verdict, *, fiber: bool | None) -> list[str]:
    """The physical checks to do next, fiber-specific where the medium changes them."""
    return [c.text for c in _checks(verdict, fiber=fiber)]


def _checks(verdict: Verdict, *, fiber: bool | None) -> tuple[Check, ...]:
    guide = GUIDES[verdict]
    if fiber and guide.fiber_checks is not None:
        return guide.fiber_checks
    return guide.checks


def cautions(verdict: Verdict, *, poe: bool | None, fiber: bool | None) -> list[str]:
    """The cautions for acting on ``verdict`` at this port; empty when nothing is touched."""
    light = fiber is not False  # unknown medium: warn as if it could be fiber
    chosen: list[Caution] = []
    if verdict in (Verdict.CABLE_FAULT, Verdict.LINK_DOWN, Verdict.UNIDIRECTIONAL):
        chosen += [Caution.FIBER_EYES] if light else []
        chosen += [Caution.POE_POWER] if poe else []
        chosen += [Caution.WORK_AT_HEIGHT]
        chosen += [Caution.MAINS] if verdict is Verdict.CABLE_FAULT else []
        chosen += [Caution.SERVICE_BREAK]
    elif verdict is Verdict.OPTIC_DEGRADED:
        chosen += [Caution.FIBER_EYES, Caution.SERVICE_BREAK]
    elif verdict in (Verdict.DUPLEX_MISMATCH, Verdict.NEGOTIATION_DEGRADED):
        chosen += [Caution.POE_POWER] if poe else []
        chosen += [Caution.SERVICE_BREAK]
    elif verdict is Verdict.MTU_MISMATCH:
        chosen += [Caution.SERVICE_BREAK]
    if chosen:
        chosen.append(Caution.LOCAL_CODES)
    return [c.value for c in chosen]


#: Every check by its words, to find what a check in a record involves.
_BY_TEXT: dict[str, Check] = {
    c.text: c for g in GUIDES.values() for c in (*g.checks, *(g.fiber_checks or ()))
}


def cautions_for(checks: list[str], port_cautions: list[str]) -> list[Caution]:
    """The cautions of ``port_cautions`` (a record's, for its port) that the given
    ``checks`` call for: what must be read before doing them, not behind a click."""
    touches = frozenset().union(*(_BY_TEXT[c].touches for c in checks if c in _BY_TEXT))
    chosen = [
        Caution(c)
        for c in port_cautions
        if c in _CAUTION_TEXTS and touches & NEEDS.get(Caution(c), frozenset())
    ]
    return [*chosen, Caution.LOCAL_CODES] if chosen else []


_CAUTION_TEXTS = frozenset(c.value for c in Caution)
