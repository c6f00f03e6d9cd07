"""Replies drawn as Slack Block Kit, to read well on a phone and stay within Slack's limits.

Limits kept (Block Kit reference, as encoded in slack_sdk's block models): at most 50
blocks per message, 3000 characters per section text, 150 per header, 10 elements per
context block, 75 per button or option text, 2000 per button value, 150 per option value,
255 per action id. Text from people (notes in labels) goes out as ``plain_text``, and
everything drawn as mrkdwn has ``&``, ``<`` and ``>`` escaped, so no reply can mention
``@channel``, a user group, or carry a link it was not meant to.
"""

from __future__ import annotations

import json
import re
from typing import Any, assert_never

from linktriage.engine.format.answers import DiagnosisRecord
from linktriage.engine.measure.numbers import sig
from linktriage.engine.model.findings import ranked_for
from linktriage.engine.verdict_kit.declaration import SHORT
from linktriage.engine.verdicts import cautions_for, kind_of
from linktriage.render import words
from linktriage.render.card import card_text
from linktriage.render.headline import answer_headline, capitalised
from linktriage.render.replies import (
    DiagnosisReply,
    ErrorReply,
    HelpReply,
    HistoryReply,
    LabelRefused,
    LabelReply,
    ModelReply,
    Reply,
    SuspectItem,
    SuspectsReply,
    TreeReply,
)
from linktriage.render.words import (
    DIGEST_PROMPT,
    LABEL_PROMPT,
    ber_line,
    help_lines,
    label_recorded,
    nearest_line,
    ruled_out_line,
)

MAX_BLOCKS = 50
MAX_SECTION = 3000
MAX_HEADER = 150
MAX_CONTEXT_ELEMENTS = 10
MAX_OPTION_TEXT = 75
#: The latest runs of one verdict a history shows: a port that flaps between verdicts all
#: day would otherwise fill the message; its chart shows every window.
MAX_RUNS = 12
MAX_FALLBACK = 3000  # the notification text: short, it is what a phone's lock screen shows
#: The characters of blocks one message may carry: Slack refuses about 13,000 and more
#: (msg_blocks_too_long, slackapi/bolt-js#2509), whatever the per-block limits allow.
MAX_MESSAGE_TEXT = 12_000
#: The text an answer's first message may carry, buttons included: one phone screen.
FIRST_SCREEN = 1500
#: Checks on the first screen, fewer where their cautions would not fit.
FIRST_CHECKS = 3

FOUND_ACTION = "lt_found"
RECHECK_ACTION = "lt_recheck"
#: The label buttons of answers posted by releases before findings ("confirm" and "it was
#: really"): a press is answered with how to say what was found.
EARLIER_LABEL_ACTIONS = ("lt_confirm", "lt_correct")

Block = dict[str, Any]


def escape(text: str) -> str:
    """Text safe inside mrkdwn: Slack's three control characters as entities."""
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def _person(user: str) -> str:
    """A person as Slack shows them: a mention for a Slack user id, else the name escaped."""
    return f"<@{user}>" if re.fullmatch(r"[UW][A-Z0-9]{2,}", user) else escape(user)


def _clip(text: str, limit: int) -> str:
    return text if len(text) <= limit else text[: limit - 1] + "\u2026"


def _header(text: str) -> Block:
    return {"type": "header", "text": {"type": "plain_text", "text": _clip(text, MAX_HEADER)}}


def _context(*texts: str, plain: bool = False) -> Block:
    kind = "plain_text" if plain else "mrkdwn"
    elements = [{"type": kind, "text": _clip(t, MAX_SECTION)} for t in texts if t]
    return {"type": "context", "elements": elements[:MAX_CONTEXT_ELEMENTS]}


def _sections(lines: list[str], *, title: str | None = None) -> list[Block]:
    """Lines of mrkdwn packed into as few sections as the per-section limit allows."""
    blocks: list[Block] = []
    current = f"*{title}*" if title else ""
    for line in lines:
        line = _clip(line, MAX_SECTION - 10)
        joined = f"{current}\n{line}" if current else line
        if len(joined) > MAX_SECTION:
            blocks.append(_section(current))
            current = line
        else:
            current = joined
    if current:
        blocks.append(_section(current))
    return blocks


