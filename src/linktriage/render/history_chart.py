"""A port's windows drawn to explain its verdict, evidence first.

At the top, what a bad link shows: the errored frames each window received, as hatched bars,
against the count a link just meeting its IEEE 802.3 bit error ratio objective would show
over the same frames (a black bar across each window); under them, each window's link
changes as stems. A dashed line crosses every panel where the verdict changed, the latest
one written beside it in words. Then only the readings that held something in the span
(discards, load, received light, FEC), each on a panel of its own; a reading that stayed at
zero or was never read is left out rather than drawn flat.

Counts are drawn as counted: a window with no errored frame has a bar of height zero and a
hollow marker on the axis. Where the counts span more than a decade the axis is linear to
one and logarithmic above (symlog), and a line at one frame marks the least any window can
count: below it a window could not have seen an error, whatever its objective allows.

The layout is placed by hand (matplotlib's constrained layout costs half the drawing time),
so the picture's size follows from the panels it holds: :func:`size_in` says it.
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from datetime import UTC
from typing import TYPE_CHECKING, Any

from linktriage.render import words
from linktriage.render.drawing import BLUE, GREY, PURPLE, STYLE, VERMILION, day, figure
from linktriage.render.replies import HistoryPoint, VerdictRun

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

WIDTH_IN = 11.0
LEFT_IN = 1.45  # tick labels and the unit
HEAD_LEFT_IN = 0.3
RIGHT_IN = 0.35
TITLE_LINE_IN = 0.36
BOTTOM_IN = 0.95  # the time axis' labels
PANEL_TITLE_IN = 0.42
LEGEND_ROW_IN = 0.3
GAP_IN = 0.3  # between one panel's axis and the next one's title
SUBTITLE_LINE_IN = 0.3
#: The share of a panel's height its data may fill: the rest is room for the change's
#: words on the evidence panel, a little air on the others.
FILL = 0.62
FILL_OTHERS = 0.85
#: Counts up to this many are drawn on a linear axis; more, linear to one and log above.
LINEAR_UP_TO = 10.0
#: Characters a line of the heading holds at its size.
TITLE_WIDTH = 54
SUBTITLE_WIDTH = 76

_IN: dict[str, Any] = {"color": BLUE, "linestyle": "-", "marker": "o"}
_OUT: dict[str, Any] = {"color": VERMILION, "linestyle": "--", "marker": "s"}


@dataclass(frozen=True, slots=True)
class Panel:
    """One panel as drawn: what it shows (``key``), its title, the unit of its axis."""

    key: str  # "errors", "link_changes", "discards", "load", "light" or "fec"
    title: str
    unit: str
    axes: Axes


@dataclass(frozen=True, slots=True)
class Chart:
    """A drawn chart, before it is encoded: its panels top to bottom, and the moments the
    verdict changed (seconds since the epoch), each marked on every panel."""

    figure: Figure
    panels: list[Panel]
    changes: list[float]

    def panel(self, key: str) -> Panel | None:
        return next((p for p in self.panels if p.key == key), None)

    @property
    def size_px(self) -> tuple[int, int]:
        width, height = self.figure.get_size_inches() * self.figure.dpi
        return round(width), round(height)


@dataclass(frozen=True, slots=True)
class _Kind:
    """A kind of panel: when it is drawn, how tall, how many legend rows, how."""

    key: str
    title: str
    unit: str
    height_in: float
    legend_rows: int
    holds: Callable[[Sequence[HistoryPoint]], bool]
    draw: Callable[[Axes, Sequence[HistoryPoint]], None]


def _values(points: Sequence[HistoryPoint], key: str) -> list[float]:
    return [math.nan if p[key] is None else float(p[key]) for p in points]  # type: ignore[literal-required]


def _counted(points: Sequence[HistoryPoint], *keys: str) -> bool:
    """Whether any window counted anything under ``keys``: a panel of zeros says nothing."""
    return any(v > 0 for key in keys for v in _values(points, key))


def _read(points: Sequence[HistoryPoint], key: str) -> bool:
    return any(p[key] is not None for p in points)  # type: ignore[literal-required]


def _middle(points: Sequence[HistoryPoint]) -> list[float]:
    return [day((p["start"] + p["end"]) / 2) for p in points]


def _widths(points: Sequence[HistoryPoint]) -> list[float]:
    """Each window's bar: four fifths of its span, so neighbours stand apart."""
    return [day(p["end"] - p["start"]) * 0.8 for p in points]


