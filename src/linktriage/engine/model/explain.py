"""The path through the tree as yes/no questions, each with the measured value and threshold.

Questions on one feature merge into one: a path that asks "more than 2?" and later "more
than 5?" of the same value asks once, and "more than 2?" then "more than 5? no" reads as
one range question. A node's path is fixed, so its wording is worked out once per node;
only the measured values differ from port to port.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import msgspec
import numpy as np
import numpy.typing as npt

from linktriage.engine.format.answers import QuestionRecord
from linktriage.engine.measure.numbers import rounded
from linktriage.engine.model.artefact import CompiledTree, Step
from linktriage.engine.model.features import FEATURE_KIND
from linktriage.engine.model.questions import (
    ANY_BELOW,
    ANY_QUESTIONS,
    NOT_REPORTED,
    QUESTIONS,
    format_threshold,
    value_reader,
    yes_no,
)


@dataclass(frozen=True, slots=True)
class PathQuestion:
    """A question on the path to a node, with everything that does not depend on the port:
    its words, and its JSON around the two parts that do (the value and how it reads)."""

    text: str
    feature: str
    column: int
    threshold: float
    answer: bool
    reads: Callable[[float], str]  # a measured value as it reads beside this question
    range: tuple[float, float] | None = None
    head: bytes = b""  # the JSON up to the value ...
    middle: bytes = b""  # ... from the value to how it reads ...
    tail: bytes = b""  # ... and after it

    @classmethod
    def asked(
        cls, text: str, feature: str, column: int, threshold: float, answer: bool,
        reads: Callable[[float], str], range: tuple[float, float] | None = None,
    ) -> PathQuestion:  # fmt: skip
        """A question with its JSON parts worked out once (the fields in
        :class:`~linktriage.engine.format.answers.QuestionRecord`'s order)."""
        head = b'{"question":%s,"answer":%s,"feature":%s,"value":' % (
            _encode(text),
            _encode(answer),
            _encode(feature),
        )
        middle = b',"threshold":%s,"said":' % _encode(threshold)
        tail = b"}" if range is None else b',"range":%s}' % _encode(list(range))
        return cls(text, feature, column, threshold, answer, reads, range, head, middle, tail)


def merge(path: Sequence[Step], features: Sequence[str]) -> list[PathQuestion]:
    """One question per feature on ``path``, in the order the features were first asked."""
    order: list[int] = []
    low: dict[int, float] = {}  # the value is above this
    high: dict[int, float] = {}  # the value is at most this
    for step in path:
        if step.feature not in order:
            order.append(step.feature)
        if step.went_right:
            low[step.feature] = max(low.get(step.feature, -math.inf), step.threshold)
        else:
            high[step.feature] = min(high.get(step.feature, math.inf), step.threshold)
    out = []
    for column in order:
        feature = features[column]
        kind = FEATURE_KIND[feature]
        above, between = QUESTIONS[feature]
        lo, hi = low.get(column), high.get(column)
        if lo is not None and hi is not None:
            text = between.format(lo=format_threshold(kind, lo), hi=format_threshold(kind, hi))
            reads = value_reader(kind, lo)
            out.append(PathQuestion.asked(text, feature, column, lo, True, reads, (lo, hi)))
        else:
            t = lo if lo is not None else hi
            assert t is not None
            if kind == "log_ratio" and t < ANY_BELOW:
                text, reads = ANY_QUESTIONS[feature], value_reader(kind, None)
            else:
                text, reads = above.format(t=format_threshold(kind, t)), value_reader(kind, t)
            out.append(PathQuestion.asked(text, feature, column, t, lo is not None, reads))
    return out


class Explainer:
    """Turns a node and a port's feature row into the questions the tree asked."""

    def __init__(self, tree: CompiledTree) -> None:
        self.tree = tree
        self.steps: dict[int, tuple[PathQuestion, ...]] = {
            node: tuple(merge(path, tree.features)) for node, path in tree.paths.items()
        }

    @staticmethod
    def said(question: PathQuestion, value: float, reported: bool = True) -> str:
        """The answer as it reads, with the measured value: "yes: 4.1 in 100,000"."""
        if not reported:
            return f"{yes_no(question.answer)}: {NOT_REPORTED}"
        return f"{yes_no(question.answer)}: {question.reads(value)}"

    def _answered(self, q: PathQuestion, value: float, known: bool) -> bytes:
        """One question answered, as its JSON object."""
        shown = _encode(rounded(value) if known else None)
        return q.head + shown + q.middle + _encode(self.said(q, value, known)) + q.tail

    def questions(
        self, node: int, row: Sequence[float], reported: Sequence[bool] | None = None
    ) -> list[QuestionRecord]:
        """The questions on the way to ``node`` for the port whose features are ``row``."""
        answered = [
            self._answered(
                q, float(row[q.column]), True if reported is None else bool(reported[q.column])
            )
            for q in self.steps[node]
        ]
        return _decode_questions(b"[" + b",".join(answered) + b"]")

    def questions_json_many(
        self,
        nodes: Sequence[int],
        rows: npt.NDArray[np.float64],
        reported: npt.NDArray[np.bool_],
    ) -> list[bytes]:
        """The questions of many ports as each one's JSON array (``nodes[k]``, row ``k`` of
        ``rows`` and ``reported``), asked a node at a time: only the columns a node asks
        about are read, and a question answered with the same value is worded and encoded
        once for every port that answers it so."""
        out: list[bytes] = [b"[]"] * len(nodes)
        groups: dict[int, list[int]] = {}
        for k, node in enumerate(nodes):
            groups.setdefault(node, []).append(k)
        # Each distinct answer worded and encoded once, whichever node asks it (paths share
        # their first questions): an unreported value reads alike whatever the tree saw, so
        # it is keyed apart from every measured one.
        said: dict[tuple[bytes, bytes, bytes, float | None], bytes] = {}
        for node, places in groups.items():
            at = np.asarray(places, np.intp)
            columns = []
            for q in self.steps[node]:
                measured = reported[at, q.column]
                if not measured.any():  # not reported by any of them: one answer for all
                    key = (q.head, q.middle, q.tail, None)
                    answer = said.get(key)
                    if answer is None:
                        answer = said[key] = self._answered(q, 0.0, False)
                    columns.append([answer] * len(places))
                    continue
                column = []
                for value, known in zip(
                    rows[at, q.column].tolist(), measured.tolist(), strict=True
                ):
                    key = (q.head, q.middle, q.tail, value if known else None)
                    answer = said.get(key)
                    if answer is None:
                        answer = said[key] = self._answered(q, value, known)
                    column.append(answer)
                columns.append(column)
            if not columns:
                continue  # a tree of one leaf asks nothing
            for k, asked in zip(places, zip(*columns, strict=True), strict=True):
                out[k] = b"[" + b",".join(asked) + b"]"
        return out


_encode = msgspec.json.Encoder().encode
_decode_questions = msgspec.json.Decoder(list[QuestionRecord]).decode
