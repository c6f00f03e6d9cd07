"""The diagnosis service: from a poll table to a verdict per port that an engineer can audit.

polls -> windows -> features -> guards -> pruned tree -> records. The whole batch is
computed column-wise; one record per port (plain dicts, the shape of ``diagnose --json``)
is built only when asked for, with the per-leaf wording worked out once.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from typing import TypedDict

import numpy as np
import numpy.typing as npt
import pandas as pd

from linktriage.features import FEATURE_NAMES, feature_matrix, feature_table
from linktriage.guards import apply_guards
from linktriage.messages import (
    GUARD_POLLS,
    GUARD_TRAFFIC,
    GUARD_UP,
    format_ratio,
    ratio_scale,
    traffic_said,
)
from linktriage.model.artefact import CompiledTree, TreeArtefact
from linktriage.model.explain import Explainer, QuestionRecord, rounded
from linktriage.phy import ber_objective, estimate_ber, phy_name
from linktriage.polls import PollTable
from linktriage.verdicts import GUIDES, Verdict, cautions, next_checks
from linktriage.window import DEFAULT_MAX_WINDOW_S, WindowTable, compute_windows


class BitErrorRecord(TypedDict):
    """The bit error ratio implied by the FCS errors, against the PHY's IEEE 802.3 objective."""

    phy: str
    estimate: float
    objective: float
    exceeds: bool


class DiagnosisRecord(TypedDict):
    """One port's diagnosis: one line of ``diagnose --json``."""

    device: str
    port: str
    verdict: str
    title: str
    confidence: float
    questions: list[QuestionRecord]
    next_checks: list[str]
    cautions: list[str]
    model_version: str
    window_s: float
    polls: int
    bit_errors: BitErrorRecord | None
    note: str | None


class Model:
    """A loaded model: the artefact, its compiled arrays and the question wording."""

    def __init__(
        self,
        artefact: TreeArtefact,
        *,
        source: str = "the packaged default model",
        trained_at: float | None = None,
    ) -> None:
        self.artefact = artefact
        self.source = source  # where it was loaded from, for the model card
        self.trained_at = trained_at  # None for the packaged model
        self.tree = CompiledTree(artefact)
        self.explainer = Explainer(self.tree)

    @property
    def version(self) -> str:
        return self.artefact.version

    @property
    def resolution(self) -> float:
        return self.artefact.training.guard_resolution

    @classmethod
    def load(cls, path: str | Path | None = None) -> Model:
        """The model at ``path``; else the current one of the data directory's registry
        (``linktriage train``, ``linktriage model --use``); else the packaged one."""
        from linktriage.model.registry import Registry

        if path is not None:
            return cls(TreeArtefact.load(path), source=str(path))
        kept = Registry().current()
        if kept is not None:
            artefact, entry = kept
            return cls(artefact, source="the current kept model", trained_at=entry.trained_at)
        return cls(TreeArtefact.default())


# Verdicts whose reading rests on bit errors, so the BER estimate belongs in the answer.
# (A duplex mismatch damages frames by collision, not by bit errors on the wire.)
_BER_VERDICTS = frozenset({Verdict.HEALTHY, Verdict.CABLE_FAULT, Verdict.OPTIC_DEGRADED})


