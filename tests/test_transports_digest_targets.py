"""Where the watch sends digests without chat, driven by the jobs on a simulated clock: a
webhook on loopback gets each digest as a JSON POST and one it refuses goes again before
the next, a file gets one JSON object per digest appended, and two watches on one store
send each digest once."""

from __future__ import annotations

import json
import logging
import socket
from pathlib import Path

import pytest

from linktriage.bot.jobs import Jobs
from linktriage.bot.triage import Triage
from linktriage.errors import DigestTargetError
from linktriage.network.demo import DemoClock
from linktriage.render.jsonl import dumps
from linktriage.render.words import utc_minute
from linktriage.settings import ScheduleSettings
from linktriage.transports.digest_targets import (
    DigestFile,
    DigestPost,
    DigestTarget,
    StandardOutput,
    Webhook,
    check_target,
    shown_url,
    target_for,
)

from webhook_receiver import SECRET_PATH, WebhookReceiver

#: The demo's moment, Monday 2 March 2026 08:00 UTC, is the digest's time.
SCHEDULE = ScheduleSettings(digest_days="mon-fri", digest_time="08:00", timezone="UTC")
DAY_S = 86_400.0


def watching(triage: Triage, targets: list[DigestTarget], holder: str) -> tuple[Jobs, DigestPost]:
    """One watch's jobs over the shared store, sending digests to ``targets``."""
    post = DigestPost(triage, targets)
    return Jobs(triage, post, None, SCHEDULE, holder=holder), post


def test_a_webhook_gets_each_digest_as_json_in_a_post(
    triage: Triage, webhook: WebhookReceiver, tmp_path: Path
) -> None:
    jobs, post = watching(triage, [Webhook(webhook.url, tmp_path / "spool")], "watch-a")
    assert jobs.heartbeat()
    digest = jobs.scheduled_digest()
    assert digest is not None and post.undelivered == []
    (sent,) = webhook.posts
    assert sent.path == SECRET_PATH
    assert sent.content_type == "application/json"  # RFC 8259 section 11: JSON's media type
    found = sent.json()
    assert found == json.loads(dumps(digest.as_record()))  # what `suspects --json` writes
    assert (found["kind"], found["title"], found["since"]) == (
        "digest",
        "Digest of suspect links",
        None,  # the first digest of this store
    )
    first = found["suspects"][0]["diagnosis"]
    assert (first["device"], first["port"], first["verdict"]) == (
        "lark-east-idf2",
        "port14",
        "cable_fault",
    )


def test_a_digest_the_webhook_refuses_goes_again_before_the_next(
    triage: Triage,
    clock: DemoClock,
    webhook: WebhookReceiver,
    tmp_path: Path,
    caplog: pytest.LogCaptureFixture,
) -> None:
    caplog.set_level(logging.INFO, logger="linktriage.watch")
    webhook.answers = [503]  # RFC 9110 15.6.4: unavailable now, maybe not later
    target = Webhook(webhook.url, tmp_path / "spool")
    jobs, post = watching(triage, [target], "watch-a")
    assert jobs.heartbeat()
    first = jobs.scheduled_digest()
    assert first is not None
    (said,) = post.undelivered
    assert said.startswith(f"The digest was not delivered to {shown_url(webhook.url)}: ")
    assert "it answered HTTP 503 Service Unavailable; 1 digest kept in " in said
    assert "s3cr3t" not in said  # the webhook's path is its secret
    assert len(target.waiting()) == 1
    clock.now += DAY_S  # Tuesday's digest
    assert jobs.heartbeat() and jobs.poll() is not None
    second = jobs.scheduled_digest()
    assert second is not None and post.undelivered == [said]  # nothing more went wrong
    # Monday's refused, Monday's again and taken, then Tuesday's: in order, none lost.
    assert [sent.status for sent in webhook.posts] == [503, 204, 204]
    taken = webhook.taken()
    assert [digest["at"] for digest in taken] == [first.at, second.at]
    assert taken[1]["since"] == first.at  # new and cleared since the one the webhook got
    assert target.waiting() == [] and not target.spool.exists()
    # The watch's log says each: the refusal as a warning, then the delivery.
    assert [(r.levelname, r.getMessage()) for r in caplog.records] == [
        ("WARNING", said),
        ("INFO", f"digest of {utc_minute(second.at)} delivered to {shown_url(webhook.url)}"),
    ]


