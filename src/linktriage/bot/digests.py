"""Lists of suspect links: asked for (``suspects``), swept, or the scheduled digest, which
also says what is new and what cleared since the one before."""

from __future__ import annotations

import time
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, replace

from linktriage.bot.answers import keep_answers
from linktriage.bot.poller import Poller
from linktriage.engine.diagnosis.batch import DiagnosisBatch, headline
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.answers import DiagnosisRecord
from linktriage.engine.verdicts import FAULTS, GUARD_KINDS, NOT_JUDGED, SEVERITY
from linktriage.engine.verdicts.link_down import LINK_DOWN
from linktriage.errors import AmbiguousNameError, CommandError
from linktriage.gc_pause import gc_paused
from linktriage.network.watched import Network, fitting
from linktriage.render import words
from linktriage.render.replies import SuspectItem, SuspectsReply
from linktriage.store import Store


@dataclass(frozen=True, slots=True)
class Scope:
    """What a list of suspects covers: everywhere, one site, or some devices."""

    title: str
    site: str | None = None
    devices: frozenset[str] | None = None

    def covers(self, device: str, site: str | None) -> bool:
        """Whether a device (at ``site``) is in the list."""
        if self.site is not None:
            return site == self.site
        return self.devices is None or device in self.devices


@dataclass
class Digests:
    """Suspects of one network, judged by one model, kept in one store."""

    network: Network
    store: Store
    model: Model
    poller: Poller
    clock: Callable[[], float] = time.time

    def suspects(
        self,
        site: str | None = None,
        *,
        channel: str | None = None,
        kind: str = "suspects",
        fresh: bool = True,
    ) -> SuspectsReply:
        """The suspect links of a site (default: everywhere), ranked by severity; without
        ``fresh``, from the stored polls where they already make a window."""
        scope = self.scope(site)
        with gc_paused():  # every port's refs, polls and answers: many small acyclic objects
            return self._suspects(scope, channel=channel, kind=kind, fresh=fresh)

    def _suspects(
        self, scope: Scope, *, channel: str | None, kind: str, fresh: bool
    ) -> SuspectsReply:
        refs = [r for r in self.network.ports() if scope.covers(r.device, r.site)]
        polls, failed = self.poller.polls_for(refs, fresh=fresh)
        # Devices whose ports could not even be listed are not read either.
        for device, why in self.network.unlisted().items():
            if scope.covers(device, self.network.site_of(device) if scope.site else None):
                failed.setdefault(device, words.ports_not_listed(why))
        batch = diagnose(polls, self.model)
        by_name = {(r.device, r.port): r for r in refs}
        ranked = ranked_suspects(batch)
        records = batch.records_many(ranked)
        found = [by_name.get((batch.device[row], batch.port[row])) for row in ranked]
        ids = keep_answers(
            self.store, batch, ranked, records, found, at=self.clock(), origin=kind, channel=channel
        )
        items = [
            SuspectItem(rank, record, diagnosis_id, reason(record))
            for rank, (record, diagnosis_id) in enumerate(zip(records, ids, strict=True), start=1)
        ]
        quiet = unjudged(batch)
        not_judged = Counter(GUARD_KINDS[batch.verdict[i]].not_judged for i in quiet)
        return SuspectsReply(
            title=scope.title,
            items=items,
            ports_judged=len(batch) - sum(not_judged.values()),
            not_judged=dict(not_judged),
            failed=dict(failed),
            at=self.clock(),
            down=down_ports(batch, quiet),
        )

    def scope(self, text: str | None) -> Scope:
        """What ``suspects TEXT`` covers: everywhere (no text); a site named in full or by a
        unique part of its name, as a device is; else the devices whose names hold the text
        ("east" for lark-east-*). Names only: nothing is polled."""
        if text is None:
            return Scope(words.suspects_title(None))
        sites = self.network.sites()
        named = fitting(text, sites)
        if len(named) > 1:
            raise AmbiguousNameError(words.fits_sites(text, len(named)), candidates=named)
        if named:
            return Scope(words.suspects_title(named[0]), site=named[0])
        devices = fitting(text, self.network.device_names())
        if devices:
            return Scope(words.suspects_on(text, devices), devices=frozenset(devices))
        raise CommandError(words.no_such_site(text), hint=words.known_sites(sites))

    def digest(self, *, channel: str | None = None) -> SuspectsReply:
        """The scheduled digest: suspects, what is new since the last one, what cleared."""
        previous = self.store.last_digest()
        current = self.suspects(channel=channel, kind="digest", fresh=False)
        before = {(i["device"], i["port"]) for i in previous.items} if previous else set()
        now = {(i.record["device"], i.record["port"]) for i in current.items}
        with gc_paused():  # a copy of every suspect (see suspects)
            items = [
                replace(
                    i,
                    new=previous is not None
                    and (i.record["device"], i.record["port"]) not in before,
                )
                for i in current.items
            ]
        # Kept only once posted (see posted): a digest that never reached its channel is
        # not done, and is caught up.
        return SuspectsReply(
            title=words.DIGEST_TITLE,
            items=items,
            ports_judged=current.ports_judged,
            not_judged=current.not_judged,
            failed=current.failed,
            at=current.at,
            since=previous.at if previous else None,
            cleared=sorted(f"{d} {p}" for d, p in before - now),
            kind="digest",
            down=current.down,
        )


