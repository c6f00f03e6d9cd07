"""``watch``: the poll rounds and the digest on the settings' schedule, out of chat."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import TYPE_CHECKING

import click

from linktriage.cli import words
from linktriage.cli.options import config_option, inventory_option, model_option, read_exit
from linktriage.errors import DigestTargetError

if TYPE_CHECKING:
    from linktriage.assembly import Parts
    from linktriage.transports.digest_targets import DigestTarget


def _checked(ctx: click.Context, param: click.Parameter, value: tuple[str, ...]) -> tuple[str, ...]:
    """Every --to names a place digests can go (a URL linktriage can post to, standard
    output or a file's path); nothing is opened yet."""
    from linktriage.transports.digest_targets import check_target

    try:
        return tuple(check_target(text) for text in value)
    except DigestTargetError as exc:
        raise click.BadParameter(exc.render(), ctx=ctx, param=param) from exc


@click.command()
@click.option(
    "--to",
    "to",
    multiple=True,
    metavar="TARGET",
    callback=_checked,
    help="Where each digest goes: - (standard output, the default), a file (appended, one "
    "JSON object per line) or an http:// or https:// URL (POSTed as JSON). Repeat for more.",
)
@click.option(
    "--json",
    "as_json",
    is_flag=True,
    help="Standard output gets each digest as one JSON object per line, not as text.",
)
@click.option(
    "--once", is_flag=True, help="One poll round and a digest now, then exit (for scripts)."
)
@inventory_option
@config_option
@model_option
def watch(
    to: tuple[str, ...],
    as_json: bool,
    once: bool,
    inventory_path: Path | None,
    config_path: Path | None,
    model_path: Path | None,
) -> None:
    """Poll the network and send the digest on the settings' schedule, without chat.

    What `serve` runs beside Slack: a poll round every [schedule] poll_minutes, the digest
    on digest_days at digest_time, the tidying; run once across every copy on the store
    (copies of `serve` included). A digest a webhook does not take is kept in the data
    directory and sent again, oldest first, before the next one.

    With --once: exit 0 when every device was read, 3 when some were not, 4 when none was;
    1 when a digest was not delivered, or another copy runs the store's jobs.
    """
    from linktriage.assembly import inventory_for, opened
    from linktriage.network.inventory_network import InventoryNetwork
    from linktriage.paths import data_dir
    from linktriage.settings import load_settings
    from linktriage.transports.digest_targets import target_for

    settings = load_settings(config_path)
    spool_dir = data_dir() / "undelivered"
    targets = [
        target_for(text, write=click.echo, as_json=as_json, spool_dir=spool_dir)
        for text in to or ("-",)
    ]
    network = InventoryNetwork(inventory_for(inventory_path, config_path))
    with opened(settings, model_path=model_path, network=network) as parts:
        if once:
            _one_round(parts, targets)
        else:
            _until_stopped(parts, targets)


def _one_round(parts: Parts, targets: list[DigestTarget]) -> None:
    """A poll round and a digest now, what they did said on standard error; exits."""
    import logging

    from linktriage.assembly import watch_once

    # The round says what it did itself, below; the jobs' log would say it twice.
    logging.basicConfig(level=logging.ERROR)
    done, digest, undelivered = watch_once(parts, targets)
    if done is None:
        click.echo(words.ROUND_RAN_ALREADY, err=True)
    else:
        click.echo(words.poll_round_done(done.stored, done.failed), err=True)
    for problem in undelivered:
        click.echo(problem, err=True)
    if undelivered:
        sys.exit(1)
    click.echo(words.digest_sent(digest.at, [target.shown for target in targets]), err=True)
    read_exit(len(digest.failed), digest.ports_judged + sum(digest.not_judged.values()))


def _until_stopped(parts: Parts, targets: list[DigestTarget]) -> None:
    """The jobs on their schedule, logged on standard error, until stopped."""
    import logging

    from linktriage.assembly import watch_forever
    from linktriage.transports.digest_targets import Webhook

    logging.basicConfig(
        level=logging.INFO, format="%(asctime)s %(levelname)s %(name)s: %(message)s"
    )
    # The scheduler says every run it starts at INFO: that would bury what went wrong.
    logging.getLogger("apscheduler").setLevel(logging.WARNING)
    schedule = parts.settings.schedule
    waiting = sum(len(t.waiting()) for t in targets if isinstance(t, Webhook))
    shown = [target.shown for target in targets]
    click.echo(
        words.watching(schedule.poll_minutes, schedule.digest_days, schedule.digest_time,
                       schedule.timezone, shown, waiting),
        err=True,
    )  # fmt: skip
    watch_forever(parts, targets)