# --- the evidence
def _errors(axes: Axes, points: Sequence[HistoryPoint]) -> None:
    """Errored frames against what the objective allows, window by window."""
    objective = next((p["objective"] for p in reversed(points) if p["objective"]), None)
    label = words.chart_at_objective(objective) if objective else None
    _counts(axes, points, "rx_errors", "errors_at_objective", (words.CHART_ERRORED, label,
            words.CHART_LEAST), FILL)  # fmt: skip


def _counts(
    axes: Axes,
    points: Sequence[HistoryPoint],
    key: str,
    allowed_key: str,
    said: tuple[str, str | None, str],
    fill: float,
) -> None:
    """Counts per window as hatched bars (zero: a hollow marker on the axis; not read: a
    cross), the count each window allows as a black bar across it; ``said``: the legend's
    words for the counts, the count allowed, and the least one a window counts."""
    label, allowed_label, least = said
    middle, widths = _middle(points), _widths(points)
    counts, allowed = _values(points, key), _values(points, allowed_key)
    read = [k for k, v in enumerate(counts) if not math.isnan(v)]
    axes.bar(
        [middle[k] for k in read], [counts[k] for k in read], [widths[k] for k in read],
        color=PURPLE, edgecolor="black", hatch="//", linewidth=1, label=label, gid="counts",
    )  # fmt: skip
    zero = [middle[k] for k in read if counts[k] == 0]
    if zero:
        axes.plot(zero, [0.0] * len(zero), linestyle="none", marker="o", markersize=9,
                  markerfacecolor="white", markeredgecolor="black", clip_on=False,
                  label=words.CHART_NONE_COUNTED, gid="none-counted", zorder=4)  # fmt: skip
    unread = [m for m, v in zip(middle, counts, strict=True) if math.isnan(v)]
    if unread:
        axes.plot(unread, [0.0] * len(unread), linestyle="none", marker="x", markersize=10,
                  color="black", clip_on=False, label=words.CHART_NOT_COUNTED,
                  gid="not-counted", zorder=4)  # fmt: skip
    bounds = [(middle[k] - widths[k] * 0.6, middle[k] + widths[k] * 0.6, allowed[k])
              for k in range(len(points)) if not math.isnan(allowed[k])]  # fmt: skip
    if bounds and allowed_label is not None:
        axes.hlines([a for *_, a in bounds], [s for s, *_ in bounds], [e for _, e, _ in bounds],
                    colors="black", linewidth=4, label=allowed_label, gid="allowed",
                    zorder=3)  # fmt: skip
    if read and not any(counts[k] for k in read):
        axes.text(0.5, 0.55, words.chart_none_in_any(label), transform=axes.transAxes,
                  ha="center", va="center", fontsize=16, gid="none-in-any")  # fmt: skip
    highest = max([1.0, *(v for v in counts + allowed if not math.isnan(v))])
    if highest > LINEAR_UP_TO or any(a < 1.0 for a in allowed):
        # Where a window allows less than one, one frame is already over it.
        axes.axhline(1.0, color=GREY, linestyle="-.", linewidth=2, label=least, gid="least")
    if highest > LINEAR_UP_TO:
        from matplotlib.ticker import FuncFormatter

        axes.set_yscale("symlog", linthresh=1.0, linscale=0.6)
        axes.yaxis.set_major_formatter(FuncFormatter(lambda v, _: _count(v)))
        decades = 0.6 + math.log10(highest)  # the linear part weighs linscale decades
        axes.set_ylim(0.0, 10 ** (decades / fill - 0.6))
    else:
        from matplotlib.ticker import MaxNLocator

        axes.yaxis.set_major_locator(MaxNLocator(integer=True))
        axes.set_ylim(0.0, highest / fill)
    axes.minorticks_off()


