"""``labels`` and ``labels export``: what engineers found, and which labels count."""

from __future__ import annotations

import json
import sys
from datetime import UTC, datetime
from pathlib import Path

import click

from linktriage.cli import words
from linktriage.cli.options import config_option


@click.group(invoke_without_command=True)
@click.option("--json", "as_json", is_flag=True, help="One JSON object per label per line.")
@config_option
@click.pass_context
def labels(ctx: click.Context, as_json: bool, config_path: Path | None) -> None:
    """List the labels engineers gave (what they found on a port, and the verdict it
    teaches), each marked as counting, replaced by its author's later one, disputed (held
    out of training), or teaching no verdict."""
    if ctx.invoked_subcommand is not None:
        return
    from dataclasses import asdict

    from linktriage.assembly import opened_store
    from linktriage.engine.model.findings import said_as
    from linktriage.engine.model.labels import settle
    from linktriage.settings import load_settings

    with opened_store(load_settings(config_path)) as store:
        found = store.labels()
    settled = settle(found)
    replaced = {label.id for label in settled.replaced}
    disputed = {label.id for group in settled.disputed.values() for label in group}
    untaught = {label.id for label in settled.untaught}

    def standing(label_id: int) -> str:
        if label_id in replaced:
            return "replaced"
        if label_id in untaught:
            return "teaches nothing"
        return "disputed" if label_id in disputed else "counts"

    if as_json:
        for label in found:
            at = {"at": _rfc3339(label.at), "standing": standing(label.id)}
            click.echo(json.dumps({**asdict(label), **at}))
        return
    summary = words.labels_summary(
        len(found),
        len(settled.kept),
        len(replaced),
        len(disputed),
        len(settled.disputed),
        len(untaught),
    )
    click.echo(summary)
    for label in found:
        click.echo(
            words.label_line(label, standing(label.id), said_as(label.finding, label.verdict))
        )


def _rfc3339(at: float) -> str:
    """A moment as RFC 3339 text in UTC ("2026-03-02T08:00:30Z"), which every JSON reader
    parses, where seconds since the epoch need the reader to know what they count."""
    return datetime.fromtimestamp(at, UTC).isoformat(timespec="seconds").replace("+00:00", "Z")


@labels.command("export")
@click.argument("out", type=click.Path(dir_okay=False, allow_dash=True, path_type=Path))
@config_option
def labels_export(out: Path, config_path: Path | None) -> None:
    """Write the labels that count as training rows (CSV: the features, then the label);
    replaced and disputed ones are left out."""
    from linktriage.assembly import opened_store
    from linktriage.engine.model.labels import label_frame, settle
    from linktriage.settings import load_settings

    with opened_store(load_settings(config_path)) as store:
        frame = label_frame(settle(store.labels()).kept)
    if str(out) == "-":
        frame.to_csv(sys.stdout, index=False)
    else:
        frame.to_csv(out, index=False)
        click.echo(words.wrote_rows(len(frame), out), err=True)
