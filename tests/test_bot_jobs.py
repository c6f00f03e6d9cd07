"""The jobs, driven on a fixed clock: run once across replicas, handed over when the one
running them stops, a missed digest caught up once, old answers forgotten."""

from __future__ import annotations

import math
from collections.abc import Callable
from datetime import datetime
from zoneinfo import ZoneInfo

from linktriage.bot.jobs import Jobs, digest_trigger, missed_due, start_scheduler
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
    # Tue and Wed 07:30 passed: the latest is the one to catch up
    assert missed_due(trigger, monday, at(4, 9, 0), OSLO) == at(4, 7, 30)
    assert missed_due(trigger, monday, at(2, 18, 0), OSLO) is None  # nothing due yet
    assert missed_due(trigger, None, at(4, 9, 0), OSLO) is None  # never ran: wait for the time


def channel_of(triage: Triage, posted: list[SuspectsReply]) -> Callable[[SuspectsReply], None]:
    """A channel that takes every message, as the transport posts them."""

    def post(reply: SuspectsReply) -> None:
        posted.append(reply)
        triage.posted(reply, channel="C0NETOPS", ts=f"{len(posted)}.0")

    return post


def replica(triage: Triage, name: str, posted: list[SuspectsReply]) -> Jobs:
    """One replica's jobs over the shared store."""
    return Jobs(triage, channel_of(triage, posted), "C0NETOPS", SCHEDULE, holder=name)


def test_being_down_two_days_gives_one_digest_not_two(triage: Triage, clock: DemoClock) -> None:
    posted: list[SuspectsReply] = []
    jobs = replica(triage, "replica-a", posted)
    clock.now = at(2, 7, 30)
    assert jobs.heartbeat()
    jobs.scheduled_digest()
    clock.now = at(4, 9, 0)  # started again on Wednesday morning
    restarted = replica(triage, "replica-a, restarted", posted)
    assert restarted.heartbeat()  # the old lease lapsed while down: taken, and caught up
    assert restarted.catch_up(digest_trigger(SCHEDULE), OSLO) is None  # nothing till Thursday
    assert len(posted) == 2
    assert posted[1].since == posted[0].at


def test_only_the_replica_holding_the_jobs_runs_them_and_each_run_once(
    triage: Triage, clock: DemoClock
) -> None:
    posted: list[SuspectsReply] = []
    a, b = replica(triage, "replica-a", posted), replica(triage, "replica-b", posted)
    clock.now = at(2, 7, 30)
    assert a.heartbeat() and not b.heartbeat()
    assert a.scheduled_digest() is not None
    assert b.scheduled_digest() is None  # b does not hold the jobs
    assert a.scheduled_digest() is None  # Monday's is done: the store says so
    assert b.poll() is None
    assert len(posted) == 1


def test_a_replica_that_stops_hands_the_jobs_over_within_one_poll_interval(
    triage: Triage, clock: DemoClock
) -> None:
    posted: list[SuspectsReply] = []
    a, b = replica(triage, "replica-a", posted), replica(triage, "replica-b", posted)
    poll_s = SCHEDULE.poll_minutes * 60.0
    clock.now = math.floor(at(2, 10) / poll_s) * poll_s  # a poll round is due
    assert a.heartbeat()  # took the jobs: polled this interval's round
    rounds = triage.store.poll_history().packs
    assert rounds > 0
    assert not b.heartbeat()
    # a dies now, without a word. b's heartbeat runs every quarter interval.
    taken_at = None
    for quarter in range(1, 5):
        clock.now += poll_s / 4
        if b.heartbeat():
            taken_at = quarter * poll_s / 4
            break
    assert taken_at is not None and taken_at < poll_s
    assert triage.store.poll_history().packs == rounds  # this interval's round: a ran it
    clock.now = math.ceil(clock.now / poll_s) * poll_s  # the next round falls due
    assert b.poll() is not None and a.poll() is None
    assert b.poll() is None  # once
    assert triage.store.poll_history().packs == 2 * rounds


def test_a_clean_stop_hands_the_jobs_over_at_the_next_heartbeat(
    triage: Triage, clock: DemoClock
) -> None:
    posted: list[SuspectsReply] = []
    a, b = replica(triage, "replica-a", posted), replica(triage, "replica-b", posted)
    clock.now = at(2, 10)
    assert a.heartbeat()
    a.release()
    assert b.heartbeat()


def test_the_poll_job_keeps_the_whole_network(triage: Triage) -> None:
    jobs = Jobs(triage, lambda reply: None, None, holder="replica-a")
    assert jobs.heartbeat()  # taking the jobs polls this interval's round at once
    assert triage.store.poll_history().ports == len(triage.network.ports())


def test_tidying_forgets_answers_past_their_keep(triage: Triage, clock: DemoClock) -> None:
    jobs = Jobs(triage, lambda reply: None, None, holder="replica-a")
    triage.handle("lark-east-idf2 port14")
    assert jobs.heartbeat()
    clock.now += triage.settings.store.keep_answers_days * 86400.0 + 3600.0
    assert jobs.heartbeat()
    jobs.tidy()
    assert triage.store.diagnosis(1) is None
    assert triage.store.audit_log() == []


def test_the_scheduler_holds_the_lease_poll_digest_and_tidy_jobs(triage: Triage) -> None:
    jobs = Jobs(triage, lambda reply: None, None, SCHEDULE)
    scheduler = start_scheduler(jobs, SCHEDULE, paused=True)
    try:
        scheduled = {job.id: job for job in scheduler.get_jobs()}
        assert set(scheduled) == {"lease", "poll", "digest", "tidy"}
        for job in scheduled.values():
            assert job.coalesce is True and job.max_instances == 1
        digest_at = scheduled["digest"].next_run_time.astimezone(OSLO)
        assert (digest_at.hour, digest_at.minute) == (7, 30) and digest_at.weekday() < 5
        poll_at = scheduled["poll"].next_run_time.timestamp()
        assert poll_at % (SCHEDULE.poll_minutes * 60.0) == 0  # the same moments everywhere
    finally:
        scheduler.shutdown(wait=False)