def _count(value: float) -> str:
    """A count on a log axis, short enough for the margin: 100, 10,000, 1M, 10G."""
    for size, unit in ((1e9, "G"), (1e6, "M")):
        if value >= size:
            return f"{value / size:,.0f}{unit}"
    return f"{value:,.0f}"


def _link_changes(axes: Axes, points: Sequence[HistoryPoint]) -> None:
    """A stem and a marker where the link went down or up, written as words where it never
    did."""
    from matplotlib.ticker import MaxNLocator

    middle = _middle(points)
    changes = _values(points, "link_changes")
    moved = [(m, c) for m, c in zip(middle, changes, strict=True) if c > 0]
    if moved:
        axes.vlines([m for m, _ in moved], 0.0, [c for _, c in moved], colors="black",
                    linewidth=2.5)  # fmt: skip
        axes.plot([m for m, _ in moved], [c for _, c in moved], linestyle="none", marker="^",
                  markersize=12, color=VERMILION, markeredgecolor="black",
                  label=words.CHART_LINK_CHANGES, gid="link-changes")  # fmt: skip
    else:
        axes.text(0.5, 0.5, words.CHART_LINK_STEADY, transform=axes.transAxes, ha="center",
                  va="center", fontsize=16, gid="link-steady")  # fmt: skip
    axes.yaxis.set_major_locator(MaxNLocator(integer=True, nbins=3))
    axes.set_ylim(0.0, max([1.0, *(c for _, c in moved)]) / FILL_OTHERS)


# --- the other readings, drawn only where they hold something
def _each_way(
    axes: Axes, points: Sequence[HistoryPoint], keys: tuple[str, str], scale: float
) -> None:
    """One reading in and out, each with its own line style and marker, from zero up."""
    middle = _middle(points)
    highest = 0.0
    for key, style, name in zip(keys, (_IN, _OUT), (words.CHART_IN, words.CHART_OUT), strict=True):
        values = [v * scale for v in _values(points, key)]
        axes.plot(middle, values, label=name, gid=key, **style)
        highest = max([highest, *(v for v in values if not math.isnan(v))])
    axes.set_ylim(0.0, (highest or 1.0) / FILL_OTHERS)


def _discards(axes: Axes, points: Sequence[HistoryPoint]) -> None:
    _each_way(axes, points, ("in_discards", "out_discards"), 1.0)


def _load(axes: Axes, points: Sequence[HistoryPoint]) -> None:
    _each_way(axes, points, ("rx_util", "tx_util"), 100.0)


def _light(axes: Axes, points: Sequence[HistoryPoint]) -> None:
    """Received light, with the least it should get across each window."""
    middle, widths = _middle(points), _widths(points)
    light, least = _values(points, "rx_dbm"), _values(points, "rx_low_dbm")
    axes.plot(middle, light, label=words.CHART_LIGHT_RECEIVED, gid="rx_dbm", **_IN)
    bounds = [(m - w * 0.6, m + w * 0.6, v) for m, w, v in zip(middle, widths, least, strict=True)
              if not math.isnan(v)]  # fmt: skip
    if bounds:
        axes.hlines([v for *_, v in bounds], [s for s, *_ in bounds], [e for _, e, _ in bounds],
                    colors="black", linewidth=4, linestyles=":", label=words.CHART_LIGHT_LEAST,
                    gid="rx_low_dbm")  # fmt: skip
    shown = [v for v in light + least if not math.isnan(v)]
    low, high = min(shown), max(shown)
    room = max(high - low, 2.0)
    axes.set_ylim(low - room * 0.15, low + room / FILL_OTHERS)


def _fec(axes: Axes, points: Sequence[HistoryPoint]) -> None:
    _counts(axes, points, "fec_bits", "fec_high_bits", (words.CHART_FEC_CORRECTED,
            words.CHART_FEC_HIGH, words.CHART_LEAST_BIT), FILL_OTHERS)  # fmt: skip


