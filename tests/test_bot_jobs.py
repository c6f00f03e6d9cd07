"""The poll and digest jobs, driven on a fixed clock; a missed digest is caught up once."""

from __future__ import annotations

import logging
from collections.abc import Callable
from datetime import datetime
from zoneinfo import ZoneInfo

import pytest
from slack_sdk.errors import SlackApiError

from linktriage.bot.jobs import Jobs, digest_trigger, missed_digest, start_scheduler
from linktriage.bot.triage import Triage
from linktriage.network.demo import DemoClock
from linktriage.render.replies import SuspectsReply
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


def channel_of(triage: Triage, posted: list[SuspectsReply]) -> Callable[[SuspectsReply], None]:
    """A channel that takes every message, as the transport posts them."""

    def post(reply: SuspectsReply) -> None:
        posted.append(reply)
        triage.posted(reply, channel="C0NETOPS", ts=f"{len(posted)}.0")

    return post


def test_being_down_two_days_gives_one_digest_not_two(triage: Triage, clock: DemoClock) -> None:
    posted: list[SuspectsReply] = []
    jobs = Jobs(triage, channel_of(triage, posted), "C0NETOPS")
    trigger = digest_trigger(SCHEDULE)
    clock.now = at(2, 7, 30)
    jobs.digest()
    clock.now = at(4, 9, 0)  # back up on Wednesday morning
    assert jobs.catch_up(trigger, OSLO) is not None
    assert jobs.catch_up(trigger, OSLO) is None  # caught up: nothing more until Thursday
    assert len(posted) == 2
    assert posted[1].since == posted[0].at


def test_a_digest_the_channel_refuses_is_tried_again_and_is_not_done_until_posted(
    triage: Triage, clock: DemoClock, caplog: pytest.LogCaptureFixture
) -> None:
    refusals = ["not_in_channel", "not_in_channel"]
    posted: list[SuspectsReply] = []
    waits: list[float] = []

    def refusing(reply: SuspectsReply) -> None:
        if refusals:
            raise SlackApiError("refused", {"ok": False, "error": refusals.pop()})
        channel_of(triage, posted)(reply)

    clock.now = at(2, 7, 30)
    jobs = Jobs(triage, refusing, "C0NETOPS", sleep=waits.append, retries_s=(60.0, 300.0))
    with caplog.at_level(logging.WARNING, logger="linktriage.bot.jobs"):
        jobs.digest()
    assert waits == [60.0, 300.0] and len(posted) == 1
    assert triage.store.last_digest() is not None
    lines = [r.getMessage() for r in caplog.records]
    assert lines[0] == (
        "digest: could not post to C0NETOPS (not_in_channel), try 1 of 3; again in 60 s"
    )


def test_a_digest_never_posted_is_caught_up_at_the_next_start(
    triage: Triage, clock: DemoClock
) -> None:
    clock.now = at(2, 7, 30)
    posted: list[SuspectsReply] = []
    monday = triage.digests.digest(channel="C0NETOPS")
    channel_of(triage, posted)(monday)  # Monday's, posted

    def refusing(reply: SuspectsReply) -> None:
        raise SlackApiError("refused", {"ok": False, "error": "channel_not_found"})

    clock.now = at(3, 7, 30)
    Jobs(triage, refusing, "C0NETOPS", sleep=lambda s: None).digest()  # Tuesday's, refused
    last = triage.store.last_digest()
    assert last is not None and last.at == monday.at  # Tuesday's is not done
    clock.now = at(3, 9, 0)
    jobs = Jobs(triage, channel_of(triage, posted), "C0NETOPS")
    assert jobs.catch_up(digest_trigger(SCHEDULE), OSLO) is not None


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
