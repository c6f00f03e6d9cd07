"""Pictures where an engineer would rather look than read: a port's history as a chart, and
the tree with one port's path marked. PNG bytes, drawn off screen.

Drawn to be read on a phone: large type, units on every axis, the objective as a line,
and nothing told by colour alone (each series has its own line style and marker, each
verdict its name written on it, the path its own line weight and node shape). matplotlib
is imported only when a picture is drawn, so the command line and the bot start without it;
figures are built without pyplot, whose global state the bot's threads would share.
"""

from __future__ import annotations

import io
import math
import textwrap
from dataclasses import dataclass
from datetime import UTC
from typing import TYPE_CHECKING, Any

from linktriage.render import words
from linktriage.render.replies import HistoryPoint, HistoryReply, Reply, TreeReply

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

#: Type large enough to read when Slack shrinks the picture to a phone's width.
_STYLE: dict[Any, Any] = {
    "date.epoch": "1970-01-01T00:00:00",  # dates as days since the Unix epoch: see _day
    "font.size": 17,
    "axes.titlesize": 19,
    "axes.labelsize": 17,
    "xtick.labelsize": 15,
    "ytick.labelsize": 15,
    "legend.fontsize": 14,
    "lines.linewidth": 2.5,
    "lines.markersize": 8,
}
_DPI = 100
#: Room above the highest value for the legend, so that it never hides a reading.
_HEADROOM = 1.6
_HEALTHY = "healthy"
#: Colours of the Okabe-Ito palette (distinct to colour-blind eyes); every series also has
#: its own line style and marker.
_IN: dict[str, Any] = {"color": "#0072B2", "linestyle": "-", "marker": "o"}
_OUT: dict[str, Any] = {"color": "#D55E00", "linestyle": "--", "marker": "s"}
_ERRORS: dict[str, Any] = {"color": "#CC79A7", "linestyle": "-", "marker": "D"}
_PATH = "#D55E00"
_OTHER = "#999999"


@dataclass(frozen=True, slots=True)
class Picture:
    """A PNG to put beside an answer (in Slack: in its thread)."""

    filename: str
    title: str
    alt: str
    data: bytes


def pictures_for(reply: Reply) -> list[Picture]:
    """The pictures that go with a reply: a history's chart, a tree's path; most have none."""
    if isinstance(reply, HistoryReply):
        return [
            Picture(
                f"history-{_slug(reply.device)}-{_slug(reply.port)}.png",
                words.history_title(reply.device, reply.port, reply.span_s),
                words.chart_alt(reply.device, reply.port, reply.summary),
                history_png(reply),
            )
        ]
    if isinstance(reply, TreeReply) and reply.node >= 0:
        r = reply.record
        return [
            Picture(
                f"tree-{_slug(r['device'])}-{_slug(r['port'])}.png",
                words.tree_title(r["device"], r["port"], r["verdict"]),
                words.tree_alt(r["device"], r["port"], r["verdict"], len(r["questions"])),
                tree_png(reply),
            )
        ]
    return []


def _slug(name: str) -> str:
    return "".join(c if c.isalnum() or c in "-_" else "_" for c in name)


def _figure(width_in: float, height_in: float) -> Figure:
    import matplotlib

    matplotlib.use("Agg")  # no display: pictures go to files and uploads
    from matplotlib.figure import Figure

    return Figure(figsize=(width_in, height_in), dpi=_DPI, layout="constrained")


def _png(figure: Figure) -> bytes:
    out = io.BytesIO()
    figure.savefig(out, format="png", dpi=_DPI)
    return out.getvalue()


def _values(points: list[HistoryPoint], key: str) -> list[float]:
    return [math.nan if p[key] is None else float(p[key]) for p in points]  # type: ignore[literal-required]


# --- a port's history
def history_png(reply: HistoryReply) -> bytes:
    """Verdicts, errors, discards and load of each window, over the history's span."""
    import matplotlib

    with matplotlib.rc_context(_STYLE):
        figure = _figure(11.0, 13.0)
        verdicts, errors, discards, load = figure.subplots(
            4, 1, sharex=True, gridspec_kw={"height_ratios": [0.7, 2, 1.5, 1.5]}
        )
        title = f"{reply.device} {reply.port}: {reply.summary}"
        figure.suptitle("\n".join(textwrap.wrap(title, 60)), fontsize=20)
        middle = [_day((p["start"] + p["end"]) / 2) for p in reply.points]
        _verdict_band(verdicts, reply)
        _error_panel(errors, reply.points, middle)
        _each_way(discards, reply.points, middle, ("in_discards", "out_discards"), 1.0)
        discards.set_ylabel(words.CHART_DISCARDS)
        _each_way(load, reply.points, middle, ("rx_util", "tx_util"), 100.0)
        load.set_ylabel(words.CHART_LOAD)
        _time_axis(load)
        return _png(figure)


