"""The ``linktriage`` command line."""

from __future__ import annotations

import json
import sys
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import Any, TypeVar

import click

from linktriage import __version__
from linktriage.errors import LinktriageError
from linktriage.verdicts import FAULTS, Verdict

F = TypeVar("F", bound=Callable[..., Any])

_MODEL_HELP = (
    "Model artefact to use. Default: the one `linktriage train` wrote to the data "
    "directory, else the packaged model."
)


def _model_option(func: F) -> F:
    return click.option(
        "--model",
        "model_path",
        type=click.Path(dir_okay=False, path_type=Path),
        default=None,
        help=_MODEL_HELP,
    )(func)


def _config_option(func: F) -> F:
    return click.option(
        "--config",
        "config_path",
        type=click.Path(dir_okay=False, path_type=Path),
        default=None,
        help="Settings file (TOML). Default: $LINKTRIAGE_CONFIG, else config.toml in the "
        "data directory if present, else built-in defaults.",
    )(func)


#: Exit codes of the commands that read devices (sweep, collect, inventory check --reach):
#: every device read, some not read (the rest were), nothing read. 1 is an error of
#: linktriage's own (a bad file or setting), 2 a wrong command line.
READ_ALL, READ_SOME, READ_NONE = 0, 3, 4


def _read_exit(unread: int, read: int) -> None:
    """Exit with the code that says how much of what was asked for was read."""
    if unread:
        sys.exit(READ_SOME if read else READ_NONE)
    sys.exit(READ_ALL)


def _fail(exc: LinktriageError) -> None:
    click.echo(f"linktriage: {exc.render()}", err=True)
    sys.exit(1)


