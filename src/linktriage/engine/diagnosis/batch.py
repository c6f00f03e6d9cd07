"""A batch of diagnoses: every port's verdict computed column-wise, and each port's record
(the shape of ``diagnose --json``) built only when asked for, with the per-node, per-leaf
and per-verdict wording worked out once for the ports that share it."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from functools import cache, cached_property, partial

import msgspec
import numpy as np
import numpy.typing as npt

from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.format.answers import (
    AggregateRecord,
    BitErrorRecord,
    DiagnosisRecord,
    EvidenceRecord,
    FarEndRecord,
    LinkRecord,
    NearestOther,
    OwnViewRecord,
    RuledOutRecord,
    Verdict,
)
from linktriage.engine.links import UNREAD, judge_link
from linktriage.engine.measure.columns import Columns
from linktriage.engine.measure.window import WindowTable
from linktriage.engine.model.features import FEATURE_KIND, FEATURE_NAMES, FeatureRows
from linktriage.engine.model.nearest import Nearest
from linktriage.engine.model.questions import change_said
from linktriage.engine.physics import Allowed
from linktriage.engine.verdict_kit.ends import LinkView
from linktriage.engine.verdict_kit.readings import PortGroup, item
from linktriage.engine.verdicts import GUARD_KINDS, TREE, kind_of
from linktriage.engine.verdicts.admin_down import ADMIN_DOWN
from linktriage.engine.verdicts.healthy import HEALTHY
from linktriage.gc_pause import gc_paused

#: Ports whose records are worded together: enough to share the work of a verdict's words,
#: few enough to keep one chunk's records in memory.
_CHUNK = 4096

#: Verdicts whose reading rests on bit errors, so the BER estimate belongs in the answer.
_BER_VERDICTS = frozenset(kind.verdict for kind in TREE if kind.bit_errors)


@cache
def _advice_json(
    verdict: Verdict, fiber: bool | None, poe: bool | None
) -> tuple[msgspec.Raw, msgspec.Raw]:
    """The next checks and the cautions for a verdict on a port of this medium and PoE
    state, as the JSON a line holds: encoded once for every line alike."""
    kind = kind_of(verdict)
    checks = [c.text for c in kind.checks_for(fiber=fiber)]
    warn = [c.value for c in kind.cautions_for(poe=poe, fiber=fiber)]
    return msgspec.Raw(_encode(checks)), msgspec.Raw(_encode(warn))


_encode = msgspec.json.Encoder().encode


class _Line(msgspec.Struct, gc=False):
    """One line of ``diagnose --json``, its fields in the format's order; the parts that
    many ports share are JSON already (``Raw``), encoded once."""

    device: str
    port: str
    verdict: str
    title: str
    confidence: float | None
    questions: msgspec.Raw
    evidence: list[EvidenceRecord]
    ruled_out: RuledOutRecord | None
    nearest_other: NearestOther | None
    next_checks: msgspec.Raw
    cautions: msgspec.Raw
    model_version: str
    window_s: float
    polls: int
    bit_errors: BitErrorRecord | None
    note: str | None
    aggregate: AggregateRecord | msgspec.UnsetType = msgspec.UNSET


class _LinkedLine(_Line, gc=False, kw_only=True):
    """A line whose far end is in the same input: the far end and the link, after."""

    far_end: FarEndRecord
    link: LinkRecord


class _DecidedLine(_LinkedLine, gc=False, kw_only=True):
    """A line whose verdict the link decided: this end's own answer kept, after."""

    own_view: OwnViewRecord


#: Where the link's verdict is an answer of its own, its evidence cites both ends' counters.
_LINK_SOURCE = "both ends of the link, each counting what it receives (RFC 2863, RFC 3635)"


_encode_lines = msgspec.json.Encoder().encode_lines
_decode_records = msgspec.json.Decoder(DiagnosisRecord).decode_lines


_BER_COLUMNS = ("ber", "ber_floor", "ber_hi", "objective", "rx_errors")