def _day(at: float) -> float:
    """A time as matplotlib's dates count it: days since the Unix epoch (set in _STYLE)."""
    return at / 86_400.0


def _time_axis(axes: Axes) -> None:
    from matplotlib import dates

    locator = dates.AutoDateLocator(tz=UTC, minticks=3, maxticks=8)  # type: ignore[no-untyped-call]
    axes.xaxis.set_major_locator(locator)
    axes.xaxis.set_major_formatter(dates.DateFormatter("%H:%M", tz=UTC))  # type: ignore[no-untyped-call]
    axes.set_xlabel(words.CHART_TIME)


def _each_way(
    axes: Axes,
    points: list[HistoryPoint],
    middle: list[float],
    keys: tuple[str, str],
    scale: float,
) -> None:
    """One reading in and out, each with its own line style and marker, from zero up with
    room above for the legend."""
    highest = 0.0
    for key, style, name in zip(keys, (_IN, _OUT), (words.CHART_IN, words.CHART_OUT), strict=True):
        values = [v * scale for v in _values(points, key)]
        axes.plot(middle, values, label=name, **style)
        highest = max([highest, *(v for v in values if not math.isnan(v))])
    axes.set_ylim(0, highest * _HEADROOM or 1.0)
    axes.grid(True, alpha=0.4)
    axes.legend(loc="upper left", ncols=2)


def _verdict_band(axes: Axes, reply: HistoryReply) -> None:
    """Each run of one verdict as a band with its name on it; faults hatched, so the band
    reads without its colours."""
    for run in reply.runs:
        healthy = run["verdict"] == _HEALTHY
        start, end = _day(run["start"]), _day(run["end"])
        axes.axvspan(
            start,
            end,
            facecolor="#CCE5CC" if healthy else "#F4C7A1",
            edgecolor="black",
            hatch=None if healthy else "//",
            linewidth=1,
        )
        width = run["end"] - run["start"]
        span = reply.points[-1]["end"] - reply.points[0]["start"]
        if width >= span / 8:  # room for the name
            axes.text(
                _day((run["start"] + run["end"]) / 2),
                0.5,
                run["verdict"],
                ha="center",
                va="center",
                fontsize=16,
                fontweight="bold",
                bbox={"facecolor": "white", "edgecolor": "none", "pad": 2},
            )
    axes.set_yticks([])
    axes.set_ylim(0, 1)


def _error_panel(axes: Axes, points: list[HistoryPoint], middle: list[float]) -> None:
    """The bit error ratio against the PHY's objective where the PHY is known, else the
    frame error ratio; windows that counted no errors drawn on the floor, hollow."""
    objectives = [p["objective"] for p in points if p["objective"] is not None]
    key, label = (
        ("bit_error_ratio", words.CHART_BER) if objectives else ("error_ratio", words.CHART_FER)
    )
    values = _values(points, key)
    counted = [v for v in values if v > 0]
    floor = min([*counted, *objectives, 1e-6]) / 100
    axes.set_yscale("log")
    axes.plot(middle, [v if v > 0 else math.nan for v in values], label=label, **_ERRORS)
    zero = [(t, floor) for t, v in zip(middle, values, strict=True) if v == 0]
    if zero:
        axes.plot(
            [t for t, _ in zero], [f for _, f in zero], linestyle="none", marker="v",
            markerfacecolor="white", markeredgecolor="black", label=words.CHART_NONE_COUNTED,
        )  # fmt: skip
    if objectives:
        objective = max(objectives)
        axes.axhline(objective, color="black", linestyle=":", linewidth=3,
                     label=f"{words.CHART_OBJECTIVE} {objective:.0e}")  # fmt: skip
    axes.set_ylabel(label)
    axes.set_ylim(floor / 3, max([*counted, *objectives, floor]) * 1e3)  # room for the legend
    axes.grid(True, which="major", alpha=0.4)
    axes.legend(loc="upper left", ncols=2)


