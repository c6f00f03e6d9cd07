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
from linktriage.model.explain import PathQuestion, rounded
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
        self._steps: dict[int, list[tuple[str, str, str, PathQuestion]]] = {}
        self._advice: dict[tuple[Verdict, bool | None, bool | None], str] = {}
        self._answers: dict[tuple[int, int, float, bool], str] = {}
        self._version = _json(batch.model.version)
        self._titles = {v: _string(g.title) for v, g in GUIDES.items()}

    def _node_steps(self, node: int) -> list[tuple[str, str, str, PathQuestion]]:
        """Per question: the JSON before the value, between value and answer, after it."""
        cached = self._steps.get(node)
        if cached is None:
            cached = []
            for q in self.batch.model.explainer.steps[node]:
                head = (
                    f'{{"question": {_json(q.text)}, "answer": {_json(q.answer)}, '
                    f'"feature": {_json(q.feature)}, "value": '
                )
                middle = f', "threshold": {_json(q.threshold)}, "said": '
                tail = "}" if q.range is None else f', "range": {_json(list(q.range))}}}'
                cached.append((head, middle, tail, q))
            self._steps[node] = cached
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
        self, node: int, j: int, parts: tuple[str, str, str, PathQuestion], value: float,
        known: bool,
    ) -> str:  # fmt: skip
        """Question ``j`` of ``node`` answered with ``value``; many ports share values."""
        key = (node, j, value, known)
        text = self._answers.get(key)
        if text is None:
            head, middle, tail, q = parts
            shown = rounded(value) if known else None
            said = self.batch.model.explainer.said(q, value, known)
            text = f"{head}{'null' if shown is None else repr(shown)}{middle}{_string(said)}{tail}"
            self._answers[key] = text
        return text

    def line(self, i: int) -> str:
        b = self.batch
        node = b.node[i]
        if node < 0:  # guard verdicts are few: build them the plain way
            return dumps(b.record(i))
        row, known = b.values[i], b.reported[i]
        questions = [
            self._question(node, j, parts, row[parts[3].column], known[parts[3].column])
            for j, parts in enumerate(self._node_steps(node))
        ]
        key = b.advice_key(i)
        verdict = key[0]
        ber = b.bit_errors(i)
        ruled_out = b.ruled_out_record(i)
        note = b.note[i]
        return (
            f'{{"device": {_string(b.device[i])}, "port": {_string(b.port[i])}, '
            f'"verdict": "{verdict.value}", "title": {self._titles[verdict]}, '
            f'"confidence": {b.confidence[i]!r}, '
            f'"questions": [{", ".join(questions)}], "evidence": {_json(b.evidence(i))}, '
            f'"ruled_out": {"null" if ruled_out is None else _json(ruled_out)}, '
            f"{self._advice_json(key)}, "
            f'"model_version": {self._version}, "window_s": {b.window_s[i]!r}, '
            f'"polls": {b.polls[i]}, "bit_errors": {"null" if ber is None else _json(ber)}, '
            f'"note": {"null" if note is None else _string(note)}}}'
        )


def write_lines(batch: DiagnosisBatch, rows: Sequence[int], out: IO[str]) -> None:
    """Write the records of ``rows``, one JSON object per line."""
    writer = LineWriter(batch)
    write = out.write
    for i in rows:
        write(writer.line(i))
        write("\n")
