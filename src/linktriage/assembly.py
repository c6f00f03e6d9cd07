"""The composition root: the one place that builds settings, store, network and model and
hands them to the bot, the transports and the command line.

Everything else receives its parts; nothing below this module opens a store or chooses a
network. A :class:`Parts` is opened once per command or process and closed with it, so a
store's connections and a network's poll loop never outlive the work they were opened for.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Iterator, Sequence
from contextlib import ExitStack, contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

from linktriage.bot.labelling import GroupMembers
from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.network.demo import DemoClock, DemoNetwork
from linktriage.network.inventory import Inventory, demo_inventory, load_inventory
from linktriage.network.inventory_network import InventoryNetwork
from linktriage.network.watched import Network
from linktriage.settings import Settings, load_settings
from linktriage.store import Store

if TYPE_CHECKING:
    from linktriage.bot.poller import PollRound
    from linktriage.render.replies import SuspectsReply
    from linktriage.transports.digest_targets import DigestTarget


@dataclass
class Parts:
    """What the bot works with, opened from one set of settings."""

    settings: Settings
    store: Store
    network: Network
    model: Model
    clock: Callable[[], float] = time.time
    sleep: Callable[[float], None] = time.sleep
    _triage: Triage | None = field(default=None, init=False)

    def triage(self, members_of: GroupMembers | None = None) -> Triage:
        """The bot's service over these parts (built once)."""
        if self._triage is None:
            self._triage = Triage(
                self.network,
                self.store,
                self.model,
                self.settings,
                clock=self.clock,
                sleep=self.sleep,
                members_of=members_of,
            )
        return self._triage


def inventory_for(path: Path | None, config_path: Path | None) -> Inventory:
    """The inventory a command reads: the file given, else the [network] inventory of the
    settings (read only then), else the demo network as an inventory of demo collectors."""
    if path is not None:
        return load_inventory(path)
    configured = load_settings(config_path).network.inventory
    return load_inventory(configured) if configured is not None else demo_inventory()


def network_for(
    settings: Settings, *, simulated_time: bool = False
) -> tuple[Network, Callable[[], float], Callable[[float], None]]:
    """The network the settings name, with the clock and sleep to run it on.

    With ``simulated_time`` (the console on the demo network) waiting for a second poll
    takes no time: the clock jumps as if the quick window had passed. Real devices (an
    inventory) always run on real time.
    """
    if settings.network.source == "inventory":
        assert settings.network.inventory is not None  # settings insist on it
        return InventoryNetwork(load_inventory(settings.network.inventory)), time.time, time.sleep
    if simulated_time:
        clock = DemoClock(time.time())
        return DemoNetwork(clock=clock), clock, clock.sleep
    return DemoNetwork(), time.time, time.sleep


@contextmanager
def opened(
    settings: Settings,
    *,
    model_path: Path | None = None,
    network: Network | None = None,
    demo_clock: DemoClock | None = None,
    simulated_time: bool = False,
) -> Iterator[Parts]:
    """Parts for these settings (a network given replaces the settings' own, on
    ``demo_clock`` if it runs on one), all closed on leaving, and whatever was opened closed
    if a later part fails to open."""
    with ExitStack() as opened_parts:
        if network is not None:
            opened_parts.callback(network.close)
        model = Model.load(model_path)
        clock: Callable[[], float] = time.time
        sleep: Callable[[float], None] = time.sleep
        if demo_clock is not None:
            clock, sleep = demo_clock, demo_clock.sleep
        if network is None:
            network, clock, sleep = network_for(settings, simulated_time=simulated_time)
            opened_parts.callback(network.close)
        store = opened_parts.enter_context(opened_store(settings))
        yield Parts(settings, store, network, model, clock=clock, sleep=sleep)


@contextmanager
def opened_store(settings: Settings) -> Iterator[Store]:
    """The settings' store alone (labels, exports), closed on leaving."""
    store = Store(settings.store.resolved_url())
    try:
        yield store
    finally:
        store.close()


