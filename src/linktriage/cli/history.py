"""``history``: one port over time, from the polls the poll job stored."""

from __future__ import annotations

import json
from pathlib import Path

import click

from linktriage.cli.options import (
    config_option,
    inventory_option,
    model_option,
    plot_option,
    write_plot,
)


@click.command()
@click.argument("device")
@click.argument("port")
@click.option(
    "--since",
    "span",
    default="24h",
    show_default=True,
    help="How far back to reach: 90m, 24h, 3d, ... (the store keeps [store] keep_polls_h).",
)
@click.option("--json", "as_json", is_flag=True, help="The history as one JSON object.")
@plot_option(
    "a chart of each window's errored frames against its objective, link changes, when "
    "the verdict changed, and the other readings that counted something"
)
@inventory_option
@config_option
@model_option
def history(
    device: str,
    port: str,
    span: str,
    as_json: bool,
    plot: Path | None,
    inventory_path: Path | None,
    config_path: Path | None,
    model_path: Path | None,
) -> None:
    """A port's verdicts over time: its stored polls cut into windows of about the poll
    job's interval, each diagnosed, with its error ratio, discards and load each way, and
    when the verdict changed (the --json windows also carry link changes, light and FEC).

    A port with no two stored polls far enough apart is said to have no history, never to
    be healthy. A device read through Prometheus answers from Prometheus's own history.

    DEVICE is a device's name, a unique part of it, or its address; PORT is the port's
    name as the device lists it, in any case, or with its type written short or long
    (Gi1/0/5 for GigabitEthernet1/0/5). "port-of NEIGHBOR" in their place names the port
    whose far end LLDP calls NEIGHBOR, as the stored polls last said.
    """
    from linktriage.assembly import inventory_for, opened
    from linktriage.bot.commands import span_seconds
    from linktriage.network.inventory_network import InventoryNetwork
    from linktriage.render.text import history_text
    from linktriage.settings import load_settings

    since_s = span_seconds(span)
    settings = load_settings(config_path)
    network = InventoryNetwork(inventory_for(inventory_path, config_path))
    with opened(settings, model_path=model_path, network=network) as parts:
        reply = parts.triage().histories.of(device, port, since_s)
    if as_json:
        click.echo(json.dumps(reply.as_record(), ensure_ascii=False))
    else:
        click.echo(history_text(reply))
    if plot is not None:
        write_plot(plot, reply)
