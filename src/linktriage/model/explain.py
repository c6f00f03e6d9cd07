"""The path through the tree as yes/no questions, each with the measured value and threshold.

A leaf's path is fixed, so the wording of its questions is worked out once per leaf; only
the measured values differ from port to port.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TypedDict

from linktriage.features import FEATURE_KIND
from linktriage.messages import (
    MISSING_QUESTION,
    NOT_REPORTED,
    QUESTIONS,
    UNREPORTED_ANSWER,
    format_threshold,
    value_reader,
    yes_no,
)
from linktriage.model.artefact import CompiledTree


class QuestionRecord(TypedDict):
    """One question as it appears in ``diagnose --json`` output."""

    question: str
    answer: bool
    feature: str
    value: float | None
    threshold: float | None
    said: str


@dataclass(frozen=True, slots=True)
class PathStep:
    """A question on the path to a leaf, with everything that does not depend on the port."""

    text: str
    feature: str
    column: int
    threshold: float | None  # None: the split only asks whether the value is reported
    answer: bool
    reads: Callable[[float], str]  # a measured value as it reads beside this question


def rounded(value: float) -> float | None:
    """A measured value for output: six significant digits, None when not reported."""
    if math.isnan(value):
        return None
    return float(f"{value:.6g}")


class Explainer:
    """Turns a leaf and a port's feature row into the questions the tree asked."""

    def __init__(self, tree: CompiledTree) -> None:
        self.tree = tree
        self.steps: dict[int, tuple[PathStep, ...]] = {
            leaf: tuple(self._step(s.feature, s.threshold, s.went_right) for s in path)
            for leaf, path in tree.paths.items()
        }

    def _step(self, column: int, threshold: float, went_right: bool) -> PathStep:
        feature = self.tree.features[column]
        kind = FEATURE_KIND[feature]
        template, noun = QUESTIONS[feature]
        reads = value_reader(kind, threshold)
        if math.isinf(threshold):
            # scikit-learn's split "reported or not": every value goes left, NaN goes right.
            text = MISSING_QUESTION.format(noun=noun)
            return PathStep(text, feature, column, None, went_right, reads)
        text = template.format(t=format_threshold(kind, threshold))
        return PathStep(text, feature, column, threshold, went_right, reads)

    @staticmethod
    def said(step: PathStep, value: float) -> str:
        """The answer as it reads, with the measured value: "yes: 4.1 in 100,000"."""
        if step.threshold is None:
            return f"{yes_no(step.answer)}: {NOT_REPORTED if step.answer else 'reported'}"
        if math.isnan(value):
            return UNREPORTED_ANSWER.format(answer=yes_no(step.answer))
        return f"{yes_no(step.answer)}: {step.reads(value)}"

    def questions(self, leaf: int, row: Sequence[float]) -> list[QuestionRecord]:
        """The questions on the way to ``leaf`` for the port whose features are ``row``."""
        out: list[QuestionRecord] = []
        for step in self.steps[leaf]:
            value = float(row[step.column])
            out.append(
                {
                    "question": step.text,
                    "answer": step.answer,
                    "feature": step.feature,
                    "value": rounded(value),
                    "threshold": step.threshold,
                    "said": self.said(step, value),
                }
            )
        return out
