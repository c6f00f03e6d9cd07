"""Every word the command line says of its own: the demo's story, what a command did, the
settings and devices as checked, labels as listed. Words of the answers themselves (shared
with the bot) are in :mod:`linktriage.render.words`."""

from __future__ import annotations

from collections.abc import Mapping
from datetime import datetime
from typing import TYPE_CHECKING

from linktriage.printable import printable
from linktriage.render.words import cannot_start, plural, ports_not_judged, span, utc_minute

if TYPE_CHECKING:
    from linktriage.engine.model.labels import Label
    from linktriage.store import StoreState

#: The line between the demo's parts.
RULE = "=" * 88


def cannot_start_missing(missing: list[str]) -> str:
    return cannot_start("; ".join(missing) + ".")


BOT_TOKEN_UNSET = "SLACK_BOT_TOKEN is not set: the bot cannot post"

APP_TOKEN_UNSET = "SLACK_APP_TOKEN is not set: Socket Mode needs an app-level token"

SIGNING_SECRET_MISSING = "SLACK_SIGNING_SECRET is not set: HTTP mode cannot verify requests"

CHANNEL_UNSET = "[slack] channel is not set: digests have nowhere to go"


SWEEP_RENAMED = (
    "`linktriage sweep` is now `linktriage suspects [SITE]`: the same list, read the same "
    "way, with the same exit codes, as /triage suspects gives in chat (its --json writes one "
    "object)."
)


def cli_error(rendered: str) -> str:
    return f"linktriage: {rendered}"


def no_usable_line(path: object, skipped: int) -> str:
    """A snapshot file with nothing to diagnose, and why."""
    why = f"its {plural(skipped, 'line')} were all skipped" if skipped else "it holds no line"
    return f"Nothing to diagnose in {path}: {why}."


def line_skipped(path: object, line: int, why: str) -> str:
    return f"{path}:{line}: skipped: {why}"


def diagnosed(snapshots: int, ports: int, skipped: int) -> str:
    return (
        f"{plural(snapshots, 'snapshot')} of {plural(ports, 'port')} diagnosed; "
        f"{plural(skipped, 'line')} skipped"
    )


def training_starts(ports: int, seed: int, folds: int) -> str:
    return (
        f"simulating {plural(ports, 'port')} (seed {seed}) and choosing the pruning "
        f"level by {folds}-fold cross-validation..."
    )


def learnt(
    trained_on: int,
    older: int,
    disputed: int,
    held_out: int,
    candidate_score: float,
    current_version: str,
    current_score: float,
    promoted: bool,
) -> str:
    """What training with labels learnt, and whether the candidate replaced the model."""
    return (
        f"learnt from {plural(trained_on, 'label')}"
        + (f" ({plural(older, 'older one')} left out)" if older else "")
        + (f" ({plural(disputed, 'answer')} held out: their labels disagree)" if disputed else "")
        + f"; on {held_out} held out the candidate scores {candidate_score:.2f}, the current "
        f"model {current_version} {current_score:.2f}: "
        + ("promoted" if promoted else "kept, not promoted")
    )


def kept_model_source(promoted: bool) -> str:
    return "the current kept model" if promoted else "kept, not current"


def kept_version(version: str, labelled_rows: int, *, current: bool) -> str:
    return f"  {'*' if current else ' '} kept {version}: {plural(labelled_rows, 'label')}"


def device_setup(
    name: str, site: str, collector: str, address: str | None, ports: int | None, state: str
) -> str:
    listed = f"{plural(ports, 'port')} listed" if ports is not None else "all ports"
    return f"{name} ({site}): {collector} at {address or '-'}, {listed}: {state}"


def set_up_wrongly(bad: int, total: int) -> str:
    return f"{bad:,} of {total:,} devices {'is' if bad == 1 else 'are'} set up wrongly"


def devices_ok(total: int) -> str:
    return f"{plural(total, 'device')} ok"


def does_not_answer(device: str, why: str) -> str:
    return f"{device}: does not answer: {why}"


def answers_in(device: str, seconds: float, ports: int) -> str:
    return f"{device}: answers in {seconds:.2f} s with {plural(ports, 'port')}"


def cannot_be_read(unread: int, total: int) -> str:
    return f"{unread} of {total} devices cannot be read"


def device_said(device: str, why: str) -> str:
    return f"{device}: {why}"


def wrote_snapshots(written: int, device: str, polls: int) -> str:
    return f"wrote {plural(written, 'snapshot')} of {device} in {plural(polls, 'poll')}"


def settings_from(source: object) -> str:
    return f"settings from {source or 'built-in defaults'} and the environment"


