"""optic_overload: received light above the module's high alarm or warning, or above the
PMD's maximum receive power (SNAPSHOT-FORMAT 1.2): a long-reach module on a short run. The
fix is an attenuator, not cleaning. Judged per lane on a module of several (the strongest
lane against the module's thresholds, SFF-8636 page 03h)."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.simulate.ports import FIBER_10G, Ranges, Rng, choice, optics
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
from linktriage.engine.verdict_kit.readings import Items, PortGroup, bit_errors, item

if TYPE_CHECKING:
    import pandas as pd

OPTIC_OVERLOAD = Verdict("optic_overload")
_AGAINST = {
    1.0: ("the module's high warning", "SFF-8472 thresholds"),
    2.0: ("the module's high alarm", "SFF-8472 thresholds"),
    3.0: ("the most its receiver takes", "IEEE 802.3 PMD maximum receive power (from memory)"),
}


def _light(c: PortGroup) -> Items:
    out: Items = []
    for strongest, high, kind, lanes, pmd in zip(
        c["rx_max_dbm"], c["rx_high_dbm"], c["rx_high_kind"], c.words("lanes"), c.words("pmd"),
        strict=True,
    ):  # fmt: skip
        against, source = _AGAINST.get(kind, ("its high threshold", "SFF-8472"))
        if kind == 3.0 and pmd:
            against = f"the most a {pmd} receiver takes"
        if strongest != strongest or high != high:  # NaN: no reading, or nothing to hold it to
            out.append(item("rx_power", None, "dBm", None, source, "received light not judged "
                            "against a high threshold: no reading or no threshold"))  # fmt: skip
            continue
        lane = ""
        if lanes:
            powers = [r for r, _, _ in lanes]  # type: ignore[attr-defined]
            k = max(range(len(powers)), key=lambda j: -1e9 if powers[j] is None else powers[j])
            lane = f" on lane {k + 1} of {len(powers)}"
        said = (
            f"receiving {strongest:+.1f} dBm{lane}, {strongest - high:.1f} dB above {against} "
            f"({high:+.1f} dBm): too much light, the receiver saturates"
        )
        out.append(item("rx_power", strongest, "dBm", high, source, said))
    return out


def _evidence(c: PortGroup) -> list[Items]:
    return [[light, errors] for light, errors in zip(_light(c), bit_errors(c), strict=True)]


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    p["fiber"] = 1.0
    p["poe"] = 0.0
    p["speed_bps"] = choice(rng, r.fiber_speeds, n)
    p["max_speed_bps"] = np.where(np.isnan(p["max_speed_bps"]), np.nan, p["speed_bps"])
    p["hc"] = True
    optics(p, rng, r, rng.uniform(1.5, 12.0, n), dom=np.ones(n, np.bool_))
    p["thresholds"] = True
    # Above the module's high warning by a little to a lot; a saturated receiver makes
    # errors in most cases (illustrative).
    over = rng.uniform(0.3, 6.0, n)
    p["rx_margin_db"] = p["rx_span_db"] - p["high_warn_gap_db"] + over
    errs = rng.random(n) < 0.6
    p["rx_ber"] = np.where(errs, 1e-9 * 10.0 ** rng.uniform(0.0, 4.0, n), p["rx_ber"])


_PHRASES: tuple[tuple[str, int], ...] = (
    ("attenuator", 3), ("overload", 3), ("too hot", 2), ("too strong", 3), ("saturat", 2),
    ("long reach", 2), ("long-reach", 2), ("pad", 1),
)  # fmt: skip

KIND = TreeVerdict(
    verdict=OPTIC_OVERLOAD,
    listed=10,
    title="optic overloaded",
    meaning=(
        "Received light is above what the receiver takes: a long-reach module on a short "
        "run. The fix is an attenuator, not cleaning."
    ),
    checks=(
        check(
            "Leave the connectors as they are: the light is too strong, not too weak, and "
            "no work on the end faces or the cord brings it down."
        ),
        check(
            "Check the module types at both ends against the run: a long-reach (LR, ER) "
            "module on a short patch overdrives the receiver."
        ),
        check(
            "Fit an in-line attenuator of the right connector and wavelength at the receive "
            "end (enough to bring the light under the high warning, with the low warning "
            "still far off), or use modules of the reach the run needs.",
            Touch.UNPLUG,
            Touch.FIBER_END,
        ),
    ),
    cautions=((Caution.FIBER_EYES, When.ALWAYS), (Caution.SERVICE_BREAK, When.ALWAYS)),
    evidence=_evidence,
    demo=DemoPlant(
        "annex",
        "lark-annex-sw1",
        "port12",
        "fiber to the annex bookshop: a long-reach module on a 20 m run",
        {
            **FIBER_10G,
            "rx_margin_db": 16.5,
            "rx_span_db": 17.0,
            "high_warn_gap_db": 2.0,
            "rx_ber": 2e-9,
            "rx_util": 0.05,
            "tx_util": 0.05,
        },
    ),
    severity=4,
    needs=(
        Need(
            "received light above the module's high warning or alarm, or above its PMD's "
            "maximum receive power",
            "SFF-8472 / SFF-8636 thresholds; IEEE 802.3 PMD tables",
            lambda s: s.overload,
        ),
    ),
    bit_errors=True,
    phrases=_PHRASES,
    signature=_signature,
    prior_share=0.06,
    shown_by=(Shows("overload_margin_db", higher=True),),
)