KINDS: tuple[_Kind, ...] = (
    _Kind("errors", words.CHART_ERRORS, words.CHART_FRAMES, 4.0, 2, lambda _: True, _errors),
    _Kind("link_changes", words.CHART_LINK, words.CHART_CHANGES, 2.0, 1,
          lambda ps: _read(ps, "link_changes"), _link_changes),
    _Kind("discards", words.CHART_DISCARDS, words.CHART_FRAMES, 2.4, 1,
          lambda ps: _counted(ps, "in_discards", "out_discards"), _discards),
    _Kind("load", words.CHART_LOAD, words.CHART_LOAD_UNIT, 2.4, 1,
          lambda ps: _counted(ps, "rx_util", "tx_util"), _load),
    _Kind("light", words.CHART_LIGHT, words.CHART_LIGHT_UNIT, 2.4, 1,
          lambda ps: _read(ps, "rx_dbm"), _light),
    _Kind("fec", words.CHART_FEC, words.CHART_BITS, 2.8, 2,
          lambda ps: _counted(ps, "fec_bits"), _fec),
)  # fmt: skip


def kinds_for(points: Sequence[HistoryPoint]) -> list[_Kind]:
    """The panels a chart of these windows holds, top to bottom."""
    return [kind for kind in KINDS if kind.holds(points)]


def _above_in(kind: _Kind) -> float:
    return GAP_IN + PANEL_TITLE_IN + kind.legend_rows * LEGEND_ROW_IN


def _lines(text: str, width: int) -> list[str]:
    return [line for part in text.split("\n") for line in textwrap.wrap(part, width)]


def _head_in(title: str, subtitle: str) -> float:
    """The heading's height: the title's lines, bold, then the subtitle's."""
    return (0.15 + len(_lines(title, TITLE_WIDTH)) * TITLE_LINE_IN
            + len(_lines(subtitle, SUBTITLE_WIDTH)) * SUBTITLE_LINE_IN)  # fmt: skip


def size_in(title: str, subtitle: str, points: Sequence[HistoryPoint]) -> tuple[float, float]:
    """The chart's width and height in inches: the heading, each panel with its title and
    legend above it, the time axis; never lower than wide, so a phone shows it upright (the
    evidence panel takes what is left over)."""
    body = sum(_above_in(kind) + kind.height_in for kind in kinds_for(points))
    return WIDTH_IN, max(WIDTH_IN, _head_in(title, subtitle) + body + BOTTOM_IN)


def history_chart(
    title: str,
    subtitle: str,
    points: Sequence[HistoryPoint],
    runs: Sequence[VerdictRun],
    named: Callable[[str], str],
) -> Chart:
    """The chart of ``points`` (oldest first, at least one), headed ``title`` and
    ``subtitle``; ``named`` says a verdict in words where its change is marked."""
    import matplotlib

    kinds = kinds_for(points)
    width, height = size_in(title, subtitle, points)
    head = _head_in(title, subtitle)
    spare = height - head - BOTTOM_IN - sum(_above_in(kind) + kind.height_in for kind in kinds)
    with matplotlib.rc_context(STYLE):
        drawn = figure(width, height, constrained=False)
        left = LEFT_IN / width
        titled = _lines(title, TITLE_WIDTH)
        drawn.text(HEAD_LEFT_IN / width, 1 - 0.15 / height, "\n".join(titled), ha="left", va="top",
                   fontsize=20, fontweight="bold", linespacing=1.15)  # fmt: skip
        below = 0.15 + len(titled) * TITLE_LINE_IN + 0.04
        drawn.text(HEAD_LEFT_IN / width, 1 - below / height,
                   "\n".join(_lines(subtitle, SUBTITLE_WIDTH)),
                   ha="left", va="top", fontsize=17, linespacing=1.15)  # fmt: skip
        top = height - head
        panels: list[Panel] = []
        first: Axes | None = None
        for kind in kinds:
            body = kind.height_in + (spare if kind.key == "errors" else 0.0)
            top -= _above_in(kind)
            rect = (left, (top - body) / height, (width - LEFT_IN - RIGHT_IN) / width,
                    body / height)  # fmt: skip
            axes = drawn.add_axes(rect, sharex=first)
            first = first or axes
            top -= body
            kind.draw(axes, points)
            panels.append(Panel(kind.key, kind.title, kind.unit, axes))
        changes = _mark_changes(panels, runs, named)
        for kind, panel in zip(kinds, panels, strict=True):
            _frame(panel.axes, kind, height)
        _time_axis(panels, points)
    return Chart(drawn, panels, changes)


