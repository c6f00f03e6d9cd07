"""The scheduled jobs: a poll of the whole network every few minutes, and the digest.

The jobs are plain methods of :class:`Jobs` with the service's clock; this module only
wires them to APScheduler 3 (explicit ids, ``coalesce=True``, ``max_instances=1``). A digest
missed while the bot was down is caught up once at start, however many were missed, rather
than replayed in a burst: the last digest's time is in the store, and the digest trigger
says whether a run fell due since.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime, timedelta, tzinfo

from apscheduler.schedulers.background import BackgroundScheduler
from apscheduler.triggers.cron import CronTrigger
from apscheduler.triggers.interval import IntervalTrigger

from linktriage.chat.replies import SuspectsReply
from linktriage.service import PollRound, Triage
from linktriage.settings import ScheduleSettings

log = logging.getLogger("linktriage.schedule")

#: Posts a digest wherever the transport posts (a channel, the console).
Post = Callable[[SuspectsReply], None]


def digest_trigger(schedule: ScheduleSettings) -> CronTrigger:
    """The digest's days and time, in its time zone (days by name: APScheduler 3 counts
    day_of_week from Monday, so numbers would mislead)."""
    hour, minute = (int(part) for part in schedule.digest_time.split(":"))
    return CronTrigger(
        day_of_week=schedule.digest_days, hour=hour, minute=minute, timezone=schedule.zone
    )


def poll_trigger(schedule: ScheduleSettings) -> IntervalTrigger:
    return IntervalTrigger(minutes=schedule.poll_minutes, timezone=schedule.zone)


def missed_digest(trigger: CronTrigger, last_at: float | None, now: float, zone: tzinfo) -> bool:
    """Whether a digest fell due after the last one and before now."""
    if last_at is None:
        return False  # never run: the first digest waits for its first scheduled time
    after_last = datetime.fromtimestamp(last_at, zone) + timedelta(seconds=1)
    due = trigger.get_next_fire_time(None, after_last)
    return due is not None and due.timestamp() <= now


@dataclass
class Jobs:
    """The jobs, over one service; ``post`` carries the digest to its channel."""

    triage: Triage
    post: Post
    channel: str | None

    def poll(self) -> PollRound:
        result = self.triage.poll_round()
        if result.failed:
            log.warning("poll: no answer from %s", ", ".join(sorted(result.failed)))
        return result

    def digest(self) -> SuspectsReply:
        reply = self.triage.digest(channel=self.channel)
        self.post(reply)
        return reply

    def catch_up(self, trigger: CronTrigger, zone: tzinfo) -> SuspectsReply | None:
        """One digest now if any fell due while the bot was down."""
        last = self.triage.store.last_digest()
        if missed_digest(trigger, last.at if last else None, self.triage.clock(), zone):
            log.info("digest: catching up once for the runs missed while down")
            return self.digest()
        return None


def start_scheduler(
    jobs: Jobs, schedule: ScheduleSettings, *, paused: bool = False
) -> BackgroundScheduler:
    """Run the poll job (first at once) and the digest job in a background thread."""
    scheduler = BackgroundScheduler(
        timezone=schedule.zone,
        job_defaults={"coalesce": True, "max_instances": 1},
    )
    scheduler.add_job(
        jobs.poll,
        poll_trigger(schedule),
        id="poll",
        name="poll the network",
        next_run_time=datetime.now(schedule.zone),
        misfire_grace_time=int(schedule.poll_minutes * 60),
        replace_existing=True,
    )
    trigger = digest_trigger(schedule)
    scheduler.add_job(
        jobs.digest,
        trigger,
        id="digest",
        name="post the digest",
        misfire_grace_time=3600,
        replace_existing=True,
    )
    scheduler.start(paused=paused)
    if not paused:
        jobs.catch_up(trigger, schedule.zone)
    return scheduler
