"""What every picture shares: type large enough for a phone, a palette that colour-blind eyes
tell apart, figures built without pyplot, and PNG bytes out.

matplotlib is imported only when a figure is made, so the command line and the bot start
without it; figures are built without pyplot, whose global state the bot's threads would
share. Nothing is told by colour alone: every series also has its own line style, marker
or hatch, and is named in a legend or written on the picture.
"""

from __future__ import annotations

import io
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from matplotlib.figure import Figure

#: Type large enough to read when Slack shrinks the picture to a phone's width.
STYLE: dict[Any, Any] = {
    "date.epoch": "1970-01-01T00:00:00",  # dates as days since the Unix epoch: see day()
    "font.size": 17,
    "axes.titlesize": 19,
    "axes.labelsize": 17,
    "xtick.labelsize": 15,
    "ytick.labelsize": 15,
    "legend.fontsize": 14,
    "lines.linewidth": 2.5,
    "lines.markersize": 8,
    "hatch.linewidth": 1.5,
}
DPI = 100
#: Colours of the Okabe-Ito palette (distinct to colour-blind eyes).
BLUE = "#0072B2"
VERMILION = "#D55E00"
PURPLE = "#CC79A7"
GREY = "#999999"


def figure(width_in: float, height_in: float, *, constrained: bool = True) -> Figure:
    """An empty figure drawn off screen. ``constrained``: matplotlib lays it out (costly:
    half the drawing time of a chart); otherwise the caller places each part."""
    import matplotlib

    matplotlib.use("Agg")  # no display: pictures go to files and uploads
    from matplotlib.figure import Figure

    return Figure(
        figsize=(width_in, height_in), dpi=DPI, layout="constrained" if constrained else None
    )


def png(drawn: Figure) -> bytes:
    """The figure as PNG bytes, drawn in the shared style."""
    import matplotlib

    out = io.BytesIO()
    with matplotlib.rc_context(STYLE):
        drawn.savefig(out, format="png", dpi=DPI)
    return out.getvalue()


def day(at: float) -> float:
    """A time as matplotlib's dates count it: days since the Unix epoch (set in STYLE)."""
    return at / 86_400.0
