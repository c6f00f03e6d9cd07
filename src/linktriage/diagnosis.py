"""The diagnosis service: from a poll table to a verdict per port that an engineer can audit.

polls -> windows -> measures -> features -> physics -> guards -> pruned tree -> records. The
physics says which verdicts each port's readings allow (each rule with its reason); the
tree ranks among those; where its first choice is ruled out the record says by which rule,
and where one reading's change would lead the tree to another verdict, which change
(:mod:`linktriage.model.nearest`).
The whole batch is computed column-wise; one record per port (plain dicts, the shape of
``diagnose --json``) is built only when asked for, with the per-node wording worked out once.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from typing import NotRequired, TypedDict

import numpy as np
import numpy.typing as npt

from linktriage.bulk import collector_paused
from linktriage.columns import Columns
from linktriage.errors import ModelError
from linktriage.evidence import EvidenceRecord, evidence_of, item
from linktriage.features import FEATURE_KIND, FEATURE_NAMES, FeatureRows, feature_rows
from linktriage.guards import apply_guards
from linktriage.links import LinkView, judge_link, pair_ends
from linktriage.measures import measure, speed_media_pairs
from linktriage.model.artefact import CompiledTree, TreeArtefact
from linktriage.model.explain import Explainer, QuestionRecord, rounded
from linktriage.model.nearest import Counterfactuals, Nearest
from linktriage.phy import phy_name
from linktriage.physics import Allowed, allowed
from linktriage.polls import PollTable
from linktriage.verdicts import GUIDES, TREE_VERDICTS, Verdict, cautions, next_checks
from linktriage.window import DEFAULT_MAX_WINDOW_S, WindowTable, compute_windows, port_codes
from linktriage.wording import (
    GUARD_POLLS,
    GUARD_TRAFFIC,
    GUARD_UP,
    NO_FIT_NOTE,
    change_said,
    format_ratio,
    ratio_scale,
    traffic_said,
)


class BitErrorRecord(TypedDict):
    """The bit error ratio implied by the receive errors, against the PHY's objective.

    ``exceeds`` is true only when the ratio is significantly over the objective: its 95%
    lower bound is above it, from enough errored frames to count.
    """

    phy: str
    estimate: float
    lower: float
    upper: float
    objective: float
    errors: float
    exceeds: bool


class RuledOutRecord(TypedDict):
    """The tree's first choice, when the physics ruled it out, and the rule that did."""

    verdict: str
    needs: str
    source: str


class NearestOther(TypedDict):
    """The smallest change in one measured value that would lead the tree to another
    verdict, with the port's other readings as they are (:mod:`linktriage.model.nearest`):
    past ``threshold``, ``direction`` "above" or "below" it, the answer is ``verdict``."""

    verdict: str
    feature: str
    value: float
    threshold: float
    direction: str
    said: str


class FarEndRecord(TypedDict):
    """The port at the other end of the link, as diagnosed from the same input."""

    device: str
    port: str
    verdict: str
    evidence: list[EvidenceRecord]


class LinkRecord(TypedDict):
    """The link judged from both ends (:mod:`linktriage.links`): its verdict, why, and the
    checks, each naming the end it applies to."""

    verdict: str
    title: str
    said: list[str]
    checks: list[str]
    agree: bool  # both ends gave this verdict on their own


class DiagnosisRecord(TypedDict):
    """One port's diagnosis: one line of ``diagnose --json``."""

    device: str
    port: str
    verdict: str
    title: str
    confidence: float
    questions: list[QuestionRecord]
    evidence: list[EvidenceRecord]
    ruled_out: RuledOutRecord | None
    nearest_other: NearestOther | None
    next_checks: list[str]
    cautions: list[str]
    model_version: str
    window_s: float
    polls: int
    bit_errors: BitErrorRecord | None
    note: str | None
    far_end: NotRequired[FarEndRecord]  # only where the far end is in the same input
    link: NotRequired[LinkRecord]


