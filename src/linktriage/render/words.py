"""Every word the bot says around a diagnosis (and the command line draws alike), one
function or constant per idea, so the wording can be read and reviewed as text.

The words inside a diagnosis record (questions, evidence, checks) are the engine's: the
tree's questions in :mod:`linktriage.engine.model.questions`, each verdict's in its module
under :mod:`linktriage.engine.verdicts`. The command line's and the demo's own words are in
:mod:`linktriage.cli.words`; what was wrong with a file or a setting, in
:mod:`linktriage.invalid`.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from datetime import UTC, datetime
from typing import TYPE_CHECKING, Any

from linktriage.printable import printable

if TYPE_CHECKING:
    pass


# --- a diagnosis, as drawn
def ruled_out_line(ruled_out: Mapping[str, Any]) -> str:
    """Why the tree's first choice is not the answer (a ``ruled_out`` record)."""
    return (
        f"The tree's first choice, {ruled_out['verdict']}, is ruled out: it needs "
        f"{ruled_out['needs']} ({ruled_out['source']})."
    )


def nearest_line(nearest: Mapping[str, Any]) -> str:
    """What would change the verdict (a ``nearest_other`` record), after the questions."""
    return f"What would change the verdict: this port {nearest['said']}."


def ber_line(ber: Mapping[str, Any]) -> str:
    """How the bit error ratio (a ``bit_errors`` record) compares with the PHY's objective.
    The record holds three significant digits, shown as they are: rounding them again
    could make this line disagree with the evidence worded from the unrounded values."""
    phy, estimate, objective = ber["phy"], ber["estimate"], ber["objective"]
    lower, upper, exceeds = ber["lower"], ber["upper"], ber["exceeds"]
    if estimate <= 0:
        return (
            f"No errored frames: bit error ratio below {upper:.0e} (95%); the {phy} objective "
            f"is {objective:.0e}."
        )
    if exceeds:
        return (
            f"Estimated bit error ratio {estimate:.2e} (at least {lower:.2e} by an exact test "
            f"at 99%): a fault's rate, ten times the {phy} objective of {objective:.0e} or more."
        )
    return (
        f"Estimated bit error ratio {estimate:.2e} (at least {lower:.2e} at 99%, at most "
        f"{upper:.2e} at 95%): not a fault's rate against the {phy} objective of "
        f"{objective:.0e}."
    )


# --- coverage: what a list of suspects rests on


def what_changed(
    before: Mapping[str, Any], before_at: float, after: Mapping[str, Any], after_at: float
) -> str:
    """A check again, set against the answer it was asked from: the verdict then and now,
    and each reading both rest on that reads differently now."""
    minutes = max(0.0, after_at - before_at) / 60.0
    ago = f"{minutes:.0f} min" if minutes < 120 else f"{minutes / 60:.1f} h"
    line = f"Checked again {ago} after the first answer: "
    if before["verdict"] == after["verdict"]:
        line += f"still {after['title']}."
    else:
        line += f"was {before['title']}, now {after['title']}."
    then = {e["feature"]: e["said"] for e in before.get("evidence", [])}
    moved = [
        f"{then[e['feature']]} \u2192 {e['said']}"
        for e in after.get("evidence", [])
        if e["feature"] in then and then[e["feature"]] != e["said"]
    ]
    if moved:
        return f"{line} Then \u2192 now: {'; '.join(moved[:2])}."
    if before["verdict"] == after["verdict"]:
        return f"{line} The readings it rests on read the same."
    return line


def quoted(text: str) -> str:
    """A name a person typed, quoted and shown as :func:`~linktriage.printable.printable`
    shows it, so a character that would hide or act is seen where it sits."""
    return f"'{printable(text)}'"


def plural(n: int, one: str, many: str | None = None) -> str:
    """ "1 port", "2 ports"."""
    return f"{n:,} {one if n == 1 else (many or one + 's')}"


#: Down ports a list names in its first paragraph; the rest are counted.
NAMED_DOWN = 10


