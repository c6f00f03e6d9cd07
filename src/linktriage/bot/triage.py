"""The bot's work, free of any transport: answer commands, gather polls, digest, label.

Every chat transport (Slack, the console) and every job calls into :class:`Triage`; it
knows the network, the store and the model, takes its clock and its sleep from outside
so tests and the demo run it on a fixed clock, and answers with the plain data of
:mod:`linktriage.render.replies`.
"""

from __future__ import annotations

import contextlib
import math
import time
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import cast

import numpy as np

from linktriage.bot.commands import (
    COMMAND,
    CommandError,
    DiagnosePort,
    ListSuspects,
    ShowHelp,
    ShowModel,
    parse,
)
from linktriage.bot.label_parser import LabelIntent, Unclear, parse_label
from linktriage.diagnosis import DiagnosisBatch, DiagnosisRecord, Model, diagnose, headline
from linktriage.errors import LinktriageError, PollError
from linktriage.features import FEATURE_NAMES
from linktriage.model.labels import current
from linktriage.network.interface import Network, PortRef
from linktriage.polls import PollTable
from linktriage.render.card import model_card_data
from linktriage.render.replies import (
    DiagnosisReply,
    ErrorReply,
    HelpReply,
    LabelRefused,
    LabelReply,
    ModelReply,
    Reply,
    SuspectItem,
    SuspectsReply,
)
from linktriage.settings import Settings
from linktriage.store import Store, StoredDiagnosis, StoreError
from linktriage.verdicts import FAULTS, GUARD_VERDICTS, SEVERITY, TREE_VERDICTS, Verdict
from linktriage.wording import (
    LABEL_ALREADY,
    LABEL_GONE,
    LABEL_NOT_A_FAULT,
    LABEL_NOT_ALLOWED,
    LABEL_NOT_WHICH,
    LABEL_STORE_FAILED,
    LABEL_WHICH,
    LABEL_WHICH_LINK,
)

#: Members of a chat user group, by group id (Slack: usergroups.users.list).
GroupMembers = Callable[[str], set[str]]


@dataclass(frozen=True, slots=True)
class PollRound:
    """What one poll of the whole network stored, and which devices did not answer."""

    stored: int
    failed: dict[str, str]  # device -> why