def _frame(axes: Axes, kind: _Kind, figure_in: float) -> None:
    """The panel's title and legend above it (bars named first), its unit beside it, a
    light grid."""
    from matplotlib.container import BarContainer

    axes.set_ylabel(kind.unit)
    axes.grid(True, axis="y", alpha=0.4)
    handles, labels = axes.get_legend_handles_labels()
    order = sorted(range(len(handles)), key=lambda k: not isinstance(handles[k], BarContainer))
    legend_in = kind.legend_rows * LEGEND_ROW_IN
    height_in = axes.get_position().height * figure_in
    if handles:
        axes.legend([handles[k] for k in order], [labels[k] for k in order], loc="lower left",
                    bbox_to_anchor=(0.0, 1.0), ncols=2, frameon=False, borderaxespad=0.1,
                    handlelength=2.2, columnspacing=1.2)  # fmt: skip
    axes.text(0.0, 1.0 + (legend_in + 0.06) / height_in, kind.title, transform=axes.transAxes,
              ha="left", va="bottom", fontsize=18, fontweight="bold")  # fmt: skip


def _mark_changes(
    panels: list[Panel], runs: Sequence[VerdictRun], named: Callable[[str], str]
) -> list[float]:
    """A line on every panel where the verdict changed, dashed for the latest, which is
    written out in words on the evidence panel on whichever side of it has room; dotted for
    earlier ones, named in the evidence panel's legend."""
    changes = [run["start"] for run in runs[1:]]
    if not changes:
        return []
    for panel in panels:
        for k, at in enumerate(changes):
            latest = k == len(changes) - 1
            named_here = not latest and k == 0 and panel.key == "errors"
            panel.axes.axvline(
                day(at), color="black", linestyle="--" if latest else ":",
                linewidth=3 if latest else 2, gid="verdict-change" if latest else "earlier-change",
                label=words.CHART_EARLIER_CHANGES if named_here else None, zorder=5,
            )  # fmt: skip
    start, end = runs[0]["start"], runs[-1]["end"]
    at = changes[-1]
    right = (at - start) < 0.55 * (end - start)
    said = words.chart_change(at, named(runs[-2]["verdict"]), named(runs[-1]["verdict"]))
    panels[0].axes.annotate(
        said, xy=(day(at), 1.0), xycoords=("data", "axes fraction"),
        xytext=(10 if right else -10, -8), textcoords="offset points",
        ha="left" if right else "right", va="top", fontsize=16, fontweight="bold",
        bbox={"facecolor": "white", "edgecolor": "black", "boxstyle": "square,pad=0.3"},
        gid="change-words", zorder=6,
    )  # fmt: skip
    return changes


def _time_axis(panels: list[Panel], points: Sequence[HistoryPoint]) -> None:
    """Time of day in UTC under the last panel only (to the second where the span is short,
    with the weekday where it is long); the span a little wider than the windows, so the
    first and last bars show whole."""
    from matplotlib import dates

    start, end = points[0]["start"], points[-1]["end"]
    span = end - start
    shown = "%H:%M:%S" if span < 20 * 60 else "%a %H:%M" if span > 36 * 3600 else "%H:%M"
    bottom = panels[-1].axes
    bottom.set_xlim(day(start - span * 0.02), day(end + span * 0.02))
    locator = dates.AutoDateLocator(tz=UTC, minticks=3, maxticks=7)  # type: ignore[no-untyped-call]
    bottom.xaxis.set_major_locator(locator)
    bottom.xaxis.set_major_formatter(dates.DateFormatter(shown, tz=UTC))  # type: ignore[no-untyped-call]
    bottom.set_xlabel(words.CHART_TIME)
    for panel in panels[:-1]:
        panel.axes.tick_params(labelbottom=False)
