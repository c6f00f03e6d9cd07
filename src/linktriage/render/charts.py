"""Pictures where an engineer would rather look than read: a port's windows drawn to explain
its verdict (a history's, and every answer's), and the tree with one port's path marked.
PNG bytes, drawn off screen (:mod:`linktriage.render.drawing`).

Drawn to be read on a phone: large type, units on every axis, and nothing told by colour
alone (each series has its own line style, marker or hatch, each verdict its words written
on the picture, the path its own line weight and node shape).
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass
from typing import TYPE_CHECKING

from linktriage.engine.verdicts import kind_of
from linktriage.render import words
from linktriage.render.drawing import GREY, STYLE, VERMILION, figure, png
from linktriage.render.history_chart import Chart, history_chart
from linktriage.render.replies import (
    AnswerWindows,
    DiagnosisReply,
    HistoryPoint,
    HistoryReply,
    Reply,
    TreeReply,
)

if TYPE_CHECKING:
    from matplotlib.axes import Axes

_PATH = VERMILION
_OTHER = GREY


@dataclass(frozen=True, slots=True)
class Picture:
    """A PNG to put beside an answer (in Slack: in its thread)."""

    filename: str
    title: str
    alt: str
    data: bytes


def pictures_for(reply: Reply) -> list[Picture]:
    """The pictures that go with a reply: an answer's and a history's windows, a tree's
    path; the rest have none. Each is drawn here, when it is asked for."""
    if isinstance(reply, DiagnosisReply) and reply.windows is not None:
        r, windows = reply.record, reply.windows
        return [
            Picture(
                f"answer-{_slug(r['device'])}-{_slug(r['port'])}.png",
                words.answer_chart_title(r["device"], r["port"], windows.stored, windows.span_s),
                _alt(
                    r["device"], r["port"], f"{r['title']}. {answer_said(windows)}", windows.points
                ),
                png(answer_chart(reply).figure),
            )
        ]
    if isinstance(reply, HistoryReply):
        return [
            Picture(
                f"history-{_slug(reply.device)}-{_slug(reply.port)}.png",
                words.history_title(reply.device, reply.port, reply.span_s),
                _alt(
                    reply.device,
                    reply.port,
                    words.history_summary(reply.runs, _title),
                    reply.points,
                ),
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


def _title(verdict: str) -> str:
    """A verdict as the pictures say it: its title, not its id."""
    return kind_of(verdict).title


def _alt(device: str, port: str, said: str, points: list[HistoryPoint]) -> str:
    last = points[-1]
    latest = words.chart_latest(last["rx_errors"], last["errors_at_objective"],
                                last["link_changes"])  # fmt: skip
    return words.chart_alt(device, port, said, latest)


# --- a port's windows
def history_chart_of(reply: HistoryReply) -> Chart:
    """A history's chart, before it is encoded."""
    said = words.history_summary(reply.runs, named=_title)
    title = words.chart_title(reply.device, reply.port, said)
    subtitle = words.history_subtitle(reply.span_s)
    return history_chart(title, subtitle, reply.points, reply.runs, _title)


def history_png(reply: HistoryReply) -> bytes:
    """A history's chart as a PNG."""
    return png(history_chart_of(reply).figure)


def answer_chart(reply: DiagnosisReply) -> Chart:
    """The chart an answer carries in its thread, before it is encoded: headed with its
    verdict, then what its windows say."""
    windows = reply.windows
    assert windows is not None
    r = reply.record
    title = words.chart_title(r["device"], r["port"], r["title"])
    return history_chart(title, answer_said(windows), windows.points, windows.runs, _title)


def answer_said(windows: AnswerWindows) -> str:
    """What an answer's windows say, in words, under its verdict."""
    if windows.stored:
        return words.answer_stored(windows.span_s, words.history_summary(windows.runs, _title))
    polls = sum(p["polls"] for p in windows.points) - len(windows.points) + 1
    return words.answer_window(polls, windows.span_s)


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
    with matplotlib.rc_context(STYLE):
        drawn = figure(11.0, 15.0)
        drawing, listing = drawn.subplots(2, 1, gridspec_kw={"height_ratios": [3, 2]})
        r = reply.record
        drawn.suptitle(
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
    return png(drawn)


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