def test_a_webhook_that_does_not_answer_keeps_the_digest_and_says_so(
    triage: Triage, tmp_path: Path
) -> None:
    with socket.socket() as probe:  # a port nothing listens on
        probe.bind(("127.0.0.1", 0))
        url = f"http://127.0.0.1:{probe.getsockname()[1]}{SECRET_PATH}"
    target = Webhook(url, tmp_path / "spool")
    said = target.send(triage.digests.digest())
    assert said is not None and ": no answer (" in said and "1 digest kept in" in said
    assert "s3cr3t" not in said
    assert [json.loads(body)["kind"] for body in target.waiting()] == ["digest"]


def test_two_watches_on_one_store_send_each_digest_once(
    triage: Triage, clock: DemoClock, webhook: WebhookReceiver, tmp_path: Path
) -> None:
    a, _ = watching(triage, [Webhook(webhook.url, tmp_path / "a")], "watch-a")
    b, _ = watching(triage, [Webhook(webhook.url, tmp_path / "b")], "watch-b")
    assert a.heartbeat() and not b.heartbeat()
    assert a.scheduled_digest() is not None
    assert b.scheduled_digest() is None  # b does not hold the jobs
    assert a.scheduled_digest() is None  # Monday's is done: the store says so
    a.release()  # a stops cleanly: b takes the jobs at its next heartbeat
    assert b.heartbeat()  # and catches up nothing: Monday's was sent
    assert len(webhook.posts) == 1
    clock.now += DAY_S
    assert b.heartbeat() and b.scheduled_digest() is not None
    assert len(webhook.posts) == 2


def test_a_file_gets_one_json_object_per_digest_appended(triage: Triage, tmp_path: Path) -> None:
    path = tmp_path / "digests.jsonl"
    path.write_text('{"kept": "a line from before"}\n')
    target = DigestFile(path)
    digest = triage.digests.digest()
    assert target.send(digest) is None and target.send(digest) is None
    before, *written = path.read_text(encoding="utf-8").splitlines()  # JSON Lines
    assert json.loads(before) == {"kept": "a line from before"}
    assert [json.loads(line) for line in written] == [json.loads(dumps(digest.as_record()))] * 2


@pytest.mark.parametrize(
    ("where", "why"),
    [(".", "Is a directory"), ("missing/digests.jsonl", "No such file or directory")],
)
def test_a_file_that_cannot_be_appended_to_is_refused_before_anything_is_sent(
    tmp_path: Path, where: str, why: str
) -> None:
    with pytest.raises(DigestTargetError) as refused:
        DigestFile(tmp_path / where)
    assert refused.value.message == f"Cannot append digests to {tmp_path / where}: {why}."
    assert refused.value.hint is not None and "http:// or https://" in refused.value.hint


def test_standard_output_gets_the_digest_as_text_or_as_json(triage: Triage) -> None:
    digest = triage.digests.digest()
    written: list[str] = []
    assert StandardOutput(written.append).send(digest) is None
    assert StandardOutput(written.append, as_json=True).send(digest) is None
    text, line = written
    assert text.startswith("Digest of suspect links, 2026-03-02 08:00 UTC\n")
    assert text.endswith("\n")  # a blank line between digests
    assert json.loads(line) == json.loads(dumps(digest.as_record()))


def test_a_target_is_standard_output_a_webhook_or_a_file(tmp_path: Path) -> None:
    def made(text: str) -> DigestTarget:
        return target_for(text, write=print, as_json=False, spool_dir=tmp_path / "spool")

    assert isinstance(made("-"), StandardOutput)
    assert isinstance(made("https://hooks.lark.example/digest"), Webhook)
    assert isinstance(made(str(tmp_path / "d.jsonl")), DigestFile)


@pytest.mark.parametrize(
    ("text", "why"),
    [
        ("ftp://hooks.lark.example/d", "its scheme is 'ftp', not http or https"),
        ("https://", "it names no host"),
        ("http://hooks.lark.example:port/d", "Invalid port: 'port'"),
        ("", None),
    ],
)
def test_what_cannot_name_a_target_is_refused_without_repeating_it(
    text: str, why: str | None
) -> None:
    with pytest.raises(DigestTargetError) as refused:
        check_target(text)
    said = refused.value.message
    if why is None:
        assert said == "An empty name is no place to send digests."
    else:
        assert said == f"Cannot post digests to that URL: {why}."
        assert "hooks.lark.example" not in said  # a webhook's URL may be its secret


def test_a_webhook_is_shown_by_its_host_alone() -> None:
    # RFC 3986: user information, path and query are left out; an IPv6 host in brackets.
    secret = "https://ops:pw@hooks.lark.example:8443/services/T0/B0/s3cr3t?team=net"
    assert shown_url(secret) == "https://hooks.lark.example:8443/\u2026"
    assert shown_url("http://[::1]/") == "http://[::1]/"
