"""The ``linktriage`` command line."""

from __future__ import annotations

import json
import sys
from collections.abc import Callable, Sequence
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
    from linktriage.demo_network import DemoNetwork, demo_polls
    from linktriage.diagnosis import Model, diagnose
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
    help="Where to write the artefact. Default: model.json in the data directory.",
)
@click.option("--seed", type=int, default=None, help="Random seed (default: the packaged one).")
@click.option(
    "--ports",
    type=click.IntRange(min=2000),
    default=None,
    help="How many ports to simulate for the prior (default: as the packaged model).",
)
def train(out: Path | None, seed: int | None, ports: int | None) -> None:
    """Train the pruned tree on the simulated prior and write the model artefact.

    Deterministic: the same seed and port count rebuild the same tree.
    """
    from dataclasses import replace

    from linktriage.model.train import TrainingConfig
    from linktriage.model.train import train as run_training
    from linktriage.paths import trained_model_path
    from linktriage.render.card import model_card

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
    artefact = run_training(cfg)
    target = out or trained_model_path()
    target.parent.mkdir(parents=True, exist_ok=True)
    artefact.save(target)
    click.echo(model_card(artefact, source=str(target)))


@main.command()
@click.option("--json", "as_json", is_flag=True, help="The model card as JSON.")
@_model_option
def model(as_json: bool, model_path: Path | None) -> None:
    """Show the model's card: version, size, pruning, scores, what it looks at."""
    from linktriage.diagnosis import Model
    from linktriage.render.card import model_card, model_card_data

    loaded = Model.load(model_path)
    if as_json:
        click.echo(json.dumps(model_card_data(loaded.artefact, source=loaded.source)))
    else:
        click.echo(model_card(loaded.artefact, source=loaded.source))


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
    from linktriage.demo_network import ORGANISATION, PLANTED, demo_polls, demo_ports
    from linktriage.diagnosis import Model, diagnose
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
    click.echo(
        f"\n{'=' * 88}\nAsk about any other port: linktriage ask DEVICE PORT "
        "(e.g. linktriage ask lark-core1 up3)."
    )
