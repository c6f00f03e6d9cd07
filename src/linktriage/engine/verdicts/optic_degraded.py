"""optic_degraded: received light near or under the module's low thresholds.

Received power under the module's low warning (near its alarm); at this end's own module,
transmit power under its low alarm or a laser bias outside its alarm thresholds (SNAPSHOT-
FORMAT 1.2: a failing transmitter, named as this end's); or a module running hot (SFF-8472
digital diagnostics); usually with FCS errors: a dirty or damaged connector, a failing
transceiver, excess loss. From both ends of a fiber link: a
direction losing more light than any PMD of its speed allows (far end's transmit power less
near end's received power) points at that strand.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linktriage.engine.format.answers import Verdict
from linktriage.engine.simulate.ports import (
    FIBER_10G,
    Ranges,
    Rng,
    chance,
    choice,
    objective,
    optics,
)
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
from linktriage.engine.verdict_kit.ends import Ends, LinkView
from linktriage.engine.verdict_kit.readings import (
    Items,
    MaybeItems,
    PortGroup,
    bit_errors,
    item,
    present,
    rx_light,
)

if TYPE_CHECKING:
    import pandas as pd

OPTIC_DEGRADED = Verdict("optic_degraded")


def _tx_light(c: PortGroup) -> MaybeItems:
    out: MaybeItems = []
    for tx, alarm in zip(c["tx_dbm"], c["tx_alarm_dbm"], strict=True):
        if tx != tx:
            out.append(None)
        elif alarm != alarm:
            out.append(item("tx_power", tx, "dBm", None, "SFF-8472", f"transmitting {tx:.1f} dBm"))
        else:
            margin = tx - alarm
            said = (
                f"transmitting {tx:.1f} dBm, {abs(margin):.1f} dB "
                f"{'above' if margin >= 0 else 'under'} the module's low alarm ({alarm:.1f} dBm)"
            )
            out.append(item("tx_power", tx, "dBm", alarm, "SFF-8472 thresholds", said))
    return out


def _temperature(c: PortGroup) -> MaybeItems:
    out: MaybeItems = []
    for t, hot, own in zip(
        c["temperature_c"], c["hot_c"], c["temperature_high_alarm_c"], strict=True
    ):
        if t != t:
            out.append(None)
            continue
        line = "its own high alarm" if own == own else "commercial-grade modules"
        said = f"module at {t:.0f} \u00b0C" + (
            f", over the {hot:.0f} \u00b0C of {line}" if t > hot else ""
        )
        source = "SFF-8472 thresholds" if own == own else "common practice"
        out.append(item("temperature", t, "\u00b0C", hot, source, said))
    return out


def _bias(c: PortGroup) -> MaybeItems:
    """The laser's bias current, against the module's alarm thresholds where it has them: a
    bias past either is this end's own transmitter failing (SNAPSHOT-FORMAT 1.2), whichever
    way it drifts (a laser ageing draws more, one failing open draws less)."""
    out: MaybeItems = []
    for high, low, most, least in zip(
        c["bias_ma"], c["bias_min_ma"], c["bias_high_alarm_ma"], c["bias_low_alarm_ma"],
        strict=True,
    ):  # fmt: skip
        if high != high:
            out.append(None)
        elif high > most:
            said = (
                f"laser bias {high:.1f} mA, over the module's high alarm ({most:.1f} mA): this "
                "end's transmitter is failing"
            )
            out.append(item("bias", high, "mA", most, "SFF-8472 thresholds", said))
        elif low < least:
            said = (
                f"laser bias {low:.1f} mA, under the module's low alarm ({least:.1f} mA): this "
                "end's transmitter is failing"
            )
            out.append(item("bias", low, "mA", least, "SFF-8472 thresholds", said))
        else:
            out.append(item("bias", high, "mA", None, "SFF-8472 digital diagnostics",
                            f"laser bias {high:.1f} mA"))  # fmt: skip
    return out


def _evidence(c: PortGroup) -> list[Items]:
    out: list[Items] = []
    for rx, tx, hot, bias, errors in zip(
        rx_light(c), _tx_light(c), _temperature(c), _bias(c), bit_errors(c), strict=True
    ):
        # What fails at this end's own module leads: its light sent, its laser.
        own = bias is not None and bias["reference"] is not None
        head = [bias, rx, tx] if own else [rx, tx, bias]
        out.append([*present(*head, hot), errors])
    return out


def _signature(p: pd.DataFrame, rng: Rng, r: Ranges) -> None:
    n = len(p)
    p["fiber"] = 1.0
    p["poe"] = 0.0
    p["speed_bps"] = choice(rng, r.fiber_speeds, n)
    p["max_speed_bps"] = np.where(np.isnan(p["max_speed_bps"]), np.nan, p["speed_bps"])
    p["hc"] = True
    over_warn = rng.uniform(*r.optic_margin_db, n)
    optics(p, rng, r, over_warn, dom=np.ones(n, np.bool_))
    # Bit errors climb steeply as the light falls (illustrative slope); a third are still
    # clean: low light is a state reading.
    times = 10.0 ** np.clip(1.5 * (1.5 - over_warn) + rng.normal(0.0, 0.7, n), 0.5, 9.0)
    ber = objective(p["speed_bps"].to_numpy(), p["fiber"].to_numpy()) * times
    clean = chance(rng, 0.3, n)
    p["rx_ber"] = np.where(clean, ber * 1e-6, np.minimum(ber, 1e-3))
    p["symbols_per_error"] = rng.uniform(0.5, 2.0, n)
    # A failing transmitter at the far end shows as low light here; at this end, as low
    # transmit power. Some modules run hot.
    weak_tx = chance(rng, 0.12, n)
    p["tx_power_dbm"] = np.where(
        weak_tx, p["tx_alarm_dbm"] + rng.uniform(-2.0, -0.1, n), p["tx_power_dbm"]
    )
    # ... or a laser whose bias drifted past its alarm thresholds, either way.
    drift = chance(rng, 0.06, n)
    p["bias_ma"] = np.where(drift, rng.choice([1.0, 60.0], n), p["bias_ma"])
    p["temperature_c"] = np.where(
        chance(rng, 0.05, n), rng.uniform(72.0, 90.0, n), p["temperature_c"]
    )
    flapping = (over_warn < -4.0) & chance(rng, 0.2, n)
    p["link_changes"] = np.where(flapping, 2 * rng.integers(1, 6, n), 0).astype(float)


def _lossy_strand(ends: Ends) -> LinkView | None:
    """A fiber direction losing more light than its channel may: that strand's connectors
    and cords (a dirty or damaged end face, a tight bend)."""
    if not ends.lossy:
        return None
    tx, rx = ends.lossy[0]
    sender, receiver = ends.name(tx), ends.name(rx)
    other = "loses too much as well" if len(ends.lossy) == 2 else "is within its allowance"
    checks = [
        f"the {sender} \u2192 {receiver} strand: clean and inspect its connectors with a fiber "
        f"scope ({sender}'s transmit end, {receiver}'s receive end) and its patch cords",
        f"at {receiver}: compare with the other strand, which {other}",
    ]
    return ends.view(OPTIC_DEGRADED, ends.losses, checks)


#: Phrases of the trade that name this verdict in a thread reply, each with a weight.
_PHRASES: tuple[tuple[str, int], ...] = (
    ("optic", 3), ("sfp", 3), ("transceiver", 3), ("dirty", 2), ("light level", 3),
    ("rx power", 3), ("dbm", 2), ("attenuat", 2), ("end face", 2), ("ferrule", 2), ("fiber", 1),
    ("fibre", 1),
)  # fmt: skip

KIND = TreeVerdict(
    verdict=OPTIC_DEGRADED,
    listed=6,
    title="optic degraded",
    meaning="Received light is near or under the module's low thresholds.",
    checks=(
        check(
            "Compare received power with the far end's transmit power: the difference is "
            "the link's loss; set it against the link's loss budget."
        ),
        check(
            "Clean both connectors, inspect the end faces with a fiber scope, and re-seat.",
            Touch.UNPLUG,
            Touch.FIBER_END,
        ),
        check(
            "Check patch cords for tight bends or crush; swap for a known-good cord.",
            Touch.UNPLUG,
            Touch.FIBER_END,
        ),
        check(
            "If the loss stays high, test the link with a light source and power meter (or "
            "an OTDR) against its design (TIA-568 cabled-fiber and connector allowances).",
            Touch.UNPLUG,
            Touch.FIBER_END,
        ),
        check(
            "If the far end transmits low, or a module runs hot or at high bias current, "
            "replace that transceiver.",
            Touch.UNPLUG,
            Touch.FIBER_END,
        ),
    ),
    cautions=((Caution.FIBER_EYES, When.ALWAYS), (Caution.SERVICE_BREAK, When.ALWAYS)),
    evidence=_evidence,
    demo=DemoPlant(
        "central",
        "lark-east-idf1",
        "up1",
        "uplink to lark-core1",
        {**FIBER_10G, "rx_margin_db": -1.2, "rx_ber": 3e-9, "rx_util": 0.12},
    ),
    severity=5,
    needs=(
        Need(
            "transceiver readings (optical power)",
            "SFF-8472 digital diagnostics",
            lambda s: s.optics,
        ),
        Need(
            "received light under the module's low warning (near its alarm), transmit power "
            "under its low alarm, laser bias outside its alarm thresholds, or a module "
            "running hot",
            "SFF-8472 alarm and warning thresholds",
            lambda s: s.light_low | s.tx_low | s.bias_out | s.hot,
        ),
    ),
    bit_errors=True,
    phrases=_PHRASES,
    signature=_signature,
    prior_share=0.10,
    shown_by=(Shows("light_margin_db", higher=False), Shows("tx_margin_db", higher=False)),
    link=LinkJudge(30, _lossy_strand),
)
