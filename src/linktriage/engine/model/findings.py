"""What engineers find at a link, and the verdict each finding teaches the tree.

A label is what was found ("a damaged patch cord"), not a vote on the bot's answer: a
finding is a fact of the closet, and a better label than a confirmation. A finding bears
out a few verdicts: a crushed cord shows as a cable fault, as flapping, or as a link that
negotiated down. It teaches the answer's verdict when it bears that out, else the first of
its verdicts, or nothing where no single verdict follows from it ("the far-end device
itself", "something else"). An answer a guard gave (a port down, shut or unpowered) was
not the tree's to give, so what is found there teaches the tree nothing.

"Nothing found" teaches ``healthy`` (or ``congestion``: nothing broken, the link is full)
only where the answer said so; after a fault answer it teaches nothing, since errors that
were counted did happen and an absence of a cause in the closet does not unmake them.

The pairs of finding and verdict are common practice of fault-finding on Ethernet links
(no standard lists them); the verdicts' meanings are SNAPSHOT-FORMAT's.
"""

from __future__ import annotations

from dataclasses import dataclass

from linktriage.engine.format.answers import Verdict
from linktriage.engine.verdicts import TREE_VERDICTS


@dataclass(frozen=True, slots=True)
class Finding:
    """One thing an engineer can find, the verdicts it bears out, and how replies say it."""

    id: str
    short: str  # as a menu offers it, in a few words (a phone's menu is narrow)
    words: str  # as the thread says it, a complete noun phrase
    bears_out: tuple[Verdict, ...]  # the first is taught when the answer's is not among them
    phrases: tuple[tuple[str, int], ...]  # as a thread reply says it, each with a weight
    teaches_first: bool = True  # False: taught only when it bears out the answer's verdict


def _v(*ids: str) -> tuple[Verdict, ...]:
    return tuple(Verdict(i) for i in ids)