@dataclass
class DiagnosisBatch:
    """Every port's verdict, computed column-wise; records are built on demand.

    The per-port columns are kept as Python lists: records read them one port at a time.
    """

    model: Model
    windows: WindowTable
    measures: Columns
    features: FeatureRows
    allowed: Allowed
    device: list[str]
    port: list[str]
    verdict: list[Verdict]
    confidence: list[float | None]  # rounded to 4 places; None where a guard answered
    node: list[int]  # the tree node whose classes decided; -1 where a guard answered
    ruled_out: list[Verdict | None]  # the tree's first choice where the physics ruled it out
    values: npt.NDArray[np.float64]  # the feature columns, as the tree compared them
    reported: npt.NDArray[np.bool_]  # which features the device's counters gave
    nearest: Nearest  # the change that would give another verdict; none where a guard answered
    fiber: list[bool | None]
    poe: list[bool | None]
    phy: list[str | None]
    window_s: list[float]
    polls: list[int]
    note: list[str | None]
    far: list[int]  # the row at the other end of each port's link, -1 where none is known

    def __post_init__(self) -> None:
        self._columns: dict[str, list[float]] | None = None
        self._views: dict[int, LinkView] = {}
        self._changes: dict[tuple[int, float, bool, int], Callable[[float], str]] = {}

    def __len__(self) -> int:
        return len(self.verdict)

    def index_of(self, device: str, port: str) -> int | None:
        """Row of one port, or None when the batch has no such port."""
        for i, (d, p) in enumerate(zip(self.device, self.port, strict=True)):
            if d == device and p == port:
                return i
        return None

    def records(self) -> Iterator[DiagnosisRecord]:
        for start in range(0, len(self), _CHUNK):
            yield from self.records_many(list(range(start, min(start + _CHUNK, len(self)))))

    def advice_key(self, i: int) -> tuple[Verdict, bool | None, bool | None]:
        """What the checks and cautions of row ``i`` depend on: verdict, fiber, PoE."""
        return self.verdict[i], self.fiber[i], self.poe[i]

    def column(self, name: str) -> list[float]:
        """A :mod:`~linktriage.engine.measure.measures` column as a list (records read it port
        by port)."""
        if self._columns is None:
            self._columns = {}
        values = self._columns.get(name)
        if values is None:
            values = self._columns[name] = self.measures[name].tolist()
        return values

    def words(self, name: str) -> list[object]:
        """A field of words or lists of format 1.2 at each port's latest poll."""
        words: list[object] = self.windows.extra[name].tolist()
        return words

    def measured(self, name: str, i: int) -> float:
        """One measure of the port in row ``i``."""
        return self.column(name)[i]

    def record(self, i: int) -> DiagnosisRecord:
        """The full diagnosis of the port in row ``i``."""
        return self.records_many([i])[0]

    def records_many(self, rows: list[int]) -> list[DiagnosisRecord]:
        """The diagnoses of ``rows``: their lines of ``diagnose --json``, read back."""
        return _decode_records(self.lines_many(rows)) if rows else []

    def lines_many(self, rows: list[int]) -> bytes:
        """The diagnoses of ``rows`` as lines of ``diagnose --json``, worded together:
        evidence a verdict at a time, questions a node at a time, and what many ports say
        alike (a question answered with the same value, a verdict's checks and cautions)
        encoded once."""
        with gc_paused():  # many small acyclic objects (see linktriage.gc_pause)
            return _encode_lines(self._lines(rows))

    def _lines(self, rows: list[int]) -> list[_Line]:
        evidence = self.evidence_many(rows)
        links = self._links(rows, evidence)
        nearest = self.nearest_many(rows)
        asked = [i for i in rows if self.node[i] >= 0]
        questions = dict(
            zip(
                asked,
                self.model.explainer.questions_json_many(
                    [self.node[i] for i in asked],
                    self.values[asked],
                    self.reported[asked],
                ),
                strict=True,
            )
        )
        lines: list[_Line] = []
        aggregates = self._aggregates(rows)
        for i, e, n in zip(rows, evidence, nearest, strict=True):
            asked_json = questions.get(i)
            if asked_json is None:  # a guard answered: the question it asked
                asked_json = _encode([GUARD_KINDS[self.verdict[i]].question(self, i)])
            link = links.get(i)
            if link is not None and self.decides(i):
                line = self._decided_line(i, e, msgspec.Raw(asked_json), n, link)
            else:
                line = self._line(i, e, msgspec.Raw(asked_json), n, link)
            if i in aggregates:
                line.aggregate = aggregates[i]
            lines.append(line)
        return lines

    def _aggregates(self, rows: list[int]) -> dict[int, AggregateRecord]:
        """The aggregate of each row that is a member of one whose other members are in the
        batch (one pass over the batch's members, only where the input names aggregates)."""
        names = self.windows.extra["aggregate"].tolist()
        wanted = [i for i in rows if names[i] is not None]
        if not wanted:
            return {}
        members: dict[tuple[str, str], list[int]] = {}
        for j, name in enumerate(names):
            if name is not None:
                members.setdefault((self.device[j], name), []).append(j)
        out: dict[int, AggregateRecord] = {}
        made: dict[tuple[str, str], AggregateRecord] = {}
        for i in wanted:
            key = (self.device[i], names[i])
            group = members[key]
            if len(group) < 2:
                continue
            record = made.get(key)
            if record is None:
                record = made[key] = self._aggregate(key[1], group)
            out[i] = record
        return out

    def _aggregate(self, name: str, group: list[int]) -> AggregateRecord:
        """One aggregate's record: a member that is not up, is silent or errs while its
        siblings are healthy is named, whatever its own verdict (SNAPSHOT-FORMAT 1.2)."""
        verdicts = [self.link_verdict(j) for j in group]
        carrying = [j for j, v in zip(group, verdicts, strict=True) if v == HEALTHY]
        weak = [
            (j, v) for j, v in zip(group, verdicts, strict=True) if v not in (HEALTHY, ADMIN_DOWN)
        ]
        if weak and carrying:
            named = ", ".join(f"{self.port[j]} ({kind_of(v).title})" for j, v in weak)
            said = (
                f"{named}: {len(carrying)} of {len(group)} members carry the load of {name}, "
                "with less capacity and redundancy than it was built with"
            )
        elif weak:
            said = f"no member of {name} is healthy"
        else:
            said = f"every member of {name} read here is healthy"
        return {
            "name": name,
            "members": [
                {"port": self.port[j], "verdict": v} for j, v in zip(group, verdicts, strict=True)
            ],
            "said": said,
        }

    def _links(
        self, rows: list[int], evidence: list[list[EvidenceRecord]]
    ) -> dict[int, tuple[FarEndRecord, LinkRecord]]:
        """Each row's far end and the link seen from both ends, for rows whose far end is
        in the batch."""
        paired = [i for i in rows if self.far[i] >= 0]
        if not paired:
            return {}
        said = dict(zip(rows, evidence, strict=True))
        missing = sorted({self.far[i] for i in paired} - said.keys())
        said.update(zip(missing, self.evidence_many(missing), strict=True))
        out = {}
        for i in paired:
            j = self.far[i]
            view = self.link(i)
            assert view is not None
            far_end: FarEndRecord = {
                "device": self.device[j],
                "port": self.port[j],
                "verdict": self.verdict[j],
                "evidence": said[j],
            }
            link: LinkRecord = {
                "verdict": view.verdict,
                "title": kind_of(view.verdict).title,
                "said": list(view.said),
                "checks": list(view.checks),
                "agree": view.agree,
            }
            out[i] = (far_end, link)
        return out

    def link(self, i: int) -> LinkView | None:
        """The link of row ``i`` judged from both ends, None where its far end is not in
        the batch; judged once, as lists of suspects and records both ask."""
        j = self.far[i]
        if j < 0:
            return None
        view = self._views.get(i)
        if view is None:
            view = self._views[i] = judge_link(i, j, self.verdict, self.column, self.end_name)
        return view

    def decides(self, i: int) -> bool:
        """Whether the link's view, from both ends, gives row ``i`` another verdict than
        its own counters do: both ends read and measured, and the link judged otherwise."""
        j = self.far[i]
        if j < 0 or self.verdict[i] in UNREAD or self.verdict[j] in UNREAD:
            return False
        view = self.link(i)
        return view is not None and view.verdict != self.verdict[i]

    def link_verdict(self, i: int) -> Verdict:
        """Row ``i``'s answer: the link's verdict where :meth:`decides`, else the port's
        own. What records say and lists of suspects rank by."""
        if self.decides(i):
            view = self.link(i)
            assert view is not None
            return view.verdict
        return self.verdict[i]

    def link_confidence(self, i: int) -> float | None:
        """How sure row ``i``'s answer is (None: a guard answered). Where the link decided:
        as sure as the end whose own verdict it is, else (neither end alone says it) no
        surer than the less sure of the two ends, since it rests on both ends' readings."""
        if not self.decides(i):
            return self.confidence[i]
        j = self.far[i]
        if self.verdict[j] == self.link_verdict(i) and self.confidence[j] is not None:
            return self.confidence[j]
        known = [c for c in (self.confidence[i], self.confidence[j]) if c is not None]
        return min(known) if known else None

    def end_name(self, i: int) -> str:
        """A port as the link's words name it: ``lark-core1 up3``."""
        return f"{self.device[i]} {self.port[i]}"

    def _line(
        self,
        i: int,
        evidence: list[EvidenceRecord],
        questions: msgspec.Raw,
        nearest: NearestOther | None,
        link: tuple[FarEndRecord, LinkRecord] | None,
    ) -> _Line:
        verdict = self.verdict[i]
        checks, warn = _advice_json(*self.advice_key(i))
        kind = _Line if link is None else partial(_LinkedLine, far_end=link[0], link=link[1])
        return kind(
            self.device[i],
            self.port[i],
            verdict,
            kind_of(verdict).title,
            self.confidence[i],
            questions,
            evidence,
            self.ruled_out_record(i),
            nearest,
            checks,
            warn,
            self.model.version,
            self.window_s[i],
            self.polls[i],
            self.bit_errors(i),
            self.note[i],
        )

    def _decided_line(
        self,
        i: int,
        evidence: list[EvidenceRecord],
        questions: msgspec.Raw,
        nearest: NearestOther | None,
        link: tuple[FarEndRecord, LinkRecord],
    ) -> _Line:
        """The line of a port whose verdict the link decided: the link's verdict, its
        reasons as evidence (then the far end's readings where they are that verdict's,
        each naming that end), its checks naming each end, and the cautions for this port;
        the tree's questions of this end stay, with its own answer beside."""
        far_end, view = link
        verdict = Verdict(view["verdict"])
        kind = kind_of(verdict)
        said: list[EvidenceRecord] = []
        if far_end["verdict"] == verdict:  # the far end's readings, said as its own
            at = self.end_name(self.far[i])
            said = [{**e, "said": f"at {at}: {e['said']}"} for e in far_end["evidence"]]
        reasons = [item("link", None, "", None, _LINK_SOURCE, reason) for reason in view["said"]]
        own_checks = kind.checks_for(fiber=self.fiber[i])
        # What stops harm first, then the checks naming each end, then the verdict's own.
        checks = [
            *(c.text for c in own_checks if c.stops_harm),
            *view["checks"],
            *(c.text for c in own_checks if not c.stops_harm),
        ]
        _, warn = _advice_json(verdict, self.fiber[i], self.poe[i])
        own: OwnViewRecord = {
            "verdict": self.verdict[i],
            "title": kind_of(self.verdict[i]).title,
            "confidence": self.confidence[i],
            "evidence": evidence,
            "nearest_other": nearest,
        }
        return _DecidedLine(
            self.device[i],
            self.port[i],
            verdict,
            kind.title,
            self.link_confidence(i),
            questions,
            reasons + said,
            self.ruled_out_record(i),
            None,  # the tree's nearest change moves this end's own answer, not the link's
            msgspec.Raw(_encode(checks)),
            warn,
            self.model.version,
            self.window_s[i],
            self.polls[i],
            self.bit_errors(i),
            self.note[i],
            far_end=far_end,
            link=view,
            own_view=own,
        )

    def evidence(self, i: int) -> list[EvidenceRecord]:
        """The readings the verdict of row ``i`` rests on."""
        return self.evidence_many([i])[0]

    def evidence_many(self, rows: list[int]) -> list[list[EvidenceRecord]]:
        """The readings each verdict of ``rows`` rests on, worded a verdict at a time by
        the verdict's own module."""
        out: list[list[EvidenceRecord]] = [[] for _ in rows]
        groups: dict[Verdict, list[int]] = {}
        for k, i in enumerate(rows):
            groups.setdefault(self.verdict[i], []).append(k)
        for verdict, places in groups.items():
            built = kind_of(verdict).evidence(PortGroup(self, [rows[k] for k in places]))
            for k, items in zip(places, built, strict=True):
                out[k] = items
        return out

    @cached_property
    def oper_status(self) -> list[str]:
        """Each port's operational status at its latest poll (RFC 2863 ifOperStatus)."""
        return [str(state) for state in self.windows.oper_status]

    def nearest_many(self, rows: list[int]) -> list[NearestOther | None]:
        """What would change the verdict of each of ``rows``: worded once per change, and
        ports at the same value share one record (records are for reading)."""
        at = np.asarray(rows, np.intp)
        near = self.nearest
        column = near.column[at]
        made: dict[tuple[int, float, bool, int, float], NearestOther] = {}
        out: list[NearestOther | None] = []
        for key in zip(
            column.tolist(),
            near.threshold[at].tolist(),
            near.above[at].tolist(),
            near.klass[at].tolist(),
            self.values[at, np.maximum(column, 0)].tolist(),
            strict=True,
        ):
            if key[0] < 0:
                out.append(None)
                continue
            record = made.get(key)
            if record is None:
                record = made[key] = self._nearest(*key)
            out.append(record)
        return out

    def _nearest(self, column: int, threshold: float, up: bool, k: int, v: float) -> NearestOther:
        verdict = self.model.tree.classes[k]
        feature = FEATURE_NAMES[column]
        said = self._changes.get((column, threshold, up, k))
        if said is None:
            title = kind_of(verdict).title
            said = change_said(feature, FEATURE_KIND[feature], threshold, up, title)
            self._changes[(column, threshold, up, k)] = said
        return {
            "verdict": verdict,
            "feature": feature,
            "value": float(f"{v:.6g}"),
            "threshold": threshold,
            "direction": "above" if up else "below",
            "said": said(v),
        }

    def ruled_out_record(self, i: int) -> RuledOutRecord | None:
        first = self.ruled_out[i]
        if first is None:
            return None
        rule = self.allowed.rule_against(i, first)
        if rule is None:
            return None
        return {"verdict": first, "needs": rule.needs, "source": rule.source}

    def bit_errors(self, i: int) -> BitErrorRecord | None:
        """The BER estimate of row ``i`` where its verdict rests on bit errors."""
        phy = self.phy[i]
        if self.verdict[i] not in _BER_VERDICTS or phy is None:
            return None
        fer = self.column("fer")[i]
        if fer != fer:  # NaN: no receive error counts to estimate from
            return None
        ber, lower, upper, objective, errors = (self.column(n)[i] for n in _BER_COLUMNS)
        return {
            "phy": phy,
            "estimate": float(f"{ber:.3g}"),
            "lower": float(f"{lower:.3g}"),
            "upper": float(f"{upper:.3g}"),
            "objective": objective,
            "errors": errors,
            "exceeds": bool(self.allowed.signs.errors[i]),
        }


def headline(record: DiagnosisRecord) -> str:
    """The one reading a verdict rests on most, for one-line summaries; else its note."""
    if record["evidence"]:
        return record["evidence"][0]["said"]
    return record["note"] or ""


#: The note of a port no verdict fits.
NO_FIT_NOTE = "no verdict fits every reading; this is the tree's own answer"
