"""What the commands share: the common options, exit codes, and errors shown as words."""

from __future__ import annotations

import sys
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any, TypeVar

import click

from linktriage.cli import words
from linktriage.errors import LinktriageError

if TYPE_CHECKING:
    from linktriage.render.replies import Reply

F = TypeVar("F", bound=Callable[..., Any])

_MODEL_HELP = (
    "Model artefact to use. Default: the one `linktriage train` wrote to the data "
    "directory, else the packaged model."
)


def model_option(func: F) -> F:
    return click.option(
        "--model",
        "model_path",
        type=click.Path(dir_okay=False, path_type=Path),
        default=None,
        help=_MODEL_HELP,
    )(func)


def config_option(func: F) -> F:
    return click.option(
        "--config",
        "config_path",
        type=click.Path(dir_okay=False, path_type=Path),
        default=None,
        help="Settings file (TOML). Default: $LINKTRIAGE_CONFIG, else config.toml in the "
        "data directory if present, else built-in defaults.",
    )(func)


def inventory_option(func: F) -> F:
    return click.option(
        "--inventory",
        "inventory_path",
        type=click.Path(dir_okay=False, path_type=Path),
        default=None,
        help="Inventory file (TOML). Default: [network] inventory of the settings, else the "
        "built-in demo network read through the demo collector.",
    )(func)


def plot_option(what: str) -> Callable[[F], F]:
    """``--plot FILE``: the picture the bot would put in the answer's thread, as a PNG."""

    def decorate(func: F) -> F:
        return click.option(
            "--plot",
            type=click.Path(dir_okay=False, path_type=Path),
            default=None,
            help=f"Also write {what} to this PNG file (the picture the bot posts in Slack).",
        )(func)

    return decorate


def write_plot(path: Path, reply: Reply) -> None:
    """Write the reply's picture; a reply with none (a guard answered) is said so."""
    from linktriage.render.charts import pictures_for

    pictures = pictures_for(reply)
    if not pictures:
        click.echo(words.NO_PICTURE, err=True)
        return
    try:
        path.write_bytes(pictures[0].data)
    except OSError as exc:
        raise LinktriageError(words.cannot_write(path, exc.strerror or exc)) from exc
    click.echo(words.wrote_picture(path), err=True)


#: Exit codes of the commands that read devices (suspects, collect, inventory check --reach):
#: every device read, some not read (the rest were), nothing read; diagnose exits with the
#: last where a file holds no usable line. 1 is an error of
#: linktriage's own (a bad file or setting), 2 a wrong command line.
READ_ALL, READ_SOME, READ_NONE = 0, 3, 4


def read_exit(unread: int, read: int) -> None:
    """Exit with the code that says how much of what was asked for was read."""
    if unread:
        sys.exit(READ_SOME if read else READ_NONE)
    sys.exit(READ_ALL)


#: Commands that were renamed, by their old names, with what to type now.
RENAMED = {"sweep": words.SWEEP_RENAMED}


class Group(click.Group):
    """Shows linktriage's own errors as a message and a hint, never a traceback; an old
    command's name is refused with its new one (a wrong command line, exit 2)."""

    def resolve_command(
        self, ctx: click.Context, args: list[str]
    ) -> tuple[str | None, click.Command | None, list[str]]:
        if args and args[0] in RENAMED:
            raise click.UsageError(RENAMED[args[0]], ctx)
        return super().resolve_command(ctx, args)

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except LinktriageError as exc:
            click.echo(words.cli_error(exc.render()), err=True)
            sys.exit(1)