def serve_slack(
    parts: Parts,
    *,
    host: str | None = None,
    port: int | None = None,
    jobs: bool = True,
    say: Callable[[str], None],
) -> None:
    """The bot in Slack over these parts, with the poll and digest jobs, until stopped.

    ``say`` tells the operator where it listens (the command line: on standard error)."""
    import signal
    import sys

    from slack_bolt.error import BoltError
    from slack_sdk.errors import SlackClientError

    from linktriage.bot.jobs import Jobs, start_scheduler
    from linktriage.errors import LinktriageError
    from linktriage.render import words
    from linktriage.store import holder_name
    from linktriage.transports.slack import (
        build_app,
        group_members,
        run_socket_mode,
        say_reply,
        web_client,
    )
    from linktriage.transports.slack_http import http_server
    from linktriage.transports.slack_sender import SlackSender

    settings = parts.settings
    client = web_client(settings)
    triage = parts.triage(members_of=group_members(client))
    holder = holder_name()
    sender = SlackSender(
        web_client(settings, wait_out_limits=False),
        triage.store,
        give_up_s=settings.slack.give_up_after_min * 60.0,
        holder=holder,
    )
    try:
        app = build_app(triage, settings, client=client, sender=sender)
    except BoltError as exc:  # e.g. Slack refused the token at its first check
        raise LinktriageError(words.cannot_start(str(exc))) from exc
    except (OSError, SlackClientError) as exc:  # URLError is an OSError: no answer at all
        reason = getattr(exc, "reason", None) or exc
        raise LinktriageError(
            words.slack_unreachable(settings.slack_api_url, reason),
            hint=words.SLACK_UNREACHABLE_HINT,
        ) from exc
    channel = settings.slack.channel

    def post_digest(reply: SuspectsReply) -> None:
        if channel is not None:
            say_reply(sender, triage, reply, channel)

    sender.start()
    jobs_run = Jobs(triage, post_digest, channel, settings.schedule, holder=holder)
    scheduler = start_scheduler(jobs_run, settings.schedule) if jobs else None
    signal.signal(signal.SIGTERM, lambda *_: sys.exit(0))  # systemd stops it: shut down cleanly
    try:
        if settings.slack.mode == "http":
            secret = settings.slack_signing_secret
            if secret is None:  # said among the problems; checked again where it counts
                raise LinktriageError(words.SIGNING_SECRET_UNSET)
            listen_host = host or settings.slack.http_host
            listen_port = port or settings.slack.http_port
            try:
                server = http_server(
                    app,
                    secret=secret.get_secret_value(),
                    port=listen_port,
                    host=listen_host,
                    first_sight=triage.store.first_sight,  # a replay refused by every replica
                )
            except OSError as exc:
                why = exc.strerror or exc
                raise LinktriageError(words.cannot_listen(listen_host, listen_port, why)) from exc
            bound_host, bound_port = server.server_address[:2]
            say(words.listening(str(bound_host), bound_port))
            server.serve_forever()
        else:
            say(words.CONNECTING_SOCKET_MODE)
            run_socket_mode(app, settings)
    finally:
        if scheduler is not None:
            scheduler.shutdown(wait=False)
            jobs_run.release()
        sender.stop()


def watch_once(
    parts: Parts, targets: Sequence[DigestTarget]
) -> tuple[PollRound | None, SuspectsReply, list[str]]:
    """One round of the jobs now, out of chat, as a script asks for it: this interval's poll
    round (unless a copy on the store ran it already) and a digest at once, sent to the
    targets. Returns the round (None if it had been run), the digest and what could not be
    delivered. Another copy holding the store's jobs is an error: they run once."""
    from linktriage.bot.jobs import Jobs
    from linktriage.errors import LinktriageError
    from linktriage.render import words
    from linktriage.store import JOBS_LEASE, holder_name
    from linktriage.transports.digest_targets import DigestPost

    triage = parts.triage()
    post = DigestPost(triage, targets)
    # Taking the jobs catches nothing up here: the round and the digest follow at once.
    jobs = Jobs(triage, post, None, parts.settings.schedule, holder=holder_name(),
                taken=lambda: None)  # fmt: skip
    if not jobs.heartbeat():
        holder = triage.store.lease_holder(JOBS_LEASE, now=triage.clock())
        raise LinktriageError(words.jobs_run_elsewhere(holder), hint=words.JOBS_ELSEWHERE_HINT)
    try:
        done = jobs.poll()
        digest = jobs.digest(triage.clock())
    finally:
        jobs.release()
    if digest is None:  # claimed by its very moment: only a copy holding the jobs too
        raise LinktriageError(words.jobs_run_elsewhere(None), hint=words.JOBS_ELSEWHERE_HINT)
    return done, digest, post.undelivered


def watch_forever(parts: Parts, targets: Sequence[DigestTarget]) -> None:
    """The poll rounds, the digest on the schedule and the tidying, out of chat, until
    stopped (SIGTERM or Ctrl-C): run once across every copy on the store, Slack's or not."""
    import signal
    import sys
    import threading

    from linktriage.bot.jobs import Jobs, start_scheduler
    from linktriage.store import holder_name
    from linktriage.transports.digest_targets import DigestPost

    triage = parts.triage()
    schedule = parts.settings.schedule
    jobs = Jobs(triage, DigestPost(triage, targets), None, schedule, holder=holder_name())
    scheduler = start_scheduler(jobs, schedule)
    signal.signal(signal.SIGTERM, lambda *_: sys.exit(0))  # systemd stops it: shut down cleanly
    try:
        threading.Event().wait()
    except KeyboardInterrupt:
        pass
    finally:
        scheduler.shutdown(wait=False)
        jobs.release()
