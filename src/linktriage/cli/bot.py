"""``chat`` and ``serve``: the bot at a local prompt, and in Slack with its jobs."""

from __future__ import annotations

import sys
from collections.abc import Iterator
from pathlib import Path
from typing import TYPE_CHECKING

import click

from linktriage.cli import words
from linktriage.cli.options import config_option, model_option
from linktriage.errors import LinktriageError

if TYPE_CHECKING:
    from linktriage.settings import Settings


@click.command()
@config_option
@model_option
def chat(config_path: Path | None, model_path: Path | None) -> None:
    """Talk to the bot at a local prompt: the same commands as in the team channel."""
    from linktriage.assembly import opened
    from linktriage.settings import LabelSettings, load_settings
    from linktriage.transports.console import PROMPT, Console

    # The console is one local, trusted person: channel and group rules are for Slack.
    settings = load_settings(config_path).model_copy(update={"labels": LabelSettings()})
    interactive = sys.stdin.isatty()

    def lines() -> Iterator[str]:
        while True:
            try:
                yield input(PROMPT) if interactive else next(sys.stdin)
            except (EOFError, StopIteration):
                if interactive:
                    click.echo()  # Ctrl-D leaves the prompt's line open: end it for the shell
                return

    with opened(settings, model_path=model_path, simulated_time=True) as parts:
        Console(parts.triage()).run(lines(), click.echo)


@click.command()
@click.option("--http", "http_mode", is_flag=True, help="Serve HTTP (default: [slack] mode).")
@click.option("--port", type=click.IntRange(1, 65535), default=None, help="HTTP port.")
@click.option(
    "--host",
    default=None,
    help="Address to listen on in HTTP mode (default: [slack] http_host, loopback). "
    "Put a TLS-terminating proxy in front; 0.0.0.0 listens on every interface.",
)
@click.option(
    "--no-jobs",
    is_flag=True,
    help="Answer only: no poll, digest or tidying jobs (other copies on the store run them).",
)
@config_option
@model_option
def serve(
    http_mode: bool,
    port: int | None,
    host: str | None,
    no_jobs: bool,
    config_path: Path | None,
    model_path: Path | None,
) -> None:
    """Run the chat bot in Slack, with the poll, digest and tidying jobs.

    Two or more copies may share one store: the jobs run once across them, and every
    message goes out once, in order, through the store's outbox.

    Tokens come from the environment: SLACK_BOT_TOKEN always, SLACK_APP_TOKEN for Socket
    Mode (the default), SLACK_SIGNING_SECRET for HTTP mode (endpoint /slack/events).
    """
    import logging

    from linktriage.assembly import opened, serve_slack
    from linktriage.settings import load_settings

    logging.basicConfig(
        level=logging.INFO, format="%(asctime)s %(levelname)s %(name)s: %(message)s"
    )
    settings = load_settings(config_path)
    if http_mode:
        settings = settings.model_copy(
            update={"slack": settings.slack.model_copy(update={"mode": "http"})}
        )
    missing = slack_problems(settings, channel=False)
    if missing:
        raise LinktriageError(words.cannot_start_missing(missing))
    with opened(settings, model_path=model_path) as parts:
        serve_slack(
            parts, host=host, port=port, jobs=not no_jobs, say=lambda s: click.echo(s, err=True)
        )


def slack_problems(settings: Settings, *, channel: bool = True) -> list[str]:
    """What `serve` would lack with these settings: tokens it cannot start without, and
    (with ``channel``) a channel for the digests, which it can."""
    problems = []
    if settings.slack_bot_token is None:
        problems.append(words.BOT_TOKEN_UNSET)
    if settings.slack.mode == "socket" and settings.slack_app_token is None:
        problems.append(words.APP_TOKEN_UNSET)
    if settings.slack.mode == "http" and settings.slack_signing_secret is None:
        problems.append(words.SIGNING_SECRET_MISSING)
    if channel and settings.slack.channel is None:
        problems.append(words.CHANNEL_UNSET)
    return problems
