"""Numbers as an engineer reads them: significant figures, ratios per so many frames,
multiples of a reference. Every word the engine writes about a measured value uses these."""

from __future__ import annotations

import math


def sig(x: float, digits: int = 2) -> str:
    """A number to ``digits`` significant figures, grouped, never in exponent notation."""
    short = f"{x:.{digits}g}"  # correctly rounded; exponent notation only when large or tiny
    if "e" not in short:
        return short
    if short[-3] == "+":  # large: group the rounded integer
        return f"{float(short):,.0f}"
    if x == 0 or not math.isfinite(x):
        return "0" if x == 0 else str(x)
    decimals = digits - 1 - math.floor(math.log10(abs(x)))
    if decimals <= 0:
        return f"{round(x, decimals):,.0f}"
    return f"{x:,.{decimals}f}".rstrip("0").rstrip(".")


def ratio_scale(threshold: float) -> int:
    """The power of ten a per-frame ratio reads against: 1e-5 reads "1 in 100,000"."""
    if not 0 < threshold < math.inf:
        return 100
    return int(10 ** max(2, math.ceil(-math.log10(threshold) - 1e-9)))


def format_ratio(value: float, scale: int) -> str:
    """A per-frame ratio as "4.1 in 100,000", or as a percentage once it is large."""
    per = value * scale
    if per >= 1000:
        return f"{sig(value * 100)}% of frames"
    return f"{sig(per)} in {scale:,}"


def times(multiple: float) -> str:
    """A multiple of a reference value: "3.2 times"."""
    return f"{sig(multiple)} times"


def rounded(value: float) -> float | None:
    """A measured value for output: six significant digits, None when not reported."""
    if math.isnan(value):
        return None
    return float(f"{value:.6g}")