def settings_section(section: str, values: Mapping[str, object]) -> str:
    return f"[{section}] " + ", ".join(f"{k}={v!r}" for k, v in values.items())


def secret_presence(name: str, present: bool) -> str:
    return f"{name.upper()}: {'set' if present else 'not set'}"


def slack_api(url: str) -> str:
    return f"Slack Web API: {url}"


def store_state(state: StoreState, keep_h: float) -> str:
    """What the store is and holds, for `config check`."""
    if not state.created:
        return f"store: {state.url}, not created yet (it is created on first use)"
    if state.version is None:
        return f"store: {state.url}, empty (its tables are created on first use)"
    parts = [f"store: {state.url}, schema version {state.version}"]
    if state.size_bytes is not None:
        parts.append(f"{state.size_bytes / 1e6:,.1f} MB")
    history = state.history
    if history is not None and history.oldest is not None and history.newest is not None:
        parts.append(
            f"{plural(history.ports, 'port poll')} from {utc_minute(history.oldest)} to "
            f"{utc_minute(history.newest)}"
        )
    elif history is not None:
        parts.append("no polls yet")
    parts.append(f"polls kept {keep_h:g} h")
    if state.jobs_held_by is not None:
        parts.append(f"jobs run by {state.jobs_held_by}")
    if state.waiting:
        parts.append(f"{plural(state.waiting, 'message')} waiting to be sent to Slack")
    return "; ".join(parts)


def inventory_missing(path: object) -> str:
    return f"the inventory file {path} does not exist"


def inventory_state(path: object, devices: int) -> str:
    return f"inventory: {path}, {plural(devices, 'device')}"


def settings_warning(warning: str) -> str:
    return f"warning: {warning} (only `serve` needs it)"


def settings_problem(problem: str) -> str:
    return f"problem: {problem}"


SETTINGS_USABLE = "settings are usable"


def labels_summary(
    total: int, kept: int, replaced: int, disputed: int, answers: int, untaught: int
) -> str:
    return (
        f"{plural(total, 'label')}: {kept:,} counting, {replaced:,} replaced by their author's "
        f"later one, {disputed:,} on {plural(answers, 'disputed answer')}, {untaught:,} "
        "teaching no verdict"
    )


#: Where a label was given, by its source (``{channel}`` is filled in).
LABEL_GIVEN = {
    "thread": "in a thread in {channel}",
    "button": "with a button in {channel}",
    "console": "at the console",
}


def label_line(label: Label, standing: str, said: str) -> str:
    """One label in the list: when (local time), the port, what was found (``said``), what it
    teaches against what the answer said, which answer, who, where, whether it counts, and
    the note."""
    if not label.verdict:
        teaches = f"teaches nothing; answered {label.model_verdict}"
    elif label.verdict == label.model_verdict:
        teaches = f"teaches {label.verdict}, as answered"
    else:
        teaches = f"teaches {label.verdict}; answered {label.model_verdict}"
    channel = printable(label.channel or "an unknown channel")
    where = LABEL_GIVEN.get(label.source, f"by {label.source} in {{channel}}").format(
        channel=channel
    )
    note = f": {printable(label.note)}" if label.note else ""
    return (
        f"{label.id:>4}  {_local(label.at)}  {printable(label.device)} {printable(label.port)}: "
        f"found {said} ({teaches}), on answer {label.diagnosis_id}, by "
        f"{printable(label.user_id)} {where} [{standing}]{note}"
    )


def _local(at: float) -> str:
    """A moment in the machine's local time, its zone named."""
    return datetime.fromtimestamp(at).astimezone().strftime("%Y-%m-%d %H:%M %Z")


def wrote_rows(rows: int, path: object) -> str:
    return f"wrote {plural(rows, 'labelled row')} to {path}"


NO_PICTURE = "No picture written: a guard answered before the tree was asked."


def wrote_picture(path: object) -> str:
    return f"wrote {path}"


def cannot_write(path: object, why: object) -> str:
    return f"Cannot write {path}: {why}"


def demo_intro(organisation: str, ports: int, devices: int, model_version: str) -> str:
    return (
        f"{organisation} (an invented organisation; simulated counters)\n"
        f"{ports} ports on {devices} devices (switches and a printer), two polls five minutes "
        f"apart, model {model_version}\n"
    )