class _Group(click.Group):
    """Shows linktriage's own errors as a message and a hint, never a traceback."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except LinktriageError as exc:
            _fail(exc)


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="linktriage")
def main() -> None:
    """Triage misbehaving network links from their interface counters.

    Reads counter snapshots, turns them into rates over a window, and answers per port
    with a verdict, the yes/no questions a pruned decision tree asked with the measured
    values, and the physical checks to do next with their safety notes.
    """


@main.command()
@click.option(
    "--snapshots",
    "path",
    required=True,
    type=click.Path(dir_okay=False, allow_dash=True, path_type=Path),
    help="JSON Lines file in the snapshot format; - reads standard input.",
)
@click.option("--json", "as_json", is_flag=True, help="One JSON object per port per line.")
@click.option("--suspects", is_flag=True, help="Only ports whose verdict is a fault.")
@click.option(
    "--window",
    "window_s",
    type=click.FloatRange(min=1.0),
    default=3600.0,
    show_default=True,
    help="Reach back at most this many seconds from each port's latest poll.",
)
@_model_option
def diagnose(
    path: Path, as_json: bool, suspects: bool, window_s: float, model_path: Path | None
) -> None:
    """Diagnose every port in a snapshot file.

    Lines that do not parse or fail validation are reported on standard error with their
    line numbers and skipped; the rest of the file is still diagnosed.
    """
    from linktriage.diagnosis import Model, diagnose
    from linktriage.render import RENDERERS
    from linktriage.snapshot import read_snapshot_file

    model = Model.load(model_path)
    result = read_snapshot_file(path)
    for problem in result.problems:
        click.echo(f"{path}:{problem.line}: skipped: {problem.message}", err=True)
    batch = diagnose(result.polls, model, max_window_s=window_s)
    rows: Sequence[int] = range(len(batch))
    if suspects:
        rows = [i for i in rows if batch.verdict[i] in FAULTS]
    RENDERERS["json" if as_json else "text"](batch, rows, sys.stdout)
    click.echo(
        f"{len(result.polls)} snapshots of {len(batch)} ports diagnosed; "
        f"{len(result.problems)} lines skipped",
        err=True,
    )


@main.command()
@click.argument("device")
@click.argument("port")
@click.option("--json", "as_json", is_flag=True, help="The diagnosis as one JSON object.")
@_model_option
def ask(device: str, port: str, as_json: bool, model_path: Path | None) -> None:
    """Diagnose one port of the demo network, with the full explanation."""
    from linktriage.diagnosis import Model, diagnose
    from linktriage.network.demo import DemoNetwork, demo_polls
    from linktriage.render.jsonl import dumps
    from linktriage.render.text import explanation

    ref = DemoNetwork().find(device, port)
    batch = diagnose(demo_polls(), Model.load(model_path))
    row = batch.index_of(ref.device, ref.port)
    assert row is not None  # every demo port is polled
    record = batch.record(row)
    click.echo(dumps(record) if as_json else explanation(record))


@main.command()
@click.option(
    "--out",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="Write the artefact to this file only. Default: keep it in the data directory's "
    "registry and make it the current model.",
)
@click.option("--seed", type=int, default=None, help="Random seed (default: the packaged one).")
@click.option(
    "--ports",
    type=click.IntRange(min=2000),
    default=None,
    help="How many ports to simulate for the prior (default: as the packaged model).",
)
@click.option(
    "--with-labels",
    is_flag=True,
    help="Learn from the confirmed labels in the store too; promote the result only if it "
    "does no worse than the current model on labels held out.",
)
@_config_option
def train(
    out: Path | None,
    seed: int | None,
    ports: int | None,
    with_labels: bool,
    config_path: Path | None,
) -> None:
    """Train the pruned tree on the simulated prior (and labels) and keep the model.

    Deterministic: the same seed, port count and labels rebuild the same tree.
    """
    import time
    from dataclasses import replace

    from linktriage.diagnosis import Model
    from linktriage.model.registry import Entry, Registry
    from linktriage.model.train import TrainingConfig
    from linktriage.model.train import train as run_training
    from linktriage.render.card import card_text, model_card_data

    cfg = TrainingConfig()
    if seed is not None:
        cfg = replace(cfg, seed=seed)
    if ports is not None:
        cfg = replace(cfg, simulated_ports=ports)
    click.echo(
        f"simulating {cfg.simulated_ports:,} ports (seed {cfg.seed}) and choosing the pruning "
        f"level by {cfg.folds}-fold cross-validation...",
        err=True,
    )
    evaluation = None
    promote = True
    if with_labels:
        from linktriage.model.learning import learn
        from linktriage.settings import load_settings
        from linktriage.store import Store

        labels = Store(load_settings(config_path).store.resolved_url()).labels()
        current = Model.load()
        outcome = learn(labels, current.artefact, cfg)
        artefact, evaluation, promote = outcome.candidate, outcome.evaluation(), outcome.promoted
        click.echo(
            f"learnt from {outcome.trained_on} labels"
            + (f" ({outcome.older} older ones left out)" if outcome.older else "")
            + (
                f" ({outcome.disputed} answers held out: their labels disagree)"
                if outcome.disputed
                else ""
            )
            + f"; on {outcome.held_out} held out the "
            f"candidate scores {outcome.candidate_score:.2f}, the current model "
            f"{current.version} {outcome.current_score:.2f}: "
            + ("promoted" if promote else "kept, not promoted"),
            err=True,
        )
    else:
        artefact = run_training(cfg)
    trained_at = time.time()
    if out is not None:
        out.parent.mkdir(parents=True, exist_ok=True)
        artefact.save(out)
        source = str(out)
    else:
        registry = Registry()
        entry = Entry(
            version=artefact.version,
            trained_at=trained_at,
            labelled_rows=artefact.training.labelled_rows,
            evaluation=evaluation,
        )
        registry.keep(artefact, entry, promote=promote)
        source = "the current kept model" if promote else "kept, not current"
    click.echo(card_text(model_card_data(artefact, source=source, trained_at=trained_at)))


@main.command()
@click.option("--json", "as_json", is_flag=True, help="The model card as JSON.")
@click.option(
    "--use",
    "use_version",
    metavar="VERSION",
    default=None,
    help="Make a kept model the current one (roll back or forward).",
)
@_model_option
def model(as_json: bool, use_version: str | None, model_path: Path | None) -> None:
    """Show the model's card: version, size, pruning, scores, labels, kept versions."""
    from linktriage.diagnosis import Model
    from linktriage.model.registry import Registry
    from linktriage.render.card import card_text, model_card_data

    registry = Registry()
    if use_version is not None:
        registry.use(use_version)
    loaded = Model.load(model_path)
    card = model_card_data(loaded.artefact, source=loaded.source, trained_at=loaded.trained_at)
    card["kept_versions"] = [e.model_dump() for e in registry.versions()]
    if as_json:
        click.echo(json.dumps(card))
        return
    click.echo(card_text(card))
    for entry in card["kept_versions"]:
        mark = "*" if entry["version"] == loaded.version else " "
        click.echo(f"  {mark} kept {entry['version']}: {entry['labelled_rows']} labels")


