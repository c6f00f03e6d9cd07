"""The poll and digest jobs, driven on a fixed clock; a missed digest is caught up once."""

from __future__ import annotations

from datetime import datetime
from zoneinfo import ZoneInfo

from linktriage.chat.replies import SuspectsReply
from linktriage.demo_network import DemoClock
from linktriage.schedule import Jobs, digest_trigger, missed_digest, start_scheduler
from linktriage.service import Triage
from linktriage.settings import ScheduleSettings

OSLO = ZoneInfo("Europe/Oslo")
SCHEDULE = ScheduleSettings(digest_days="mon-fri", digest_time="07:30", timezone="Europe/Oslo")


def at(day: int, hour: int, minute: int = 0) -> float:
    """A moment in the week of Monday 2 March 2026, Oslo time."""
    return datetime(2026, 3, day, hour, minute, tzinfo=OSLO).timestamp()


def test_the_digest_runs_on_weekdays_at_its_local_time() -> None:
    trigger = digest_trigger(SCHEDULE)
    friday_evening = datetime(2026, 3, 6, 18, 0, tzinfo=OSLO)
    due = trigger.get_next_fire_time(None, friday_evening)
    assert due == datetime(2026, 3, 9, 7, 30, tzinfo=OSLO)  # the Monday after, not Saturday


def test_a_digest_missed_while_down_is_known_from_the_last_one() -> None:
    trigger = digest_trigger(SCHEDULE)
    monday = at(2, 7, 30)
    assert missed_digest(trigger, monday, at(4, 9, 0), OSLO)  # Tue and Wed 07:30 passed
    assert not missed_digest(trigger, monday, at(2, 18, 0), OSLO)  # nothing due yet
    assert not missed_digest(trigger, None, at(4, 9, 0), OSLO)  # never ran: wait for the time


def test_being_down_two_days_gives_one_digest_not_two(triage: Triage, clock: DemoClock) -> None:
    posted: list[SuspectsReply] = []
    jobs = Jobs(triage, posted.append, "C0NETOPS")
    trigger = digest_trigger(SCHEDULE)
    clock.now = at(2, 7, 30)
    jobs.digest()
    clock.now = at(4, 9, 0)  # back up on Wednesday morning
    assert jobs.catch_up(trigger, OSLO) is not None
    assert jobs.catch_up(trigger, OSLO) is None  # caught up: nothing more until Thursday
    assert len(posted) == 2
    assert posted[1].since == posted[0].at


def test_the_poll_job_keeps_the_whole_network(triage: Triage) -> None:
    jobs = Jobs(triage, lambda reply: None, None)
    assert jobs.poll().stored == len(triage.network.ports())


def test_the_scheduler_holds_two_coalescing_jobs(triage: Triage) -> None:
    scheduler = start_scheduler(Jobs(triage, lambda reply: None, None), SCHEDULE, paused=True)
    try:
        jobs = {job.id: job for job in scheduler.get_jobs()}
        assert set(jobs) == {"poll", "digest"}
        for job in jobs.values():
            assert job.coalesce is True and job.max_instances == 1
        digest_at = jobs["digest"].next_run_time.astimezone(OSLO)
        assert (digest_at.hour, digest_at.minute) == (7, 30) and digest_at.weekday() < 5
    finally:
        scheduler.shutdown(wait=False)
