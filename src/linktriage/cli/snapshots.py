"""``diagnose`` and ``ask``: snapshot files, and one port answered in full."""

from __future__ import annotations

import sys
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

import click

from linktriage.cli import words
from linktriage.cli.options import (
    READ_NONE,
    config_option,
    inventory_option,
    model_option,
    plot_option,
    write_plot,
)
from linktriage.engine.verdicts import FAULTS

if TYPE_CHECKING:
    from linktriage.render.replies import TreeReply


@click.command()
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
@model_option
def diagnose(
    path: Path, as_json: bool, suspects: bool, window_s: float, model_path: Path | None
) -> None:
    """Diagnose every port in a snapshot file.

    Lines that do not parse or fail validation are reported on standard error with their
    line numbers and skipped; the rest of the file is still diagnosed. A file with no
    usable line exits 4.
    """
    from linktriage.engine.diagnosis.loaded_model import Model
    from linktriage.engine.diagnosis.pipeline import diagnose, diagnose_chunks
    from linktriage.engine.format.snapshot import read_snapshot_file
    from linktriage.render.formats import RENDERERS

    model = Model.load(model_path)
    result = read_snapshot_file(path)
    for problem in result.problems:
        click.echo(words.line_skipped(path, problem.line, problem.message), err=True)
    if not len(result.polls):  # nothing to diagnose: no empty table, and say so
        click.echo(words.no_usable_line(path, len(result.problems)), err=True)
        sys.exit(READ_NONE)
    # JSON Lines go out a chunk of ports at a time; the text table sizes its columns to
    # every row, so it is drawn whole.
    batches = (
        diagnose_chunks(result.polls, model, max_window_s=window_s)
        if as_json
        else iter([diagnose(result.polls, model, max_window_s=window_s)])
    )
    ports = 0
    for batch in batches:
        rows: Sequence[int] = range(len(batch))
        if suspects:
            rows = [i for i in rows if batch.verdict[i] in FAULTS]
        RENDERERS["json" if as_json else "text"](batch, rows, sys.stdout)
        ports += len(batch)
    click.echo(words.diagnosed(len(result.polls), ports, len(result.problems)), err=True)


@click.command()
@click.argument("device")
@click.argument("port")
@click.option("--json", "as_json", is_flag=True, help="The diagnosis as one JSON object.")
@plot_option("a picture of the tree with the port's path marked")
@inventory_option
@config_option
@model_option
def ask(
    device: str,
    port: str,
    as_json: bool,
    plot: Path | None,
    inventory_path: Path | None,
    config_path: Path | None,
    model_path: Path | None,
) -> None:
    """Diagnose one port, with the full explanation: of the inventory's devices when there
    is one (read now, twice if the store holds no recent poll), else of the demo network.

    DEVICE is a device's name, a unique part of it, or its address; PORT is the port's
    name as the device lists it, in any case, or with its type written short or long
    (Gi1/0/5 for GigabitEthernet1/0/5). "port-of NEIGHBOR" in their place names the port
    whose far end LLDP calls NEIGHBOR, as the stored polls last said (without an
    inventory, the demo network's own).
    """
    from linktriage.render.jsonl import dumps
    from linktriage.render.text import explanation

    reply = _answered(device, port, inventory_path, config_path, model_path)
    click.echo(dumps(reply.record) if as_json else explanation(reply.record))
    if plot is not None:
        write_plot(plot, reply)


def _answered(
    device: str,
    port: str,
    inventory_path: Path | None,
    config_path: Path | None,
    model_path: Path | None,
) -> TreeReply:
    """One port diagnosed, with the tree it went through: read from the inventory's device
    when an inventory is given or configured, else from the demo network's fixed polls
    (the same answer every time, as the README shows it)."""
    from linktriage.assembly import inventory_for, opened
    from linktriage.engine.diagnosis.loaded_model import Model
    from linktriage.engine.diagnosis.pipeline import diagnose
    from linktriage.network.demo import DemoNetwork, demo_polls
    from linktriage.network.inventory_network import InventoryNetwork
    from linktriage.render.replies import TreeReply
    from linktriage.settings import load_settings

    settings = load_settings(config_path)
    if inventory_path is not None or settings.network.inventory is not None:
        network = InventoryNetwork(inventory_for(inventory_path, config_path))
        with opened(settings, model_path=model_path, network=network) as parts:
            return parts.triage().tree(device, port)
    model = Model.load(model_path)
    polls = demo_polls()
    ref = DemoNetwork().find(device, port, heard=lambda: polls)
    batch = diagnose(polls, model)
    row = batch.index_of(ref.device, ref.port)
    assert row is not None  # every demo port is polled
    return TreeReply(batch.record(row), batch.node[row], model.artefact)