@dataclass
class Triage:
    """Answers for one network, from one store, with one model."""

    network: Network
    store: Store
    model: Model
    settings: Settings
    clock: Callable[[], float] = time.time
    sleep: Callable[[float], None] = time.sleep
    members_of: GroupMembers | None = None
    _groups_cache: dict[str, tuple[float, set[str]]] = field(default_factory=dict)

    @classmethod
    def from_settings(
        cls,
        settings: Settings,
        *,
        model: Model | None = None,
        members_of: GroupMembers | None = None,
        simulated_time: bool = False,
    ) -> Triage:
        """The service for the network the settings name, on their store.

        With ``simulated_time`` (the console on the demo network) waiting for a second
        poll takes no time: the clock jumps as if the quick window had passed. Real
        devices (an inventory) always run on real time.
        """
        from linktriage.network.demo import DemoClock, DemoNetwork

        clock: Callable[[], float] = time.time
        sleep: Callable[[float], None] = time.sleep
        network: Network
        if settings.network.source == "inventory":
            from linktriage.network.inventory import load_inventory
            from linktriage.network.polling import InventoryNetwork

            assert settings.network.inventory is not None  # settings insist on it
            network = InventoryNetwork(load_inventory(settings.network.inventory))
        else:
            if simulated_time:
                demo_clock = DemoClock(time.time())
                clock, sleep = demo_clock, demo_clock.sleep
            network = DemoNetwork(clock=clock)
        return cls(
            network=network,
            store=Store(settings.store.resolved_url()),
            model=model or Model.load(),
            settings=settings,
            clock=clock,
            sleep=sleep,
            members_of=members_of,
        )

    # --- commands
    def handle(self, text: str, *, user: str | None = None, channel: str | None = None) -> Reply:
        """Run one command; anything that goes wrong becomes an :class:`ErrorReply`."""
        try:
            command = parse(text)
            reply: Reply
            if isinstance(command, ShowHelp):
                reply = HelpReply(COMMAND)
            elif isinstance(command, ShowModel):
                reply = self.model_card()
            elif isinstance(command, ListSuspects):
                reply = self.suspects(command.site, channel=channel)
            else:
                assert isinstance(command, DiagnosePort)
                reply = self.diagnose_port(command.device, command.port, user=user, channel=channel)
        except LinktriageError as exc:  # bad text, unknown names, a device that fails
            reply = ErrorReply(exc.message, exc.hint)
        self._audit(text, reply, user=user, channel=channel)
        return reply

    def _audit(self, text: str, reply: Reply, *, user: str | None, channel: str | None) -> None:
        outcome = (
            f"error: {reply.message}" if isinstance(reply, ErrorReply) else type(reply).__name__
        )
        # An audit entry that cannot be written must not cost the answer.
        with contextlib.suppress(StoreError):
            self.store.audit(text, outcome, at=self.clock(), user_id=user, channel=channel)

    def model_card(self) -> ModelReply:
        return ModelReply(
            model_card_data(
                self.model.artefact, source=self.model.source, trained_at=self.model.trained_at
            )
        )

    # --- one port
    def diagnose_port(
        self,
        device: str,
        port: str,
        *,
        user: str | None = None,
        channel: str | None = None,
        origin: str = "chat",
    ) -> DiagnosisReply:
        """Diagnose one port now, from its stored history if recent, else two fresh polls."""
        ref = self.network.find(device, port)
        polls, failed = self._gather([ref])
        if failed:
            raise PollError(ref.device, failed[ref.device])
        batch = diagnose(polls, self.model)
        row = batch.index_of(ref.device, ref.port)
        if row is None:
            raise PollError(ref.device, f"answered without port {ref.port}")
        diagnosis_id = self._keep(batch, row, ref, origin=origin, user=user, channel=channel)
        return DiagnosisReply(batch.record(row), diagnosis_id, ref.site, ref.serves)

    def recheck(
        self, diagnosis_id: int, *, user: str | None = None, channel: str | None = None
    ) -> Reply:
        """The same port diagnosed again now (the answer's "Check again" button): its window
        has grown by every poll since, which is what a quiet port needs."""
        stored = self.store.diagnosis(diagnosis_id)
        if stored is None:
            return ErrorReply("That answer is no longer in the store.", "Ask with /triage again.")
        reply: Reply
        try:
            reply = self.diagnose_port(stored.device, stored.port, user=user, channel=channel)
        except LinktriageError as exc:
            reply = ErrorReply(exc.message, exc.hint)
        self._audit(f"check again {stored.device} {stored.port}", reply, user=user, channel=channel)
        return reply

    # --- many ports
    def suspects(
        self, site: str | None = None, *, channel: str | None = None, kind: str = "suspects"
    ) -> SuspectsReply:
        """The suspect links of a site (default: everywhere), ranked by severity."""
        refs = self.network.ports()
        where: str | None = None
        if site is not None:
            sites = self.network.sites()
            chosen = [s for s in sites if s.lower() == site.lower()]
            if not chosen:
                raise CommandError(f"No site named {site!r}.", hint=f"Sites: {', '.join(sites)}.")
            where = chosen[0]
            refs = [r for r in refs if r.site == where]
        polls, failed = self._gather(refs)
        # Devices whose ports could not even be listed are not read either.
        for device, why in self.network.unlisted().items():
            if where is None or self.network.site_of(device) == where:
                failed.setdefault(device, f"could not list its ports: {why}")
        batch = diagnose(polls, self.model)
        by_name = {(r.device, r.port): r for r in refs}
        items: list[SuspectItem] = []
        for row in _ranked_faults(batch):
            ref = by_name.get((batch.device[row], batch.port[row]))
            diagnosis_id = self._keep(batch, row, ref, origin=kind, channel=channel)
            record = batch.record(row)
            items.append(SuspectItem(len(items) + 1, record, diagnosis_id, headline(record)))
        place = "everywhere" if where is None else f"at {where}"
        not_judged = Counter(v.value for v in batch.verdict if v in GUARD_VERDICTS)
        return SuspectsReply(
            title=f"Suspect links {place}",
            items=items,
            ports_judged=len(batch) - sum(not_judged.values()),
            not_judged=dict(not_judged),
            failed=dict(failed),
            at=self.clock(),
        )

    def digest(self, *, channel: str | None = None) -> SuspectsReply:
        """The scheduled digest: suspects, what is new since the last one, what cleared."""
        previous = self.store.last_digest()
        current = self.suspects(channel=channel, kind="digest")
        before = {(i["device"], i["port"]) for i in previous.items} if previous else set()
        now = {(i.record["device"], i.record["port"]) for i in current.items}
        items = [
            replace(
                i, new=previous is not None and (i.record["device"], i.record["port"]) not in before
            )
            for i in current.items
        ]
        # Kept only once posted (see posted): a digest that never reached its channel is
        # not done, and is caught up.
        return SuspectsReply(
            title="Digest of suspect links",
            items=items,
            ports_judged=current.ports_judged,
            not_judged=current.not_judged,
            failed=current.failed,
            at=current.at,
            since=previous.at if previous else None,
            cleared=sorted(f"{d} {p}" for d, p in before - now),
            kind="digest",
        )

    def posted(self, reply: Reply, *, channel: str, ts: str) -> bool:
        """Remember where an answer was posted, so replies in its thread can label it.

        Returns False for answers that have no thread worth reading (help, errors, ...).
        """
        if isinstance(reply, DiagnosisReply):
            self.store.attach_message(reply.diagnosis_id, channel, ts)
            return True
        if isinstance(reply, SuspectsReply) and (reply.items or reply.kind == "digest"):
            digest_id = reply.digest_id
            if digest_id is None:
                digest_id = self.store.add_digest(
                    _listed(reply.items), at=reply.at, kind=reply.kind, channel=channel
                )
            self.store.attach_digest_message(digest_id, channel, ts)
            return bool(reply.items)
        return False

    def poll_round(self) -> PollRound:
        """Poll every device once and keep the answers: the poll job."""
        gathered = self.network.poll_many(dict.fromkeys(self.network.device_names()))
        stored = sum(self.store.add_polls(table) for table in gathered.tables.values())
        return PollRound(stored, gathered.failed)

    def _gather(self, refs: list[PortRef]) -> tuple[PollTable, dict[str, str]]:
        """Polls for these ports, never spanning less than ``quick_window_s``: stored recent
        ones plus one fresh poll each, or, where the stored history is younger than that
        (right after start) or absent, a second fresh poll once the first reaches back
        ``quick_window_s``. A device whose source keeps history (Prometheus) is asked for
        its recent window instead, and asked again after the wait when that is too short."""
        wanted: dict[str, list[str]] = {}
        for ref in refs:
            wanted.setdefault(ref.device, []).append(ref.port)
        now = self.clock()
        quick = self.settings.chat.quick_window_s
        since = now - self.settings.chat.recent_poll_s
        tables: list[PollTable] = []
        short: dict[str, dict[str, float]] = {}  # device -> port -> seconds still to wait
        recalled = self.network.history(wanted, since)
        failed = dict(recalled.failed)
        for device, table in recalled.tables.items():
            short[device] = _short_of(table, wanted[device], now, quick, absent=False)
            if not short[device]:
                tables.append(table)
        fresh = {d: ps for d, ps in wanted.items() if d not in recalled.tables and d not in failed}
        for device in fresh:
            stored = self.store.polls_since(since, device=device)
            stored = stored.take(np.flatnonzero(np.isin(stored.port, wanted[device])))
            tables.append(stored)
            short[device] = _short_of(stored, wanted[device], now, quick, absent=True)
        failed.update(self._poll_into(tables, dict(fresh)))
        young = {d: list(waits) for d, waits in short.items() if waits and d not in failed}
        if young:
            self.sleep(max(max(short[d].values()) for d in young))
            again = self.network.history(
                {d: ps for d, ps in young.items() if d in recalled.tables}, since
            )
            tables += again.tables.values()
            failed.update(again.failed)
            retry = {d: ps for d, ps in young.items() if d not in recalled.tables}
            failed.update(self._poll_into(tables, dict(retry)))
        return PollTable.concat(tables), failed

    def _poll_into(
        self, tables: list[PollTable], wanted: dict[str, list[str] | None]
    ) -> dict[str, str]:
        gathered = self.network.poll_many(wanted)
        for fresh in gathered.tables.values():
            self.store.add_polls(fresh)
            tables.append(fresh)
        return dict(gathered.failed)

    def _keep(
        self,
        batch: DiagnosisBatch,
        row: int,
        ref: PortRef | None,
        *,
        origin: str,
        user: str | None = None,
        channel: str | None = None,
    ) -> int:
        features = {
            name: (None if math.isnan(v) else v)
            for name, v in zip(FEATURE_NAMES, batch.values[row].tolist(), strict=True)
        }
        return self.store.add_diagnosis(
            dict(batch.record(row)),
            features,
            at=self.clock(),
            origin=origin,
            asked_by=user,
            channel=channel,
            site=ref.site if ref else "",
            serves=ref.serves if ref else "",
        )

    # --- labels
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

    def label_reply(
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
            options = " or ".join(f"`{v.value}`" for v in intent.candidates)
            if intent.negated:
                said = ", ".join(f"`{v.value}`" for v in intent.negated)
                return LabelRefused(LABEL_NOT_WHICH.format(negated=said, options=options))
            return LabelRefused(LABEL_WHICH.format(options=options))
        if digest is not None:
            diagnosis = self._digest_target(digest.items, intent)
            if diagnosis is None:
                return LabelRefused(LABEL_WHICH_LINK)
        assert diagnosis is not None
        return self.record_label(
            diagnosis,
            intent.verdict,
            intent.note,
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

    def label_button(
        self,
        diagnosis_id: int,
        verdict: str | None,
        *,
        user: str,
        channel: str | None,
        event_key: str,
    ) -> LabelReply | LabelRefused | None:
        """A press of "confirm" (verdict None) or a pick of what it really was."""
        diagnosis = self.store.diagnosis(diagnosis_id)
        if diagnosis is None:
            return LabelRefused(LABEL_GONE)
        if not self.may_label(user, channel):
            return LabelRefused(LABEL_NOT_ALLOWED)
        chosen = None if verdict is None else Verdict(verdict)
        return self.record_label(
            diagnosis, chosen, "", user=user, channel=channel, source="button", event_key=event_key
        )

    def record_label(
        self,
        diagnosis: StoredDiagnosis,
        verdict: Verdict | None,
        note: str,
        *,
        user: str,
        channel: str | None,
        source: str,
        event_key: str,
    ) -> LabelReply | LabelRefused | None:
        """Store a label, then say so. One label per person per answer counts: a new one
        replaces theirs (the earlier stays for the audit), the same one again is not
        stored twice, and a retry of a stored event says nothing."""
        found = verdict if verdict is not None else Verdict(diagnosis.verdict)
        if found not in TREE_VERDICTS:
            return LabelRefused(LABEL_NOT_A_FAULT.format(verdict=found.value))
        try:
            if self.store.has_event(event_key):
                return None
            before, _ = current(self.store.labels(diagnosis.id))
            mine = next((lb for lb in before if lb.user_id == user), None)
            if mine is not None and mine.verdict == found.value and not note:
                return LabelRefused(LABEL_ALREADY.format(verdict=found.value))
            stored = self.store.add_label(
                diagnosis,
                found.value,
                note=note,
                user_id=user,
                channel=channel,
                source=source,
                event_key=event_key,
                at=self.clock(),
            )
        except StoreError as exc:
            return LabelRefused(LABEL_STORE_FAILED.format(reason=exc.message))
        if not stored:
            return None
        others = sorted({lb.verdict for lb in before if lb.user_id != user} - {found.value})
        return LabelReply(
            user,
            diagnosis.device,
            diagnosis.port,
            found.value,
            diagnosis.verdict,
            note,
            diagnosis_id=diagnosis.id,
            replaced=mine.verdict if mine is not None and mine.verdict != found.value else None,
            disputed_with=tuple(others),
        )

    def labelled_answer(self, diagnosis_id: int) -> tuple[DiagnosisReply, str, str] | None:
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
            labels=tuple((lb.user_id, lb.verdict) for lb in latest),
        )
        return reply, stored.channel, stored.message_ts


def _listed(items: list[SuspectItem]) -> list[dict[str, object]]:
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


def _ranked_faults(batch: DiagnosisBatch) -> list[int]:
    rows = [i for i, v in enumerate(batch.verdict) if v in FAULTS]
    return sorted(
        rows,
        key=lambda i: (
            -SEVERITY[batch.verdict[i]],
            -batch.confidence[i],
            batch.device[i],
            batch.port[i],
        ),
    )


def _short_of(
    table: PollTable, ports: list[str], now: float, quick: float, *, absent: bool
) -> dict[str, float]:
    """Ports whose history in ``table`` reaches back less than ``quick`` seconds from
    ``now``, with how long to wait until it does; ports with none count only if
    ``absent`` (a source that keeps history and has none for a port will not after a
    wait either)."""
    oldest: dict[str, float] = {}
    for port, at in zip(table.port.tolist(), table.time.tolist(), strict=True):
        oldest[port] = min(at, oldest.get(port, at))
    short: dict[str, float] = {}
    for port in ports:
        if port in oldest and now - oldest[port] < quick:
            short[port] = quick - (now - oldest[port])
        elif port not in oldest and absent:
            short[port] = quick
    return short