@main.command()
@_config_option
@_model_option
def chat(config_path: Path | None, model_path: Path | None) -> None:
    """Talk to the bot at a local prompt: the same commands as in the team channel."""
    from linktriage.bot.triage import Triage
    from linktriage.diagnosis import Model
    from linktriage.settings import LabelSettings, load_settings
    from linktriage.transports.console import PROMPT, Console

    # The console is one local, trusted person: channel and group rules are for Slack.
    settings = load_settings(config_path).model_copy(update={"labels": LabelSettings()})
    triage = Triage.from_settings(settings, model=Model.load(model_path), simulated_time=True)
    console = Console(triage)
    interactive = sys.stdin.isatty()

    def lines() -> Iterator[str]:
        while True:
            try:
                yield input(PROMPT) if interactive else next(sys.stdin)
            except (EOFError, StopIteration):
                return

    console.run(lines(), click.echo)


@main.command()
@click.option("--http", "http_mode", is_flag=True, help="Serve HTTP (default: [slack] mode).")
@click.option("--port", type=click.IntRange(1, 65535), default=None, help="HTTP port.")
@click.option(
    "--host",
    default=None,
    help="Address to listen on in HTTP mode (default: [slack] http_host, loopback). "
    "Put a TLS-terminating proxy in front; 0.0.0.0 listens on every interface.",
)
@click.option("--no-jobs", is_flag=True, help="Answer only: no poll job, no digest job.")
@_config_option
@_model_option
def serve(
    http_mode: bool,
    port: int | None,
    host: str | None,
    no_jobs: bool,
    config_path: Path | None,
    model_path: Path | None,
) -> None:
    """Run the chat bot in Slack, with the poll and digest jobs.

    Tokens come from the environment: SLACK_BOT_TOKEN always, SLACK_APP_TOKEN for Socket
    Mode (the default), SLACK_SIGNING_SECRET for HTTP mode (endpoint /slack/events).
    """
    import logging
    import signal

    from slack_bolt.error import BoltError
    from slack_sdk.errors import SlackClientError

    from linktriage.bot.jobs import Jobs, start_scheduler
    from linktriage.bot.triage import Triage
    from linktriage.diagnosis import Model
    from linktriage.settings import load_settings
    from linktriage.transports.slack import (
        build_app,
        group_members,
        post_reply,
        run_socket_mode,
        web_client,
    )
    from linktriage.transports.slack_http import http_server

    logging.basicConfig(
        level=logging.INFO, format="%(asctime)s %(levelname)s %(name)s: %(message)s"
    )
    settings = load_settings(config_path)
    if http_mode:
        settings = settings.model_copy(
            update={"slack": settings.slack.model_copy(update={"mode": "http"})}
        )
    missing = [p for p in _slack_problems(settings) if "channel" not in p]
    if missing:
        raise LinktriageError("Cannot start: " + "; ".join(missing) + ".")
    client = web_client(settings)
    triage = Triage.from_settings(
        settings, model=Model.load(model_path), members_of=group_members(client)
    )
    try:
        app = build_app(triage, settings, client=client)
    except BoltError as exc:  # e.g. Slack refused the token at its first check
        raise LinktriageError(f"Cannot start: {exc}") from exc
    except (OSError, SlackClientError) as exc:  # URLError is an OSError: no answer at all
        reason = getattr(exc, "reason", None) or exc
        raise LinktriageError(
            f"Cannot start: Slack's Web API at {settings.slack_api_url} did not answer ({reason}).",
            hint="Check the network and proxy settings, or LINKTRIAGE_SLACK_API_URL.",
        ) from exc
    channel = settings.slack.channel

    def post_digest(reply: Any) -> None:
        if channel is None:
            return
        triage.posted(reply, channel=channel, ts=post_reply(client, channel, reply))

    scheduler = None
    if not no_jobs:
        scheduler = start_scheduler(Jobs(triage, post_digest, channel), settings.schedule)
    signal.signal(signal.SIGTERM, lambda *_: sys.exit(0))  # systemd stops it: shut down cleanly
    try:
        if settings.slack.mode == "http":
            secret = settings.slack_signing_secret
            if secret is None:  # said above among the problems; checked again where it counts
                raise LinktriageError("Cannot start: SLACK_SIGNING_SECRET is not set.")
            try:
                server = http_server(
                    app,
                    secret=secret.get_secret_value(),
                    port=port or settings.slack.http_port,
                    host=host or settings.slack.http_host,
                )
            except OSError as exc:
                raise LinktriageError(
                    f"Cannot listen on {host or settings.slack.http_host} port "
                    f"{port or settings.slack.http_port}: {exc.strerror or exc}"
                ) from exc
            bound_host, bound_port = server.server_address[:2]
            click.echo(
                f"linktriage: listening on {bound_host!s} port {bound_port}, /slack/events",
                err=True,
            )
            server.serve_forever()
        else:
            click.echo("linktriage: connecting to Slack in Socket Mode", err=True)
            run_socket_mode(app, settings)
    finally:
        if scheduler is not None:
            scheduler.shutdown(wait=False)


