"""``inventory check``, ``collect`` and ``suspects``: reading the devices of an inventory."""

from __future__ import annotations

import sys
from pathlib import Path

import click

from linktriage.cli import words
from linktriage.cli.options import config_option, inventory_option, model_option, read_exit
from linktriage.render.words import port_said


@click.group()
def inventory() -> None:
    """Check the inventory of devices."""


@inventory.command("check")
@click.option("--reach", is_flag=True, help="Also read every device once, with its timeout.")
@inventory_option
@config_option
def inventory_check(reach: bool, inventory_path: Path | None, config_path: Path | None) -> None:
    """Validate the inventory: collectors, options, credential references; optionally
    whether each device answers.

    Exit 1 when the inventory is set up wrongly; with --reach, 3 when some devices do not
    answer and 4 when none does.
    """
    import time

    from linktriage.assembly import inventory_for
    from linktriage.network.inventory import problems
    from linktriage.network.inventory_network import InventoryNetwork

    found = inventory_for(inventory_path, config_path)
    bad = problems(found)
    for device in found.devices:
        ports = len(device.ports) if device.ports is not None else None
        state = bad.get(device.name, "ok")
        click.echo(
            words.device_setup(
                device.name, device.site, device.collector, device.address, ports, state
            )
        )
    if bad:
        click.echo(words.set_up_wrongly(len(bad), len(found.devices)), err=True)
        sys.exit(1)
    if not reach:
        click.echo(words.devices_ok(len(found.devices)))
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
                click.echo(words.does_not_answer(device.name, unread[device.name]))
            else:
                count = len(gathered.tables[device.name])
                click.echo(words.answers_in(device.name, took, count))
    finally:
        network.close()
    if unread:
        click.echo(words.cannot_be_read(len(unread), len(found.devices)), err=True)
    else:
        click.echo(words.devices_ok(len(found.devices)))
    read_exit(len(unread), len(found.devices) - len(unread))


@click.command()
@click.option(
    "--device",
    required=True,
    help="A device of the inventory: its name, a unique part of it, or its address.",
)
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
@inventory_option
@config_option
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

    from linktriage.assembly import inventory_for
    from linktriage.engine.format.snapshot import iter_snapshots, write_snapshots
    from linktriage.network.inventory_network import InventoryNetwork
    from linktriage.network.watched import device_named

    found = inventory_for(inventory_path, config_path)
    name = device_named(device, [d.name for d in found.devices], found.addresses())
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
                click.echo(words.device_said(name, gathered.failed[name]), err=True)
                continue
            for (_, port), problem in gathered.problems.items():
                click.echo(port_said(name, port, problem), err=True)
            written += write_snapshots(iter_snapshots(gathered.tables[name]), stream)
    finally:
        if stream is not sys.stdout:
            stream.close()
        network.close()
    click.echo(words.wrote_snapshots(written, name, polls - failures), err=True)
    read_exit(failures, polls - failures)


@click.command()
@click.argument("site", required=False)
@click.option(
    "--json", "as_json", is_flag=True, help="The list as one JSON object, what was not read in it."
)
@inventory_option
@config_option
@model_option
def suspects(
    site: str | None,
    as_json: bool,
    inventory_path: Path | None,
    config_path: Path | None,
    model_path: Path | None,
) -> None:
    """List the suspect links, worst first, as /triage suspects does in chat.

    Every device of the inventory is read now (with the store's recent polls) and every
    port diagnosed.

    SITE narrows the list to a site (a unique part of its name will do) or to the devices
    whose names hold it ("east"). Every device that could not be read is named, and every
    port that could not be judged counted: no all-clear covers what was not read. Exit 0
    when every device was read, 3 when some were not, 4 when none was.
    """
    from linktriage.assembly import inventory_for, opened
    from linktriage.network.inventory_network import InventoryNetwork
    from linktriage.render.jsonl import dumps
    from linktriage.render.text import suspects_text
    from linktriage.settings import load_settings

    settings = load_settings(config_path)
    network = InventoryNetwork(inventory_for(inventory_path, config_path))
    with opened(settings, model_path=model_path, network=network) as parts:
        # Kept as "sweep", the command's earlier name: one origin for lists read here.
        reply = parts.triage().digests.suspects(site, kind="sweep")
    click.echo(dumps(reply.as_record()) if as_json else suspects_text(reply))
    read = reply.ports_judged + sum(reply.not_judged.values())
    read_exit(len(reply.failed), read)
