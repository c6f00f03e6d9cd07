"""link_flapping: the link went down and up repeatedly in the window with no error signature
beyond the few frames each drop cuts short (SNAPSHOT-FORMAT 1.2): an endpoint rebooting on
its own, power saving in a NIC, a marginal connector. Power cut with each flap is poe_fault,
answered before the tree; flaps with errors between them are cable_fault.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.measure.signs import FLAPPING_CHANGES
from linktriage.engine.measure.window import moment
from linktriage.engine.simulate.ports import COPPER_1G, Ranges, Rng, objective
from linktriage.engine.verdict_kit.declaration import (
    Caution,
    DemoPlant,
    Need,
    Shows,
    Touch,
    TreeVerdict,
    When,
    check,
)
from linktriage.engine.verdict_kit.readings import (
    Items,
    PortGroup,
    errored_frames,
    flaps,
    item,
    present,
)

if TYPE_CHECKING:
    import pandas as pd

LINK_FLAPPING = Verdict("link_flapping")


def _evidence(c: PortGroup) -> list[Items]:
    out: list[Items] = []
    for flapped, frames, changed in zip(flaps(c), errored_frames(c), c["last_change"], strict=True):
        last = None
        if changed == changed:
            last = item("last_change", moment(changed), "time", None, "RFC 2863 ifLastChange",
                        f"last change of state at {moment(changed)}")  # fmt: skip
        cut = None
        if frames is not None:
            cut = frames.copy()
            cut["said"] = f"{frames['said']}: no more than the drops cut short"
        out.append(present(flapped, cut, last))
    return out


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    p["link_changes"] = (2 * rng.integers(3, 20, n)).astype(float)
    p["reports_link_changes"] = True
    # Clean between the drops: the line itself is sound.
    p["rx_ber"] = objective(p["speed_bps"].to_numpy(), p["fiber"].to_numpy()) * 1e-4
    p["stray_errors"] = np.where(rng.random(n) < 0.3, rng.uniform(0.5, 2.0, n), 0.0)


_PHRASES: tuple[tuple[str, int], ...] = (
    ("flap", 3), ("bouncing", 2), ("keeps rebooting", 3), ("reboot", 2), ("power saving", 3),
    ("energy efficient", 2), ("eee", 1), ("goes up and down", 3),
)  # fmt: skip

KIND = TreeVerdict(
    verdict=LINK_FLAPPING,
    listed=13,
    title="link flapping",
    meaning=(
        "The link goes down and up again and again with clean frames between: an end device "
        "rebooting, a NIC saving power, or a marginal plug."
    ),
    checks=(
        check(
            "Find what the port feeds and whether it restarts on its own (a camera, phone or "
            "access point: its uptime or log); fix the device, not the cable."
        ),
        check(
            "On a computer, look at the NIC's power saving (Energy-Efficient Ethernet, "
            "link-down power saving, sleep) and its driver: a NIC that sleeps drops the link."
        ),
        check(
            "Re-seat the patch cords at both ends, then swap them: a latch that does not hold "
            "drops the link without corrupting frames.",
            Touch.UNPLUG,
        ),
        check(
            "If it goes on, test the permanent link (jack to panel) with a cable certifier.",
            Touch.UNPLUG,
            Touch.HEIGHT,
        ),
    ),
    cautions=(
        (Caution.POE_POWER, When.POE),
        (Caution.SERVICE_BREAK, When.ALWAYS),
        (Caution.WORK_AT_HEIGHT, When.ALWAYS),
    ),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-west-idf1",
        "port5",
        "lobby camera, in a boot loop since its last firmware update",
        # A down and an up every ten seconds: seen in any window of half a minute or more.
        {**COPPER_1G, "link_changes": 60.0, "reports_link_changes": True, "rx_util": 0.02},
    ),
    severity=4,
    needs=(
        Need(
            f"the link down and up {FLAPPING_CHANGES // 2} times or more in the window "
            "(link_changes rising, or ifLastChange moving between polls)",
            "RFC 2863 ifLastChange; common practice",
            lambda s: s.flapping,
        ),
        Need(
            "no errors beyond the frames the drops cut short (that is cable_fault)",
            "SNAPSHOT-FORMAT 1.2",
            lambda s: ~s.real_errors,
        ),
    ),
    bit_errors=False,
    phrases=_PHRASES,
    signature=_signature,
    prior_share=0.06,
    shown_by=(Shows("flaps_per_hour", higher=True),),
)