def _section(text: str) -> Block:
    return {"type": "section", "text": {"type": "mrkdwn", "text": text}}


def _message(fallback: str, blocks: list[Block]) -> dict[str, Any]:
    """A message: ``fallback`` (plain words, escaped here) is what notifications show."""
    if len(blocks) > MAX_BLOCKS:
        raise ValueError(f"{len(blocks)} blocks: Slack takes at most {MAX_BLOCKS}")
    return {"text": escape(_clip(fallback, MAX_FALLBACK)), "blocks": blocks}


def text_size(blocks: list[Block]) -> int:
    """The characters a reader sees in ``blocks``: every text they carry, buttons and menu
    options included (what a phone screen has to hold)."""

    def size(node: Any) -> int:
        if isinstance(node, dict):
            text = node.get("text")
            own = len(text) if isinstance(text, str) else 0
            return own + sum(size(v) for k, v in node.items() if k != "text" or own == 0)
        if isinstance(node, list):
            return sum(size(v) for v in node)
        return 0

    return size(blocks)


def _slack_time(at: float) -> str:
    """A moment in Slack's date formatting: each reader sees it in their own time zone."""
    fallback = words.utc_minute(at)
    return f"<!date^{int(at)}^{{date_short_pretty}} {{time}}|{fallback}>"


def _facts(reply: DiagnosisReply) -> str:
    """Confidence (for a tree verdict), where, who asked and when, on one line."""
    r = reply.record
    facts = [words.verdict_named(f"*{escape(r['title'])}*", f"`{r['verdict']}`")]
    if r["confidence"] is not None:  # a guard's answer is a fact, not a guess
        facts.append(words.confidence_fact(f"*{words.confidence_cell(r['confidence'])}*"))
    where = ", ".join(escape(part) for part in (reply.serves, reply.site) if part)
    if where:
        facts.append(where)
    if reply.asked_by:
        facts.append(words.asked_by(_person(reply.asked_by)))
    if reply.at is not None:
        facts.append(_slack_time(reply.at))
    return " \u00b7 ".join(facts)


def _first_steps(record: DiagnosisRecord, count: int) -> list[Block]:
    """The first ``count`` checks, and the cautions those checks call for on this port."""
    checks = record["next_checks"][:count]
    blocks = _sections([f"\u2022 {escape(c)}" for c in checks], title=words.CHECK_FIRST)
    needed = cautions_for(checks, record["cautions"])
    if needed:
        blocks.append(_context(*(f":warning: {escape(SHORT[c])}" for c in needed)))
    return blocks


def diagnosis_message(reply: DiagnosisReply) -> dict[str, Any]:
    """The first screen of an answer: the verdict, the evidence it rests on, the first
    checks with the cautions they need, and the buttons. The path with its measured
    values, every check and every caution follow in its thread (:func:`diagnosis_thread`)."""
    r = reply.record
    head: list[Block] = [
        _header(capitalised(answer_headline(r))),
        _context(_facts(reply)),
    ]
    if reply.changed:
        head.append(_context(escape(reply.changed)))
    if r["evidence"]:
        head.append(_section(f"*{words.EVIDENCE}:* {escape(r['evidence'][0]['said'])}"))
    link, own = r.get("link"), r.get("own_view")
    if own is not None:  # the evidence above is the link's own reason
        head.append(_context(escape(words.own_view_summary(own["title"]))))
    elif link is not None and link["said"]:
        both = words.link_summary(link["title"], link["said"][0])
        head.append(_context(escape(both)))
    tail = [_label_actions(reply)]
    if reply.labels:
        tail.append(_context(_labels_line(reply)))
    tail.append(_context(words.MORE_IN_THREAD))
    for count in range(FIRST_CHECKS, 0, -1):
        blocks = head + _first_steps(r, count) + tail
        if text_size(blocks) <= FIRST_SCREEN:
            break
    fallback = words.verdict_fallback(
        r["device"], r["port"], r["title"], r["verdict"], r["confidence"]
    )
    return _message(fallback, blocks)