@cache
def advice(
    verdict: Verdict, fiber: bool | None, poe: bool | None
) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Next checks and cautions for a verdict on a port of this medium and PoE state."""
    return tuple(next_checks(verdict, fiber=fiber)), tuple(cautions(verdict, poe=poe, fiber=fiber))


def _flags(values: npt.NDArray[np.float64]) -> list[bool | None]:
    return [None if v != v else bool(v) for v in values.tolist()]  # v != v: NaN


@dataclass
class DiagnosisBatch:
    """Every port's verdict, computed column-wise; records are built on demand.

    The per-port columns are kept as Python lists: records read them one port at a time.
    """

    model: Model
    windows: WindowTable
    table: pd.DataFrame
    device: list[str]
    port: list[str]
    verdict: list[Verdict]
    confidence: list[float]  # rounded to 4 places, as reported
    leaf: list[int]  # -1 where a guard answered
    values: list[list[float]]  # the feature columns, as measured (NaN: not reported)
    fiber: list[bool | None]
    poe: list[bool | None]
    phy: list[str | None]
    ber_estimate: list[float]
    frames: list[float]  # frames seen in both directions over the window
    errors: list[float]  # error events over the window
    window_s: list[float]
    polls: list[int]
    note: list[str | None]

    def __len__(self) -> int:
        return len(self.verdict)

    def index_of(self, device: str, port: str) -> int | None:
        """Row of one port, or None when the batch has no such port."""
        for i, (d, p) in enumerate(zip(self.device, self.port, strict=True)):
            if d == device and p == port:
                return i
        return None

    def records(self) -> Iterator[DiagnosisRecord]:
        for i in range(len(self)):
            yield self.record(i)

    def advice_key(self, i: int) -> tuple[Verdict, bool | None, bool | None]:
        """What the checks and cautions of row ``i`` depend on: verdict, fiber, PoE."""
        return self.verdict[i], self.fiber[i], self.poe[i]

    def record(self, i: int) -> DiagnosisRecord:
        """The full diagnosis of the port in row ``i``."""
        verdict = self.verdict[i]
        checks, warn = advice(*self.advice_key(i))
        leaf = self.leaf[i]
        if leaf >= 0:
            questions = self.model.explainer.questions(leaf, self.values[i])
        else:
            questions = self._guard_questions(i, verdict)
        return {
            "device": self.device[i],
            "port": self.port[i],
            "verdict": verdict.value,
            "title": GUIDES[verdict].title,
            "confidence": self.confidence[i],
            "questions": questions,
            "next_checks": list(checks),
            "cautions": list(warn),
            "model_version": self.model.version,
            "window_s": self.window_s[i],
            "polls": self.polls[i],
            "bit_errors": self.bit_errors(i),
            "note": self.note[i],
        }

    def bit_errors(self, i: int) -> BitErrorRecord | None:
        """The BER estimate of row ``i`` where its verdict rests on bit errors."""
        phy = self.phy[i]
        objective = ber_objective(phy)
        estimate = self.ber_estimate[i]
        if self.verdict[i] not in _BER_VERDICTS or phy is None or objective is None:
            return None
        if estimate != estimate:  # NaN: no FCS or error counts to estimate from
            return None
        return {
            "phy": phy,
            "estimate": float(f"{estimate:.3g}"),
            "objective": objective,
            "exceeds": estimate > objective,
        }

    def _guard_questions(self, i: int, verdict: Verdict) -> list[QuestionRecord]:
        w = self.windows
        if verdict is Verdict.LINK_DOWN:
            return [_q(GUARD_UP, False, "oper_status", None, None, f"no: {w.oper_status[i]}")]
        if verdict is Verdict.NO_DATA:
            said = f"no: {self.note[i]}"
            return [_q(GUARD_POLLS, False, "polls", float(self.polls[i]), 2.0, said)]
        resolution = self.model.resolution
        frames, errors = self.frames[i], self.errors[i]
        needed = frames_needed(resolution)
        text = GUARD_TRAFFIC.format(t=format_ratio(resolution, ratio_scale(resolution)))
        said = traffic_said(frames, errors, self.window_s[i], needed)
        return [_q(text, False, "frames", rounded(frames), needed, said)]


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


def frames_needed(resolution: float) -> float:
    """Frames a clean window needs before its 95% upper bound falls below ``resolution``."""
    return float(np.ceil(np.log(0.05) / np.log1p(-resolution)))


def _phy_names(speed: npt.NDArray[np.float64], fiber: npt.NDArray[np.float64]) -> list[str | None]:
    """PHY family per port, worked out once per distinct (speed, medium)."""
    keys = np.stack([np.nan_to_num(speed, nan=-1.0), np.nan_to_num(fiber, nan=-1.0)], axis=1)
    uniques, codes = np.unique(keys, axis=0, return_inverse=True)
    names = [phy_name(s, None if f < 0 else bool(f)) for s, f in uniques]
    return [names[c] for c in codes.ravel()]


def diagnose(
    polls: PollTable, model: Model, *, max_window_s: float = DEFAULT_MAX_WINDOW_S
) -> DiagnosisBatch:
    """Diagnose every port in ``polls`` with ``model``."""
    windows = compute_windows(polls, max_window_s=max_window_s)
    table = feature_table(windows)
    guarded_verdict = apply_guards(windows, table, resolution=model.resolution)
    x = feature_matrix(table)
    leaf = model.tree.apply(x)
    proba = model.tree.proba[leaf]
    best = np.argmax(proba, axis=1)
    confidence = proba[np.arange(len(best)), best]
    guarded = np.array([v is not None for v in guarded_verdict], np.bool_)
    verdict = [
        Verdict(g if g is not None else t)
        for g, t in zip(guarded_verdict, model.tree.classes[best], strict=True)
    ]
    confidence = np.where(guarded, 1.0, confidence).round(4)
    leaf = np.where(guarded, -1, leaf)

    phy = _phy_names(table["speed_bps"].to_numpy(), table["fiber"].to_numpy())
    fer = table["rx_crc_ratio"].fillna(table["rx_error_ratio"]).to_numpy()
    ber = estimate_ber(fer, table["rx_octets_per_frame"].to_numpy() * 8.0)
    return DiagnosisBatch(
        model=model,
        windows=windows,
        table=table,
        device=[str(d) for d in windows.device],
        port=[str(p) for p in windows.port],
        verdict=verdict,
        confidence=confidence.tolist(),
        leaf=leaf.tolist(),
        values=table[list(FEATURE_NAMES)].to_numpy(np.float64).tolist(),
        fiber=_flags(windows.state["fiber"]),
        poe=_flags(windows.state["poe"]),
        phy=phy,
        ber_estimate=ber.tolist(),
        frames=table["frames"].tolist(),
        errors=table["error_events"].tolist(),
        window_s=windows.window_s.tolist(),
        polls=windows.polls_used.tolist(),
        note=[str(n) or None for n in windows.note],
    )
