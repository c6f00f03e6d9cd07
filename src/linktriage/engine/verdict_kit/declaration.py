"""What one verdict declares, in one module of its own under ``engine/verdicts/``.

A verdict is everything the engine, the bot and the demo need to know of it: its id (fixed
by the snapshot format), where the format's table lists it, its title and meaning, the
physical checks to do next and the cautions that go with them, the readings it rests on
(its evidence), the demo port it is planted on, and then either

- as a verdict the tree answers (:class:`TreeVerdict`): whether it is a fault and how
  urgent, what the physics requires of a port's readings before it may be answered, each
  with its source, whether its reading rests on bit errors, the phrases of the trade that
  name it in a thread reply, its signature in the simulator and its share of the prior, and
  what it looks like from both ends of a link; or
- as a verdict answered before the tree (:class:`GuardVerdict`): when it is answered, ahead
  of which other guard, the question it answers, and how a list of suspects says it.

The registry (:mod:`linktriage.engine.verdicts`) gathers every module and checks that each
fills every part.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from enum import Enum, StrEnum
from typing import TYPE_CHECKING

import numpy as np
import numpy.typing as npt

from linktriage.engine.format.answers import EvidenceRecord, QuestionRecord, Verdict
from linktriage.engine.measure.signs import Signs
from linktriage.engine.simulate.ports import Ranges, Rng
from linktriage.engine.verdict_kit.ends import Ends, LinkView
from linktriage.engine.verdict_kit.readings import PortFacts, PortGroup

if TYPE_CHECKING:
    import pandas as pd

BoolArray = npt.NDArray[np.bool_]


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
    LOOP = (
        "A loop or storm takes down more than one link: shutting or re-enabling the wrong "
        "port can cut a whole closet off, or bring the loop back. Find the looped path "
        "first, change one port at a time, and keep a way into the device that does not "
        "run through the ports you change (a console or another uplink)."
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
    Caution.LOOP: (
        "A loop: the wrong port shut or re-enabled can cut a closet off. One port at a time, "
        "with a way in that does not cross it."
    ),
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
    Caution.LOOP: frozenset({Touch.UNPLUG, Touch.CONFIGURE}),
}


@dataclass(frozen=True, slots=True)
class Check:
    """One physical check, what doing it involves, and whether it stops harm the link does
    to others while it is found (a one-way link kept out of forwarding, a loop cut)."""

    text: str
    touches: frozenset[Touch] = frozenset()
    stops_harm: bool = False


def check(text: str, *touches: Touch, stops_harm: bool = False) -> Check:
    return Check(text, frozenset(touches), stops_harm)


class When(Enum):
    """On which ports a verdict's caution is shown."""

    ALWAYS = "always"
    LIGHT = "where the port may carry light (fiber, or a medium not reported)"
    POE = "where the port supplies Power over Ethernet"


@dataclass(frozen=True, slots=True)
class Need:
    """One condition a verdict needs of a port's readings, why, and where that comes from:
    ``holds`` says, per port, whether the readings meet it."""

    needs: str  # what the verdict needs, as it reads after "needs"
    source: str
    holds: Callable[[Signs], BoolArray]


@dataclass(frozen=True, slots=True)
class DemoPlant:
    """The port of the demo network (Larkmoor Civic Library, invented) that shows a verdict:
    where it is, what it serves, and the simulator parameters that make it so;
    ``since_s`` says how long before the demo's moment the fault began (None: always)."""

    site: str
    device: str
    port: str
    serves: str
    parameters: Mapping[str, float | bool]
    since_s: float | None = None
    #: More ports of the same device planted alike, for a verdict that shows on several
    #: ports at once (a loop).
    also: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class LinkJudge:
    """What a verdict looks like from both ends of a link: ``judge`` says it where the two
    views show it, and judges of lower ``order`` are asked first."""

    order: int
    judge: Callable[[Ends], LinkView | None]


@dataclass(frozen=True, slots=True)
class GuardInputs:
    """What a guard may look at, per port: the window's status
    (:class:`~linktriage.engine.measure.window.WindowStatus`), whether the frames bound the
    error ratio, whether the physics allows any verdict at all, the measures (states read
    at the latest poll, counts over the window) and the words the device said of the port
    (``disabled_reason``, by :data:`~linktriage.engine.format.poll_table.EXTRA_FIELDS`)."""

    status: npt.NDArray[np.int8]
    enough_frames: BoolArray
    anything_allowed: BoolArray
    measures: Mapping[str, npt.NDArray[np.float64]]
    extra: Mapping[str, npt.NDArray[np.object_]]


