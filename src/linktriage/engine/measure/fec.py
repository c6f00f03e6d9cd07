"""Forward error correction as the link's early warning: the pre-FEC bit error ratio against
what the code's clause treats as high, and the codewords it could not correct.

IEEE 802.3 clause 30 counts codewords corrected and uncorrectable (aFECCorrectedBlocks,
aFECUncorrectableBlocks); many devices also count the bits corrected. The pre-FEC bit error
ratio is corrected bits over the bits the line carried in the window; where only blocks are
counted, corrected blocks over the bits is a lower bound (each corrected codeword held at
least one bit in error). A low, steady corrected rate is normal: the code is there because
the PMDs of 25 Gb/s and faster are specified to run with errors before it.

Figures (SNAPSHOT-FORMAT 1.2 gives the first two "from memory: check and cite"; they are
held here as the level an engineer calls high, not as the code's limit):

* RS(528,514), clauses 91 and 108 (25G and 100G NRZ): corrects up to 7 10-bit symbols in a
  5,280-bit codeword (clause 91, as quoted in reference/standards-check-values.md, S); the
  RS-FEC PMDs of clauses 95 and 112 are specified at a pre-FEC BER of 5e-5 at their service
  interface (from memory, M). High from 1e-5: a fifth of that, the margin gone.
* RS(544,514), clauses 91 and 119 on (50G to 400G PAM4): corrects up to 15 symbols; its
  PMDs run near 2.4e-4 (a secondary source, weak). High from 5e-5.
* BASE-R FEC, clause 74 (a shortened cyclic code over 2,112-bit blocks, 32 parity bits):
  corrects one burst of up to 11 bits per block; high from 1e-7 (from memory, a judgement:
  the clause 74 links of 10G and 25G backplanes and cables are specified near 1e-8 before
  FEC and 1e-12 after).
* ``rs`` (RS-FEC, the device does not say which): the stricter RS figure, 1e-5.

Uncorrectable codewords lose frames (their FCS then fails): they are evidence where at least
MIN_ERROR_FRAMES were counted and an exact one-sided test at 99% shows them over
UNCORRECTABLE_SHARE of the codewords the window carried.
"""

from __future__ import annotations

import numpy as np

from linktriage.engine.format.poll_table import FEC_MODES, FloatArray

#: The pre-FEC bit error ratio called high, by FEC mode code (FEC_MODES order); NaN: no FEC.
HIGH_PRE_FEC_BER: dict[str, float] = {
    "none": np.nan,
    "base_r": 1e-7,
    "rs528": 1e-5,
    "rs544": 5e-5,
    "rs": 1e-5,
}
#: Bits of data each codeword carries: RS(528,514) and RS(544,514) 514 10-bit symbols; the
#: clause 74 code 2,080 of its 2,112 bits (32 parity).
DATA_BITS: dict[str, float] = {
    "none": np.nan,
    "base_r": 2080.0,
    "rs528": 5140.0,
    "rs544": 5140.0,
    "rs": 5140.0,
}
#: Uncorrectable codewords tolerated as a share of those carried: the frame loss ratio the
#: RS-FEC PMDs are specified to, 6.2e-10 for 64-octet frames (clauses 95 and 112, from
#: memory, M), a frame lost per codeword lost.
UNCORRECTABLE_SHARE = 6.2e-10

_LIMIT = np.array([HIGH_PRE_FEC_BER[m] for m in FEC_MODES])
_DATA = np.array([DATA_BITS[m] for m in FEC_MODES])


def _by_mode(table: FloatArray, mode: FloatArray) -> FloatArray:
    known = ~np.isnan(mode)
    out = np.full(len(mode), np.nan)
    out[known] = table[mode[known].astype(np.intp)]
    return out


def high_pre_fec_ber(mode: FloatArray) -> FloatArray:
    """The pre-FEC bit error ratio called high for each port's FEC mode (NaN: none)."""
    return _by_mode(_LIMIT, mode)


def codewords(mode: FloatArray, line_bits: FloatArray) -> FloatArray:
    """The codewords a window of ``line_bits`` carried at each port's FEC mode."""
    return line_bits / _by_mode(_DATA, mode)