def diagnosis_thread(reply: DiagnosisReply) -> list[dict[str, Any]]:
    """What follows an answer in its thread: why (the evidence, the questions the tree
    asked with the measured values, the bit-error estimate, where its chart is), then
    every check and every caution in full."""
    r = reply.record
    facts = [words.model_fact(f"`{escape(r['model_version'])}`")]
    if r["polls"] >= 2:  # fewer: there is no window to speak of (the evidence says why)
        facts.insert(0, words.window_fact(sig(r["window_s"], 3), r["polls"]))
    why: list[Block] = [_context(" \u00b7 ".join(facts))]
    why += _sections([f"\u2022 {escape(e['said'])}" for e in r["evidence"]], title=words.EVIDENCE)
    own = r.get("own_view")
    if own is not None:  # the link decided: both ends, then what this end says alone
        why += _both_ends(r)
        alone = [f"\u2022 {escape(e['said'])}" for e in own["evidence"]]
        why += _sections(alone, title=words.own_view_heading(escape(own["title"])))
    if r["ruled_out"] is not None:
        why.append(_context(escape(ruled_out_line(r["ruled_out"]))))
    questions = [
        f"{n}. {escape(q['question'])}  \u2192  *{escape(q['said'])}*"
        for n, q in enumerate(r["questions"], start=1)
    ]
    asked = words.QUESTIONS_ASKED if own is None else words.QUESTIONS_OF_THIS_END
    why += _sections(questions, title=asked)
    # An answer kept by an earlier release has no nearest_other.
    nearest = r.get("nearest_other") if own is None else own["nearest_other"]
    if nearest is not None:
        why.append(_context(escape(nearest_line(nearest))))
    if r["bit_errors"] is not None:
        why.append(_context(escape(ber_line(r["bit_errors"]))))
    said = {e["said"] for e in r["evidence"]}
    if r["note"] and r["note"] not in said:
        why.append(_context(escape(r["note"])))
    if own is None:
        why += _both_ends(r)
    if reply.windows is not None:  # its picture follows these messages in the thread
        why.append(_context(words.answer_chart_below(reply.windows.stored, reply.windows.span_s)))
    steps = _sections([f"\u2022 {escape(c)}" for c in r["next_checks"]], title=words.CHECK_NEXT)
    if r["cautions"]:
        steps += _sections([f":warning: {escape(c)}" for c in r["cautions"]], title=words.SAFETY)
    steps.append(_context(LABEL_PROMPT))
    title = words.port_title(r["device"], r["port"], r["title"])
    return [
        _message(words.why_fallback(title), why),
        _message(words.steps_fallback(title), steps),
    ]


def _both_ends(record: DiagnosisRecord) -> list[Block]:
    """The far end's view and the link judged from both ends, with checks naming their
    end; nothing where the far end was not read."""
    far, link = record.get("far_end"), record.get("link")
    if far is None or link is None:
        return []
    title = kind_of(far["verdict"]).title
    own = record.get("own_view")
    if own is not None:  # the link's reasons are the evidence, its checks the steps
        lines = [
            escape(words.far_end_line(far["device"], far["port"], title)),
            escape(words.link_line(link["title"], own["title"], title)),
        ]
        return _sections(lines, title=words.BOTH_ENDS)
    lines = [
        escape(words.far_end_line(far["device"], far["port"], title)),
        *(f"\u2022 {escape(e['said'])}" for e in far["evidence"]),
        escape(words.link_line(link["title"], record["title"], title)),
        *(f"\u2022 {escape(said)}" for said in link["said"]),
        *(f"\u2192 {escape(check)}" for check in link["checks"]),
    ]
    return _sections(lines, title=words.BOTH_ENDS)


def _labels_line(reply: DiagnosisReply) -> str:
    """Who found what on this answer (each person's latest), and whether it teaches."""
    said = [words.person_labelled(_person(lb.person), escape(lb.said)) for lb in reply.labels]
    return words.labelled(said, reply.disputed)