def coverage_words(
    suspects: int,
    judged: int,
    not_judged: Mapping[str, int],
    failed: Mapping[str, str],
    *,
    down: Sequence[str] = (),
) -> str:
    """What a list of suspects covers, in one paragraph. It is an all-clear only when every
    device was read and every port judged; anything unread or unjudged is counted, and
    the ports that are down are named (someone walks to them)."""
    if judged == 0 and not any(not_judged.values()) and failed:
        devices = "; ".join(f"{d}: {why}" for d, why in sorted(failed.items()))
        return (
            f"Nothing was read: {plural(len(failed), 'device')} could not be read ({devices}). "
            "No port was judged."
        )
    if suspects:
        head = f"{plural(suspects, 'suspect link')} among {plural(judged, 'port')} judged"
    elif judged:
        head = f"No suspects among the {plural(judged, 'port')} judged"
    else:
        head = "No port could be judged"
    parts = [head]
    if any(not_judged.values()):
        parts.append(ports_not_judged(not_judged))
    if down:
        more = len(down) - NAMED_DOWN
        named = "; ".join(down[:NAMED_DOWN]) + (f"; and {more:,} more" if more > 0 else "")
        parts.append(f"down: {named}")
    if failed:
        devices = "; ".join(f"{d}: {why}" for d, why in sorted(failed.items()))
        parts.append(f"{plural(len(failed), 'device')} not read ({devices})")
    return "; ".join(parts) + "."


def down_port(device: str, port: str, since: float, changes: float) -> str:
    """A port that is down, as a list names it: since when (ifLastChange, where the device
    says it) and how often the link changed before, within the window."""
    said = [f"since {utc_minute(since)}"] if since == since else []
    if changes == changes and changes >= 2:
        said.append(f"after {changes:,.0f} link changes in the window")
    return f"{device} {port}" + (f" ({', '.join(said)})" if said else "")


def ports_not_judged(not_judged: Mapping[str, int]) -> str:
    """ "3 ports not judged (1 down, 1 too quiet to judge, ...)", from counts by why (each
    guard verdict's words for it)."""
    why = ", ".join(
        f"{n:,} {reason}" for reason, n in sorted(not_judged.items(), key=lambda kv: -kv[1]) if n
    )
    return f"{plural(sum(not_judged.values()), 'port')} not judged ({why})"


# --- chat
def spelt(command: str, rest: str) -> str:
    """A command as typed where ``command`` is how it starts ("/triage"; "" at a prompt)."""
    return f"`{command} {rest}`" if command else f"`{rest}`"


def help_lines(command: str, forms: Sequence[tuple[str, str]]) -> list[str]:
    """What the bot's help says, one line each: every command (``forms``: how it is typed,
    what it does) and how to report what was found; at a prompt (no ``command``) the forms
    are shown as typed there, and where the command's name goes in Slack."""
    lines = [f"{spelt(command, form)}: {does}" for form, does in forms]
    lines.append(
        "Say what you found at the link: pick it from the answer's menu, or reply in its "
        "thread, e.g. `crushed patch cord behind the desk`; in a digest's thread start with "
        "the link's number: `3: duplex forced on the printer`."
    )
    if not command:
        lines.append("In Slack, type them after `/triage` or a mention of the bot.")
    return lines


LABEL_PROMPT = (
    "Been to the link? Say what you found: pick it above or reply in this thread "
    "(`crushed patch cord behind the desk`). What is found teaches the model this site."
)
DIGEST_PROMPT = (
    "Reply in this thread with a link's number and what you found: `3: crushed patch cord`."
)
WHAT_DID_YOU_FIND = "What did you find?"
LABEL_NOT_ALLOWED = "Labels from this channel or person are not taken here."
LABEL_WHICH = "Which was it: {options}? Reply with one of them."
LABEL_WHICH_FOUND = "Which did you find: {options}? Reply with one of them."
LABEL_SAY_FOUND = (
    "Thanks. What did you find at the link? Say it in a reply (`dirty connector at the "
    "panel`, `nothing found`) or pick it from the answer's menu: that is what teaches."
)
LABEL_NOT_WHICH = (
    "Not {negated}, then: nothing was recorded. Which was it: {options}? Reply with one of them."
)
LABEL_WHICH_LINK = (
    "Say which link first: its number in the list (`3: cable_fault ...`) or its name "
    "(`DEVICE PORT crushed cord ...`)."
)
LABEL_STORE_FAILED = "Could not record that label ({reason}). Please try again."
LABEL_BUSY = "your labels of this answer kept changing while it was recorded"
LABEL_GONE = "That answer is no longer in the store."
LABEL_ALREADY = "You already said {said} on this answer; it is recorded once."