def _inventory_option(func: F) -> F:
    return click.option(
        "--inventory",
        "inventory_path",
        type=click.Path(dir_okay=False, path_type=Path),
        default=None,
        help="Inventory file (TOML). Default: [network] inventory of the settings, else the "
        "built-in demo network read through the demo collector.",
    )(func)


def _load_inventory(inventory_path: Path | None, config_path: Path | None) -> Any:
    from linktriage.network.demo import demo_inventory
    from linktriage.network.inventory import load_inventory
    from linktriage.settings import load_settings

    if inventory_path is not None:
        return load_inventory(inventory_path)
    configured = load_settings(config_path).network.inventory
    return load_inventory(configured) if configured is not None else demo_inventory()


@main.group()
def inventory() -> None:
    """Check the inventory of devices."""


@inventory.command("check")
@click.option("--reach", is_flag=True, help="Also read every device once, with its timeout.")
@_inventory_option
@_config_option
def inventory_check(reach: bool, inventory_path: Path | None, config_path: Path | None) -> None:
    """Validate the inventory: collectors, options, credential references; optionally
    whether each device answers.

    Exit 1 when the inventory is set up wrongly; with --reach, 3 when some devices do not
    answer and 4 when none does.
    """
    import time

    from linktriage.network.inventory import problems
    from linktriage.network.polling import InventoryNetwork

    found = _load_inventory(inventory_path, config_path)
    bad = problems(found)
    for device in found.devices:
        where = device.address or "-"
        ports = f"{len(device.ports)} ports listed" if device.ports is not None else "all ports"
        state = bad.get(device.name, "ok")
        click.echo(
            f"{device.name} ({device.site}): {device.collector} at {where}, {ports}: {state}"
        )
    if bad:
        click.echo(f"{len(bad)} of {len(found.devices)} devices are set up wrongly", err=True)
        sys.exit(1)
    if not reach:
        click.echo(f"{len(found.devices)} devices ok")
        return
    unread: dict[str, str] = {}
    network = InventoryNetwork(found)
    try:
        for device in found.devices:
            start = time.monotonic()
            gathered = network.poll_many({device.name: device.ports})
            took = time.monotonic() - start
            if device.name in gathered.failed:
                unread[device.name] = gathered.failed[device.name]
                click.echo(f"{device.name}: does not answer: {unread[device.name]}")
            else:
                count = len(gathered.tables[device.name])
                click.echo(f"{device.name}: answers in {took:.2f} s with {count} ports")
    finally:
        network.close()
    if unread:
        click.echo(f"{len(unread)} of {len(found.devices)} devices cannot be read", err=True)
    else:
        click.echo(f"{len(found.devices)} devices ok")
    _read_exit(len(unread), len(found.devices) - len(unread))


