"""Terminal text: a one-line-per-port table, the full explanation of one port, and every
reply of the bot as plain text (the console transport and the demo)."""

from __future__ import annotations

import textwrap
from collections.abc import Sequence
from typing import IO, assert_never

from linktriage.engine.diagnosis.batch import DiagnosisBatch, headline
from linktriage.engine.format.answers import DiagnosisRecord
from linktriage.engine.measure.numbers import sig
from linktriage.engine.model.questions import NOT_REPORTED
from linktriage.engine.verdicts import kind_of
from linktriage.printable import printable
from linktriage.render import words
from linktriage.render.card import card_text
from linktriage.render.headline import answer_headline, capitalised
from linktriage.render.replies import (
    DiagnosisReply,
    ErrorReply,
    HelpReply,
    HistoryPoint,
    HistoryReply,
    LabelRefused,
    LabelReply,
    ModelReply,
    Reply,
    SuspectsReply,
    TreeReply,
)
from linktriage.render.words import (
    ber_line,
    help_lines,
    label_recorded,
    nearest_line,
    ruled_out_line,
)

WIDTH = 88
_HEADER = words.TABLE_HEADER


def table_rows(records: Sequence[DiagnosisRecord]) -> list[str]:
    """Fixed-width rows: device, port, verdict, confidence, window, headline evidence."""
    cells = [
        (
            printable(r["device"]),
            printable(r["port"]),
            r["verdict"],
            words.confidence_cell(r["confidence"]),
            f"{sig(r['window_s'], 3)} s",
            headline(r),
        )
        for r in records
    ]
    widths = [max(len(row[k]) for row in [_HEADER, *cells]) for k in range(5)]
    lines = []
    for row in [_HEADER, *cells]:
        left = "  ".join(cell.ljust(widths[k]) for k, cell in enumerate(row[:5]))
        lines.append(f"{left}  {row[5]}".rstrip())
    return lines


def write_table(batch: DiagnosisBatch, rows: Sequence[int], out: IO[str]) -> None:
    """The table for the ports in ``rows`` (their records worded together)."""
    for line in table_rows(batch.records_many(list(rows))):
        out.write(line + "\n")


def _wrapped(text: str, first: str, rest: str) -> list[str]:
    return textwrap.wrap(text, WIDTH, initial_indent=first, subsequent_indent=rest) or [first]


def explanation(record: DiagnosisRecord) -> str:
    """Everything about one port's diagnosis, for a person to read and act on."""
    lines = [
        *words.answer_lines(
            printable(capitalised(answer_headline(record))),
            record["title"],
            record["verdict"],
            record["confidence"],
        ),
        words.window_fact(sig(record["window_s"], 3), record["polls"])
        + ", "
        + words.model_fact(record["model_version"]),
    ]
    if record["note"]:
        lines.append(words.note_line(printable(record["note"])))
    if record["evidence"]:
        lines += ["", words.EVIDENCE]
        for item in record["evidence"]:
            lines += _wrapped(f"{item['said']} [{item['source']}]", "  * ", "    ")
    own = record.get("own_view")
    if own is not None:  # the link decided: both ends first, then this end alone
        lines += _both_ends(record)
        lines += ["", words.own_view_heading(own["title"])]
        for item in own["evidence"]:
            lines += _wrapped(f"{item['said']} [{item['source']}]", "  * ", "    ")
    ber = record["bit_errors"]
    if ber is not None:
        lines += ["", *_wrapped(ber_line(ber), "", "")]
    if own is None:
        lines += _both_ends(record)
    # What to do comes before how the tree got there: checks (what stops harm first, as
    # each verdict orders them) and the cautions they need, then the questions.
    lines += ["", words.CHECK_NEXT]
    for check in record["next_checks"]:
        lines += _wrapped(check, "  - ", "    ")
    if record["cautions"]:
        lines += ["", words.SAFETY]
        for caution in record["cautions"]:
            lines += _wrapped(caution, "  ! ", "    ")
    if record["ruled_out"] is not None:
        lines += ["", *_wrapped(ruled_out_line(record["ruled_out"]), "", "")]
    lines += ["", words.QUESTIONS_ASKED if own is None else words.QUESTIONS_OF_THIS_END]
    unread = []
    for n, q in enumerate(record["questions"], start=1):
        if q["value"] is None and q["said"].endswith(NOT_REPORTED):  # light on copper
            unread.append(n)
            continue
        lines += _wrapped(q["question"], f"  {n}. ", "     ")
        lines += _wrapped(q["said"], "     -> ", "        ")
    if unread:
        lines += _wrapped(words.unread_questions(unread), "  ", "  ")
    # An answer kept by an earlier release has no nearest_other.
    nearest = record.get("nearest_other") if own is None else own["nearest_other"]
    if nearest is not None:
        lines += ["", *_wrapped(nearest_line(nearest), "", "")]
    return "\n".join(lines)


