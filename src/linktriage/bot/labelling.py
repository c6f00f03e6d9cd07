"""Labels from chat: a reply in an answer's or a digest's thread, or a button, read as what
an engineer found, checked against who may label, stored once per person, and
acknowledged; the answer redrawn with its labels."""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import cast

from linktriage.bot.label_parser import LabelIntent, Unclear, parse_label
from linktriage.engine.format.answers import DiagnosisRecord, Verdict
from linktriage.engine.model.findings import Finding, finding, said_as, taught
from linktriage.engine.model.labels import current
from linktriage.errors import StoreError
from linktriage.render.replies import DiagnosisReply, Labelled, LabelRefused, LabelReply
from linktriage.render.words import (
    LABEL_ALREADY,
    LABEL_BUSY,
    LABEL_GONE,
    LABEL_NOT_ALLOWED,
    LABEL_NOT_WHICH,
    LABEL_SAY_FOUND,
    LABEL_STORE_FAILED,
    LABEL_WHICH,
    LABEL_WHICH_FOUND,
    LABEL_WHICH_LINK,
    finding_options,
    label_options,
    negated_verdicts,
)
from linktriage.settings import Settings
from linktriage.store import Store, StoredDiagnosis

#: Times a label is read again and retried when another of its author's labels of the
#: same answer was stored at the same moment (a second press on another replica): the
#: second reading sees the first and answers from it.
RACED_TRIES = 3

#: Members of a chat user group, by group id (Slack: usergroups.users.list).
GroupMembers = Callable[[str], set[str]]


