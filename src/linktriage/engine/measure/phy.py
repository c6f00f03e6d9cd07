"""Physical-layer facts: which PHY a port runs, what the standard promises, a BER estimate.

Bit-error-ratio objectives, with where each comes from (the IEEE 802.3 text itself was not at
hand; the shared standards notes give the quotes):

* 10BASE-T: 10^-8, and 100BASE-X / 1000BASE-X: 10^-12; IEEE 802.3 HSSG reflector,
  R. Seifert, 1999 (quoted, not read in the standard).
* 100BASE-TX: 10^-10. Unresolved: the reflector gives 10^-12 for 100BASE-X, a cabling trade
  article 10^-10 for 100BASE-TX, and the ANSI X3.263 TP-PMD text was not available. The
  looser figure is used, so that no verdict rests on the stricter, unconfirmed one.
* 1000BASE-T: 10^-10; IEEE 802.3 clause 40.6.1.3.1 ("frame error rate of less than 10^-7
  for 125 octet frames ... equivalent to a bit error rate of 10^-10"), as quoted in a PHY
  compliance-test manual.
* 2.5GBASE-T and 5GBASE-T: 10^-12 at the MAC/PLS service interface (IEEE 802.3bz
  objectives, clause 126, from memory); 2.5GBASE-X and 5GBASE-R on fiber: 10^-12 (IEEE
  802.3cb clause 127 and 802.3 clause 49 coding, from memory).
* 10GBASE-T: 10^-12 (IEEE 802.3an objective, quoted in a trade article); 10GBASE-R: 10^-12
  (IEEE 802.3 clause 52, from memory); 25/40/50/100GBASE-R: 10^-12 at the MAC service
  interface (the 40/100G objective, quoted on the IEEE 802.3 reflector).
* 200GBASE-R and 400GBASE-R: 10^-13 (IEEE 802.3bs objectives, from memory).

Where the PHY is not known (no speed, or a speed with copper and fiber PHYs of different
objectives and no medium), the loosest objective it could have is used, for the same reason
as for 100BASE-TX.
"""

from __future__ import annotations

import numpy as np

from linktriage.engine.format.poll_table import FloatArray

_M = 1_000_000
_G = 1_000_000_000

#: IEEE 802.3 defines half-duplex (CSMA/CD) operation only up to 1000 Mb/s; 10 Gb/s and
#: faster Ethernet is full duplex only (IEEE 802.3 clause 44.1.1, from memory). 1000BASE-X
#: half duplex was specified but never shipped, and clause 37 autonegotiation settles duplex
#: on fiber (common practice): at 1 Gb/s only copper can end up half duplex.
HALF_DUPLEX_MAX_BPS = _G

_NAMES: dict[int, tuple[str, str]] = {  # speed -> (copper PHY, fiber PHY)
    10 * _M: ("10BASE-T", "10BASE-FL"),
    100 * _M: ("100BASE-TX", "100BASE-X"),
    _G: ("1000BASE-T", "1000BASE-X"),
    2_500 * _M: ("2.5GBASE-T", "2.5GBASE-X"),
    5 * _G: ("5GBASE-T", "5GBASE-R"),
    10 * _G: ("10GBASE-T", "10GBASE-R"),
    25 * _G: ("25GBASE-R", "25GBASE-R"),
    40 * _G: ("40GBASE-R", "40GBASE-R"),
    50 * _G: ("50GBASE-R", "50GBASE-R"),
    100 * _G: ("100GBASE-R", "100GBASE-R"),
    200 * _G: ("200GBASE-R", "200GBASE-R"),
    400 * _G: ("400GBASE-R", "400GBASE-R"),
}

_OBJECTIVE: dict[str, float] = {
    "10BASE-T": 1e-8,
    "10BASE-FL": 1e-8,  # the 10 Mb/s objective (reflector, as for 10BASE-T)
    "100BASE-TX": 1e-10,  # unresolved; see the module docstring
    "100BASE-X": 1e-12,
    "1000BASE-T": 1e-10,
    "1000BASE-X": 1e-12,
    "2.5GBASE-T": 1e-12,
    "2.5GBASE-X": 1e-12,
    "5GBASE-T": 1e-12,
    "5GBASE-R": 1e-12,
    "10GBASE-T": 1e-12,
    "10GBASE-R": 1e-12,
    "25GBASE-R": 1e-12,
    "40GBASE-R": 1e-12,
    "50GBASE-R": 1e-12,
    "100GBASE-R": 1e-12,
    "200GBASE-R": 1e-13,
    "400GBASE-R": 1e-13,
}
#: The loosest objective of any Ethernet PHY above: used when the PHY is unknown.
LOOSEST_OBJECTIVE = max(_OBJECTIVE.values())

#: The largest channel insertion loss a fiber PMD of each speed allows, so that a
#: direction is called lossy only where it is lossy for every PMD the port could run:
#: 1 Gb/s, 1000BASE-LX channel 4.5 dB (TIA FOTC's 1000BASE-LX page, reproducing IEEE 802.3
#: clause 38); 10 Gb/s, 10GBASE-LR channel 6.2 dB (IEEE 802.3 clause 52, from memory).
CHANNEL_LOSS_DB: dict[int, tuple[str, float]] = {
    1_000_000_000: ("1000BASE-LX", 4.5),
    10_000_000_000: ("10GBASE-LR", 6.2),
}

