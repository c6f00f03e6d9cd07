"""`linktriage watch`: the poll rounds and the digest out of chat, through the command line,
into a real SQLite store, to standard output, a file and a webhook on loopback."""

from __future__ import annotations

import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

from click.testing import CliRunner

from linktriage.cli import READ_ALL, main
from linktriage.store import JOBS_LEASE, Store

from helpers import polled_for_an_hour
from webhook_receiver import WebhookReceiver


def run(*args: str) -> tuple[int, str, str]:
    result = CliRunner().invoke(main, list(args))
    return result.exit_code, result.stdout, result.stderr


def store_of(config: Path) -> Store:
    """The store a settings file of polled_for_an_hour names."""
    return Store(f"sqlite:///{config.parent / 's.sqlite'}")


def test_one_round_polls_sends_the_digest_to_standard_output_and_keeps_it(
    tmp_path: Path,
) -> None:
    config = polled_for_an_hour(tmp_path)
    code, out, err = run("watch", "--once", "--config", str(config))
    assert code == READ_ALL == 0
    lines = out.splitlines()
    assert lines[0].startswith("Digest of suspect links, ")
    assert lines[1].startswith("15 suspect links among 91 ports judged; 4 ports not judged (")
    assert "poll round: 95 port polls stored" in err
    assert "sent to standard output" in err
    store = store_of(config)
    kept = store.last_digest()  # the next digest says what is new and cleared since it
    assert kept is not None and len(kept.items) == 15 and kept.channel is None
    assert store.lease_holder(JOBS_LEASE, now=time.time()) is None  # handed back at once
    store.close()


def test_one_round_to_a_file_a_webhook_and_standard_output_sends_one_object_to_each(
    tmp_path: Path, webhook: WebhookReceiver
) -> None:
    config = polled_for_an_hour(tmp_path)
    digests = tmp_path / "digests.jsonl"
    code, out, err = run(
        "watch", "--once", "--json", "--config", str(config),
        "--to", str(digests), "--to", webhook.url, "--to", "-",
    )  # fmt: skip
    assert code == 0, err
    (in_file,) = [json.loads(line) for line in digests.read_text().splitlines()]
    (posted,) = webhook.taken()
    (printed,) = [json.loads(line) for line in out.splitlines()]
    assert in_file == posted == printed
    assert in_file["kind"] == "digest" and len(in_file["suspects"]) == 15
    assert "s3cr3t" not in err  # the webhook named by its host alone
    assert f"sent to {digests}, http://127.0.0.1:" in err


def test_a_digest_the_webhook_refused_goes_before_the_next_rounds_digest(
    tmp_path: Path, webhook: WebhookReceiver
) -> None:
    config = polled_for_an_hour(tmp_path)
    webhook.answers = [500]  # RFC 9110 15.6.1: the server failed this once
    code, _, err = run("watch", "--once", "--to", webhook.url, "--config", str(config))
    assert code == 1  # not delivered: a script must know
    assert "The digest was not delivered to http://127.0.0.1:" in err
    assert "it answered HTTP 500 Internal Server Error; 1 digest kept in " in err
    assert webhook.taken() == []
    code, _, err = run("watch", "--once", "--to", webhook.url, "--config", str(config))
    assert code == 0, err
    first, second = webhook.taken()  # the kept one first, then this round's
    assert [post.status for post in webhook.posts] == [500, 204, 204]
    assert first["at"] < second["at"] and second["since"] == first["at"]


def test_a_target_that_cannot_be_used_is_refused_before_anything_is_read(
    tmp_path: Path,
) -> None:
    store = tmp_path / "s.sqlite"
    config = tmp_path / "c.toml"
    config.write_text(f'[store]\nurl = "sqlite:///{store}"\n')
    code, _, err = run("watch", "--once", "--to", "ftp://hooks.lark.example/d")
    assert code == 2  # a wrong command line
    assert "Invalid value for '--to': Cannot post digests to that URL: its scheme is 'ftp'" in err
    missing = tmp_path / "nowhere" / "digests.jsonl"
    code, _, err = run("watch", "--once", "--to", str(missing), "--config", str(config))
    assert code == 1  # a file linktriage cannot use
    assert f"Cannot append digests to {missing}: No such file or directory." in err
    assert not store.exists()  # nothing was polled, nothing kept


def test_one_round_while_another_copy_runs_the_jobs_does_nothing_and_says_who(
    tmp_path: Path,
) -> None:
    config = polled_for_an_hour(tmp_path)
    store = store_of(config)
    assert store.take_lease(JOBS_LEASE, "lark-ops2:4242:1a2b3c", now=time.time(), hold_s=600)
    before = store.poll_history().packs
    digests = tmp_path / "digests.jsonl"
    code, _, err = run("watch", "--once", "--to", str(digests), "--config", str(config))
    assert code == 1
    assert "run by another copy (lark-ops2:4242:1a2b3c): a round here would run them twice" in err
    assert digests.read_text() == "" and store.last_digest() is None
    assert store.poll_history().packs == before
    store.close()


def test_the_watch_runs_the_jobs_until_stopped_then_hands_them_back(tmp_path: Path) -> None:
    exe = shutil.which("linktriage", path=str(Path(sys.executable).parent))
    assert exe is not None
    store_path = tmp_path / "s.sqlite"
    config = tmp_path / "c.toml"
    config.write_text(f'[store]\nurl = "sqlite:///{store_path}"\n')
    env = {**os.environ, "LINKTRIAGE_HOME": str(tmp_path / "home")}
    process = subprocess.Popen(
        [exe, "watch", "--config", str(config), "--to", str(tmp_path / "digests.jsonl")],
        env=env,
        stderr=subprocess.PIPE,
        text=True,
    )
    assert process.stderr is not None
    started = process.stderr.readline()
    assert started.startswith("watching the network: a poll round every 5 min, the digest ")
    # Taking the jobs runs this interval's poll round at once (bot/jobs.py take_over).
    store = Store(f"sqlite:///{store_path}")  # the same file; migrations wait for each other
    deadline = time.monotonic() + 60  # against a hang only: nothing here is timed
    while store.poll_history().ports < 95:
        assert process.poll() is None and time.monotonic() < deadline
        time.sleep(0.2)
    assert store.lease_holder(JOBS_LEASE, now=time.time()) is not None
    process.send_signal(signal.SIGTERM)
    _, log = process.communicate(timeout=30)
    assert process.returncode == 0, log
    assert store.lease_holder(JOBS_LEASE, now=time.time()) is None  # another copy need not wait
    store.close()
