"""admin_down: the port is shut on purpose (RFC 2863 ifAdminStatus down): not a fault, and
never counted as a suspect (SNAPSHOT-FORMAT 1.2)."""

from __future__ import annotations

import numpy as np

from linktriage.engine.format.answers import QuestionRecord, Verdict
from linktriage.engine.measure.window import moment
from linktriage.engine.simulate.ports import COPPER_1G
from linktriage.engine.verdict_kit.declaration import (
    BoolArray,
    DemoPlant,
    GuardInputs,
    GuardVerdict,
    check,
    question,
)
from linktriage.engine.verdict_kit.readings import Items, PortFacts, PortGroup, item

ADMIN_DOWN = Verdict("admin_down")
_SOURCE = "RFC 2863 ifAdminStatus"


def since(last_change: float) -> str:
    """When the port last changed state, as a note says it; nothing where not read."""
    return "" if last_change != last_change else f", since {moment(last_change)}"


def _evidence(c: PortGroup) -> list[Items]:
    return [
        [
            item(
                "admin_status", "down", "state", None, _SOURCE,
                f"shut on purpose: administratively down{since(changed)} (ifAdminStatus)",
            )
        ]
        for changed in c["last_change"]
    ]  # fmt: skip


def _guard(g: GuardInputs) -> BoolArray:
    """Administratively down at the latest poll."""
    return np.asarray(g.measures["admin_down"] == 1.0, np.bool_)


def _question(facts: PortFacts, i: int) -> QuestionRecord:
    return question(
        "Is the port administratively up?", False, "admin_status", None, None, "no: down"
    )


KIND = GuardVerdict(
    verdict=ADMIN_DOWN,
    listed=18,
    title="shut on purpose",
    meaning="The port is administratively down: someone shut it. Not a fault.",
    checks=(
        check(
            "Nothing to repair on the link: find the change record or the person who shut "
            "the port, and why, before anyone enables it."
        ),
        check(
            "If it should carry traffic, have it enabled through the site's change process, "
            "and then ask again: a port enabled into a loop or an unknown device can harm "
            "more than the one link."
        ),
    ),
    cautions=(),
    evidence=_evidence,
    demo=DemoPlant(
        "annex",
        "lark-annex-sw1",
        "port8",
        "spare port in the reading room, shut until needed",
        {**COPPER_1G, "down": True, "admin_down": True},
    ),
    precedence=7,
    guard=_guard,
    question=_question,
    not_judged="shut on purpose",
    measured=False,
)
