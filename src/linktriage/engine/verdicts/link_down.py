"""link_down: the port is administratively up (or its admin state is unknown) and not up,
so there is nothing to measure (RFC 2863 ifOperStatus other than up at the latest poll)."""

from __future__ import annotations

import numpy as np

from linktriage.engine.format.answers import QuestionRecord, Verdict
from linktriage.engine.measure.window import WindowStatus, moment
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
from linktriage.engine.verdict_kit.readings import Items, PortFacts, PortGroup, flaps, item

LINK_DOWN = Verdict("link_down")


def _evidence(c: PortGroup) -> list[Items]:
    """Down, since when (ifLastChange where the device gives it), and what came before in
    the window: a port that went down and up many times first was failing, not unplugged."""
    out: list[Items] = []
    flapped = flaps(c)
    for k, (i, changed) in enumerate(zip(c.rows, c["last_change"], strict=True)):
        state = str(c.facts.oper_status[i])
        if changed == changed:
            said = f"the port is {state}, since {moment(changed)} (its last change of state)"
        else:
            said = f"the port is {state} at the latest poll; the device does not say since when"
        found = [item("oper_status", state, "state", None, "RFC 2863 ifOperStatus", said)]
        before = flapped[k]
        if before is not None:
            before = {**before, "said": f"before that, the {before['said']}"}
            found.append(before)
        out.append(found)
    return out


def _guard(g: GuardInputs) -> BoolArray:
    """Not up at the latest poll."""
    return np.asarray(g.status == WindowStatus.LINK_DOWN, np.bool_)


def _question(facts: PortFacts, i: int) -> QuestionRecord:
    said = f"no: {facts.oper_status[i]}"
    return question("Is the port up?", False, "oper_status", None, None, said)


_FAR_END_POWERED = check("Check that the far-end device is powered and its port enabled.")
_SHUT_BY_THE_SWITCH = check(
    "Check whether this port is administratively down or shut by a protection "
    "feature (port security, storm control, error shutdown)."
)

KIND = GuardVerdict(
    verdict=LINK_DOWN,
    listed=17,
    title="link down",
    meaning="The port is not up, so there is nothing to measure.",
    checks=(
        _FAR_END_POWERED,
        _SHUT_BY_THE_SWITCH,
        check("Check the cable is plugged in at both ends; swap the patch cord.", Touch.UNPLUG),
    ),
    fiber_checks=(
        _FAR_END_POWERED,
        _SHUT_BY_THE_SWITCH,
        check(
            "Check both transceivers are seated and supported, and that light arrives.",
            Touch.UNPLUG,
            Touch.FIBER_END,
        ),
    ),
    cautions=(
        (Caution.FIBER_EYES, When.LIGHT),
        (Caution.POE_POWER, When.POE),
        (Caution.WORK_AT_HEIGHT, When.ALWAYS),
    ),  # no service break: a port that is down carries nothing to interrupt
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-west-idf1",
        "port9",
        "meeting room display",
        {**COPPER_1G, "down": True},
        since_s=1500.0,
    ),
    precedence=3,
    guard=_guard,
    question=_question,
    not_judged="down",
    measured=False,
)