#: Receiver sensitivity (average received power, dBm) for modules that report no thresholds
#: of their own: the most sensitive common receiver of each speed, so that light is called
#: low only where it is low for every receiver the port could have. 1000BASE-LX -19 dBm
#: (IEEE 802.3 clause 38, as reproduced in equipment manuals); 10GBASE-LR -14.4 dBm
#: (IEEE 802.3 clause 52, minimum average receive power, as reproduced in a regulator's
#: table); 100BASE-LX -25 dBm (an equipment specification of the 100 Mb/s single-mode PMD).
RX_SENSITIVITY_DBM: dict[int, tuple[str, float]] = {
    100 * _M: ("100BASE-LX", -25.0),
    _G: ("1000BASE-LX", -19.0),
    10 * _G: ("10GBASE-LR", -14.4),
}


#: The longest a pause frame holds a transmitter off, in bit times: 65,535 quanta of 512 bit
#: times (IEEE 802.3 annex 31B, pause_time).
MAX_PAUSE_BITS = 65_535.0 * 512.0

#: The most light a receiver of each PMD takes without overload (maximum average receive
#: power, dBm, IEEE 802.3 PMD tables; all from memory, M: check against the clause before
#: relying on one): 1000BASE-SX 0 (clause 38), 1000BASE-LX -3 (clause 38), 10GBASE-SR -1.0,
#: 10GBASE-LR 0.5, 10GBASE-ER -1.0 (clause 52), 25GBASE-SR 2.4 (clause 112), 25GBASE-LR 2.0,
#: 40GBASE-SR4 2.4 per lane (clause 86), 40GBASE-LR4 2.3 per lane (clause 87), 100GBASE-SR4
#: 2.4 per lane (clause 95), 100GBASE-LR4 4.5 per lane (clause 88), 100GBASE-DR 4.0
#: (clause 140), 400GBASE-DR4 4.0 per lane (clause 124), 400GBASE-FR4 3.5 per lane (clause
#: 151).
PMD_MAX_RX_DBM: dict[str, float] = {
    "1000BASE-SX": 0.0,
    "1000BASE-LX": -3.0,
    "10GBASE-SR": -1.0,
    "10GBASE-LR": 0.5,
    "10GBASE-ER": -1.0,
    "25GBASE-SR": 2.4,
    "25GBASE-LR": 2.0,
    "40GBASE-SR4": 2.4,
    "40GBASE-LR4": 2.3,
    "100GBASE-SR4": 2.4,
    "100GBASE-LR4": 4.5,
    "100GBASE-DR": 4.0,
    "400GBASE-DR4": 4.0,
    "400GBASE-FR4": 3.5,
}
#: Where the PMD is not read: the most permissive PMD of the speed, so that light is called
#: too strong only where it is too strong for every receiver the port could have.
MOST_PERMISSIVE_MAX_RX_DBM: dict[int, float] = {
    _G: 0.0,
    10 * _G: 0.5,
    25 * _G: 2.4,
    40 * _G: 2.4,
    100 * _G: 4.5,
    400 * _G: 4.0,
}


def max_rx_dbm(pmd: str | None, speed_bps: float) -> float:
    """The most light the port's receiver takes: its PMD's, else the most permissive of
    its speed; NaN where neither is known."""
    if pmd is not None:
        known = PMD_MAX_RX_DBM.get(pmd.strip().upper())
        if known is not None:
            return known
    if speed_bps != speed_bps:
        return float("nan")
    return MOST_PERMISSIVE_MAX_RX_DBM.get(int(speed_bps), float("nan"))


def phy_name(speed_bps: float, fiber: bool | None) -> str | None:
    """The Ethernet PHY family a port most likely runs, from its speed and medium."""
    if not speed_bps > 0:  # also NaN
        return None
    names = _NAMES.get(int(speed_bps))
    if names is None:
        return None
    copper, optical = names
    if fiber is None:
        return copper if copper == optical else None
    return optical if fiber else copper


def ber_objective(phy: str | None) -> float | None:
    """The IEEE 802.3 bit-error-ratio objective of a PHY family (module docstring)."""
    return None if phy is None else _OBJECTIVE.get(phy)


def objective_for(speed_bps: float, fiber: bool | None) -> float:
    """The objective a verdict may hold a port to: its PHY's, else the loosest it could have."""
    known = ber_objective(phy_name(speed_bps, fiber))
    if known is not None:
        return known
    names = _NAMES.get(int(speed_bps)) if speed_bps > 0 else None
    if names is not None:
        return max(_OBJECTIVE[n] for n in names)
    return LOOSEST_OBJECTIVE


def half_duplex_exists(speed_bps: FloatArray, fiber: FloatArray) -> FloatArray:
    """1.0 where the port's speed and medium allow half duplex at all (see HALF_DUPLEX_MAX_BPS).

    An unknown medium is taken as copper and an unknown speed as slow enough: the rule only
    rules out what the readings exclude.
    """
    speed = np.asarray(speed_bps, np.float64)
    slow = ~(speed > 100 * _M)  # NaN counts as slow
    gig_copper = (speed == _G) & ~(fiber == 1.0)
    exists: FloatArray = (slow | gig_copper).astype(np.float64)
    return exists


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


def frame_error_ratio(ber: FloatArray, frame_bits: FloatArray) -> FloatArray:
    """The inverse of :func:`estimate_ber`: ``1 - (1 - q)^b``."""
    q = np.asarray(ber, np.float64)
    return -np.expm1(np.asarray(frame_bits, np.float64) * np.log1p(-q))
