"""port_disabled: administratively up, but the device itself shut the port (an
error-disable, a security or loop guard): the answer says the device's reason and what
likely tripped it (SNAPSHOT-FORMAT 1.2)."""

from __future__ import annotations

import numpy as np

from linktriage.engine.format.answers import QuestionRecord, Verdict
from linktriage.engine.measure.window import WindowStatus
from linktriage.engine.simulate.ports import COPPER_1G
from linktriage.engine.verdict_kit.declaration import (
    BoolArray,
    Caution,
    DemoPlant,
    GuardInputs,
    GuardVerdict,
    Touch,
    When,
    check,
    question,
)
from linktriage.engine.verdict_kit.readings import Items, PortFacts, PortGroup, item
from linktriage.engine.verdicts.admin_down import since

PORT_DISABLED = Verdict("port_disabled")

#: What usually trips each protection, by words devices put in their reasons (common
#: practice: the protections are configuration features, named differently by each device,
#: so the words are matched loosely and the device's own reason is always quoted).
TRIPPED_BY: tuple[tuple[tuple[str, ...], str], ...] = (
    (("bpdu",), "a switch, bridge or hypervisor sending spanning-tree frames on a port set up "
     "for one end device (BPDU guard)"),
    (("loop",), "a loop through this port: a cable from one wall jack to another, a small "
     "switch cabled back to the closet, or a bridged device (loop guard)"),
    (("storm", "broadcast", "multicast"), "broadcast or multicast over the storm limit: often a "
     "loop, sometimes a faulty NIC"),
    (("security", "mac", "violation", "secure"), "a device the port does not allow: a new or "
     "swapped device, or more addresses than allowed, such as a small switch or a hub behind "
     "the jack (port security)"),
    (("flap",), "the link going down and up faster than allowed: a bad cord or jack, or an "
     "end device restarting"),
    (("udld", "unidirectional", "one-way", "oneway"), "a link that carries one way only: a "
     "broken fiber strand or a bad transceiver"),
    (("dhcp", "arp", "inspection", "rate"), "more control packets (DHCP, ARP) than allowed: a "
     "misbehaving host or a rogue server"),
    (("power", "poe", "inline"), "a Power over Ethernet fault: a short, overload or a device "
     "drawing more than its class"),
)  # fmt: skip


def tripped_by(reason: str) -> str | None:
    """What likely tripped a protection, from the device's words for it."""
    low = reason.lower()
    for words, what in TRIPPED_BY:
        if any(w in low for w in words):
            return what
    return None


def _evidence(c: PortGroup) -> list[Items]:
    out: list[Items] = []
    for reason, changed in zip(c.words("disabled_reason"), c["last_change"], strict=True):
        said = f"shut by the device itself{since(changed)}: its reason is \u201c{reason}\u201d"
        items = [item("disabled_reason", str(reason), "state", None, "the device's own words",
                      said)]  # fmt: skip
        likely = tripped_by(str(reason))
        if likely is not None:
            items.append(item("tripped_by", likely, "cause", None, "common practice",
                              f"what usually trips it: {likely}"))  # fmt: skip
        out.append(items)
    return out


def _guard(g: GuardInputs) -> BoolArray:
    """Not up, not shut on purpose, and a reason from the device for shutting it."""
    reason = np.array([bool(r) for r in g.extra["disabled_reason"]], np.bool_)
    shut_on_purpose = g.measures["admin_down"] == 1.0
    return np.asarray((g.status == WindowStatus.LINK_DOWN) & reason & ~shut_on_purpose, np.bool_)


def _question(facts: PortFacts, i: int) -> QuestionRecord:
    reason = facts.words("disabled_reason")[i]
    said = f"yes: \u201c{reason}\u201d"
    return question("Did the device shut the port itself?", True, "disabled_reason", None,
                    None, said)  # fmt: skip


KIND = GuardVerdict(
    verdict=PORT_DISABLED,
    listed=15,
    title="shut by the switch",
    meaning=(
        "The device shut the port itself (an error-disable, a security or loop guard): "
        "whatever tripped it is still there until someone finds it."
    ),
    checks=(
        check(
            "Before re-enabling, find what is plugged in at the far end (the jack, the "
            "device, a small switch or a looped cable) and remove what tripped the "
            "protection: re-enabling re-opens the port to it.",
            Touch.UNPLUG,
        ),
        check(
            "Read the device's log for the moment the port was shut and the addresses or "
            "frames that tripped it."
        ),
        check(
            "Re-enable the port through the site's change process, then watch it for a few "
            "minutes; if it trips again, leave it shut and escalate.",
            Touch.CONFIGURE,
        ),
    ),
    cautions=(
        (Caution.LOOP, When.ALWAYS),
        (Caution.POE_POWER, When.POE),
    ),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-west-idf1",
        "port17",
        "children's area kiosk (someone plugged a small switch into its jack)",
        {**COPPER_1G, "down": True, "disabled": True},
    ),
    precedence=6,
    guard=_guard,
    question=_question,
    not_judged="shut by the switch",
    measured=False,
    severity=3,
)