def label_recorded(
    who: str,
    said: str,
    teaches: str,
    model_verdict: str,
    where: str,
    note: str,
    *,
    replaced: str | None = None,
    disputed_with: tuple[str, ...] = (),
) -> str:
    """The thread's acknowledgement of a stored label (``who`` as the transport names people):
    what was found, what it teaches, what it replaced, and whether others disagree."""
    note_text = f": {note}" if note else ""
    instead = f" (instead of their earlier {replaced})" if replaced else ""
    found = f"Recorded: {who} found {said} at {where}{note_text}{instead}."
    if not teaches:
        return f"{found} {_teaches_nothing(model_verdict)}"
    if disputed_with:
        learning = (
            f"Others' findings say {', '.join(disputed_with)}: this answer is left out of "
            "training until they agree."
        )
    elif teaches == model_verdict:
        learning = f"It bears out the answer ({teaches}); the next training run learns from it."
    else:
        learning = (
            f"It teaches {teaches} where the answer said {model_verdict}; the next training "
            "run learns from it."
        )
    return f"{found} {learning}"


def _teaches_nothing(model_verdict: str) -> str:
    return (
        f"It is kept with the answer ({model_verdict}) but teaches the model no verdict: "
        "it does not say which fault the counters showed, or the answer was not the tree's."
    )


# --- the bot
def usage(forms: Sequence[str]) -> str:
    """ "Try `a`, `b`, or `c`.", from every command as typed."""
    return f"Try {', '.join(forms[:-1])}, or {forms[-1]}."


SUSPECTS_TAKES_ONE_SITE = "`suspects` takes at most one site."
MODEL_TAKES_NOTHING = "`model` takes nothing after it."
NAME_DEVICE_AND_PORT = "Name one device and one port, e.g. `lark-east-idf2 port14`."
HISTORY_NAMES = (
    "`history` takes a device, a port and how far back, e.g. `history lark-east-idf2 port14 6h`."
)
TREE_NAMES = "`tree` takes a device and a port, e.g. `tree lark-east-idf2 port14`."
BEHIND_NAMES = (
    "`port-of` takes the name LLDP gives the far end of the port, e.g. `port-of lark-circ-prn1`."
)


def not_a_span(text: str) -> str:
    return f"{text[:40]!r} is not a span of time: write it as `90m`, `24h` or `3d`."


def span(seconds: float) -> str:
    """A span of time in the largest unit that keeps it whole, days from two on: "24 h",
    "3 d", "90 min"."""
    for unit, size in (("d", 86_400.0), ("h", 3600.0), ("min", 60.0)):
        if seconds >= size * (2 if unit == "d" else 1) and seconds % size == 0:
            return f"{seconds / size:g} {unit}"
    return f"{seconds:g} s"


def no_history(device: str, port: str, since_s: float) -> str:
    """Said when a port's stored polls make no window: never an all-clear."""
    return (
        f"No history of {device} {port} over the last {span(since_s)}: fewer than two of its "
        "polls are stored that far apart, so nothing was judged."
    )


NO_HISTORY_HINT = (
    "The poll job stores a poll of every port every few minutes while the bot runs "
    "(`linktriage serve`); ask again once it has run twice, or over a longer span."
)


def not_a_name(word: str) -> str:
    return f"{quoted(word[:40])} is not a device or port name."