def question(
    text: str, answer: bool, feature: str, value: float | None, threshold: float | None, said: str
) -> QuestionRecord:
    """A guard's question as a record gives it, beside the tree's."""
    return {
        "question": text,
        "answer": answer,
        "feature": feature,
        "value": value,
        "threshold": threshold,
        "said": said,
    }


#: The readings a verdict rests on, for a group of ports of that verdict (one list each).
EvidenceOf = Callable[[PortGroup], list[list[EvidenceRecord]]]
#: A verdict's signature in the simulator: it turns healthy port parameters into its fault.
Signature = Callable[["pd.DataFrame", Rng, Ranges], None]


@dataclass(frozen=True, slots=True, kw_only=True)
class VerdictKind:
    """The parts every verdict declares."""

    verdict: Verdict
    listed: int  # its row in the snapshot format's table of verdicts (docs/snapshot-format.md)
    title: str
    meaning: str
    checks: tuple[Check, ...]
    fiber_checks: tuple[Check, ...] | None = None  # where fiber needs other steps
    cautions: tuple[tuple[Caution, When], ...]  # () where its checks touch nothing
    evidence: EvidenceOf
    demo: DemoPlant | None  # None only for healthy, which every other demo port shows

    def checks_for(self, *, fiber: bool | None) -> tuple[Check, ...]:
        """The checks to do next, fiber-specific where the medium changes them."""
        if fiber and self.fiber_checks is not None:
            return self.fiber_checks
        return self.checks

    def cautions_for(self, *, poe: bool | None, fiber: bool | None) -> list[Caution]:
        """The cautions for acting on this verdict at this port: those its checks here call
        for (a caution no check's work needs is not shown), and local codes last wherever
        there is any."""
        light = fiber is not False  # unknown medium: warn as if it could be fiber
        shown = {When.ALWAYS: True, When.LIGHT: light, When.POE: bool(poe)}
        touched = frozenset().union(*(c.touches for c in self.checks_for(fiber=fiber)))
        chosen = [
            caution
            for caution, when in self.cautions
            if shown[when] and touched & NEEDS.get(caution, frozenset())
        ]
        return [*chosen, Caution.LOCAL_CODES] if chosen else []


@dataclass(frozen=True, slots=True)
class Shows:
    """A feature of the tree (model/features.py names them) that shows a verdict, and
    which way: its higher values, or its lower ones."""

    feature: str
    higher: bool


@dataclass(frozen=True, slots=True, kw_only=True)
class TreeVerdict(VerdictKind):
    """A verdict the tree answers, among those the port's readings allow."""

    severity: int | None  # how urgently a fault wants a visit (5 first); None: not a fault
    needs: tuple[Need, ...]  # every one must hold for the verdict to be allowed
    bit_errors: bool  # its reading rests on bit errors: the BER estimate belongs in the answer
    phrases: tuple[tuple[str, int], ...]  # phrases of the trade naming it, each with a weight
    signature: Signature
    prior_share: float  # its share of the simulated ports the tree learns from
    #: The tree's features that show it, each with the way it shows it: a change that
    #: leads to it is one of these moving that way, and one from it to healthy, one moving
    #: back; none for healthy.
    shown_by: tuple[Shows, ...]
    link: LinkJudge | None = None  # where both ends of a link show it
    one_end_only: str | None = None  # why one end may see it and the other not


@dataclass(frozen=True, slots=True, kw_only=True)
class GuardVerdict(VerdictKind):
    """A verdict answered before the tree, when a window cannot support one."""

    precedence: int  # where two guards apply, the higher answers
    guard: Callable[[GuardInputs], BoolArray]
    question: Callable[[PortFacts, int], QuestionRecord]  # the question it answers, for row i
    not_judged: str  # why such a port has no verdict on its health, as a list says it
    measured: bool  # a window was measured (False: nothing to read both ends from)
    #: A fault found before the tree (a port the switch shut, PoE that cannot power its
    #: device) is a suspect like a tree's, and this is how urgent; None: not a fault.
    severity: int | None = None
