"""unidirectional: traffic flows one way only on a link that is up.

A direction that carries next to nothing while the other carries traffic: a broken strand
or pair, a swapped fiber. Any live neighbour sends keepalives far more often than the silent
direction carries (IEEE 802.1D BPDUs every 2 s, IEEE 802.1AB LLDP every 30 s). From both
ends of a link: the far end's transmit counter confirms which direction is broken.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.format.counters import WIRE_OVERHEAD_OCTETS
from linktriage.engine.measure.numbers import sig
from linktriage.engine.measure.signs import ALIVE_FPS, SILENT_FPS, SILENT_FRAMES
from linktriage.engine.simulate.ports import FIBER_10G, Ranges, Rng, chance, log_uniform
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
from linktriage.engine.verdict_kit.ends import Ends, LinkView, known
from linktriage.engine.verdict_kit.readings import Items, PortGroup, item, six, window_words

if TYPE_CHECKING:
    import pandas as pd

UNIDIRECTIONAL = Verdict("unidirectional")


def _evidence(c: PortGroup) -> list[Items]:
    source = "RFC 2863 ifHCIn/OutUcastPkts; common practice"
    out: list[Items] = []
    for rx, tx, rx_fps, tx_fps, window in zip(
        c["rx_frames"], c["tx_frames"], c["rx_fps"], c["tx_fps"], c["window_s"], strict=True
    ):
        if rx <= tx:
            quiet, feature, busy_fps, busy_feature = rx, "rx_frames", tx_fps, "tx_frames_per_second"
            said = (
                f"receive direction silent: {quiet:,.0f} frames received in "
                f"{window_words(window)}, while {sig(busy_fps, 3)} frames/s are sent"
            )
            alive = "the send direction is alive"
        else:
            quiet, feature, busy_fps, busy_feature = tx, "tx_frames", rx_fps, "rx_frames_per_second"
            said = (
                f"send direction silent: {quiet:,.0f} frames sent in {window_words(window)}, "
                f"while {sig(busy_fps, 3)} frames/s are received"
            )
            alive = "the receive direction is alive"
        out.append([
            item(feature, quiet, "frames", float(SILENT_FRAMES), source, said),
            item(busy_feature, six(busy_fps), "frames/s", ALIVE_FPS, source, alive),
        ])  # fmt: skip
    return out


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    rx_quiet = chance(rng, 0.7, n)
    speed = p["speed_bps"].to_numpy()
    wire = {w: (p[f"{w}_frame_octets"].to_numpy() + WIRE_OVERHEAD_OCTETS) * 8 for w in ("rx", "tx")}
    # The live direction carries a few frames a second at least; the silent one nothing at
    # all, or a stray frame every minute or so.
    busy = log_uniform(rng, 1e-3, 0.6, n)
    window = p["window_s"].to_numpy()
    stray = np.maximum(rng.integers(1, 3, n), rng.uniform(0.0, 0.008, n) * window)
    quiet_fps = np.where(chance(rng, 0.6, n), 0.0, np.floor(stray) / window)
    for way, silent in (("rx", rx_quiet), ("tx", ~rx_quiet)):
        live = np.maximum(busy, 5.0 * wire[way] / speed)
        p[f"{way}_util"] = np.where(silent, quiet_fps * wire[way] / speed, live)
    p["in_discard_ratio"] = 0.0
    # Nothing arrives on a silent receive direction, errors included.
    p.loc[rx_quiet, ["stray_errors", "burst_errors"]] = 0.0


def _one_way(ends: Ends) -> LinkView | None:
    """One direction silent while the other end sends: a one-way link, confirmed by the
    far end's transmit counter."""
    rx_fps, tx_fps = ends.column("rx_fps"), ends.column("tx_fps")
    for near, far in ends.both():
        sent, got = tx_fps[far], rx_fps[near]
        if sent >= ALIVE_FPS and known(got) and got * 1000 < sent:
            near_end, far_end = ends.name(near), ends.name(far)
            said = [
                f"{far_end} sends {sig(sent)} frames/s, {near_end} receives {sig(got)}: the "
                f"{far_end} \u2192 {near_end} direction is broken"
            ]
            checks = [
                f"at {far_end}: its transmit side (the module or port sending toward {near_end})",
                f"the {far_end} \u2192 {near_end} strand or pair of the cable, and its patch cords",
                f"at {near_end}: its receive connector and module",
            ]
            return ends.view(UNIDIRECTIONAL, said, checks)
    return None


_FAR_END = check(
    "Look at the far end: a one-way link usually shows there as receive-only or transmit-only "
    "too. Where the quiet direction still carries a trickle, rule out the look-alikes first: a "
    "spanning-tree alternate (blocking) port, which sends only its control frames, and a "
    "one-way sender by design (a camera, a multicast source)."
)
_OUT_OF_FORWARDING = check(
    "Until it is fixed, keep the link out of forwarding: a one-way link can cause "
    "loops and black holes.",
    Touch.CONFIGURE,
    stops_harm=True,
)

#: Phrases of the trade that name this verdict in a thread reply, each with a weight.
_PHRASES: tuple[tuple[str, int], ...] = (
    ("one-way", 3), ("one way", 3), ("unidirectional", 3), ("swapped fib", 3),
    ("swapped strand", 3), ("broken strand", 3), ("crossed fib", 3), ("tx/rx", 2), ("rx/tx", 2),
)  # fmt: skip

KIND = TreeVerdict(
    verdict=UNIDIRECTIONAL,
    listed=7,
    title="one-way link",
    meaning="Traffic flows one way only on a link that is up.",
    checks=(
        _OUT_OF_FORWARDING,
        _FAR_END,
        check("Swap the patch cord, then test each pair of the cable run.", Touch.UNPLUG),
    ),
    fiber_checks=(
        _OUT_OF_FORWARDING,
        _FAR_END,
        check(
            "Check that transmit at each end is patched to receive at the other, and that "
            "neither strand is broken; compare received power at both ends.",
            Touch.UNPLUG,
            Touch.FIBER_END,
        ),
    ),
    cautions=(
        (Caution.FIBER_EYES, When.LIGHT),
        (Caution.POE_POWER, When.POE),
        (Caution.WORK_AT_HEIGHT, When.ALWAYS),
        (Caution.SERVICE_BREAK, When.ALWAYS),
    ),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-core1",
        "up3",
        "downlink to lark-west-idf1",
        {**FIBER_10G, "rx_margin_db": 6.0, "rx_util": 0.0, "tx_util": 0.09},
    ),
    severity=5,
    needs=(
        Need(
            f"one direction silent ({SILENT_FRAMES} frames or fewer in the window, or under "
            f"{SILENT_FPS:g} frames/s) while the other carries {ALIVE_FPS:g} frames/s or more",
            "common practice",
            lambda s: s.silent,
        ),
    ),
    bit_errors=False,
    phrases=_PHRASES,
    signature=_signature,
    prior_share=0.10,
    shown_by=(Shows("quiet_fps", higher=False),),
    link=LinkJudge(20, _one_way),
)