def no_such_site(text: str) -> str:
    return f"No site or device named {quoted(text)}."


def known_sites(sites: list[str]) -> str:
    return (
        f"Sites: {', '.join(sites)}; a unique part of a site's name will do, or a part of "
        "some devices' names."
    )


def fits_sites(text: str, sites: int) -> str:
    return f"{quoted(text)} fits {sites} sites."


def ports_not_listed(why: str) -> str:
    """Why a device whose ports could not even be listed was not read."""
    return f"could not list its ports: {why}"


def answered_without(port: str) -> str:
    return f"answered without port {port}"


def suspects_title(site: str | None) -> str:
    return f"Suspect links {'everywhere' if site is None else f'at {site}'}"


def suspects_on(text: str, devices: list[str]) -> str:
    """The title of a list of the devices a part of a name fits: their names, if few."""
    if len(devices) == 1:
        return f"Suspect links on {devices[0]}"
    if len(devices) <= 3:
        return f"Suspect links on {', '.join(devices[:-1])} and {devices[-1]}"
    return f"Suspect links on the {len(devices)} devices named *{text}*"


DIGEST_TITLE = "Digest of suspect links"
ANSWER_GONE_HINT = "Ask with /triage again."


def label_options(verdicts: list[str]) -> str:
    """Verdict ids offered to choose from: "`a` or `b`"."""
    return " or ".join(f"`{v}`" for v in verdicts)


def finding_options(said: list[str]) -> str:
    """Findings offered to choose from, in their words: "a or b"."""
    return " or ".join(said)


def negated_verdicts(verdicts: list[str]) -> str:
    return ", ".join(f"`{v}`" for v in verdicts)


WORKING = "On it: polling now. The answer will be posted in this channel."


def cannot_post(error: str, minutes: float) -> str:
    """Told privately to a person whose channel the bot may not post in (yet)."""
    return (
        f"I could not post to this channel ({error}); invite me with "
        f"`/invite @linktriage` and I will post it within the next {minutes:g} min. "
        "Here is the answer meanwhile."
    )


def held_back(minutes: float) -> str:
    """Told privately when Slack's rate limits held a message back past its time."""
    return (
        f"Slack held this message back for {minutes:g} min (its rate limits), so I did not "
        "post it to the channel. Here it is; ask again for a fresh answer."
    )


def not_kept(reason: str) -> str:
    """Told privately when an answer could not be kept in the store to be posted."""
    return f"I could not keep this answer to post it to the channel ({reason}). Here it is."


THREAD_NOT_POSTED = "the message whose thread it belongs in was not posted"


def refused(error: str) -> str:
    """Told privately when Slack refused a message outright."""
    return f"Slack refused this message ({error}), so it was not posted. Here it is."


SOCKET_MODE_NEEDS_TOKEN = (
    "Socket Mode needs SLACK_APP_TOKEN (an app-level token, scope connections:write)."
)
CONSOLE_GREETING = (
    "linktriage console: type a command (`help` lists them), `reply TEXT` to answer in "
    "the thread of the last answer, `quit` to leave."
)
CONSOLE_LABEL_PROMPT = (
    "(Been to the link? Say what you found: `reply crushed patch cord behind the desk`.)"
)
CONSOLE_NOTHING_TO_REPLY = "Nothing to reply to yet: ask about a port first."
CONSOLE_REPLY_WHAT = "Say what you found after `reply`, e.g. `reply crushed patch cord`."
CONSOLE_NOT_A_LABEL = "(not read as a label: say what you found, e.g. `crushed patch cord`)"


def cannot_start(why: str) -> str:
    return f"Cannot start: {why}"


def slack_unreachable(url: str, reason: object) -> str:
    return cannot_start(f"Slack's Web API at {url} did not answer ({reason}).")


SLACK_UNREACHABLE_HINT = "Check the network and proxy settings, or LINKTRIAGE_SLACK_API_URL."
SIGNING_SECRET_UNSET = cannot_start("SLACK_SIGNING_SECRET is not set.")


