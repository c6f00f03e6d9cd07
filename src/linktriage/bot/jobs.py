"""The scheduled jobs: a poll of the whole network every few minutes, and the digest.

The jobs are plain methods of :class:`Jobs` with the service's clock; this module only
wires them to APScheduler 3 (explicit ids, ``coalesce=True``, ``max_instances=1``). A digest
missed while the bot was down is caught up once at start, however many were missed, rather
than replayed in a burst: the last digest's time is in the store, and the digest trigger
says whether a run fell due since.
"""

from __future__ import annotations

import logging
import time
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime, timedelta, tzinfo
from typing import Any

from apscheduler.schedulers.background import BackgroundScheduler
from apscheduler.triggers.cron import CronTrigger
from apscheduler.triggers.interval import IntervalTrigger

from linktriage.bot.poller import PollRound
from linktriage.bot.triage import Triage
from linktriage.render.replies import SuspectsReply
from linktriage.settings import ScheduleSettings

log = logging.getLogger("linktriage.bot.jobs")

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


#: Waits between tries of posting a digest: a refusal (not_in_channel) may be put right
#: by a person within minutes; a digest not posted after the last is caught up at the next
#: start, or superseded by the next digest.
POST_RETRIES_S = (60.0, 300.0, 900.0)


@dataclass
class Jobs:
    """The jobs, over one service; ``post`` carries the digest to its channel."""

    triage: Triage
    post: Post
    channel: str | None
    sleep: Callable[[float], None] = time.sleep
    retries_s: tuple[float, ...] = POST_RETRIES_S

    def poll(self) -> PollRound:
        result = self.triage.poller.poll_round()
        if result.failed:
            log.warning("poll: no answer from %s", ", ".join(sorted(result.failed)))
        return result

    def digest(self) -> SuspectsReply:
        """Compose the digest and post it, trying again after each wait of ``retries_s``.
        The post marks it done (the transport calls Triage.posted): one that is never
        posted is not done."""
        reply = self.triage.digests.digest(channel=self.channel)
        tries = len(self.retries_s) + 1
        for attempt in range(1, tries + 1):
            try:
                self.post(reply)
                return reply
            except Exception as exc:  # a refusal, a network failure: said in one line
                why = _why(exc)
                if attempt == tries:
                    log.error("digest: not posted to %s after %d tries: %s", self.channel,
                              tries, why)  # fmt: skip
                    return reply
                wait = self.retries_s[attempt - 1]
                log.warning("digest: could not post to %s (%s), try %d of %d; again in %g s",
                            self.channel, why, attempt, tries, wait)  # fmt: skip
                self.sleep(wait)
        return reply

    def catch_up(self, trigger: CronTrigger, zone: tzinfo) -> SuspectsReply | None:
        """One digest now if any fell due while the bot was down."""
        last = self.triage.store.last_digest()
        if missed_digest(trigger, last.at if last else None, self.triage.clock(), zone):
            log.info("digest: catching up once for the runs missed while down")
            return self.digest()
        return None


def _why(exc: Exception) -> str:
    """An exception in a few words: Slack's error code where it gave one."""
    response: Any = getattr(exc, "response", None)
    code = response.get("error") if hasattr(response, "get") else None
    return str(code or f"{type(exc).__name__}: {exc}".splitlines()[0])


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
