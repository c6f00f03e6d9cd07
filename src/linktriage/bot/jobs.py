"""The scheduled jobs: a poll of the whole network every few minutes, the digest, and
forgetting what is past its keep; run once across every replica of one store.

The jobs are plain methods of :class:`Jobs` with the service's clock; this module only
wires them to APScheduler 3 (explicit ids, ``coalesce=True``, ``max_instances=1``). Every
replica schedules them, and each run first asks the store whether it is this replica's:
it must hold the jobs' lease (renewed every quarter of a poll interval, lapsing after
half of one, so a replica that dies hands the jobs over within one interval) and claim the
run by the time it fell due (a digest due at 07:30, the poll round of this interval),
which the store grants once. A digest missed while no replica ran is caught up once,
however many were missed, by the replica that takes the jobs next.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import datetime, timedelta, tzinfo

from apscheduler.schedulers.background import BackgroundScheduler
from apscheduler.triggers.cron import CronTrigger
from apscheduler.triggers.interval import IntervalTrigger

from linktriage.bot.poller import PollRound
from linktriage.bot.triage import Triage
from linktriage.errors import StoreError
from linktriage.render.replies import SuspectsReply
from linktriage.settings import ScheduleSettings
from linktriage.store import JOBS_LEASE

log = logging.getLogger("linktriage.bot.jobs")

#: Puts a digest wherever the transport posts (a channel's outbox, the console).
Post = Callable[[SuspectsReply], None]

#: Forgetting what is past its keep runs this often.
TIDY_S = 3600.0


def digest_trigger(schedule: ScheduleSettings) -> CronTrigger:
    """The digest's days and time, in its time zone (days by name: APScheduler 3 counts
    day_of_week from Monday, so numbers would mislead)."""
    hour, minute = (int(part) for part in schedule.digest_time.split(":"))
    return CronTrigger(
        day_of_week=schedule.digest_days, hour=hour, minute=minute, timezone=schedule.zone
    )


def poll_trigger(schedule: ScheduleSettings, now: float) -> IntervalTrigger:
    """Every poll interval, at the same moments on every replica (whole intervals since
    the epoch), so a round is known by its moment wherever it runs."""
    interval = schedule.poll_minutes * 60.0
    start = datetime.fromtimestamp(math.ceil(now / interval) * interval, schedule.zone)
    return IntervalTrigger(seconds=interval, start_date=start, timezone=schedule.zone)


def missed_due(
    trigger: CronTrigger, last_at: float | None, now: float, zone: tzinfo
) -> float | None:
    """The latest time a digest fell due after the last one and before now, if any."""
    if last_at is None:
        return None  # never run: the first digest waits for its first scheduled time
    due = trigger.get_next_fire_time(
        None, datetime.fromtimestamp(last_at, zone) + timedelta(seconds=1)
    )
    latest = None
    while due is not None and due.timestamp() <= now:
        latest = due.timestamp()
        due = trigger.get_next_fire_time(None, due + timedelta(seconds=1))
    return latest


@dataclass
class Jobs:
    """The jobs over one service, as one replica (``holder``) of its store runs them;
    ``post`` carries the digest to its channel."""

    triage: Triage
    post: Post
    channel: str | None
    schedule: ScheduleSettings = field(default_factory=ScheduleSettings)
    holder: str = "this replica"
    holding: bool = False
    #: Runs :meth:`take_over` when this replica takes the jobs (the scheduler: as a job of
    #: its own, so the heartbeat stays quick); None: at once, in the heartbeat.
    taken: Callable[[], None] | None = None

    @property
    def poll_s(self) -> float:
        return self.schedule.poll_minutes * 60.0

    def heartbeat(self) -> bool:
        """Take or renew the jobs' lease; a replica that just took it catches up what
        fell due while no one held it (the digest, this interval's poll round)."""
        store, now = self.triage.store, self.triage.clock()
        try:
            held = store.take_lease(JOBS_LEASE, self.holder, now=now, hold_s=self.poll_s / 2)
        except StoreError as exc:
            log.warning("jobs: could not reach the store to hold the jobs: %s", exc.message)
            held = False
        was = self.holding
        self.holding = held
        if held and not was:
            log.info("jobs: %s now runs the jobs", self.holder)
            (self.taken or self.take_over)()
        elif was and not held:
            log.info("jobs: %s no longer runs the jobs", self.holder)
        return held

    def take_over(self) -> None:
        """What a replica that just took the jobs does first: the digest missed while no
        one held them, and this interval's poll round if no one ran it."""
        self.catch_up(digest_trigger(self.schedule), self.schedule.zone)
        self.poll()

    def release(self) -> None:
        """Give the jobs up at once (a clean stop): another replica takes them at its next
        heartbeat instead of waiting for the lease to lapse."""
        if self.holding:
            self.triage.store.release_lease(JOBS_LEASE, self.holder)
            self.holding = False

    def _claim(self, job: str, due: float) -> bool:
        """Whether this run is this replica's: it holds the jobs and no one ran it yet."""
        if not self.holding:
            return False
        return self.triage.store.claim_run(job, due, self.holder, now=self.triage.clock())

    def poll(self) -> PollRound | None:
        """This interval's poll round, if it is this replica's to run."""
        now = self.triage.clock()
        if not self._claim("poll", math.floor(now / self.poll_s) * self.poll_s):
            return None
        result = self.triage.poller.poll_round()
        if result.failed:
            log.warning("poll: no answer from %s", ", ".join(sorted(result.failed)))
        return result

    def scheduled_digest(self) -> SuspectsReply | None:
        """The digest due now (the scheduler's run)."""
        trigger = digest_trigger(self.schedule)
        now = self.triage.clock()
        due = missed_due(trigger, now - 7 * 86400.0, now, self.schedule.zone)
        return self.digest(due if due is not None else now)

    def digest(self, due: float) -> SuspectsReply | None:
        """Compose the digest due at ``due`` and post it, once across replicas."""
        if not self._claim("digest", due):
            return None
        reply = self.triage.digests.digest(channel=self.channel)
        self.post(reply)
        return reply

    def catch_up(self, trigger: CronTrigger, zone: tzinfo) -> SuspectsReply | None:
        """One digest now if any fell due while no replica ran the jobs."""
        last = self.triage.store.last_digest()
        due = missed_due(trigger, last.at if last else None, self.triage.clock(), zone)
        if due is None:
            return None
        log.info("digest: catching up once for the runs missed while down")
        return self.digest(due)

    def tidy(self) -> None:
        """Forget answers, lists, the audit log and sent messages past their keep, and
        give back the write-ahead log's space (polls are forgotten by each poll round)."""
        now = self.triage.clock()
        if not self._claim("tidy", math.floor(now / TIDY_S) * TIDY_S):
            return
        keep_s = self.triage.settings.store.keep_answers_days * 86400.0
        gone = self.triage.store.forget_answers(now - keep_s)
        self.triage.store.compact()
        log.info("tidy: forgot %d answers, %d lists, %d audit entries, %d messages",
                 gone.answers, gone.lists, gone.audit, gone.messages)  # fmt: skip


def start_scheduler(
    jobs: Jobs, schedule: ScheduleSettings, *, paused: bool = False
) -> BackgroundScheduler:
    """Schedule the jobs in a background thread: the lease's heartbeat (first at once:
    the replica that takes the jobs polls then), the poll rounds, the digest and tidying."""
    scheduler = BackgroundScheduler(
        timezone=schedule.zone,
        job_defaults={"coalesce": True, "max_instances": 1},
    )
    now = datetime.now(schedule.zone)
    poll_s = schedule.poll_minutes * 60.0
    jobs.taken = lambda: scheduler.add_job(jobs.take_over, id="take over", replace_existing=True)
    scheduler.add_job(
        jobs.heartbeat,
        IntervalTrigger(seconds=poll_s / 4, timezone=schedule.zone),
        id="lease",
        name="hold the jobs",
        next_run_time=now,
        replace_existing=True,
    )
    scheduler.add_job(
        jobs.poll,
        poll_trigger(schedule, now.timestamp()),
        id="poll",
        name="poll the network",
        misfire_grace_time=max(1, int(poll_s / 2)),
        replace_existing=True,
    )
    scheduler.add_job(
        jobs.scheduled_digest,
        digest_trigger(schedule),
        id="digest",
        name="post the digest",
        misfire_grace_time=3600,
        replace_existing=True,
    )
    scheduler.add_job(
        jobs.tidy,
        IntervalTrigger(seconds=TIDY_S, timezone=schedule.zone),
        id="tidy",
        name="forget what is past its keep",
        replace_existing=True,
    )
    scheduler.start(paused=paused)
    return scheduler
