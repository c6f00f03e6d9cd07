"""``demo``: the whole job on the built-in demo network, offline."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from linktriage.cli import words
from linktriage.cli.options import config_option, model_option

if TYPE_CHECKING:
    from linktriage.settings import Settings

#: The port whose history the demo shows: its cable fault began during the morning.
_HISTORY_OF = ("lark-east-idf2", "port14")
#: The planted ports the demo explains in full, by their verdicts' ids.
_DEMO_STORIES = {"cable_fault", "duplex_mismatch", "optic_degraded", "insufficient_traffic"}


@click.command()
@config_option
@model_option
def demo(config_path: Path | None, model_path: Path | None) -> None:
    """Show the whole job on the built-in demo network, offline.

    It leaves the poll job's last hour of the demo network in the settings' store (unless
    they read an inventory), so `history`, `suspects` and `watch --once` answer from it.
    """
    from collections import Counter

    from linktriage.bot.digests import ranked_suspects, unjudged
    from linktriage.engine.diagnosis.loaded_model import Model
    from linktriage.engine.diagnosis.pipeline import diagnose
    from linktriage.engine.verdicts import GUARD_KINDS
    from linktriage.network.demo import ORGANISATION, PLANTED, demo_polls
    from linktriage.render.text import explanation, table_rows
    from linktriage.settings import load_settings

    settings = load_settings(config_path)  # a settings file that cannot be used: said first
    loaded = Model.load(model_path)
    batch = diagnose(demo_polls(), loaded)
    suspects, quiet = ranked_suspects(batch), unjudged(batch)
    not_judged = Counter(GUARD_KINDS[batch.verdict[i]].not_judged for i in quiet)
    in_links = {j for i in suspects for j in (i, batch.far[i]) if j >= 0}
    healthy = len(batch) - len(in_links) - len(quiet)
    devices = len(set(batch.device))
    click.echo(words.demo_intro(ORGANISATION, len(batch), devices, loaded.version))
    click.echo(words.demo_needs_a_look(healthy, len(suspects), len(in_links), not_judged))
    click.echo("\n".join(table_rows(batch.records_many(suspects + quiet))))
    for planted in (p for p in PLANTED if p.planted in _DEMO_STORIES):
        row = batch.index_of(planted.device, planted.port)
        assert row is not None
        click.echo(words.demo_asks(planted.device, planted.port))
        click.echo(words.demo_serves(planted.serves))
        click.echo(explanation(batch.record(row)))
    _demo_digest_and_label(model_path)
    _demo_history(model_path)
    _demo_keeps_polls(settings, model_path)
    click.echo(words.DEMO_NEXT)


def _demo_digest_and_label(model_path: Path | None) -> None:
    """The scheduled digest, and an engineer's reply in its thread stored as a label."""
    import tempfile

    from linktriage.assembly import opened
    from linktriage.engine.model.findings import said_as
    from linktriage.engine.simulate.ports import DEFAULT_START
    from linktriage.network.demo import DemoClock, DemoNetwork
    from linktriage.render.text import render
    from linktriage.settings import Settings, StoreSettings

    clock = DemoClock(DEFAULT_START - 300.0)
    with tempfile.TemporaryDirectory() as folder:
        settings = Settings(store=StoreSettings(url=f"sqlite:///{folder}/demo.sqlite"))
        network = DemoNetwork(clock=clock)
        with opened(settings, model_path=model_path, network=network, demo_clock=clock) as parts:
            triage = parts.triage()
            triage.poller.poll_round()  # the poll job ran five minutes before the digest
            clock.sleep(300.0)
            digest = triage.digests.digest(channel="demo")
            triage.posted(digest, channel="demo", ts="digest-1")
            click.echo(words.DEMO_DIGEST)
            click.echo(render(digest))
            reply = words.demo_reply(digest.items[0].record["port"])
            click.echo(words.demo_engineer_replies(reply))
            label = triage.labels.reply(
                reply,
                user="demo-engineer",
                channel="demo",
                thread_ts="digest-1",
                event_key="demo-1",
            )
            if label is not None:
                click.echo(f"  {render(label)}")
            (stored,) = parts.store.labels()
            click.echo(words.demo_stored(stored, said_as(stored.finding, stored.verdict)))