def listed(items: list[SuspectItem]) -> list[dict[str, object]]:
    """A list of suspects as the store keeps it: which link, what verdict, which answer."""
    return [
        {
            "device": i.record["device"],
            "port": i.record["port"],
            "verdict": i.record["verdict"],
            "diagnosis_id": i.diagnosis_id,
        }
        for i in items
    ]


def ranked_suspects(batch: DiagnosisBatch) -> list[int]:
    """The rows of the suspect links, worst first. A suspect link is a port with a fault
    verdict (:data:`~linktriage.engine.verdicts.FAULTS`): the one definition behind every
    list and count of suspects (``suspects`` in chat and on the command line, the digest,
    ``demo``). Where both ends of a link are in the batch, the link's verdict from both
    views decides, and the link is listed once, under the end that sees the fault itself
    (the worse, then the first by name)."""
    verdicts = [batch.link_verdict(i) for i in range(len(batch))]
    rows = [i for i, v in enumerate(verdicts) if v in FAULTS]
    chosen = set(rows)
    for i in rows:
        j = batch.far[i]
        if j >= 0 and j in chosen and i in chosen and _listed_end(batch, j) < _listed_end(batch, i):
            chosen.discard(i)
    return sorted(
        chosen,
        key=lambda i: (
            -SEVERITY[verdicts[i]],
            -(batch.link_confidence(i) or 0.0),
            batch.device[i],
            batch.port[i],
        ),
    )


def reason(record: DiagnosisRecord) -> str:
    """Why a link is listed, in one line: from both ends where the far end was read."""
    link, far = record.get("link"), record.get("far_end")
    if link is None or far is None or not link["said"]:
        return headline(record)
    return words.link_reason(link["title"], far["device"], far["port"], link["said"][0])


def _listed_end(batch: DiagnosisBatch, i: int) -> tuple[int, int, int, str, str]:
    """Which end of a link lists it (smaller sorts first): the one whose own verdict is the
    link's (the half-duplex end of a mismatch, whose printer alone looks like a cable
    fault), then the one the link's first reason names, then the worse, then by name."""
    own = batch.verdict[i]
    view = batch.link(i)
    agrees = view is not None and view.verdict == own
    named = view is not None and view.said[0].startswith(batch.end_name(i))
    severity = SEVERITY[own] if own in FAULTS else 0
    return (0 if agrees else 1, 0 if named else 1, -severity, batch.device[i], batch.port[i])


def down_ports(batch: DiagnosisBatch, rows: list[int]) -> list[str]:
    """The ports of ``rows`` that are down (not shut on purpose, by the switch or for want
    of power), named with since when and how often the link changed before: an engineer
    walks to them, so a count alone is not enough."""
    since = batch.column("last_change")
    changes = batch.column("link_changes")
    return [
        words.down_port(batch.device[i], batch.port[i], since[i], changes[i])
        for i in rows
        if batch.verdict[i] == LINK_DOWN
    ]


def unjudged(batch: DiagnosisBatch) -> list[int]:
    """The rows of the ports not judged (down, too quiet, without two usable polls): neither
    suspect nor healthy, and counted apart."""
    return [i for i in range(len(batch)) if batch.link_verdict(i) in NOT_JUDGED]