def demo_needs_a_look(
    healthy: int, suspects: int, suspect_ports: int, not_judged: Mapping[str, int]
) -> str:
    """The demo's count, in the digest's terms: suspect links (a link read from both ends
    is one link of two ports), and ports not judged."""
    parts = [plural(suspects, "suspect link")]
    if suspect_ports != suspects:
        parts[0] += f" ({suspect_ports} ports: both ends of a link count once)"
    if any(not_judged.values()):
        parts.append(ports_not_judged(not_judged))
    look = suspect_ports + sum(not_judged.values())
    return f"{plural(healthy, 'port')} healthy; the other {look:,} need a look: {', '.join(parts)}:"


def demo_asks(device: str, port: str) -> str:
    return f"\n{RULE}\n$ linktriage ask {device} {port}"


def demo_serves(serves: str) -> str:
    return f"({serves})\n"


def demo_asks_history(device: str, port: str, since_s: float) -> str:
    return (
        f"\n{RULE}\nThe poll job polled every port every five minutes all morning.\n"
        f"$ linktriage history {device} {port} --since {span(since_s).replace(' ', '')}"
    )


def demo_chart(path: object) -> str:
    return f"  ...\nIts chart (what the bot posts in the answer's thread): {path}"


DEMO_DIGEST = f"\n{RULE}\nThe digest, as posted to the team channel on weekday mornings:\n"


def demo_reply(port: str) -> str:
    """What the demo's engineer found on the digest's first link."""
    return f"1: crushed patch cord under the desk at {port}, replaced it"


def demo_engineer_replies(reply: str) -> str:
    return f"\nAn engineer replies in the digest's thread:\n  > {reply}"


def demo_stored(label: Label, said: str) -> str:
    return (
        f"Stored in SQLite: label {label.id}, {label.device} {label.port}: found "
        f"{said}, teaching {label.verdict or 'no verdict'}, with the "
        "feature row the verdict was based on and model "
        f"{label.model_version}; `linktriage train --with-labels` learns from it."
    )


#: What answers from the store the demo leaves, as an engineer would type it next.
DEMO_FROM_THE_STORE = (
    "  linktriage history lark-east-idf2 port14\n"
    "  linktriage suspects central\n"
    "  linktriage watch --once"
)


def demo_kept(store: str, rounds: int, elsewhere: str | None) -> str:
    """What the demo left in the settings' store: the rounds it polled, or why none."""
    if elsewhere is not None:
        done = f"another copy ({printable(elsewhere)}) runs the poll job on it now"
    elif rounds:
        done = f"{plural(rounds, 'poll round')} of the demo network's last hour polled into it"
    else:
        done = "the poll job had polled every round of the last hour into it already"
    return (
        f"\n{RULE}\nThe store of your settings, {store}: {done}. These answer from it now:\n"
        f"{DEMO_FROM_THE_STORE}"
    )


def demo_store_unusable(store: str, why: str) -> str:
    return (
        f"\n{RULE}\nThe store of your settings, {store}, could not keep the demo's polls: "
        f"{why}\nOnce it can, these answer from it after the demo:\n{DEMO_FROM_THE_STORE}"
    )


def demo_store_left_alone(store: str) -> str:
    return (
        f"\n{RULE}\nYour settings read an inventory: the demo keeps no simulated polls in "
        f"their store ({store}). With settings that read the demo network, these answer from "
        f"the store after the demo:\n{DEMO_FROM_THE_STORE}"
    )


DEMO_NEXT = (
    f"\n{RULE}\nAsk about any other port: linktriage ask DEVICE PORT "
    "(e.g. linktriage ask lark-core1 up3), or talk to the bot: linktriage chat."
)


def watching(
    poll_minutes: float, days: str, at: str, zone: str, targets: list[str], waiting: int
) -> str:
    """What the watch runs and where its digests go, as it starts."""
    go = "goes" if waiting == 1 else "go"
    kept = f" ({plural(waiting, 'digest')} kept from before {go} first)" if waiting else ""
    return (
        f"watching the network: a poll round every {poll_minutes:g} min, the digest "
        f"{days} at {at} ({zone}), each digest to {', '.join(targets)}{kept}; Ctrl-C stops"
    )


def poll_round_done(stored: int, failed: Mapping[str, str]) -> str:
    said = f"poll round: {plural(stored, 'port poll')} stored"
    if failed:
        devices = "; ".join(f"{d}: {why}" for d, why in sorted(failed.items()))
        said += f"; {plural(len(failed), 'device')} not read ({devices})"
    return said


ROUND_RAN_ALREADY = (
    "poll round: this interval's had been run (by another copy on the store, or an earlier "
    "round): the digest reads its polls"
)


def digest_sent(at: float, targets: list[str]) -> str:
    return f"digest of {utc_minute(at)} sent to {', '.join(targets)}"
