"""Where the watch sends its digests without chat: standard output, a file, a webhook.

Every digest the jobs compose is kept in the store (the next one says what is new since
it) and handed to each target in turn; one target's failure costs the others nothing. A
file gets one JSON object per line, appended; a webhook gets the same object as the body
of a POST. A webhook that does not take a digest (no answer, or anything but a 2xx
answer) keeps it in a spool file of the data directory, and every digest kept there goes
again, oldest first, before the next one: nothing is dropped, and every failure is said
with how many digests wait. The spool is named by a hash of the URL, and the URL is shown
by its host alone, because a webhook's path is often its secret.
"""

from __future__ import annotations

import hashlib
import logging
import os
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Protocol

import httpx

from linktriage.bot.triage import Triage
from linktriage.errors import DigestTargetError
from linktriage.render import words
from linktriage.render.jsonl import dumps
from linktriage.render.replies import SuspectsReply
from linktriage.render.text import suspects_text

log = logging.getLogger("linktriage.watch")

#: A webhook that has not answered within this long is taken not to have taken the digest.
POST_TIMEOUT_S = 10.0
#: What a target is called on the command line for standard output.
STANDARD_OUTPUT = "-"


class DigestTarget(Protocol):
    """A place digests go: ``send`` delivers one, and returns None, or what went wrong."""

    @property
    def shown(self) -> str: ...

    def send(self, reply: SuspectsReply) -> str | None: ...


def as_line(reply: SuspectsReply) -> str:
    """A digest as one line of JSON: the object ``suspects --json`` writes."""
    return dumps(reply.as_record())


@dataclass
class StandardOutput:
    """Each digest as text (a blank line after it) or as one JSON object per line."""

    write: Callable[[str], None]
    as_json: bool = False
    shown: str = words.STANDARD_OUTPUT

    def send(self, reply: SuspectsReply) -> str | None:
        try:
            self.write(as_line(reply) if self.as_json else suspects_text(reply) + "\n")
        except OSError as exc:  # a closed pipe, a full disk
            return words.digest_not_written(self.shown, exc.strerror or str(exc))
        return None


@dataclass
class DigestFile:
    """Each digest appended to a file as one JSON object per line, the file opened for
    each one (so a log rotation between digests loses nothing)."""

    path: Path

    def __post_init__(self) -> None:
        """Refuse at once a file that cannot be appended to, before any poll is made."""
        try:
            with self.path.open("a", encoding="utf-8"):
                pass
        except OSError as exc:
            why = exc.strerror or str(exc)
            raise DigestTargetError(
                words.cannot_append_digests(self.path, why), hint=words.DIGEST_TARGET_HINT
            ) from exc

    @property
    def shown(self) -> str:
        return str(self.path)

    def send(self, reply: SuspectsReply) -> str | None:
        try:
            with self.path.open("a", encoding="utf-8") as out:
                out.write(as_line(reply) + "\n")
        except OSError as exc:
            return words.digest_not_written(self.path, exc.strerror or str(exc))
        return None


