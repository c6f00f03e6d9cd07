"""poe_fault: the port cannot power what it feeds, read from RFC 3621 POWER-ETHERNET-MIB
(SNAPSHOT-FORMAT 1.2): detection status ``fault`` or ``otherFault``; overloads, shorts or
power denied counting up in the window; power dropped (MPS absent) again and again as the
link comes back; or invalid signatures counting while the port stays down. Not a fault
alone: MPS absent once with the port then down (a device unplugged), invalid signatures
from a device that is up on its own power.

Answered before the tree, and over every other answer but a port shut on purpose or by the
switch: where power fails, the link's other readings follow from it.
"""

from __future__ import annotations

import numpy as np

from linktriage.engine.format.answers import QuestionRecord, Verdict
from linktriage.engine.format.poll_table import POE_DETECTIONS
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
from linktriage.engine.verdict_kit.readings import Items, PortFacts, PortGroup, item, window_words

POE_FAULT = Verdict("poe_fault")
_SOURCE = "RFC 3621 POWER-ETHERNET-MIB"
_FAULTY = (float(POE_DETECTIONS.index("fault")), float(POE_DETECTIONS.index("otherFault")))
#: What a PSE delivers at most per class, in watts at the switch port (IEEE 802.3af/at/bt;
#: reference/standards-check-values.md section 8, S): class 0 to 8.
CLASS_WATTS = (15.4, 4.0, 7.0, 15.4, 30.0, 45.0, 60.0, 75.0, 90.0)
#: Drops of power with the link coming back that make a pattern, not one unplugging
#: (common practice: two, since once is a device removed).
REPEATED_DROPS = 2

#: Each counter, what it counts, as an answer says it.
_COUNTERS = (
    ("poe_overload", "pethPsePortOverLoadCounter",
     "overloads: the device drew more than the port gives (over its class)"),
    ("poe_short", "pethPsePortShortCounter",
     "shorts: a short circuit on the cable or in the device"),
    ("poe_power_denied", "pethPsePortPowerDeniedCounter",
     "times power was denied: the switch's budget could not reserve the device's class"),
    ("poe_mps_absent", "pethPsePortMPSAbsentCounter",
     "times power was cut for want of the maintain power signature (the device drew too "
     "little, or went away)"),
    ("poe_invalid_signature", "pethPsePortInvalidSignatureCounter",
     "invalid signatures: something is plugged in that does not present a valid PoE "
     "detection signature"),
)  # fmt: skip


def _guard(g: GuardInputs) -> BoolArray:
    """The rules of the module docstring."""
    m = g.measures
    up = m["admin_down"] != 1.0  # unknown counts as up, as for link_down
    faulty = np.isin(m["poe_detection"], _FAULTY)
    counted = (m["poe_overload"] > 0) | (m["poe_short"] > 0) | (m["poe_power_denied"] > 0)
    flaps = np.fmax(m["link_changes"], m["last_change_moves"])
    dropped = (m["poe_mps_absent"] >= REPEATED_DROPS) & (flaps >= REPEATED_DROPS)
    unpowered = (m["poe_invalid_signature"] > 0) & (g.status == WindowStatus.LINK_DOWN)
    return np.asarray(up & (faulty | counted | dropped | unpowered), np.bool_)


def _evidence(c: PortGroup) -> list[Items]:
    out: list[Items] = []
    for k in range(len(c)):
        items: Items = []
        detection = c["poe_detection"][k]
        if detection == detection:
            status = POE_DETECTIONS[int(detection)]
            said = f"detection status {status}" + (
                ": the port sees a fault and gives no power" if status in ("fault", "otherFault")
                else ""
            )  # fmt: skip
            items.append(item("poe_detection", status, "state", None,
                              f"{_SOURCE} pethPsePortDetectionStatus", said))  # fmt: skip
        seconds = c["window_s"][k]
        window = window_words(seconds) if seconds > 0 else None  # False for NaN
        for key, counter, what in _COUNTERS:
            n = c[key][k]
            if n == n and n > 0:
                when = f" in {window}" if window else ""
                items.append(item(key, n, "events", None, f"{_SOURCE} {counter}",
                                  f"{n:,.0f} {what}{when}"))  # fmt: skip
        items.extend(_power(c, k))
        out.append(items)
    return out


def _power(c: PortGroup, k: int) -> Items:
    """The class the device asked for and what the port and the switch can give."""
    items: Items = []
    power_class, watts, left = c["poe_class"][k], c["poe_power_w"][k], c["poe_budget_left_w"][k]
    if power_class == power_class:
        most = CLASS_WATTS[int(power_class)]
        said = f"class {power_class:.0f}: up to {most:g} W at the switch port"
        items.append(item("poe_class", power_class, "class", most, "IEEE 802.3af/at/bt classes",
                          said))  # fmt: skip
    if watts == watts:
        items.append(item("poe_power", watts, "W", None, f"{_SOURCE} (port power)",
                          f"delivering {watts:.1f} W now"))  # fmt: skip
    if left == left:
        items.append(item("poe_budget_left", left, "W", None,
                          f"{_SOURCE} pethMainPsePower less pethMainPseConsumptionPower",
                          f"the switch's power budget has {left:.0f} W left"))  # fmt: skip
    return items


def _question(facts: PortFacts, i: int) -> QuestionRecord:
    return question("Can the port power what it feeds?", False, "poe_detection", None, None,
                    "no: RFC 3621 status or counters show a power fault")  # fmt: skip


KIND = GuardVerdict(
    verdict=POE_FAULT,
    listed=14,
    title="PoE fault",
    meaning=(
        "The port cannot power what it feeds: the switch reports a power fault, overloads, "
        "shorts or power denied, or cuts power each time the device comes back."
    ),
    checks=(
        check(
            "Find out what the port feeds and whether anything depends on it for safety (a "
            "door controller, an alarm panel, an emergency phone): it is without power now; "
            "arrange another supply or tell its owners first."
        ),
        check(
            "Compare the device's class with what the port gives and the switch's budget has "
            "left (class 4 asks up to 30 W at the switch, class 6 up to 60 W, class 8 up to "
            "90 W): power denied with watts left means the switch reserves by class."
        ),
        check(
            "Try the device on a known-good PoE port or a PoE tester of its type "
            "(802.3af/at/bt): an overload or short that stays with the cord is the cord or "
            "the jack; one that follows the device is the device.",
            Touch.UNPLUG,
            Touch.POWER_NEARBY,
        ),
        check(
            "Look for crushed or cut cable and bent pins in the jack: a short between pairs "
            "trips the port at once.",
            Touch.HEIGHT,
        ),
    ),
    cautions=(
        (Caution.POE_POWER, When.ALWAYS),
        (Caution.SERVICE_BREAK, When.ALWAYS),
        (Caution.MAINS, When.ALWAYS),
        (Caution.WORK_AT_HEIGHT, When.ALWAYS),
    ),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-east-idf2",
        "port23",
        "entrance camera (class 4, on a cable crushed under a door)",
        {**COPPER_1G, "down": True, "poe": 1.0, "poe_fault": True},
    ),
    precedence=5,
    guard=_guard,
    question=_question,
    not_judged="without power",
    measured=False,
    severity=4,
)