def _label_actions(reply: DiagnosisReply) -> Block:
    """A menu of what an engineer may find at the link (those that bear out the answer
    first), and a button to diagnose the port again."""
    diagnosis = str(reply.diagnosis_id)
    options = [
        {
            "text": {"type": "plain_text", "text": _clip(f.short, MAX_OPTION_TEXT)},
            "value": f"{diagnosis}:{f.id}",
        }
        for f in ranked_for(reply.record["verdict"])
    ]
    return {
        "type": "actions",
        "block_id": f"labels-{diagnosis}",
        "elements": [
            {
                "type": "static_select",
                "action_id": FOUND_ACTION,
                "placeholder": {"type": "plain_text", "text": words.WHAT_DID_YOU_FIND},
                "options": options,
            },
            # A person in chat cannot choose a window: this asks again once more polls are in.
            {
                "type": "button",
                "action_id": RECHECK_ACTION,
                "text": {"type": "plain_text", "text": words.CHECK_AGAIN},
                "value": diagnosis,
            },
        ],
    }


def history_message(reply: HistoryReply) -> dict[str, Any]:
    """A port's history: when the verdict changed, then its latest runs."""
    facts = [words.history_facts(len(reply.points), f"`{escape(reply.model_version)}`")]
    if reply.serves:
        facts.append(escape(reply.serves))
    runs = [
        f"\u2022 {escape(words.run_line(r['verdict'], r['start'], r['end'], r['windows']))}"
        for r in reply.runs[-MAX_RUNS:]
    ]
    blocks = [
        _header(words.history_title(reply.device, reply.port, reply.span_s)),
        _context(" \u00b7 ".join(facts)),
        _section(f"*{escape(reply.summary)}*"),
        *_sections(runs, title=words.HISTORY_CHANGES),
        _context(words.CHART_IN_THREAD),
    ]
    fallback = words.history_fallback(reply.device, reply.port, reply.summary)
    return _message(fallback, blocks)


def tree_message(reply: TreeReply) -> dict[str, Any]:
    """The questions on the port's path through the tree."""
    r = reply.record
    blocks = [_header(words.tree_title(r["device"], r["port"], r["verdict"]))]
    if reply.node < 0:
        blocks.append(_section(escape(words.tree_guarded(r["verdict"]))))
    else:
        questions = [
            f"{n}. {escape(q['question'])}  \u2192  *{escape(q['said'])}*"
            for n, q in enumerate(r["questions"], start=1)
        ]
        blocks += _sections(questions, title=words.QUESTIONS_ASKED)
        blocks.append(_context(words.TREE_IN_THREAD))
    return _message(words.tree_title(r["device"], r["port"], r["verdict"]), blocks)


def _entry(item: SuspectItem) -> str:
    r = item.record
    mark = "  :new:" if item.new else ""
    return (
        f"*{item.rank}.* `{escape(r['device'])} {escape(r['port'])}` {escape(r['title'])} "
        f"({words.confidence_cell(r['confidence'])}){mark}\n      "
        f"{escape(_clip(item.reason, 300))}"
    )


def _size(blocks: list[Block]) -> int:
    """The characters of text a message carries in its blocks."""
    return len(json.dumps(blocks, ensure_ascii=False))


def _pack(items: list[SuspectItem], blocks_left: int, text_left: int) -> tuple[list[Block], int]:
    """As many links as fit in ``blocks_left`` blocks and ``text_left`` characters, worst
    first, packed into sections; returns the sections and how many links they hold."""
    sections: list[Block] = []
    current, shown = "", 0
    for item in items:
        entry = _entry(item)
        if current and len(current) + 1 + len(entry) > MAX_SECTION:
            sections.append(_section(current))
            current = ""
        used = sum(len(b["text"]["text"]) + 60 for b in sections) + len(current) + len(entry)
        if used > text_left or (not current and len(sections) >= blocks_left):
            break
        current = f"{current}\n{entry}" if current else entry
        shown += 1
    if current:
        sections.append(_section(current))
    return sections, shown


