"""``config check``: what the settings amount to, and what is wrong with them."""

from __future__ import annotations

import sys
from pathlib import Path

import click

from linktriage.cli import words
from linktriage.cli.bot import slack_problems
from linktriage.cli.options import config_option
from linktriage.errors import LinktriageError


@click.group()
def config() -> None:
    """Check the settings."""


@config.command("check")
@config_option
def config_check(config_path: Path | None) -> None:
    """Validate the settings and show what they amount to (secrets masked), creating
    nothing. Each problem is its own line; what only the Slack bot needs is a warning.
    Exit 1 when something is wrong, else 0 (a command-line-only setup needs no Slack)."""
    from linktriage.assembly import inventory_for
    from linktriage.errors import StoreError
    from linktriage.settings import config_path as find_config
    from linktriage.settings import load_settings
    from linktriage.store import inspect_store, masked_url

    settings = load_settings(config_path)
    source = find_config(config_path)
    click.echo(words.settings_from(source))
    for section in ("slack", "store", "chat", "schedule", "labels", "network"):
        values = getattr(settings, section).model_dump()
        shown = {k: masked_url(v) if isinstance(v, str) and "://" in v else v
                 for k, v in values.items()}  # fmt: skip
        click.echo(words.settings_section(section, shown))
    for name in ("slack_bot_token", "slack_app_token", "slack_signing_secret"):
        click.echo(words.secret_presence(name, getattr(settings, name) is not None))
    click.echo(words.slack_api(masked_url(settings.slack_api_url)))
    problems: list[str] = []
    try:
        state = inspect_store(settings.store.resolved_url())
        click.echo(words.store_state(state, settings.store.keep_polls_h))
    except StoreError as exc:
        problems.append(exc.render().replace("\n", " "))
    inventory = settings.network.inventory
    if settings.network.source == "inventory" and inventory is not None:
        if not inventory.is_file():
            problems.append(words.inventory_missing(inventory))
        else:
            try:
                found = inventory_for(inventory, config_path)
                click.echo(words.inventory_state(inventory, len(found.devices)))
            except LinktriageError as exc:
                problems.append(exc.render().replace("\n", " "))
    for warning in slack_problems(settings):
        click.echo(words.settings_warning(warning), err=True)
    for problem in problems:
        click.echo(words.settings_problem(problem), err=True)
    if problems:
        sys.exit(1)
    click.echo(words.SETTINGS_USABLE)