@main.command()
@click.option("--device", required=True, help="A device of the inventory (a unique part will do).")
@click.option("--ports", "port_names", multiple=True, help="Only these ports (repeat, or a,b,c).")
@click.option(
    "--out",
    required=True,
    type=click.Path(dir_okay=False, allow_dash=True, path_type=Path),
    help="Snapshot file to write (JSON Lines); - for standard output.",
)
@click.option(
    "--polls", type=click.IntRange(min=1), default=1, show_default=True, help="Polls to take."
)
@click.option(
    "--every",
    type=click.FloatRange(min=0.0),
    default=30.0,
    show_default=True,
    help="Seconds between polls.",
)
@_inventory_option
@_config_option
def collect(
    device: str,
    port_names: tuple[str, ...],
    out: Path,
    polls: int,
    every: float,
    inventory_path: Path | None,
    config_path: Path | None,
) -> None:
    """Read a device's counters and write them as snapshots: any collector is a recorder.

    Exit 0 when every poll was read, 3 when some were not, 4 when none was.
    """
    import time

    from linktriage.network.interface import Network
    from linktriage.network.polling import InventoryNetwork
    from linktriage.snapshot import iter_snapshots, write_snapshots

    found = _load_inventory(inventory_path, config_path)
    name = Network._device_name(device, [d.name for d in found.devices])
    ports = [p for chunk in port_names for p in chunk.split(",") if p] or None
    network = InventoryNetwork(found)
    written = 0
    failures = 0
    stream = sys.stdout if str(out) == "-" else open(out, "w", encoding="utf-8")  # noqa: SIM115
    try:
        for n in range(polls):
            if n:
                time.sleep(every)
            gathered = network.poll_many({name: ports})
            if name in gathered.failed:
                failures += 1
                click.echo(f"{name}: {gathered.failed[name]}", err=True)
                continue
            for (_, port), problem in gathered.problems.items():
                click.echo(f"{name} {port}: {problem}", err=True)
            written += write_snapshots(iter_snapshots(gathered.tables[name]), stream)
    finally:
        if stream is not sys.stdout:
            stream.close()
        network.close()
    click.echo(f"wrote {written} snapshots of {name} in {polls - failures} polls", err=True)
    _read_exit(failures, polls - failures)


@main.command()
@click.option("--json", "as_json", is_flag=True, help="One JSON object per suspect per line.")
@_inventory_option
@_config_option
@_model_option
def sweep(
    as_json: bool, inventory_path: Path | None, config_path: Path | None, model_path: Path | None
) -> None:
    """Diagnose every port of the inventory and list the suspect links, worst first.

    Every device that could not be read is named, and every port that could not be judged
    counted: no all-clear covers what was not read. Exit 0 when every device was read, 3
    when some were not, 4 when none was.
    """
    from linktriage.bot.triage import Triage
    from linktriage.diagnosis import Model
    from linktriage.network.polling import InventoryNetwork
    from linktriage.render.jsonl import dumps
    from linktriage.render.text import suspects_text
    from linktriage.settings import load_settings
    from linktriage.store import Store

    settings = load_settings(config_path)
    network = InventoryNetwork(_load_inventory(inventory_path, config_path))
    triage = Triage(network, Store(settings.store.resolved_url()), Model.load(model_path), settings)
    try:
        reply = triage.suspects(kind="sweep")
    finally:
        network.close()
    if as_json:
        for item in reply.items:
            click.echo(dumps(item.record))
        click.echo(reply.coverage, err=True)
    else:
        click.echo(suspects_text(reply))
    read = reply.ports_judged + sum(reply.not_judged.values())
    _read_exit(len(reply.failed), read)


@main.group()
def config() -> None:
    """Check the settings."""