# --- the tree
def tree_png(reply: TreeReply) -> bytes:
    """The whole tree, the port's path drawn thick with numbered square nodes, every leaf
    named by its verdict, and the questions on the path written out below."""
    import matplotlib

    tree = reply.tree.tree
    left, right = tree.children_left, tree.children_right
    where = _layout(left, right)
    path = _path(left, right, reply.node)
    numbers = _question_numbers(reply, path)
    with matplotlib.rc_context(_STYLE):
        figure = _figure(11.0, 15.0)
        drawing, listing = figure.subplots(2, 1, gridspec_kw={"height_ratios": [3, 2]})
        r = reply.record
        figure.suptitle(
            "\n".join(textwrap.wrap(words.tree_title(r["device"], r["port"], r["verdict"]), 50)),
            fontsize=20,
        )
        for node, (x, y) in where.items():
            for child in (left[node], right[node]):
                if child < 0:
                    continue
                on_path = node in path and child in path
                drawing.plot(
                    [x, where[child][0]], [y, where[child][1]],
                    color=_PATH if on_path else _OTHER, linewidth=5 if on_path else 1.2,
                    linestyle="-" if on_path else (0, (4, 3)), zorder=2 if on_path else 1,
                )  # fmt: skip
        for node, (x, y) in where.items():
            leaf = left[node] < 0
            if node in path:
                drawing.plot(x, y, marker="s", markersize=26, color=_PATH,
                             markeredgecolor="black", zorder=3)  # fmt: skip
                label = "\u2713" if node == reply.node else numbers.get(node, "")
                drawing.text(x, y, label, ha="center", va="center", color="white",
                             fontsize=14, fontweight="bold", zorder=4)  # fmt: skip
            else:
                drawing.plot(x, y, marker="o", markersize=8, color=_OTHER, zorder=3)
            if leaf:
                verdict = reply.tree.classes[_majority(tree.value[node])]
                drawing.text(
                    x, y - 0.35, verdict, rotation=90, ha="center", va="top", fontsize=12,
                    fontweight="bold" if node in path else "normal",
                )  # fmt: skip
        drawing.plot([], [], color=_PATH, linewidth=5, marker="s", label=words.CHART_PATH)
        drawing.plot([], [], color=_OTHER, linewidth=1.2, linestyle=(0, (4, 3)), marker="o",
                     label=words.CHART_OTHER)  # fmt: skip
        drawing.legend(loc="upper right")
        drawing.set_axis_off()
        depth = max(-y for _, y in where.values())
        drawing.set_ylim(-depth - 3.2, 0.8)
        _questions(listing, reply)
        return _png(figure)


def _layout(left: list[int], right: list[int]) -> dict[int, tuple[float, float]]:
    """Each node's place: leaves side by side in order, a node above the middle of its
    children, one row per level."""
    where: dict[int, tuple[float, float]] = {}
    next_leaf = 0.0

    def place(node: int, depth: int) -> float:
        nonlocal next_leaf
        if left[node] < 0:
            x = next_leaf
            next_leaf += 1.0
        else:
            x = (place(left[node], depth + 1) + place(right[node], depth + 1)) / 2
        where[node] = (x, -float(depth))
        return x

    place(0, 0)
    return where


def _path(left: list[int], right: list[int], node: int) -> list[int]:
    """The nodes from the root down to ``node``."""
    parent = {child: n for n in range(len(left)) for child in (left[n], right[n]) if child >= 0}
    path = [node]
    while path[-1] in parent:
        path.append(parent[path[-1]])
    return path[::-1]


def _question_numbers(reply: TreeReply, path: list[int]) -> dict[int, str]:
    """Each node on the path by the number of its question in the answer (questions on one
    feature are merged there, so two nodes may share a number)."""
    asked = {q["feature"]: n for n, q in enumerate(reply.record["questions"], start=1)}
    features = reply.tree.features
    numbers = {}
    for node in path:
        column = reply.tree.tree.feature[node]
        if reply.tree.tree.children_left[node] >= 0 and features[column] in asked:
            numbers[node] = str(asked[features[column]])
    return numbers


def _majority(value: list[float]) -> int:
    return max(range(len(value)), key=lambda k: value[k])


def _questions(axes: Axes, reply: TreeReply) -> None:
    """The questions on the path, numbered as on the drawing, with the port's answers."""
    lines: list[str] = []
    for n, q in enumerate(reply.record["questions"], start=1):
        lines += textwrap.wrap(f"{n}. {q['question']}", 70)
        lines += textwrap.wrap(f"\u2192 {q['said']}", 70, initial_indent="    ",
                               subsequent_indent="    ")  # fmt: skip
    sure = words.confidence_cell(reply.record["confidence"])
    lines.append(f"\u2713 {reply.record['verdict']} ({sure})")
    axes.text(0, 1, "\n".join(lines), ha="left", va="top", fontsize=15, family="sans-serif",
              transform=axes.transAxes, linespacing=1.3)  # fmt: skip
    axes.set_axis_off()
