"""The ``linktriage`` command line: one module per family of commands, registered here."""

from __future__ import annotations

import click

from linktriage import __version__
from linktriage.cli import (
    bot,
    config,
    demo,
    devices,
    history,
    labels,
    models,
    snapshots,
    watch,
)
from linktriage.cli.options import READ_ALL, READ_NONE, READ_SOME, Group

__all__ = ["READ_ALL", "READ_NONE", "READ_SOME", "main"]


@click.group(cls=Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="linktriage")
def main() -> None:
    """Triage misbehaving network links from their interface counters.

    Reads counter snapshots, turns them into rates over a window, and answers per port
    with a verdict, the yes/no questions a pruned decision tree asked with the measured
    values, and the physical checks to do next with their safety notes.
    """


for command in (
    snapshots.diagnose,
    snapshots.ask,
    history.history,
    models.train,
    models.model,
    bot.chat,
    bot.serve,
    watch.watch,
    devices.inventory,
    devices.collect,
    devices.suspects,
    config.config,
    labels.labels,
    demo.demo,
):
    main.add_command(command)