@config.command("check")
@_config_option
def config_check(config_path: Path | None) -> None:
    """Validate the settings and show what they amount to (secrets masked), creating
    nothing. Each problem is its own line; what only the Slack bot needs is a warning.
    Exit 1 when something is wrong, else 0 (a command-line-only setup needs no Slack)."""
    from linktriage.settings import config_path as find_config
    from linktriage.settings import load_settings
    from linktriage.store import StoreError, inspect_store, masked_url

    settings = load_settings(config_path)
    source = find_config(config_path)
    click.echo(f"settings from {source or 'built-in defaults'} and the environment")
    for section in ("slack", "store", "chat", "schedule", "labels", "network"):
        values = getattr(settings, section).model_dump()
        shown = {k: masked_url(v) if isinstance(v, str) and "://" in v else v
                 for k, v in values.items()}  # fmt: skip
        click.echo(f"[{section}] " + ", ".join(f"{k}={v!r}" for k, v in shown.items()))
    for name in ("slack_bot_token", "slack_app_token", "slack_signing_secret"):
        present = getattr(settings, name) is not None
        click.echo(f"{name.upper()}: {'set' if present else 'not set'}")
    click.echo(f"Slack Web API: {masked_url(settings.slack_api_url)}")
    problems: list[str] = []
    try:
        click.echo(f"store: {inspect_store(settings.store.resolved_url())}")
    except StoreError as exc:
        problems.append(exc.render().replace("\n", " "))
    inventory = settings.network.inventory
    if settings.network.source == "inventory" and inventory is not None:
        if not inventory.is_file():
            problems.append(f"the inventory file {inventory} does not exist")
        else:
            try:
                found = _load_inventory(inventory, config_path)
                click.echo(f"inventory: {inventory}, {len(found.devices)} devices")
            except LinktriageError as exc:
                problems.append(exc.render().replace("\n", " "))
    for warning in _slack_problems(settings):
        click.echo(f"warning: {warning} (only `serve` needs it)", err=True)
    for problem in problems:
        click.echo(f"problem: {problem}", err=True)
    if problems:
        sys.exit(1)
    click.echo("settings are usable")


def _slack_problems(settings: Any) -> list[str]:
    """What `serve` would lack with these settings."""
    problems = []
    if settings.slack_bot_token is None:
        problems.append("SLACK_BOT_TOKEN is not set: the bot cannot post")
    if settings.slack.mode == "socket" and settings.slack_app_token is None:
        problems.append("SLACK_APP_TOKEN is not set: Socket Mode needs an app-level token")
    if settings.slack.mode == "http" and settings.slack_signing_secret is None:
        problems.append("SLACK_SIGNING_SECRET is not set: HTTP mode cannot verify requests")
    if settings.slack.channel is None:
        problems.append("[slack] channel is not set: digests have nowhere to go")
    return problems


@main.group(invoke_without_command=True)
@click.option("--json", "as_json", is_flag=True, help="One JSON object per label per line.")
@_config_option
@click.pass_context
def labels(ctx: click.Context, as_json: bool, config_path: Path | None) -> None:
    """List the labels engineers gave (what they found on a port), each marked as
    counting, replaced by its author's later one, or disputed (held out of training)."""
    if ctx.invoked_subcommand is not None:
        return
    from dataclasses import asdict

    from linktriage.model.labels import settle
    from linktriage.settings import load_settings
    from linktriage.store import Store

    store = Store(load_settings(config_path).store.resolved_url())
    found = store.labels()
    settled = settle(found)
    replaced = {label.id for label in settled.replaced}
    disputed = {label.id for group in settled.disputed.values() for label in group}

    def standing(label_id: int) -> str:
        if label_id in replaced:
            return "replaced"
        return "disputed" if label_id in disputed else "counts"

    if as_json:
        for label in found:
            click.echo(json.dumps({**asdict(label), "standing": standing(label.id)}))
        return
    click.echo(
        f"{len(found)} labels: {len(settled.kept)} count, {len(replaced)} replaced by their "
        f"author's later one, {len(disputed)} on {len(settled.disputed)} disputed answers"
    )
    for label in found:
        agreed = "=" if label.verdict == label.model_verdict else f"(model: {label.model_verdict})"
        click.echo(
            f"{label.id:>4} {label.device} {label.port}: {label.verdict} {agreed} "
            f"by {label.user_id} via {label.source} [{standing(label.id)}]: {label.note}"
        )