def _first_message(reply: SuspectsReply) -> tuple[list[Block], int]:
    """The blocks of the list as posted, and how many of its links they hold."""
    counts = [escape(reply.coverage)]
    if reply.since is not None:
        new = sum(1 for i in reply.items if i.new)
        counts.append(
            words.new_and_cleared_since(new, len(reply.cleared), words.day_and_time(reply.since))
        )
    blocks: list[Block] = [
        _header(words.list_heading(reply.title, words.day_and_time(reply.at))),
        _context(" \u00b7 ".join(counts)),
    ]
    tail: list[Block] = []
    if reply.cleared:
        links = escape(_clip(", ".join(reply.cleared), 2000))
        tail.append(_context(words.cleared_links(links, capital=True)))
    if reply.items:
        tail.append(_context(DIGEST_PROMPT))
    room = MAX_BLOCKS - len(blocks) - len(tail) - 1  # one for "and N more"
    more = len(words.more_in_thread(len(reply.items)))
    text_left = FIRST_SCREEN - text_size(blocks + tail) - more
    sections, shown = _pack(reply.items, room, text_left)
    blocks += sections
    if shown < len(reply.items):
        left = len(reply.items) - shown
        blocks.append(_context(words.more_in_thread(left)))
    return blocks + tail, shown


def suspects_message(reply: SuspectsReply) -> dict[str, Any]:
    """The list as posted: the coverage, then the worst links that fit one phone screen
    (``FIRST_SCREEN``), and a pointer to the rest, which :func:`suspects_thread` carries."""
    blocks, _ = _first_message(reply)
    return _message(words.suspects_fallback(reply.title, len(reply.items)), blocks)


def suspects_thread(reply: SuspectsReply) -> list[dict[str, Any]]:
    """The links the first message had no room for, as replies in its thread."""
    _, shown = _first_message(reply)
    messages = []
    rest = reply.items[shown:]
    while rest:
        head = _context(words.continued_from(rest[0].rank))
        sections, count = _pack(rest, MAX_BLOCKS - 1, MAX_MESSAGE_TEXT - _size([head]) - 200)
        messages.append(_message(words.continued(reply.title), [head, *sections]))
        rest = rest[max(count, 1) :]
    return messages


def thread_for(reply: Reply) -> list[dict[str, Any]]:
    """Messages that follow a reply in its thread: an answer's details, the rest of a long
    list; other replies have none."""
    match reply:
        case DiagnosisReply():
            return diagnosis_thread(reply)
        case SuspectsReply():
            return suspects_thread(reply)
        case (
            HistoryReply()
            | TreeReply()
            | HelpReply()
            | ModelReply()
            | ErrorReply()
            | LabelReply()
            | LabelRefused()
        ):
            return []  # a history's chart and a tree's picture follow as uploads
        case _:
            assert_never(reply)


def message_for(reply: Reply) -> dict[str, Any]:
    """Any reply as a Slack message: ``text`` (the notification) and ``blocks``."""
    match reply:
        case DiagnosisReply():
            return diagnosis_message(reply)
        case SuspectsReply():
            return suspects_message(reply)
        case HistoryReply():
            return history_message(reply)
        case TreeReply():
            return tree_message(reply)
        case HelpReply():
            lines = [f"\u2022 {line}" for line in help_lines(reply.command, reply.forms)]
            return _message(words.HOW_TO_USE, _sections(lines, title=words.HELP_TITLE))
        case ModelReply():
            text = card_text(reply.card)
            return _message(
                text.splitlines()[0], [_section(f"```{escape(_clip(text, MAX_SECTION - 6))}```")]
            )
        case ErrorReply():
            lines = [f":x: {escape(reply.message)}"] + ([escape(reply.hint)] if reply.hint else [])
            return _message(reply.message, _sections(lines))
        case LabelReply():
            return _label_message(reply)
        case LabelRefused():
            return _message(reply.message, [_section(escape(reply.message))])
        case _:
            assert_never(reply)


def _label_message(reply: LabelReply) -> dict[str, Any]:
    """A stored label, said in the answer's thread."""
    where = f"`{escape(reply.device)} {escape(reply.port)}`"
    said = label_recorded(
        _person(reply.user),
        escape(reply.finding or reply.verdict),
        reply.verdict,
        reply.model_verdict,
        where,
        "",
        replaced=reply.replaced,
        disputed_with=reply.disputed_with,
    )
    blocks = [_section(":white_check_mark: " + said)]
    if reply.note:
        blocks.append(_context(words.found_note(reply.note), plain=True))
    found = reply.finding or reply.verdict
    return _message(words.recorded_fallback(found, reply.device, reply.port), blocks)