def _both_ends(record: DiagnosisRecord) -> list[str]:
    """The far end and the link, where the far end was in the same input."""
    far, link = record.get("far_end"), record.get("link")
    if far is None or link is None:
        return []
    title = kind_of(far["verdict"]).title
    own = record.get("own_view")
    near = record["title"] if own is None else own["title"]
    lines = ["", words.BOTH_ENDS]
    lines += _wrapped(
        words.far_end_line(printable(far["device"]), printable(far["port"]), title), "  ", "    "
    )
    lines += _wrapped(words.link_line(link["title"], near, title), "  ", "    ")
    if own is not None:
        return lines  # its reasons are the evidence above, its checks those to do next
    for said in link["said"]:
        lines += _wrapped(said, "  * ", "    ")
    for check in link["checks"]:
        lines += _wrapped(check, "  - ", "    ")
    return lines


def suspects_text(reply: SuspectsReply) -> str:
    lines = [words.list_heading(reply.title, words.utc_minute(reply.at)), printable(reply.coverage)]
    if reply.since is not None:
        new = sum(1 for i in reply.items if i.new)
        lines.append(
            words.since_the_last_digest(words.utc_minute(reply.since), new, len(reply.cleared))
        )
    for item in reply.items:
        r = item.record
        mark = "  new" if item.new else ""
        said = words.verdict_line(
            printable(r["device"]), printable(r["port"]), r["title"], r["verdict"], r["confidence"]
        )
        lines.append(f"{item.rank:>3}. {said}{mark}")
        lines.append(f"     {item.reason}")
    if reply.cleared:
        lines.append(words.cleared_links(printable(", ".join(reply.cleared)), capital=False))
    return "\n".join(lines)


def _share(value: float | None) -> str:
    return "-" if value is None else f"{sig(value * 100)}%"


def _count(value: float | None) -> str:
    return "-" if value is None else f"{value:,.0f}"


def _history_cells(point: HistoryPoint) -> tuple[str, ...]:
    ratio = point["error_ratio"]
    return (
        words.clock_time(point["start"]).removesuffix(" UTC"),
        words.clock_time(point["end"]).removesuffix(" UTC"),
        point["verdict"],
        words.confidence_cell(point["confidence"]),
        "-" if ratio is None else ("0" if ratio == 0 else f"{ratio:.1e}"),
        f"{_count(point['in_discards'])}/{_count(point['out_discards'])}",
        f"{_share(point['rx_util'])}/{_share(point['tx_util'])}",
    )


def history_text(reply: HistoryReply) -> str:
    """A port's history: when the verdict changed, its runs, then every window."""
    device, port = printable(reply.device), printable(reply.port)
    lines = [
        words.history_title(device, port, reply.span_s),
        reply.summary,
        words.history_facts(len(reply.points), reply.model_version),
        "",
        words.HISTORY_CHANGES,
    ]
    lines += [
        "  " + words.run_line(r["verdict"], r["start"], r["end"], r["windows"]) for r in reply.runs
    ]
    rows = [words.HISTORY_HEADER, *(_history_cells(p) for p in reply.points)]
    widths = [max(len(row[k]) for row in rows) for k in range(len(words.HISTORY_HEADER))]
    lines.append("")
    lines += ["  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip()
              for row in rows]  # fmt: skip
    return "\n".join(lines)


def tree_text(reply: TreeReply) -> str:
    """The port's verdict and the questions on its path (the picture draws the tree)."""
    r = reply.record
    device, port = printable(r["device"]), printable(r["port"])
    lines = [words.tree_title(device, port, r["verdict"])]
    if reply.node < 0:
        return "\n".join([*lines, words.tree_guarded(r["verdict"])])
    for n, q in enumerate(r["questions"], start=1):
        lines += _wrapped(f"{q['question']} -> {q['said']}", f"  {n}. ", "     ")
    return "\n".join(lines)


def render(reply: Reply) -> str:
    """Any reply as text."""
    match reply:
        case DiagnosisReply():
            where = words.serves_at(reply.serves, reply.site) + "\n" if reply.serves else ""
            return where + explanation(reply.record)
        case SuspectsReply():
            return suspects_text(reply)
        case HistoryReply():
            return history_text(reply)
        case TreeReply():
            return tree_text(reply)
        case HelpReply():
            return "\n".join(f"- {line}" for line in help_lines(reply.command, reply.forms))
        case ModelReply():
            return card_text(reply.card)
        case ErrorReply():
            return reply.message if reply.hint is None else f"{reply.message}\n{reply.hint}"
        case LabelReply():
            where = f"{reply.device} {reply.port}"
            return label_recorded(
                reply.user,
                reply.finding or reply.verdict,
                reply.verdict,
                reply.model_verdict,
                where,
                reply.note,
                replaced=reply.replaced,
                disputed_with=reply.disputed_with,
            )
        case LabelRefused():
            return reply.message
        case _:
            assert_never(reply)