@dataclass
class Webhook:
    """Each digest POSTed as JSON; those not taken kept in ``spool_dir`` and sent first
    the next time."""

    url: str
    spool_dir: Path
    timeout_s: float = POST_TIMEOUT_S

    @property
    def shown(self) -> str:
        return shown_url(self.url)

    @property
    def spool(self) -> Path:
        """Where this URL's undelivered digests wait, one JSON object per line."""
        name = hashlib.sha256(self.url.encode()).hexdigest()[:16]
        return self.spool_dir / f"webhook-{name}.jsonl"

    def waiting(self) -> list[str]:
        """The digests kept from before, oldest first."""
        try:
            return self.spool.read_text(encoding="utf-8").splitlines()
        except FileNotFoundError:
            return []

    def send(self, reply: SuspectsReply) -> str | None:
        """The digests kept from before, then this one, in order until one is not taken;
        that one and those after it are kept for the next time."""
        bodies = [*self.waiting(), as_line(reply)]
        with httpx.Client(timeout=self.timeout_s, follow_redirects=False) as client:
            for sent, body in enumerate(bodies):
                why = self._post(client, body)
                if why is not None:
                    return self._keep(bodies[sent:], why)
        self.spool.unlink(missing_ok=True)
        return None

    def _post(self, client: httpx.Client, body: str) -> str | None:
        """POST one digest; None if the webhook took it (a 2xx answer), else why not."""
        try:
            answer = client.post(
                self.url, content=body.encode(), headers={"Content-Type": "application/json"}
            )
        except httpx.HTTPError as exc:
            said = str(exc).replace(self.url, self.shown) or type(exc).__name__
            return words.webhook_unanswered(said)
        if answer.is_success:
            return None
        return words.webhook_refused(answer.status_code, answer.reason_phrase)

    def _keep(self, bodies: list[str], why: str) -> str:
        """Keep the digests not taken (replacing the spool in one step) and say so."""
        try:
            self.spool_dir.mkdir(parents=True, exist_ok=True)
            partial = self.spool.with_suffix(".partial")
            partial.write_text("".join(body + "\n" for body in bodies), encoding="utf-8")
            os.replace(partial, self.spool)
        except OSError as exc:
            kept = words.digests_not_kept(self.spool, exc.strerror or str(exc))
            return words.digest_not_delivered(self.shown, why, kept)
        return words.digest_not_delivered(
            self.shown, why, words.digests_kept(len(bodies), self.spool)
        )


def shown_url(url: str) -> str:
    """A URL as it may be shown or logged: its scheme, host and port, the rest elided (a
    webhook's path or query often is its secret, and user and password are never shown)."""
    parsed = httpx.URL(url)
    host = f"[{parsed.host}]" if ":" in parsed.host else parsed.host  # IPv6 (RFC 3986)
    port = f":{parsed.port}" if parsed.port is not None else ""
    rest = "/\u2026" if parsed.raw_path not in (b"", b"/") else "/"
    return f"{parsed.scheme}://{host}{port}{rest}"


def webhook_url(text: str) -> str | None:
    """The URL ``text`` names if it is one (it holds "://"); one linktriage cannot POST to
    (another scheme, no host) is refused with :class:`DigestTargetError`; None: not a URL."""
    if "://" not in text:
        return None
    try:
        parsed = httpx.URL(text)
    except httpx.InvalidURL as exc:
        why = str(exc)
    else:
        if parsed.scheme not in ("http", "https"):
            why = words.webhook_scheme(parsed.scheme)
        elif not parsed.host:
            why = words.WEBHOOK_NO_HOST
        else:
            return text
    # The URL itself is not repeated: a webhook's URL often holds its secret.
    raise DigestTargetError(words.not_a_webhook(why), hint=words.DIGEST_TARGET_HINT)


def check_target(text: str) -> str:
    """``text`` if it can name a target: standard output, a file's path or a URL linktriage
    can POST to; raises :class:`DigestTargetError` otherwise (nothing is opened)."""
    if not text.strip():
        raise DigestTargetError(words.EMPTY_DIGEST_TARGET, hint=words.DIGEST_TARGET_HINT)
    webhook_url(text)
    return text


def target_for(
    text: str, *, write: Callable[[str], None], as_json: bool, spool_dir: Path
) -> DigestTarget:
    """The target ``text`` names: ``-`` standard output, an http(s) URL a webhook, anything
    else a file (refused at once if it cannot be appended to)."""
    if text == STANDARD_OUTPUT:
        return StandardOutput(write, as_json)
    url = webhook_url(text)
    if url is not None:
        return Webhook(url, spool_dir)
    return DigestFile(Path(text))


@dataclass
class DigestPost:
    """What the jobs call with each digest when the watch runs them: the digest kept in the
    store, then handed to every target; each delivery is logged, and what could not be
    delivered is also remembered (a single round's exit code says it)."""

    triage: Triage
    targets: Sequence[DigestTarget]
    undelivered: list[str] = field(default_factory=list)

    def __call__(self, reply: SuspectsReply) -> None:
        self.triage.carried(reply, channel=None)  # the next digest is new and cleared since it
        for target in self.targets:
            problem = target.send(reply)
            if problem is None:
                log.info("%s", words.digest_delivered(reply.at, target.shown))
            else:
                self.undelivered.append(problem)
                log.warning("%s", problem)