class Model:
    """A loaded model: the artefact, its compiled arrays and the question wording."""

    def __init__(
        self,
        artefact: TreeArtefact,
        *,
        source: str = "the packaged default model",
        trained_at: float | None = None,
    ) -> None:
        if tuple(artefact.features) != FEATURE_NAMES:
            raise ModelError(
                f"{source} was trained on other inputs than this release computes",
                hint="Rebuild it with `linktriage train`.",
            )
        self.artefact = artefact
        self.source = source  # where it was loaded from, for the model card
        self.trained_at = trained_at  # None for the packaged model
        self.tree = CompiledTree(artefact)
        self.explainer = Explainer(self.tree)
        self.counterfactuals = Counterfactuals(self.tree)
        # Column j of the physics mask (TREE_VERDICTS order) for each class of the tree.
        self.class_columns = np.array(
            [TREE_VERDICTS.index(Verdict(c)) for c in artefact.classes], np.intp
        )

    @property
    def version(self) -> str:
        return self.artefact.version

    @classmethod
    def load(cls, path: str | Path | None = None) -> Model:
        """The model at ``path``; else the current one of the data directory's registry
        (``linktriage train``, ``linktriage model --use``); else the packaged one. A kept
        model an earlier release built is passed over for the packaged one, and the card
        says so."""
        from linktriage.model.registry import Registry

        if path is not None:
            return cls(TreeArtefact.load(path), source=str(path))
        try:
            kept = Registry().current()
            if kept is not None:
                artefact, entry = kept
                return cls(artefact, source="the current kept model", trained_at=entry.trained_at)
        except ModelError as exc:
            return cls(
                TreeArtefact.default(),
                source=f"the packaged default model (the kept one is unusable: {exc.message})",
            )
        return cls(TreeArtefact.default())


#: Ports whose records are worded together: enough to share the work of a verdict's words,
#: few enough to keep one chunk's records in memory.
_CHUNK = 4096

# Verdicts whose reading rests on bit errors, so the BER estimate belongs in the answer.
# (A duplex mismatch damages frames by collision, not by bit errors on the wire.)
_BER_VERDICTS = frozenset({Verdict.HEALTHY, Verdict.CABLE_FAULT, Verdict.OPTIC_DEGRADED})


@cache
def advice(
    verdict: Verdict, fiber: bool | None, poe: bool | None
) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Next checks and cautions for a verdict on a port of this medium and PoE state."""
    return tuple(next_checks(verdict, fiber=fiber)), tuple(cautions(verdict, poe=poe, fiber=fiber))


@cache
def advice_lists(
    verdict: Verdict, fiber: bool | None, poe: bool | None
) -> tuple[list[str], list[str]]:
    """:func:`advice` as the lists a record holds, one pair shared by every record alike."""
    checks, warn = advice(verdict, fiber, poe)
    return list(checks), list(warn)


_BER_COLUMNS = ("ber", "ber_lo", "ber_hi", "objective", "rx_errors")


def _flags(values: npt.NDArray[np.float64]) -> list[bool | None]:
    return [None if v != v else bool(v) for v in values.tolist()]  # v != v: NaN


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
    confidence: list[float]  # rounded to 4 places, as reported
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
        """A :mod:`linktriage.measures` column as a list (records read it port by port)."""
        if self._columns is None:
            self._columns = {}
        values = self._columns.get(name)
        if values is None:
            values = self._columns[name] = self.measures[name].tolist()
        return values

    def measured(self, name: str, i: int) -> float:
        """One measure of the port in row ``i``."""
        return self.column(name)[i]

    def record(self, i: int) -> DiagnosisRecord:
        """The full diagnosis of the port in row ``i``."""
        return self.records_many([i])[0]

    def records_many(self, rows: list[int]) -> list[DiagnosisRecord]:
        """The diagnoses of ``rows``, worded together: evidence a verdict at a time,
        questions a node at a time (records are for reading: ports that say the same share
        the words)."""
        with collector_paused():  # many small acyclic dicts (see linktriage.bulk)
            return self._records_many(rows)

    def _records_many(self, rows: list[int]) -> list[DiagnosisRecord]:
        evidence = self.evidence_many(rows)
        links = self._links(rows, evidence)
        nearest = self.nearest_many(rows)
        asked = [i for i in rows if self.node[i] >= 0]
        questions = dict(
            zip(
                asked,
                self.model.explainer.questions_many(
                    [self.node[i] for i in asked],
                    self.values[asked],
                    self.reported[asked],
                ),
                strict=True,
            )
        )
        records = [
            self._record(
                i,
                e,
                questions[i] if i in questions else self._guard_questions(i, self.verdict[i]),
                n,
            )
            for i, e, n in zip(rows, evidence, nearest, strict=True)
        ]
        for record, i in zip(records, rows, strict=True):
            if i in links:
                record["far_end"], record["link"] = links[i]
        return records

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
                "verdict": self.verdict[j].value,
                "evidence": said[j],
            }
            link: LinkRecord = {
                "verdict": view.verdict.value,
                "title": GUIDES[view.verdict].title,
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

    def link_verdict(self, i: int) -> Verdict:
        """What row ``i``'s link is, from both ends where both are in the batch, else from
        the port alone: what lists of suspects rank by."""
        view = self.link(i)
        return self.verdict[i] if view is None else view.verdict

    def end_name(self, i: int) -> str:
        """A port as the link's words name it: ``lark-core1 up3``."""
        return f"{self.device[i]} {self.port[i]}"

    def _record(
        self,
        i: int,
        evidence: list[EvidenceRecord],
        questions: list[QuestionRecord],
        nearest: NearestOther | None,
    ) -> DiagnosisRecord:
        verdict = self.verdict[i]
        checks, warn = advice_lists(*self.advice_key(i))
        return {
            "device": self.device[i],
            "port": self.port[i],
            "verdict": verdict.value,
            "title": GUIDES[verdict].title,
            "confidence": self.confidence[i],
            "questions": questions,
            "evidence": evidence,
            "ruled_out": self.ruled_out_record(i),
            "nearest_other": nearest,
            "next_checks": checks,
            "cautions": warn,
            "model_version": self.model.version,
            "window_s": self.window_s[i],
            "polls": self.polls[i],
            "bit_errors": self.bit_errors(i),
            "note": self.note[i],
        }

    def evidence(self, i: int) -> list[EvidenceRecord]:
        """The readings the verdict of row ``i`` rests on."""
        return self.evidence_many([i])[0]

    def evidence_many(self, rows: list[int]) -> list[list[EvidenceRecord]]:
        """The readings each verdict of ``rows`` rests on, worded a verdict at a time."""
        found = evidence_of(self.verdict, self.column, self.phy, rows)
        for k, i in enumerate(rows):
            verdict = self.verdict[i]
            if verdict is Verdict.LINK_DOWN:
                state = str(self.windows.oper_status[i])
                said = f"the port is {state} at the latest poll"
                found[k] = [
                    item("oper_status", state, "state", None, "RFC 2863 ifOperStatus", said)
                ]
            elif verdict is Verdict.NO_DATA:
                said = self.note[i] or "fewer than two usable polls"
                polls = float(self.polls[i])
                found[k] = [item("polls", polls, "polls", 2.0, "common practice", said)]
        return found

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
            title = GUIDES[_VERDICTS[verdict]].title
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
        return {"verdict": first.value, "needs": rule.needs, "source": rule.source}

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

    def _guard_questions(self, i: int, verdict: Verdict) -> list[QuestionRecord]:
        w = self.windows
        if verdict is Verdict.LINK_DOWN:
            return [_q(GUARD_UP, False, "oper_status", None, None, f"no: {w.oper_status[i]}")]
        if verdict is Verdict.NO_DATA:
            said = f"no: {self.note[i]}"
            return [_q(GUARD_POLLS, False, "polls", float(self.polls[i]), 2.0, said)]
        value = self.measured
        resolution, needed, frames = (
            value("resolution", i),
            value("frames_needed", i),
            value("rx_frames", i),
        )
        text = GUARD_TRAFFIC.format(t=format_ratio(resolution, ratio_scale(resolution)))
        said = traffic_said(frames, value("rx_errors", i), self.window_s[i], needed)
        return [_q(text, False, "rx_frames", rounded(frames), needed, said)]