@labels.command("export")
@click.argument("out", type=click.Path(dir_okay=False, allow_dash=True, path_type=Path))
@_config_option
def labels_export(out: Path, config_path: Path | None) -> None:
    """Write the labels that count as training rows (CSV: the features, then the label);
    replaced and disputed ones are left out."""
    from linktriage.model.labels import label_frame, settle
    from linktriage.settings import load_settings
    from linktriage.store import Store

    store = Store(load_settings(config_path).store.resolved_url())
    frame = label_frame(settle(store.labels()).kept)
    if str(out) == "-":
        frame.to_csv(sys.stdout, index=False)
    else:
        frame.to_csv(out, index=False)
        click.echo(f"wrote {len(frame)} labelled rows to {out}", err=True)


# The planted faults the demo walks through in full; the rest appear in its table.
_DEMO_STORIES = {
    Verdict.CABLE_FAULT,
    Verdict.DUPLEX_MISMATCH,
    Verdict.OPTIC_DEGRADED,
    Verdict.INSUFFICIENT_TRAFFIC,
}


@main.command()
@_model_option
def demo(model_path: Path | None) -> None:
    """Show the whole job on the built-in demo network, offline."""
    from linktriage.diagnosis import Model, diagnose
    from linktriage.network.demo import ORGANISATION, PLANTED, demo_polls, demo_ports
    from linktriage.render.text import explanation, table_rows

    loaded = Model.load(model_path)
    ports = demo_ports()
    batch = diagnose(demo_polls(), loaded)
    records = list(batch.records())
    suspects = [r for r in records if Verdict(r["verdict"]) is not Verdict.HEALTHY]
    devices = {p.device for p in ports}
    click.echo(
        f"{ORGANISATION} (an invented organisation; simulated counters)\n"
        f"{len(ports)} ports on {len(devices)} switches, two polls five minutes apart, "
        f"model {loaded.version}\n"
    )
    click.echo(
        f"{len(records) - len(suspects)} ports healthy; the other {len(suspects)} need a look:"
    )
    click.echo("\n".join(table_rows(suspects)))
    for planted in (p for p in PLANTED if p.planted in _DEMO_STORIES):
        row = batch.index_of(planted.device, planted.port)
        assert row is not None
        click.echo(f"\n{'=' * 88}\n$ linktriage ask {planted.device} {planted.port}")
        click.echo(f"({planted.serves})\n")
        click.echo(explanation(batch.record(row)))
    _demo_digest_and_label(loaded)
    click.echo(
        f"\n{'=' * 88}\nAsk about any other port: linktriage ask DEVICE PORT "
        "(e.g. linktriage ask lark-core1 up3), or talk to the bot: linktriage chat."
    )


def _demo_digest_and_label(model: Any) -> None:
    """The scheduled digest, and an engineer's reply in its thread stored as a label."""
    import tempfile

    from linktriage.bot.triage import Triage
    from linktriage.network.demo import DemoClock, DemoNetwork
    from linktriage.render.text import render
    from linktriage.settings import Settings
    from linktriage.simulate import DEFAULT_START
    from linktriage.store import Store

    with tempfile.TemporaryDirectory() as folder:
        clock = DemoClock(DEFAULT_START - 300.0)
        store = Store(f"sqlite:///{folder}/demo.sqlite")
        triage = Triage(
            DemoNetwork(clock=clock), store, model, Settings(), clock=clock, sleep=clock.sleep
        )
        triage.poll_round()  # the poll job ran five minutes before the digest
        clock.sleep(300.0)
        digest = triage.digest(channel="demo")
        triage.posted(digest, channel="demo", ts="digest-1")
        click.echo(
            f"\n{'=' * 88}\nThe digest, as posted to the team channel on weekday mornings:\n"
        )
        click.echo(render(digest))
        first = digest.items[0].record
        reply = f"1: swapped fibres at the patch panel, {first['port']} was one-way"
        click.echo(f"\nAn engineer replies in the digest's thread:\n  > {reply}")
        label = triage.label_reply(
            reply, user="demo-engineer", channel="demo", thread_ts="digest-1", event_key="demo-1"
        )
        if label is not None:
            click.echo(f"  {render(label)}")
        (stored,) = store.labels()
        click.echo(
            f"Stored in SQLite: label {stored.id}, {stored.device} {stored.port} = "
            f"{stored.verdict}, with the feature row the verdict was based on and model "
            f"{stored.model_version}; `linktriage train --with-labels` learns from it."
        )
        store.close()