#: How far back the demo's history reaches: across the cable fault's start at 05:40 UTC.
_HISTORY_S = 3 * 3600.0
_POLL_S = 300.0


def _demo_history(model_path: Path | None) -> None:
    """A morning of the poll job, the cable fault's port over it, and its chart written
    where the engineer can open it (the data directory)."""
    import tempfile

    from linktriage.assembly import opened
    from linktriage.engine.simulate.ports import DEFAULT_START
    from linktriage.network.demo import DemoClock, DemoNetwork
    from linktriage.paths import data_dir
    from linktriage.render.charts import pictures_for
    from linktriage.render.text import history_text
    from linktriage.settings import Settings, StoreSettings

    device, port = _HISTORY_OF
    clock = DemoClock(DEFAULT_START - _HISTORY_S)
    with tempfile.TemporaryDirectory() as folder:
        settings = Settings(store=StoreSettings(url=f"sqlite:///{folder}/demo.sqlite"))
        network = DemoNetwork(clock=clock)
        with opened(settings, model_path=model_path, network=network, demo_clock=clock) as parts:
            triage = parts.triage()
            for poll in range(int(_HISTORY_S / _POLL_S) + 1):  # up to the demo's moment
                if poll:
                    clock.sleep(_POLL_S)
                triage.poller.poll_round()
            reply = triage.histories.of(device, port, _HISTORY_S)
    click.echo(words.demo_asks_history(device, port, _HISTORY_S))
    lines = history_text(reply).splitlines()
    click.echo("\n".join(lines[: lines.index("") + len(reply.runs) + 2]))  # up to the changes
    (chart,) = pictures_for(reply)
    path = data_dir() / chart.filename
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(chart.data)
    click.echo(words.demo_chart(path))


#: How far back the polls the demo leaves in the settings' store reach: windows enough for
#: `linktriage history`, rounds few enough to take a second or two.
_KEPT_S = 3600.0


def _demo_keeps_polls(settings: Settings, model_path: Path | None) -> None:
    """The poll job's last hour of the demo network, up to now, kept in the settings'
    store, so the commands that answer from stored polls do after the demo. The jobs run
    the rounds (the store's lease, each round claimed once), so a watch already polling
    this store is not doubled; and only where the settings read the demo network: never
    are simulated polls put in the store of a real one."""
    import time

    from linktriage.assembly import opened
    from linktriage.bot.jobs import Jobs
    from linktriage.errors import StoreError
    from linktriage.network.demo import DemoClock, DemoNetwork
    from linktriage.store import JOBS_LEASE, holder_name, masked_url

    where = masked_url(settings.store.resolved_url())
    if settings.network.inventory is not None:
        click.echo(words.demo_store_left_alone(where))
        return
    now = time.time()
    clock = DemoClock(now - _KEPT_S)
    network = DemoNetwork(clock=clock)  # the demo collector's counters, on simulated time
    rounds, elsewhere = 0, None
    try:
        with opened(settings, model_path=model_path, network=network, demo_clock=clock) as parts:
            triage = parts.triage()
            jobs = Jobs(triage, lambda reply: None, None, settings.schedule,
                        holder=holder_name(), taken=lambda: None)  # fmt: skip
            try:
                while clock.now <= now:
                    if not jobs.heartbeat():
                        elsewhere = triage.store.lease_holder(JOBS_LEASE, now=clock.now) or "?"
                        break
                    rounds += jobs.poll() is not None  # an interval a watch polled: not redone
                    clock.sleep(jobs.poll_s)
            finally:
                jobs.release()
    except StoreError as exc:  # the demo itself ran offline: its end says what the store said
        click.echo(words.demo_store_unusable(where, exc.render()))
        return
    click.echo(words.demo_kept(where, rounds, elsewhere))
