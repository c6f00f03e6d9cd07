"""pause_flood: the port receives pause frames at a rate that holds its transmitter off a
significant share of the time (SNAPSHOT-FORMAT 1.2): a far end, often a host's NIC, that
cannot keep up or is stuck. The format carries no pause times, so the share is an upper
bound: frames x 65,535 quanta x 512 bit times over the line's bits in the window (IEEE 802.3
annex 31B); significant from measure.signs.PAUSE_SHARE. Pause frames that explain the port's
own output discards make this verdict over congestion."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.measure.numbers import sig
from linktriage.engine.measure.phy import MAX_PAUSE_BITS
from linktriage.engine.measure.signs import PAUSE_SHARE
from linktriage.engine.simulate.ports import FIBER_10G, Ranges, Rng, log_uniform
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
from linktriage.engine.verdict_kit.readings import Items, PortGroup, item, ratio_words

if TYPE_CHECKING:
    import pandas as pd

PAUSE_FLOOD = Verdict("pause_flood")
_SOURCE = "RFC 3635 dot3InPauseFrames; IEEE 802.3 annex 31B (65,535 quanta of 512 bit times)"


def _evidence(c: PortGroup) -> list[Items]:
    out: list[Items] = []
    for frames, share, seconds, discards, ratio in zip(
        c["in_pause"], c["pause_share"], c["window_s"], c["out_discards"],
        c["out_discard_ratio"], strict=True,
    ):  # fmt: skip
        if frames != frames:
            out.append([item("pause_frames", None, "frames", None, _SOURCE,
                             "pause frames not reported")])  # fmt: skip
            continue
        rate = frames / seconds if seconds > 0 else float("nan")
        said = (
            f"{frames:,.0f} pause frames received ({sig(rate)} a second): they could hold "
            f"the transmitter off up to {sig(share * 100)}% of the window (significant from "
            f"{PAUSE_SHARE:.0%})"
        )
        items: Items = [item("pause_share", float(f"{share:.6g}"), "share", PAUSE_SHARE, _SOURCE,
                             said)]  # fmt: skip
        if discards == discards and discards > 0:
            said = (
                f"outbound: {discards:,.0f} frames discarded ({ratio_words(ratio)}) while the "
                "transmitter was held off"
            )
            items.append(item("outbound_discards", discards, "frames", None,
                              "RFC 2863 ifOutDiscards", said))  # fmt: skip
        out.append(items)
    return out


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    p["dot3"] = True
    share = rng.uniform(0.15, 1.0, n)
    p["in_pause_fps"] = share * p["speed_bps"].to_numpy() / MAX_PAUSE_BITS
    # Held off, the port's queue overflows in half of the cases.
    held = rng.random(n) < 0.5
    p["out_discard_ratio"] = np.where(held, log_uniform(rng, 1e-4, 1e-2, n), 0.0)
    p["tx_util"] = np.minimum(p["tx_util"], rng.uniform(0.01, 0.5, n))


_PHRASES: tuple[tuple[str, int], ...] = (
    ("pause", 3), ("flow control", 3), ("xoff", 3), ("802.3x", 2), ("backpressure", 2),
    ("stuck nic", 2),
)  # fmt: skip

KIND = TreeVerdict(
    verdict=PAUSE_FLOOD,
    listed=11,
    title="pause flood",
    meaning=(
        "The far end keeps sending pause frames that hold this port's transmitter off much "
        "of the time: a host or NIC that cannot keep up, or is stuck."
    ),
    checks=(
        check(
            "Find the far end (LLDP, or the address table): usually a server's or storage "
            "target's NIC that cannot keep up or is stuck."
        ),
        check(
            "On that host, look at its load, its receive buffers and its NIC driver and "
            "firmware; a stuck NIC often needs a driver reset or update."
        ),
        check(
            "If the far end cannot be fixed soon, turn off flow control on this port or on "
            "the host's NIC through the change process: the link then drops in bursts "
            "instead of stalling everything behind it.",
            Touch.CONFIGURE,
        ),
    ),
    cautions=((Caution.SERVICE_BREAK, When.ALWAYS),),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-core1",
        "up4",
        "backup server's 10G NIC",
        {
            **FIBER_10G,
            "rx_margin_db": 7.0,
            "in_pause_fps": 120.0,
            "out_discard_ratio": 2e-3,
            "tx_util": 0.1,
            "rx_util": 0.02,
        },
    ),
    severity=3,
    needs=(
        Need(
            f"received pause frames that could hold the transmitter off {PAUSE_SHARE:.0%} of "
            "the window or more (an upper bound), 20 frames or more",
            "IEEE 802.3 annex 31B; RFC 3635 dot3PauseTable; common practice",
            lambda s: s.pause,
        ),
    ),
    bit_errors=False,
    phrases=_PHRASES,
    signature=_signature,
    prior_share=0.06,
    shown_by=(Shows("pause_share", higher=True),),
)