def cannot_listen(host: str, port: int, why: object) -> str:
    return f"Cannot listen on {host} port {port}: {why}"


def listening(host: str, port: int) -> str:
    return f"linktriage: listening on {host} port {port}, /slack/events"


CONNECTING_SOCKET_MODE = "linktriage: connecting to Slack in Socket Mode"


# --- a port's history
def clock_time(at: float) -> str:
    """A time of day in a history: "02:40 UTC"."""
    return datetime.fromtimestamp(at, UTC).strftime("%H:%M UTC")


def day_and_time(at: float) -> str:
    return datetime.fromtimestamp(at, UTC).strftime("%a %d %b %H:%M UTC")


def utc_minute(at: float) -> str:
    """A moment to the minute, in UTC: "2026-03-02 08:05 UTC"."""
    return datetime.fromtimestamp(at, UTC).strftime("%Y-%m-%d %H:%M UTC")


def history_summary(runs: Sequence[Mapping[str, Any]], named: Callable[[str], str] = str) -> str:
    """When the verdict last changed, in one line: "cable_fault since 02:40 UTC, healthy
    before"; a history of one verdict says how long it has held. ``named``: how a verdict
    is said (its id unless told; a picture says its title)."""
    last = runs[-1]
    if len(runs) == 1:
        return (
            f"{named(last['verdict'])} throughout, {plural(last['windows'], 'window')} since "
            f"{day_and_time(last['start'])}"
        )
    said = (
        f"{named(last['verdict'])} since {clock_time(last['start'])}, "
        f"{named(runs[-2]['verdict'])} before"
    )
    if len(runs) > 2:
        said += f" ({plural(len(runs) - 1, 'change')} since {day_and_time(runs[0]['start'])})"
    return said


def history_title(device: str, port: str, since_s: float) -> str:
    return f"{device} {port}: the last {span(since_s)}"


def history_facts(windows: int, model_version: str) -> str:
    return f"{plural(windows, 'window')} of stored polls, each diagnosed; model {model_version}"


HISTORY_CHANGES = "Verdicts, oldest first"
HISTORY_HEADER = ("FROM", "TO", "VERDICT", "CONF", "ERROR RATIO", "DISC IN/OUT", "LOAD IN/OUT")
CHART_IN_THREAD = "Chart of the evidence in each window in the thread."


def run_line(verdict: str, start: float, end: float, windows: int) -> str:
    return f"{day_and_time(start)} to {clock_time(end)}: {verdict} ({plural(windows, 'window')})"


def port_said(device: str, port: str, why: str) -> str:
    return f"{device} {port}: {why}"


def history_fallback(device: str, port: str, summary: str) -> str:
    return port_said(device, port, summary)


# --- the tree's picture
def tree_title(device: str, port: str, verdict: str) -> str:
    return f"{device} {port}: the tree's path to {verdict}"


def tree_guarded(verdict: str) -> str:
    return (
        f"The tree was not asked: {verdict} is decided by a guard before it (the link's "
        "state, the polls, or the traffic), so there is no path to draw."
    )


TREE_IN_THREAD = "Picture of the tree with this port's path marked in the thread."
CHART_PATH = "the path taken"
CHART_OTHER = "branches not taken"

# --- the chart of a port's windows (render/history_chart.py)
CHART_TIME = "time (UTC)"
CHART_ERRORS = "Errored frames received, each window"
CHART_FRAMES = "frames per window"
CHART_ERRORED = "errored frames"
CHART_LEAST = "1 frame: the least a window counts"
CHART_LEAST_BIT = "1 bit: the least a window counts"
CHART_NONE_COUNTED = "none counted (0)"
CHART_NOT_COUNTED = "not counted"
CHART_LINK = "Link went down or up, each window"
CHART_CHANGES = "changes per window"
CHART_LINK_CHANGES = "times down or up"
CHART_LINK_STEADY = "no link change in any window"
CHART_DISCARDS = "Frames discarded, each window"
CHART_LOAD = "Load"
CHART_LOAD_UNIT = "% of link speed"
CHART_IN = "in (received)"
CHART_OUT = "out (sent)"
CHART_LIGHT = "Received light"
CHART_LIGHT_UNIT = "dBm"
CHART_LIGHT_LEAST = "the least it should get"
CHART_LIGHT_RECEIVED = "received, each window"
CHART_FEC = "Bits corrected by FEC, each window"
CHART_BITS = "bits per window"
CHART_FEC_CORRECTED = "corrected bits"
CHART_FEC_HIGH = "the code's high level"
CHART_EARLIER_CHANGES = "earlier verdict changes"