FINDINGS: tuple[Finding, ...] = (
    Finding(
        "damaged_cord",
        "Damaged cord or cable",
        "a damaged patch cord or cable",
        _v("cable_fault", "link_flapping", "negotiation_degraded", "unidirectional"),
        (
            ("patch cord", 3),
            ("cord", 2),
            ("cable", 2),
            ("crushed", 2),
            ("kinked", 2),
            ("crimp", 2),
            ("pinched", 2),
            ("pair", 1),
        ),
    ),
    Finding(
        "bad_jack",
        "Bad jack or panel port",
        "a bad jack, outlet or patch-panel port",
        _v("cable_fault", "link_flapping", "negotiation_degraded"),
        (
            ("jack", 3),
            ("keystone", 3),
            ("panel", 2),
            ("outlet", 2),
            ("punch", 2),
            ("termination", 2),
            ("rj45", 2),
            ("rj-45", 2),
        ),
    ),
    Finding(
        "slow_cabling",
        "Cabling below the speed",
        "cabling that cannot carry the speed (two pairs, an older category)",
        _v("negotiation_degraded", "cable_fault"),
        (
            ("two pair", 3),
            ("2 pair", 3),
            ("cat5", 3),
            ("cat 5", 3),
            ("category", 2),
            ("cat3", 3),
            ("cannot carry", 2),
        ),
    ),
    Finding(
        "dirty_connector",
        "Dirty fibre connector",
        "a dirty or damaged fibre connector",
        _v("cable_fault", "optic_degraded", "fec_degraded", "unidirectional"),
        (
            ("dirty", 3),
            ("end face", 3),
            ("ferrule", 3),
            ("cleaned", 2),
            ("scratched", 2),
            ("connector", 1),
        ),
    ),
    Finding(
        "failing_module",
        "Failing module",
        "a failing transceiver module",
        _v("optic_degraded", "fec_degraded", "unidirectional", "cable_fault"),
        (("sfp", 3), ("qsfp", 3), ("transceiver", 3), ("optic", 3), ("module", 2), ("laser", 2)),
    ),
    Finding(
        "no_attenuator",
        "Too much light",
        "too much light at the receiver (a short run needs an attenuator)",
        _v("optic_overload"),
        (
            ("attenuator", 5),
            ("overload", 4),
            ("too hot", 2),
            ("too strong", 3),
            ("long reach", 2),
            ("long-reach", 2),
        ),
    ),
    Finding(
        "one_fibre",
        "One fibre broken or swapped",
        "one fibre of the pair broken or swapped",
        _v("unidirectional"),
        (
            ("one fibre", 3),
            ("one fiber", 3),
            ("one-way", 3),
            ("one way", 3),
            ("swapped fib", 3),
            ("swapped strand", 3),
            ("broken strand", 3),
            ("crossed fib", 3),
            ("tx/rx", 2),
            ("rx/tx", 2),
        ),
    ),
    Finding(
        "speed_duplex_set",
        "Speed or duplex set by hand",
        "speed or duplex set by hand at one end",
        _v("duplex_mismatch", "negotiation_degraded"),
        (
            ("duplex", 3),
            ("hard-coded", 3),
            ("hardcoded", 3),
            ("forced", 2),
            ("autoneg", 3),
            ("auto-neg", 3),
            ("negotiat", 2),
        ),
    ),
    Finding(
        "mtu_set",
        "MTU differs at the ends",
        "MTU set differently at the two ends",
        _v("mtu_mismatch"),
        (("mtu", 3), ("jumbo", 3), ("frame size", 2)),
    ),
    Finding(
        "pause_sender",
        "Far end sends pause",
        "a far end sending pause frames (flow control)",
        _v("pause_flood"),
        (("pause", 3), ("flow control", 3), ("xoff", 3), ("backpressure", 2)),
    ),
    Finding(
        "loop_or_flood",
        "Loop or flooding device",
        "a loop, or a device flooding the network",
        _v("broadcast_storm", "pause_flood"),
        (
            ("loop", 3),
            ("storm", 3),
            ("looped", 3),
            ("broadcast", 2),
            ("two cables", 2),
            ("spanning tree", 1),
        ),
    ),
    Finding(
        "link_full",
        "Link at capacity",
        "more traffic than the link's capacity",
        _v("congestion"),
        (
            ("congest", 3),
            ("capacity", 2),
            ("saturat", 2),
            ("oversubscri", 2),
            ("backup job", 2),
            ("bandwidth", 1),
        ),
    ),
    Finding(
        "far_end_setting",
        "Another far-end setting",
        "another setting at the far end",
        _v(
            "negotiation_degraded",
            "duplex_mismatch",
            "mtu_mismatch",
            "pause_flood",
            "link_flapping",
        ),
        (("power saving", 3), ("energy efficient", 3), ("eee", 2), ("setting", 1), ("config", 1)),
        teaches_first=False,
    ),
    Finding(
        "far_end_device",
        "The far-end device itself",
        "the far-end device itself (its port, power or software)",
        _v(
            "link_flapping",
            "pause_flood",
            "broadcast_storm",
            "cable_fault",
            "unidirectional",
            "duplex_mismatch",
        ),
        (
            ("far-end device", 3),
            ("far end device", 3),
            ("reboot", 3),
            ("nic", 2),
            ("driver", 2),
            ("firmware", 2),
            ("power supply", 2),
        ),
        teaches_first=False,
    ),
    Finding(
        "nothing_found",
        "Nothing found",
        "nothing found: the link is fine",
        _v("healthy", "congestion"),
        (
            ("nothing found", 3),
            ("found nothing", 3),
            ("nothing wrong", 3),
            ("false alarm", 3),
            ("no fault", 3),
            ("all good", 2),
            ("works fine", 2),
            ("healthy", 3),
        ),
        teaches_first=False,
    ),
    Finding(
        "something_else",
        "Something else (reply)",
        "something else (say what in the thread)",
        (),
        (),
        teaches_first=False,
    ),
)
BY_ID: dict[str, Finding] = {f.id: f for f in FINDINGS}
#: What a finding becomes when its words come only as free text in a thread reply.
SOMETHING_ELSE = BY_ID["something_else"]


def finding(finding_id: str) -> Finding:
    """The finding of an id, or ValueError naming the known ones."""
    try:
        return BY_ID[finding_id]
    except KeyError:
        raise ValueError(f"unknown finding {finding_id!r}: one of {', '.join(BY_ID)}") from None


def said_as(finding_id: str | None, verdict: str) -> str:
    """A label as its author gave it: what was found, in words, or the verdict it named (a
    label kept before findings, or one that named a verdict outright)."""
    return verdict if finding_id is None else finding(finding_id).words


def taught(
    found: Finding, answered: str, ruled_out: frozenset[str] = frozenset()
) -> Verdict | None:
    """The verdict a finding teaches on an answer that said ``answered``; None: nothing.

    What is found on a port a guard answered teaches the tree nothing (see the module), and
    a verdict the engineer ruled out ("not a cable fault: the far-end NIC") is never taught.
    """
    if answered not in TREE_VERDICTS:
        return None
    if answered in found.bears_out and answered not in ruled_out:
        return Verdict(answered)
    first = next((v for v in found.bears_out if v not in ruled_out), None)
    return first if found.teaches_first else None


def ranked_for(answered: str) -> list[Finding]:
    """The findings in the order a menu offers them after an answer: first those whose own
    verdict it is, then those that bear it out, then the rest, each group as listed (most
    often found first); "something else" last."""

    def rank(f: Finding) -> int:
        if f is SOMETHING_ELSE:
            return 3
        if f.bears_out[:1] == (answered,):
            return 0
        return 1 if answered in f.bears_out else 2

    return sorted(FINDINGS, key=rank)  # sorted() is stable: the listed order within a group
