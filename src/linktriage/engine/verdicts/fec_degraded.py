"""fec_degraded: on a link with FEC and the received light in range, the pre-FEC bit error
ratio above the level the code's clause treats as high, or codewords it could not correct
(which lose frames): the early warning of a dirty connector or a marginal optic
(SNAPSHOT-FORMAT 1.2; the figures and their sources are in
:mod:`linktriage.engine.measure.fec`). A low, steady corrected rate is normal."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.format.poll_table import FEC_MODES
from linktriage.engine.measure.fec import UNCORRECTABLE_SHARE
from linktriage.engine.measure.numbers import times
from linktriage.engine.simulate.ports import G, Ranges, Rng, at_least, choice, log_uniform, optics
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
    bit_errors,
    item,
    present,
    ratio_words,
    rx_light,
    window_words,
)

if TYPE_CHECKING:
    import pandas as pd

FEC_DEGRADED = Verdict("fec_degraded")
_CODE = {
    "base_r": "BASE-R FEC (clause 74)",
    "rs528": "RS(528,514) (clause 91)",
    "rs544": "RS(544,514) (clause 119)",
    "rs": "RS-FEC",
}


def _fec(c: PortGroup) -> list[Items]:
    out: list[Items] = []
    for mode, ber, limit, bits, lost, carried, seconds in zip(
        c["fec_mode"], c["pre_fec_ber"], c["pre_fec_limit"], c["pre_fec_from_bits"],
        c["fec_lost"], c["fec_codewords"], c["window_s"], strict=True,
    ):  # fmt: skip
        items: Items = []
        code = _CODE.get(FEC_MODES[int(mode)], "no FEC") if mode == mode else "FEC not reported"
        source = "IEEE 802.3 clause 30 aFECCorrectedBlocks; measure/fec.py levels"
        if ber == ber and limit == limit:
            how = "from corrected bits" if bits == 1.0 else "at least, from corrected codewords"
            said = (
                f"pre-FEC bit error ratio {ber:.1e} ({how}): {times(ber / limit)} the {limit:.0e} "
                f"called high for {code}"
            )
            items.append(item("pre_fec_ber", float(f"{ber:.6g}"), "BER", limit, source, said))
        if lost == lost and lost > 0:
            share = ratio_words(lost / carried) if carried > 0 else "a share not known"
            said = (
                f"{lost:,.0f} codewords uncorrectable in {window_words(seconds)} ({share} of "
                f"those carried; tolerated {UNCORRECTABLE_SHARE:.1e}): each loses a frame"
            )
            items.append(item("fec_uncorrectable", lost, "codewords", UNCORRECTABLE_SHARE,
                              "IEEE 802.3 clause 30 aFECUncorrectableBlocks", said))  # fmt: skip
        if not items:
            items.append(item("pre_fec_ber", None, "BER", None, source,
                              f"{code}: no FEC counters to judge"))  # fmt: skip
        out.append(items)
    return out


def _evidence(c: PortGroup) -> list[Items]:
    return [
        [*fec, *present(light), errors]
        for fec, light, errors in zip(_fec(c), rx_light(c), bit_errors(c), strict=True)
    ]


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    p["fiber"] = 1.0
    p["poe"] = 0.0
    fast = tuple((s, w) for s, w in r.fiber_speeds if s in (25 * G, 100 * G, 400 * G))
    p["speed_bps"] = choice(rng, fast, n)
    p["max_speed_bps"] = np.where(np.isnan(p["max_speed_bps"]), np.nan, p["speed_bps"])
    p["hc"] = True
    optics(p, rng, r, rng.uniform(1.0, 12.0, n))
    p["fec_mode"] = np.where(p["speed_bps"] == 400 * G, 3.0, 2.0)
    high = np.where(p["fec_mode"] == 3.0, 5e-5, 1e-5)
    p["pre_fec_ber"] = high * log_uniform(rng, 1.5, 200.0, n)
    p["fec_bits_reported"] = rng.random(n) < 0.6
    # A third lose codewords too, and the frames in them fail their FCS.
    losing = rng.random(n) < 0.35
    codewords = p["speed_bps"].to_numpy() * p["window_s"].to_numpy() / 5140.0
    p["fec_lost_ratio"] = np.where(
        losing, at_least(log_uniform(rng, 1e-9, 1e-5, n), r.min_events, codewords), 0.0
    )
    p["extra_crc_ratio"] = np.where(losing, p["fec_lost_ratio"] * 0.5, 0.0)


_PHRASES: tuple[tuple[str, int], ...] = (
    ("fec", 3), ("corrected", 2), ("uncorrect", 3), ("pre-fec", 3), ("codeword", 2),
    ("reed-solomon", 2),
)  # fmt: skip

KIND = TreeVerdict(
    verdict=FEC_DEGRADED,
    listed=9,
    title="FEC correcting near its limit",
    meaning=(
        "Forward error correction is correcting more than its code treats as normal, or "
        "losing codewords, with the light in range: a dirty connector or a marginal optic, "
        "found before frames are lost."
    ),
    checks=(
        check(
            "Compare the light and bias of every lane at both ends: one weak lane is that "
            "lane's strand or the module."
        ),
        check(
            "Clean both ends' connectors and inspect the end faces with a fiber scope: the "
            "commonest cause of a rising corrected rate (re-seat a direct-attach cable).",
            Touch.UNPLUG,
            Touch.FIBER_END,
        ),
        check(
            "Swap the module at the end whose receiver corrects, then the patch cord, and "
            "watch the corrected rate over the next windows.",
            Touch.UNPLUG,
            Touch.FIBER_END,
        ),
    ),
    cautions=((Caution.FIBER_EYES, When.LIGHT), (Caution.SERVICE_BREAK, When.ALWAYS)),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-core1",
        "up6",
        "25G uplink to the data room (RS-FEC)",
        {
            "fiber": 1.0,
            "speed_bps": 25 * G,
            "max_speed_bps": 25 * G,
            "poe": 0.0,
            "hc": True,
            "dot3": True,
            "rx_alarm_dbm": -12.0,
            "rx_margin_db": 8.0,
            "fec_mode": 2.0,
            "pre_fec_ber": 8e-5,
            "fec_bits_reported": True,
            "rx_util": 0.3,
            "tx_util": 0.2,
        },
    ),
    severity=4,
    needs=(
        Need(
            "a link with FEC whose pre-FEC bit error ratio is over its code's high level, or "
            "that loses codewords (an exact one-sided test at 99%)",
            "IEEE 802.3 clauses 30, 74, 91 and 119 (levels in measure/fec.py)",
            lambda s: s.fec,
        ),
        Need(
            "received light in range: over the module's low warning (under it, that is "
            "optic_degraded) and under its high one (over it, optic_overload)",
            "SNAPSHOT-FORMAT 1.2",
            lambda s: ~(s.light_low | s.overload),
        ),
    ),
    bit_errors=True,
    phrases=_PHRASES,
    signature=_signature,
    prior_share=0.06,
    shown_by=(Shows("pre_fec_over_high", higher=True), Shows("fec_lost_ratio", higher=True)),
)
