"""Optical power as transceivers report it: SFF-8472 digital diagnostics and dBm.

SFF-8472 (as reproduced in the application note it grew from, and in ethtool's
implementation) reports transmit and receive power as unsigned 16-bit words in units of
0.1 microwatt, 0 to 6.5535 mW, about -40 to +8.2 dBm. Power in dBm is 10 log10(P / 1 mW):
1 mW is 0 dBm, 0.1 mW is -10 dBm.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]

#: One least significant bit of an SFF-8472 power word, in milliwatts (0.1 uW).
SFF8472_POWER_LSB_MW = 1e-4
SFF8472_POWER_MAX_RAW = 65535


def mw_to_dbm(mw: FloatArray | float) -> FloatArray:
    """Milliwatts to dBm; zero power is minus infinity."""
    with np.errstate(divide="ignore"):
        return np.asarray(10.0 * np.log10(np.asarray(mw, np.float64)))


def dbm_to_mw(dbm: FloatArray | float) -> FloatArray:
    """dBm to milliwatts."""
    return np.asarray(10.0 ** (np.asarray(dbm, np.float64) / 10.0))


def sff8472_power_dbm(raw: npt.ArrayLike) -> FloatArray:
    """An SFF-8472 power word (0.1 uW per LSB) in dBm."""
    return mw_to_dbm(np.asarray(raw, np.float64) * SFF8472_POWER_LSB_MW)


def sff8472_power_raw(dbm: FloatArray | float) -> npt.NDArray[np.int64]:
    """The SFF-8472 power word a module would report for ``dbm`` (rounded, clamped)."""
    raw = np.rint(dbm_to_mw(dbm) / SFF8472_POWER_LSB_MW)
    words: npt.NDArray[np.int64] = np.clip(np.nan_to_num(raw), 0, SFF8472_POWER_MAX_RAW).astype(
        np.int64
    )
    return words
