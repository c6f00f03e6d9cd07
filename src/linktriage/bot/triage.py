"""The bot's work, free of any transport: one object per network, store and model.

Every chat transport (Slack, the console) and every job calls into :class:`Triage`, which
answers commands itself (one port, the model's card, help) and hands the rest to its
parts, one job each: :mod:`~linktriage.bot.poller` (polls for a question, the poll
job), :mod:`~linktriage.bot.digests` (lists of suspects, the digest),
:mod:`~linktriage.bot.history` (a port over time) and
:mod:`~linktriage.bot.labelling` (labels from threads and buttons). It takes its clock
and its sleep from outside, so tests and the demo run it on a simulated clock, and
answers with the plain data of :mod:`linktriage.render.replies`.
"""

from __future__ import annotations

import contextlib
import time
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import assert_never

import numpy as np

from linktriage.bot.answers import keep_answers
from linktriage.bot.commands import (
    COMMAND,
    FORMS,
    Command,
    DiagnosePort,
    ListSuspects,
    ShowHelp,
    ShowHistory,
    ShowModel,
    ShowTree,
    parse,
)
from linktriage.bot.digests import Digests, listed
from linktriage.bot.history import Histories
from linktriage.bot.labelling import GroupMembers, Labelling
from linktriage.bot.poller import Poller
from linktriage.engine.diagnosis.batch import DiagnosisBatch
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.links import PortMatcher
from linktriage.errors import LinktriageError, PollError, StoreError
from linktriage.network.watched import Network, PortRef
from linktriage.render import words
from linktriage.render.card import model_card_data
from linktriage.render.replies import (
    DiagnosisReply,
    ErrorReply,
    HelpReply,
    ModelReply,
    Reply,
    SuspectsReply,
    TreeReply,
)
from linktriage.settings import Settings
from linktriage.store import Store


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
    poller: Poller = field(init=False)
    digests: Digests = field(init=False)
    labels: Labelling = field(init=False)
    histories: Histories = field(init=False)

    def __post_init__(self) -> None:
        self.poller = Poller(
            self.network, self.store, self.settings, clock=self.clock, sleep=self.sleep
        )
        self.digests = Digests(self.network, self.store, self.model, self.poller, clock=self.clock)
        self.labels = Labelling(
            self.store, self.settings, clock=self.clock, members_of=self.members_of
        )
        self.histories = Histories(
            self.network, self.store, self.model, self.poller.last_said, clock=self.clock
        )

    # --- commands
    def handle(
        self,
        text: str,
        *,
        user: str | None = None,
        channel: str | None = None,
        spelt: str = COMMAND,
    ) -> Reply:
        """Run one command; anything that goes wrong becomes an :class:`ErrorReply`. Help
        and hints show commands starting with ``spelt``, as they are typed where the text
        came from ("/triage" in Slack, "" at the console)."""
        try:
            reply = self._answer(parse(text, command=spelt), spelt, user=user, channel=channel)
        except LinktriageError as exc:  # bad text, unknown names, a device that fails
            reply = ErrorReply(exc.message, exc.hint)
        self._audit(text, reply, user=user, channel=channel)
        return reply

    def _answer(
        self, command: Command, spelt: str, *, user: str | None, channel: str | None
    ) -> Reply:
        """What a command is answered with (each command a case of its own)."""
        match command:
            case DiagnosePort(device, port):
                return self.diagnose_port(device, port, user=user, channel=channel)
            case ShowHistory(device, port, since_s):
                return self.histories.of(device, port, since_s)
            case ShowTree(device, port):
                return self.tree(device, port)
            case ListSuspects(site):
                return self.digests.suspects(site, channel=channel)
            case ShowModel():
                return self.model_card()
            case ShowHelp():
                return HelpReply(spelt, tuple((form.form, form.does) for form in FORMS))
            case _:
                assert_never(command)

    def settle(self, text: str) -> Command:
        """The command ``text`` asks for, with every name in it checked against the network
        and nothing polled: what a transport checks before it says an answer is on its way.
        Raises :class:`LinktriageError` with the reason, as :meth:`handle` would answer."""
        command = parse(text)
        match command:
            case DiagnosePort(device, port) | ShowHistory(device, port) | ShowTree(device, port):
                self.find(device, port)
            case ListSuspects(site):
                self.digests.scope(site)
            case ShowModel() | ShowHelp():
                pass  # names nothing
            case _:
                assert_never(command)
        return command

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
    def find(self, device: str, port: str) -> PortRef:
        """The port a person named (:meth:`Network.find`); one named by the LLDP neighbor
        at its far end (``port-of NAME``) is looked up in what the ports last said, as
        stored."""
        return self.network.find(device, port, heard=self.poller.last_said)

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
        ref = self.find(device, port)
        batch, row, polls = self._diagnosed(ref)
        record = batch.record(row)
        (diagnosis_id,) = keep_answers(
            self.store,
            batch,
            [row],
            [record],
            [ref],
            at=self.clock(),
            origin=origin,
            user=user,
            channel=channel,
        )
        return DiagnosisReply(
            record,
            diagnosis_id,
            ref.site,
            ref.serves,
            asked_by=user,
            at=self.clock(),
            windows=self.histories.of_answer(ref, polls),
        )

    def tree(self, device: str, port: str) -> TreeReply:
        """One port diagnosed now, with the tree it went through (to draw its path)."""
        batch, row, _ = self._diagnosed(self.find(device, port))
        return TreeReply(batch.record(row), batch.node[row], self.model.artefact)

    def _diagnosed(self, ref: PortRef) -> tuple[DiagnosisBatch, int, PollTable]:
        """The port's polls gathered and diagnosed, with its far end's where LLDP names a
        port this network reads: the batch, the port's row in it, and the polls. The far end
        its last stored poll names (or that last named it) is polled with it, at once, so
        both ends share one wait; a far end that turns out otherwise is polled after."""
        known = self._far_end(ref, self.store.latest_poll(ref.device))
        refs = [ref] if known is None else [ref, known]
        polls, failed = self.poller.polls_for(refs)
        if ref.device in failed:
            raise PollError(ref.device, failed[ref.device])
        far = self._far_end(ref, polls)
        if far is not None and far != known:
            far_polls, far_failed = self.poller.polls_for([far])
            if not far_failed:  # a far end that cannot be read costs the answer nothing
                polls = PollTable.concat([polls, far_polls])
        batch = diagnose(polls, self.model)
        row = batch.index_of(ref.device, ref.port)
        if row is None:
            raise PollError(ref.device, words.answered_without(ref.port))
        return batch, row, polls

    def _far_end(self, ref: PortRef, polls: PollTable) -> PortRef | None:
        """The port at the other end of ``ref``'s link, as its latest poll's neighbor names
        it, else the port whose LLDP last named ``ref``, where the network reads that port."""
        mine = np.flatnonzero((polls.device == ref.device) & (polls.port == ref.port))
        far = far_port = None
        if len(mine):
            latest = mine[np.argmax(polls.time[mine])]
            far, far_port = polls.neighbor_device[latest], polls.neighbor_port[latest]
        if far is None or far_port is None:
            # It hears no neighbor: a port that still hears it, as last polled, may name it.
            named = self.poller.naming(ref.device, ref.port)
            if named is None:
                return None
            far, far_port = named
        refs = self.network.ports()
        found = PortMatcher([r.device for r in refs], [r.port for r in refs]).find(far, far_port)
        return None if found < 0 else refs[found]

    def recheck(
        self, diagnosis_id: int, *, user: str | None = None, channel: str | None = None
    ) -> Reply:
        """The same port diagnosed again now (the answer's "Check again" button): its window
        has grown by every poll since, which is what a quiet port needs."""
        stored = self.store.diagnosis(diagnosis_id)
        if stored is None:
            return ErrorReply(words.LABEL_GONE, words.ANSWER_GONE_HINT)
        reply: Reply
        try:
            reply = self.diagnose_port(stored.device, stored.port, user=user, channel=channel)
            changed = words.what_changed(stored.record, stored.at, reply.record, self.clock())
            reply = replace(reply, changed=changed)
        except LinktriageError as exc:
            reply = ErrorReply(exc.message, exc.hint)
        self._audit(f"check again {stored.device} {stored.port}", reply, user=user, channel=channel)
        return reply

    def carried(self, reply: Reply, *, channel: str | None) -> tuple[int | None, int | None]:
        """The answer (diagnosis id) or list of suspects (digest id) a reply carries into
        a channel (None: out of chat, as the watch sends its digests), a list kept now if it
        was not yet: what its message, once posted, is attached to. (None, None) for
        replies with no thread worth reading (help, errors, an empty list asked for)."""
        if isinstance(reply, DiagnosisReply):
            return reply.diagnosis_id, None
        if isinstance(reply, SuspectsReply) and (reply.items or reply.kind == "digest"):
            digest_id = reply.digest_id
            if digest_id is None:
                digest_id = self.store.add_digest(
                    listed(reply.items), at=reply.at, kind=reply.kind, channel=channel
                )
            return None, digest_id
        return None, None

    def posted(self, reply: Reply, *, channel: str, ts: str) -> bool:
        """Remember where an answer was posted, so replies in its thread can label it.

        Returns False for answers that have no thread worth reading (help, errors, ...).
        """
        diagnosis_id, digest_id = self.carried(reply, channel=channel)
        if diagnosis_id is not None:
            self.store.attach_message(diagnosis_id, channel, ts)
            return True
        if digest_id is not None:
            self.store.attach_digest_message(digest_id, channel, ts)
            return isinstance(reply, SuspectsReply) and bool(reply.items)
        return False