def chart_at_objective(objective: float) -> str:
    """The count a link just meeting its objective would show, as a legend names it."""
    return f"at the IEEE 802.3 objective, {objective:.0e}"


def chart_none_in_any(counted: str) -> str:
    """Written across a panel of counts where no window counted any."""
    return f"no {counted} in any window"


def chart_change(at: float, before: str, after: str) -> str:
    """The moment the verdict changed, written beside its line (verdicts as titles)."""
    return f"{clock_time(at)}: {after}\n(before: {before})"


def chart_title(device: str, port: str, said: str) -> str:
    """A chart's heading: the port and, in words, what its windows say."""
    return f"{device} {port}: {said}"


def history_subtitle(span_s: float) -> str:
    """Under a history chart's title: what its windows are."""
    return f"Each window of its stored polls over the last {span(span_s)}, diagnosed alone"


def answer_stored(span_s: float, said: str) -> str:
    """Under an answer's chart title, where it draws the port's stored polls: what they
    say (``said``, as :func:`history_summary` says it)."""
    return f"Its stored polls over the last {span(span_s)}, each window diagnosed alone: {said}"


def answer_window(polls: int, span_s: float) -> str:
    """Under an answer's chart title, where it draws the polls the answer rests on."""
    return f"The {plural(polls, 'poll')} this answer rests on, over {span(round(span_s))}"


def answer_chart_below(stored: bool, span_s: float) -> str:
    """Said in an answer's thread, where its chart follows."""
    over = f"the last {span(span_s)} of its stored polls" if stored else "the polls it rests on"
    return f"The chart below draws the errored frames and link changes of each window of {over}."


def answer_chart_title(device: str, port: str, stored: bool, span_s: float) -> str:
    """An answer's chart as Slack lists the file."""
    over = f"the last {span(span_s)}" if stored else "the answer's window"
    return f"{device} {port}: evidence in each window, {over}"


def chart_alt(device: str, port: str, said: str, latest: str) -> str:
    """What a chart of windows shows, for people who cannot see it (Slack's alt text)."""
    return (
        f"Chart of {device} {port} over time: errored frames in each window against the "
        f"count the IEEE 802.3 objective allows, the link's changes, and the other readings "
        f"that counted anything. {said}. {latest}"
    ).rstrip()


def chart_latest(errors: float | None, at_objective: float | None, changes: float | None) -> str:
    """The latest window's evidence in one sentence, for the alt text."""
    parts = []
    if errors is not None:
        parts.append(plural(round(errors), "errored frame"))
    if at_objective is not None:
        parts.append(f"about {at_objective:.2g} expected at the objective")
    if changes is not None:
        parts.append(plural(round(changes), "link change"))
    return f"Latest window: {'; '.join(parts)}." if parts else ""


def tree_alt(device: str, port: str, verdict: str, questions: int) -> str:
    return (
        f"The decision tree with the path of {device} {port} marked: {questions} questions "
        f"leading to {verdict}."
    )


# --- the drawers' headings and phrases (render/text.py and render/blocks.py)
EVIDENCE = "Evidence"
QUESTIONS_ASKED = "Questions asked"
CHECK_NEXT = "Check next"
CHECK_FIRST = "Check first"
BOTH_ENDS = "Both ends"
#: Where the link decided the verdict: the tree asked of this port's counters alone.
QUESTIONS_OF_THIS_END = "Questions asked of this port's own counters"


