"""JSON Lines: one object per port, the fields of SNAPSHOT-FORMAT's ``diagnose --json``.

Every line is exactly ``json.dumps(batch.record(i))``. For whole files the writer builds the
same text from pieces worked out once (a leaf's questions, a verdict's checks and cautions)
so that only the measured values are formatted per port; a test holds the two equal.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from json.encoder import encode_basestring
from typing import IO

from linktriage.diagnosis import DiagnosisBatch, DiagnosisRecord, advice
from linktriage.model.explain import PathStep, rounded
from linktriage.verdicts import GUIDES, Verdict

# One encoder for every line: json.dumps builds a new one per call unless all its
# options are the defaults.
_ENCODER = json.JSONEncoder(ensure_ascii=False)
_json = _ENCODER.encode
_string = encode_basestring  # a str as a JSON string, as the encoder writes it


def dumps(record: DiagnosisRecord) -> str:
    """One record as a single line of JSON (UTF-8 text kept as it is)."""
    return _json(record)


class LineWriter:
    """Builds the JSON line of any row of a batch, caching what rows have in common."""

    def __init__(self, batch: DiagnosisBatch) -> None:
        self.batch = batch
        self._steps: dict[int, list[tuple[str, str, PathStep]]] = {}
        self._advice: dict[tuple[Verdict, bool | None, bool | None], str] = {}
        self._answers: dict[tuple[int, int, float], str] = {}
        self._version = _json(batch.model.version)
        self._titles = {v: _string(g.title) for v, g in GUIDES.items()}

    def _leaf_steps(self, leaf: int) -> list[tuple[str, str, PathStep]]:
        """Per question: the JSON before the value, between value and answer, and the step."""
        cached = self._steps.get(leaf)
        if cached is None:
            cached = []
            for step in self.batch.model.explainer.steps[leaf]:
                head = (
                    f'{{"question": {_json(step.text)}, "answer": {_json(step.answer)}, '
                    f'"feature": {_json(step.feature)}, "value": '
                )
                middle = f', "threshold": {_json(step.threshold)}, "said": '
                cached.append((head, middle, step))
            self._steps[leaf] = cached
        return cached

    def _advice_json(self, key: tuple[Verdict, bool | None, bool | None]) -> str:
        cached = self._advice.get(key)
        if cached is None:
            checks, warn = advice(*key)
            cached = self._advice[key] = (
                f'"next_checks": {_json(list(checks))}, "cautions": {_json(list(warn))}'
            )
        return cached

    def _question(
        self, leaf: int, j: int, head: str, middle: str, step: PathStep, value: float
    ) -> str:
        """Question ``j`` of ``leaf`` answered with ``value``; many ports share values (0, 1)."""
        key = (leaf, j, value)
        text = self._answers.get(key)
        if text is None:
            shown = rounded(value)
            said = self.batch.model.explainer.said(step, value)
            text = f"{head}{'null' if shown is None else repr(shown)}{middle}{_string(said)}}}"
            if value == value:  # NaN never equals itself, so it cannot be a key
                self._answers[key] = text
        return text

    def line(self, i: int) -> str:
        b = self.batch
        leaf = b.leaf[i]
        if leaf < 0:  # guard verdicts are few: build them the plain way
            return dumps(b.record(i))
        row = b.values[i]
        questions = [
            self._question(leaf, j, head, middle, step, row[step.column])
            for j, (head, middle, step) in enumerate(self._leaf_steps(leaf))
        ]
        key = b.advice_key(i)
        verdict = key[0]
        ber = b.bit_errors(i)
        ber_json = "null"
        if ber is not None:
            exceeds = "true" if ber["exceeds"] else "false"
            ber_json = (
                f'{{"phy": {_string(ber["phy"])}, "estimate": {ber["estimate"]!r}, '
                f'"objective": {ber["objective"]!r}, "exceeds": {exceeds}}}'
            )
        note = b.note[i]
        return (
            f'{{"device": {_string(b.device[i])}, "port": {_string(b.port[i])}, '
            f'"verdict": "{verdict.value}", "title": {self._titles[verdict]}, '
            f'"confidence": {b.confidence[i]!r}, '
            f'"questions": [{", ".join(questions)}], {self._advice_json(key)}, '
            f'"model_version": {self._version}, "window_s": {b.window_s[i]!r}, '
            f'"polls": {b.polls[i]}, "bit_errors": {ber_json}, '
            f'"note": {"null" if note is None else _string(note)}}}'
        )


def write_lines(batch: DiagnosisBatch, rows: Sequence[int], out: IO[str]) -> None:
    """Write the records of ``rows``, one JSON object per line."""
    writer = LineWriter(batch)
    write = out.write
    for i in rows:
        write(writer.line(i))
        write("\n")