@dataclass
class Labelling:
    """Labels for the answers kept in one store, under the settings' [labels] rules."""

    store: Store
    settings: Settings
    clock: Callable[[], float] = time.time
    members_of: GroupMembers | None = None
    _groups_cache: dict[str, tuple[float, set[str]]] = field(default_factory=dict)

    def may_label(self, user: str, channel: str | None) -> bool:
        """Whether this person, in this channel, may label (settings: [labels])."""
        rules = self.settings.labels
        if rules.channels and channel not in rules.channels:
            return False
        if not rules.user_groups:
            return True
        return any(user in self._members(group) for group in rules.user_groups)

    def _members(self, group: str) -> set[str]:
        cached = self._groups_cache.get(group)
        if cached is not None and self.clock() - cached[0] < 300:
            return cached[1]
        members = self.members_of(group) if self.members_of is not None else set()
        self._groups_cache[group] = (self.clock(), members)
        return members

    def knows(self, channel: str, thread_ts: str) -> bool:
        """Whether a thread is one of ours: an answer's or a list's."""
        return (
            self.store.diagnosis_for_message(channel, thread_ts) is not None
            or self.store.digest_for_message(channel, thread_ts) is not None
        )

    def reply(
        self,
        text: str,
        *,
        user: str,
        channel: str,
        thread_ts: str,
        event_key: str,
        source: str = "thread",
    ) -> LabelReply | LabelRefused | None:
        """A reply in a thread of ours, read as a label; None when there is nothing to say
        (not our thread, not a label, or a retry of one already recorded)."""
        diagnosis = self.store.diagnosis_for_message(channel, thread_ts)
        names = None
        digest = None
        if diagnosis is None:
            digest = self.store.digest_for_message(channel, thread_ts)
            if digest is None:
                return None
            names = [(i["device"], i["port"]) for i in digest.items]
        intent = parse_label(text, names=names)
        if intent is None:
            return None
        if not self.may_label(user, channel):
            return LabelRefused(LABEL_NOT_ALLOWED)
        if isinstance(intent, Unclear):
            if intent.findings:
                options = finding_options([finding(f).words for f in intent.findings])
                return LabelRefused(LABEL_WHICH_FOUND.format(options=options))
            if not intent.candidates:
                return LabelRefused(LABEL_SAY_FOUND)
            options = label_options(list(intent.candidates))
            if intent.negated:
                said = negated_verdicts(list(intent.negated))
                return LabelRefused(LABEL_NOT_WHICH.format(negated=said, options=options))
            return LabelRefused(LABEL_WHICH.format(options=options))
        if digest is not None:
            diagnosis = self._digest_target(digest.items, intent)
            if diagnosis is None:
                return LabelRefused(LABEL_WHICH_LINK)
        assert diagnosis is not None
        return self.record(
            diagnosis,
            intent.verdict,
            None if intent.finding is None else finding(intent.finding),
            intent.note,
            ruled_out=intent.ruled_out,
            user=user,
            channel=channel,
            source=source,
            event_key=event_key,
        )

    def _digest_target(
        self, items: list[dict[str, object]], intent: LabelIntent
    ) -> StoredDiagnosis | None:
        chosen = None
        if intent.item is not None and 1 <= intent.item <= len(items):
            chosen = items[intent.item - 1]
        elif intent.device is not None:
            chosen = next(
                (i for i in items if (i["device"], i["port"]) == (intent.device, intent.port)), None
            )
        if chosen is None:
            return None
        return self.store.diagnosis(int(str(chosen["diagnosis_id"])))

    def button(
        self,
        diagnosis_id: int,
        finding_id: str,
        *,
        user: str,
        channel: str | None,
        event_key: str,
    ) -> LabelReply | LabelRefused | None:
        """A pick from "What did you find?"."""
        diagnosis = self.store.diagnosis(diagnosis_id)
        if diagnosis is None:
            return LabelRefused(LABEL_GONE)
        if not self.may_label(user, channel):
            return LabelRefused(LABEL_NOT_ALLOWED)
        return self.record(
            diagnosis,
            None,
            finding(finding_id),
            "",
            user=user,
            channel=channel,
            source="button",
            event_key=event_key,
        )

    def record(
        self,
        diagnosis: StoredDiagnosis,
        verdict: Verdict | None,
        found: Finding | None,
        note: str,
        *,
        user: str,
        channel: str | None,
        source: str,
        event_key: str,
        ruled_out: frozenset[str] = frozenset(),
    ) -> LabelReply | LabelRefused | None:
        """Store a label (what was found, or a verdict named), then say so and what it
        teaches. One label per person per answer counts: a new one replaces theirs (the
        earlier stays for the audit), the same one again is not stored twice, even pressed
        twice at once on two replicas (the store numbers each person's labels of an answer,
        each number once), and a retry of a stored event says nothing."""
        if verdict is not None:  # named outright: it teaches what it names, as it always did
            teaches: str = verdict
        else:
            assert found is not None
            teaches = taught(found, diagnosis.verdict, ruled_out) or ""
        found_id = None if found is None else found.id
        try:
            if self.store.has_event(event_key):
                return None
            for _ in range(RACED_TRIES):
                every = self.store.labels(diagnosis.id)
                before, _ = current(every)
                mine = next((lb for lb in before if lb.user_id == user), None)
                same = mine is not None and (mine.finding, mine.verdict) == (found_id, teaches)
                if same and not note:
                    return LabelRefused(LABEL_ALREADY.format(said=said_as(found_id, teaches)))
                kept = self.store.add_label(
                    diagnosis,
                    teaches,
                    finding=found_id,
                    note=note,
                    user_id=user,
                    channel=channel,
                    source=source,
                    event_key=event_key,
                    at=self.clock(),
                    turn=1 + sum(1 for lb in every if lb.user_id == user),
                )
                if kept != "raced":
                    break
            else:
                return LabelRefused(LABEL_STORE_FAILED.format(reason=LABEL_BUSY))
        except StoreError as exc:
            return LabelRefused(LABEL_STORE_FAILED.format(reason=exc.message))
        if kept == "repeat":
            return None
        others = {lb.verdict for lb in before if lb.user_id != user and lb.verdict}
        earlier = None if mine is None else said_as(mine.finding, mine.verdict)
        return LabelReply(
            user,
            diagnosis.device,
            diagnosis.port,
            teaches,
            diagnosis.verdict,
            note,
            diagnosis_id=diagnosis.id,
            replaced=earlier if earlier != said_as(found_id, teaches) else None,
            disputed_with=tuple(sorted(others - {teaches})) if teaches else (),
            finding=None if found is None else found.words,
        )

    def answer(self, diagnosis_id: int) -> tuple[DiagnosisReply, str, str] | None:
        """An answer as it now stands, with each person's latest label, and the channel
        and message that carry it: to redraw it after a label. None if never posted."""
        stored = self.store.diagnosis(diagnosis_id)
        if stored is None or stored.channel is None or stored.message_ts is None:
            return None
        latest, _ = current(self.store.labels(diagnosis_id))
        reply = DiagnosisReply(
            cast(DiagnosisRecord, stored.record),  # stored as answered
            stored.id,
            stored.site,
            stored.serves,
            labels=tuple(
                Labelled(lb.user_id, lb.verdict, said_as(lb.finding, lb.verdict)) for lb in latest
            ),
            asked_by=stored.asked_by,
            at=stored.at,
        )
        return reply, stored.channel, stored.message_ts