def own_view_heading(title: str) -> str:
    """Where the link decided the verdict: what this port's counters alone say."""
    return f"This port alone: {title}"


def own_view_summary(title: str) -> str:
    """The same, in one line, for an answer's first screen."""
    return f"Decided from both ends of the link; this port's own counters alone say {title}."


def far_end_line(device: str, port: str, title: str) -> str:
    """The far end of the link and what it says of itself."""
    return f"far end {device} {port}: {title}"


def link_reason(title: str, far_device: str, far_port: str, said: str) -> str:
    """A link in a list of suspects: its verdict from both ends, the far end, and why."""
    return f"{title}, seen from both ends (with {far_device} {far_port}): {said}"


def link_summary(title: str, said: str) -> str:
    """The link's verdict from both ends in one line, for an answer's first screen."""
    return f"From both ends, {title}: {said}"


def link_line(title: str, near: str, far: str) -> str:
    """The link's verdict from both ends, and what an end alone said where it differs
    (``near`` and ``far`` are each end's own verdict in words)."""
    if near == title == far:
        return f"the link: {title}, as both ends say alone"
    if near != title and far != title:
        return f"the link: {title} (alone, this port says {near} and the far end {far})"
    other = f"this port alone says {near}" if near != title else f"the far end alone says {far}"
    return f"the link: {title} ({other})"


MORE_IN_THREAD = "Why, the questions asked, every check and every caution: in this thread."
SAFETY = "Safety"
TABLE_HEADER = ("DEVICE", "PORT", "VERDICT", "CONF", "WINDOW", "EVIDENCE")


def port_title(device: str, port: str, title: str) -> str:
    """An answer's heading: which port, and the verdict in words."""
    return f"{device} {port}: {title}"


def confidence_cell(confidence: float | None) -> str:
    """A confidence in a table or beside a verdict: "-" where a guard answered, not the tree.
    Cut, not rounded, to two places: 0.9993 reads 0.99, never a certainty it is not."""
    return "-" if confidence is None else f"{math.floor(confidence * 100) / 100:.2f}"


def verdict_line(device: str, port: str, title: str, verdict: str, confidence: float | None) -> str:
    """An answer's first line; a guard's answer is a fact, with no confidence."""
    line = f"{port_title(device, port, title)} ({verdict})"
    return line if confidence is None else f"{line}, confidence {confidence_cell(confidence)}"


def verdict_fallback(
    device: str, port: str, title: str, verdict: str, confidence: float | None
) -> str:
    """An answer as a notification shows it."""
    sure = "" if confidence is None else f", {confidence_cell(confidence)}"
    return f"{port_title(device, port, title)} ({verdict}{sure})"


def asked_by(person: str) -> str:
    return f"asked by {person}"


def why_fallback(title: str) -> str:
    return f"Why: {title}"


def steps_fallback(title: str) -> str:
    return f"Checks and cautions: {title}"


def verdict_named(title: str, verdict: str) -> str:
    """The verdict beside an answer's headline: its words, then its id."""
    return f"{title} ({verdict})"


def answer_lines(headline: str, title: str, verdict: str, confidence: float | None) -> list[str]:
    """An answer's first lines in the terminal: what was measured where, then the verdict
    (a guard's answer is a fact, with no confidence)."""
    named = verdict_named(title, verdict)
    sure = "" if confidence is None else f", confidence {confidence_cell(confidence)}"
    return [headline, f"{named}{sure}"]


def confidence_fact(value: str) -> str:
    return f"confidence {value}"


def window_fact(seconds: str, polls: int) -> str:
    return f"window {seconds} s over {plural(polls, 'poll')}"


def model_fact(version: str) -> str:
    return f"model {version}"


def unread_questions(numbers: list[int]) -> str:
    """The tree's questions about readings the port does not give (light on copper): one
    line, since each answered "no evidence"."""
    which = ", ".join(str(n) for n in numbers)
    noun = "Question" if len(numbers) == 1 else "Questions"
    return (
        f"({noun} {which} asked of readings this port does not report, so no evidence of "
        "them either way)"
    )