def headline(record: DiagnosisRecord) -> str:
    """The one reading a verdict rests on most, for one-line summaries; else its note."""
    if record["evidence"]:
        return record["evidence"][0]["said"]
    return record["note"] or ""


def _q(
    text: str, answer: bool, feature: str, value: float | None, threshold: float | None, said: str
) -> QuestionRecord:
    return {
        "question": text,
        "answer": answer,
        "feature": feature,
        "value": value,
        "threshold": threshold,
        "said": said,
    }


def _phy_names(speed: npt.NDArray[np.float64], fiber: npt.NDArray[np.float64]) -> list[str | None]:
    """PHY family per port, worked out once per distinct (speed, medium)."""
    pairs, codes = speed_media_pairs(speed, fiber)
    names = [phy_name(s, f) for s, f in pairs]
    return [names[c] for c in codes.tolist()]


_VERDICTS = {v.value: v for v in Verdict}  # a dict lookup, cheaper than Verdict(value)


def _joined(window: str, faults: str, fit: str) -> str | None:
    """A port's notes as one; most ports have none, and pay no join."""
    if not (window or faults or fit):
        return None
    return "; ".join(n for n in (window, faults, fit) if n)


def diagnose(
    polls: PollTable, model: Model, *, max_window_s: float = DEFAULT_MAX_WINDOW_S
) -> DiagnosisBatch:
    """Diagnose every port in ``polls`` with ``model``."""
    with collector_paused():  # per-port lists of small acyclic objects (see linktriage.bulk)
        return _diagnose(polls, model, max_window_s)


#: Ports diagnosed at once by diagnose_chunks: the working arrays of a chunk take a few
#: tens of MB, where a whole file's took more than the file itself.
CHUNK_PORTS = 5000


