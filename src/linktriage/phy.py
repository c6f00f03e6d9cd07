"""Physical-layer facts: which PHY a port runs, its bit-error objective, and a BER estimate.

Objectives, with where each comes from (the IEEE 802.3 text itself was not at hand):

* 10BASE-T: 10^-8, and 100BASE-X / 1000BASE-X: 10^-12; IEEE 802.3 HSSG reflector,
  R. Seifert, 1999 (quoted, not read in the standard).
* 100BASE-TX: 10^-10. Unresolved: one source gives 10^-12 for 100BASE-X, a cabling trade
  article gives 10^-10 for 100BASE-TX; the looser figure is used so a verdict never rests
  on the stricter, unconfirmed one.
* 1000BASE-T: 10^-10; IEEE 802.3 clause 40.6.1.3.1 ("frame error rate of less than 10^-7
  for 125 octet frames ... equivalent to a bit error rate of 10^-10"), as quoted in a PHY
  compliance-test manual.
* 10GBASE-T: 10^-12 (IEEE 802.3an objective, quoted in a trade article); 10GBASE-R and the
  faster Ethernet PHYs: 10^-12 at the MAC service interface (IEEE 802.3 clause 52 and the
  40/100G objective; the clause 52 figure is from memory).
"""

from __future__ import annotations

import numpy as np

from linktriage.polls import FloatArray

_GBPS = 1_000_000_000


def phy_name(speed_bps: float, fiber: bool | None) -> str | None:
    """The Ethernet PHY family a port most likely runs, from its speed and medium."""
    if not speed_bps > 0:  # also NaN
        return None
    copper = fiber is False
    names = {
        10_000_000: "10BASE-T",
        100_000_000: "100BASE-TX" if copper else "100BASE-X",
        _GBPS: "1000BASE-T" if copper else "1000BASE-X",
        10 * _GBPS: "10GBASE-T" if copper else "10GBASE-R",
        25 * _GBPS: "25GBASE-R",
        40 * _GBPS: "40GBASE-R",
        50 * _GBPS: "50GBASE-R",
        100 * _GBPS: "100GBASE-R",
        400 * _GBPS: "400GBASE-R",
    }
    if fiber is None and speed_bps in (100_000_000, _GBPS, 10 * _GBPS):
        return None  # copper and fiber PHYs of these speeds have different objectives
    return names.get(int(speed_bps))


_OBJECTIVE = {
    "10BASE-T": 1e-8,
    "100BASE-TX": 1e-10,
    "100BASE-X": 1e-12,
    "1000BASE-T": 1e-10,
    "1000BASE-X": 1e-12,
    "10GBASE-T": 1e-12,
}


def ber_objective(phy: str | None) -> float | None:
    """The IEEE 802.3 bit-error-ratio objective for a PHY family (module docstring)."""
    if phy is None:
        return None
    return _OBJECTIVE.get(phy, 1e-12 if phy.endswith("GBASE-R") else None)


def estimate_ber(frame_error_ratio: FloatArray, frame_bits: FloatArray) -> FloatArray:
    """Bit error ratio implied by a frame error ratio ``p`` on frames of ``b`` bits.

    If bits fail independently with probability ``q``, a frame survives with probability
    ``(1 - q)^b``, so ``p = 1 - (1 - q)^b`` and ``q = 1 - (1 - p)^(1/b)``, about
    ``-ln(1 - p) / b`` for small ``q``. A frame error ratio of 10^-7 on 125-octet frames
    gives 10^-10, as IEEE 802.3 clause 40.6.1.3.1 states.
    """
    p = np.clip(np.asarray(frame_error_ratio, np.float64), 0.0, 1.0 - 1e-12)
    with np.errstate(divide="ignore", invalid="ignore"):
        return -np.expm1(np.log1p(-p) / np.asarray(frame_bits, np.float64))