def note_line(note: str) -> str:
    return f"note: {note}"


def serves_at(serves: str, site: str) -> str:
    return f"({serves}, {site})"


def person_labelled(person: str, said: str) -> str:
    return f"{person} found {said}"


def labelled(said: list[str], disputed: bool) -> str:
    """Who said what on an answer, and whether it teaches."""
    line = "Labelled: " + "; ".join(said)
    if disputed:
        line += ". The labels disagree: left out of training until they agree."
    return line


CHECK_AGAIN = "Check again"
HOW_TO_USE = "How to use linktriage"
HELP_TITLE = "linktriage"


def list_heading(title: str, at: str) -> str:
    return f"{title}, {at}"


def new_and_cleared_since(new: int, cleared: int, since: str) -> str:
    """What changed since the digest before (Block Kit)."""
    return f"{new} new and {cleared} cleared since {since}"


def since_the_last_digest(since: str, new: int, cleared: int) -> str:
    """What changed since the digest before (terminal)."""
    return f"since the last digest ({since}): {new} new, {cleared} cleared"


def cleared_links(links: str, *, capital: bool) -> str:
    return f"{'Cleared' if capital else 'cleared'}: {links}"


def more_in_thread(left: int) -> str:
    return f"\u2026 and {left} more in this message's thread."


def continued_from(rank: int) -> str:
    return f"Suspect links from {rank} on, continued"


def continued(title: str) -> str:
    return f"{title}, continued"


def suspects_fallback(title: str, links: int) -> str:
    return f"{title}: {plural(links, 'suspect link')}"


def found_note(note: str) -> str:
    return f"found: {note}"


def recorded_fallback(said: str, device: str, port: str) -> str:
    return f"Recorded: found {said} at {device} {port}"


# --- the watch's digests, out of chat (transports/digest_targets.py)
STANDARD_OUTPUT = "standard output"

DIGEST_TARGET_HINT = (
    "Give - for standard output, a file's path (each digest appended as one JSON object per "
    "line), or an http:// or https:// URL (each digest POSTed as JSON)."
)

EMPTY_DIGEST_TARGET = "An empty name is no place to send digests."

WEBHOOK_NO_HOST = "it names no host"


def webhook_scheme(scheme: str) -> str:
    return f"its scheme is {printable(scheme)!r}, not http or https"


def not_a_webhook(why: str) -> str:
    return f"Cannot post digests to that URL: {why}."


def cannot_append_digests(path: object, why: str) -> str:
    return f"Cannot append digests to {printable(str(path))}: {why}."


def digest_not_written(path: object, why: str) -> str:
    return f"The digest was not written to {printable(str(path))}: {why}."


def webhook_unanswered(why: str) -> str:
    return f"no answer ({why})"


def webhook_refused(status: int, reason: str) -> str:
    return f"it answered HTTP {status} {printable(reason)}".rstrip()


def digests_kept(count: int, spool: object) -> str:
    return f"{plural(count, 'digest')} kept in {spool}, sent again, oldest first, before the next"


def digests_not_kept(spool: object, why: str) -> str:
    return f"it could not be kept in {spool} either ({why}), so it is lost"


def digest_delivered(at: float, shown: str) -> str:
    return f"digest of {utc_minute(at)} delivered to {shown}"


def digest_not_delivered(shown: str, why: str, kept: str) -> str:
    return f"The digest was not delivered to {shown}: {why}; {kept}."


def jobs_run_elsewhere(holder: str | None) -> str:
    who = f"another copy ({printable(holder)})" if holder else "another copy"
    return f"The jobs of this store are run by {who}: a round here would run them twice."


JOBS_ELSEWHERE_HINT = (
    "Its digests go where it sends them. A copy that stops hands the jobs on at once, or, "
    "stopped without a word, half a poll interval later."
)
