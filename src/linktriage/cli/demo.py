"""``demo``: the whole job on the built-in demo network, offline."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from linktriage.cli.options import model_option
from linktriage.verdicts import Verdict

_DEMO_STORIES = {
    Verdict.CABLE_FAULT,
    Verdict.DUPLEX_MISMATCH,
    Verdict.OPTIC_DEGRADED,
    Verdict.INSUFFICIENT_TRAFFIC,
}


@click.command()
@model_option
def demo(model_path: Path | None) -> None:
    """Show the whole job on the built-in demo network, offline."""
    from linktriage.diagnosis import Model, diagnose
    from linktriage.network.demo import ORGANISATION, PLANTED, demo_polls, demo_ports
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
    _demo_digest_and_label(loaded)
    click.echo(
        f"\n{'=' * 88}\nAsk about any other port: linktriage ask DEVICE PORT "
        "(e.g. linktriage ask lark-core1 up3), or talk to the bot: linktriage chat."
    )


def _demo_digest_and_label(model: Any) -> None:
    """The scheduled digest, and an engineer's reply in its thread stored as a label."""
    import tempfile

    from linktriage.bot.triage import Triage
    from linktriage.network.demo import DemoClock, DemoNetwork
    from linktriage.render.text import render
    from linktriage.settings import Settings
    from linktriage.simulate import DEFAULT_START
    from linktriage.store import Store

    with tempfile.TemporaryDirectory() as folder:
        clock = DemoClock(DEFAULT_START - 300.0)
        store = Store(f"sqlite:///{folder}/demo.sqlite")
        triage = Triage(
            DemoNetwork(clock=clock), store, model, Settings(), clock=clock, sleep=clock.sleep
        )
        triage.gathering.poll_round()  # the poll job ran five minutes before the digest
        clock.sleep(300.0)
        digest = triage.digests.digest(channel="demo")
        triage.posted(digest, channel="demo", ts="digest-1")
        click.echo(
            f"\n{'=' * 88}\nThe digest, as posted to the team channel on weekday mornings:\n"
        )
        click.echo(render(digest))
        first = digest.items[0].record
        reply = f"1: swapped fibres at the patch panel, {first['port']} was one-way"
        click.echo(f"\nAn engineer replies in the digest's thread:\n  > {reply}")
        label = triage.labels.reply(
            reply, user="demo-engineer", channel="demo", thread_ts="digest-1", event_key="demo-1"
        )
        if label is not None:
            click.echo(f"  {render(label)}")
        (stored,) = store.labels()
        click.echo(
            f"Stored in SQLite: label {stored.id}, {stored.device} {stored.port} = "
            f"{stored.verdict}, with the feature row the verdict was based on and model "
            f"{stored.model_version}; `linktriage train --with-labels` learns from it."
        )
        store.close()