def diagnose_chunks(
    polls: PollTable,
    model: Model,
    *,
    max_window_s: float = DEFAULT_MAX_WINDOW_S,
    ports: int = CHUNK_PORTS,
) -> Iterator[DiagnosisBatch]:
    """The diagnoses :func:`diagnose` gives, ``ports`` ports at a time, so that a large file
    is diagnosed and written in little more memory than its polls. Ports come in the order
    :func:`diagnose` gives them, except that both ends of a link (LLDP) are diagnosed in
    the chunk of the end that came first, so that each answer carries its far end."""
    codes, count = port_codes(polls)
    if count <= ports:
        yield diagnose(polls, model, max_window_s=max_window_s)
        return
    chunk = _chunks_of_ports(polls, codes, count, ports)[codes]
    order = np.argsort(chunk, kind="stable")
    starts = np.searchsorted(chunk[order], np.arange(int(chunk.max()) + 1))
    ends = [*starts[1:].tolist(), len(order)]
    for start, end in zip(starts.tolist(), ends, strict=True):
        rows = np.sort(order[start:end])  # the rows in file order, as diagnose reads them
        yield diagnose(polls.take(rows), model, max_window_s=max_window_s)


def _chunks_of_ports(
    polls: PollTable, codes: npt.NDArray[np.intp], count: int, ports: int
) -> npt.NDArray[np.intp]:
    """Each port's chunk: ``ports`` ports at a time in order of first appearance, a port
    whose far end is in the file placed next to whichever end came first."""
    lead = np.arange(count)
    if not (polls.neighbor_device != None).any():  # noqa: E711 (elementwise, on objects)
        return lead // ports
    last = np.empty(count, np.intp)
    last[codes] = np.arange(len(codes))  # one row of each port, to read its names from
    far = pair_ends(
        polls.device[last].tolist(),
        polls.port[last].tolist(),
        polls.neighbor_device[last].tolist(),
        polls.neighbor_port[last].tolist(),
    )
    lead = np.where(far >= 0, np.minimum(lead, far), lead)
    position = np.empty(count, np.intp)
    position[np.argsort(lead, kind="stable")] = np.arange(count)
    return np.asarray(position[lead] // ports, np.intp)


def _diagnose(polls: PollTable, model: Model, max_window_s: float) -> DiagnosisBatch:
    windows = compute_windows(polls, max_window_s=max_window_s)
    measured = measure(windows)
    m = measured.table
    rows = feature_rows(m)
    ok = allowed(m)
    guarded = apply_guards(windows, ok)

    tree = model.tree
    leaf = tree.apply(rows.matrix())
    mask = ok.mask[:, model.class_columns]
    choice = tree.choose(leaf, mask)
    # Nothing allowed, yet frames enough to judge: no verdict fits every reading, and the
    # tree's own answer stands, with a note saying so.
    unfit = choice.klass < 0
    klass = np.where(unfit, choice.first, choice.klass)
    node = np.where(unfit, leaf, choice.node)
    confidence = np.where(unfit, tree.proba[leaf, choice.first], choice.confidence)
    first_ruled_out = ~mask[np.arange(len(leaf)), choice.first] & ~unfit

    is_guarded = np.array([g is not None for g in guarded], np.bool_)
    values = rows.values.matrix(np.float64)
    reported = rows.reported.matrix(np.bool_)
    # A guard's answer does not come from the tree: no change of a feature moves it.
    nearest = model.counterfactuals.find(values, mask, reported & ~is_guarded[:, None])
    verdict = [
        _VERDICTS[g if g is not None else c]
        for g, c in zip(guarded, tree.classes[klass].tolist(), strict=True)
    ]
    first = tree.classes[choice.first]
    ruled_out = [
        _VERDICTS[f] if r and not g else None
        for f, r, g in zip(
            first.tolist(), first_ruled_out.tolist(), is_guarded.tolist(), strict=True
        )
    ]
    notes = [
        _joined(w, c, NO_FIT_NOTE if u and not g else "")
        for w, c, u, g in zip(
            windows.note.tolist(),
            measured.counter_faults,
            unfit.tolist(),
            is_guarded.tolist(),
            strict=True,
        )
    ]
    return DiagnosisBatch(
        model=model,
        windows=windows,
        measures=m,
        features=rows,
        allowed=ok,
        device=[str(d) for d in windows.device],
        port=[str(p) for p in windows.port],
        verdict=verdict,
        confidence=np.where(is_guarded, 1.0, confidence).round(4).tolist(),
        node=np.where(is_guarded, -1, node).tolist(),
        ruled_out=ruled_out,
        values=values,
        reported=reported,
        nearest=nearest,
        fiber=_flags(m["fiber"]),
        poe=_flags(windows.state["poe"]),
        phy=_phy_names(m["speed_bps"], m["fiber"]),
        window_s=windows.window_s.tolist(),
        far=pair_ends(
            windows.device.tolist(),
            windows.port.tolist(),
            windows.neighbor_device.tolist(),
            windows.neighbor_port.tolist(),
        ).tolist(),
        polls=windows.polls_used.tolist(),
        note=notes,
    )
