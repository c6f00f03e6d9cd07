"""The verdicts against a set written by hand from the standards, without the model in view
(fixtures/expert: each case's reasoning and source beside it)."""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from linktriage.diagnosis import DiagnosisBatch, Model, diagnose
from linktriage.model.evaluate import score
from linktriage.snapshot import read_snapshot_file
from linktriage.verdicts import Verdict

EXPERT = Path(__file__).resolve().parent.parent / "fixtures" / "expert"


@pytest.fixture(scope="module")
def expert(model: Model) -> tuple[DiagnosisBatch, np.ndarray]:
    result = read_snapshot_file(EXPERT / "snapshots.jsonl")
    assert result.problems == []
    batch = diagnose(result.polls, model)
    labels = {
        (label["device"], label["port"]): label["expect"]
        for label in map(json.loads, (EXPERT / "labels.jsonl").read_text().splitlines())
    }
    assert len(labels) == len(batch) >= 100
    expected = np.array([labels[key] for key in zip(batch.device, batch.port, strict=True)])
    return batch, expected


def test_the_set_is_rebuilt_exactly_from_its_cases(tmp_path: Path) -> None:
    for name in ("build.py", "cases.toml"):
        shutil.copy(EXPERT / name, tmp_path / name)
    subprocess.run([sys.executable, str(tmp_path / "build.py")], check=True, capture_output=True)
    for name in ("snapshots.jsonl", "labels.jsonl"):
        assert (tmp_path / name).read_bytes() == (EXPERT / name).read_bytes(), name


def test_every_case_states_its_reasoning_and_source() -> None:
    for label in map(json.loads, (EXPERT / "labels.jsonl").read_text().splitlines()):
        assert label["why"] and label["source"], label["port"]


def test_macro_f1_on_the_hand_written_set_is_at_least_0_95(expert) -> None:  # type: ignore[no-untyped-def]
    batch, expected = expert
    answered = np.array([v.value for v in batch.verdict])
    result = score(expected, answered)
    assert result.macro_f1 >= 0.95, result.wrong
    assert result.healthy_called_faulty <= 0.01, result.wrong


def test_no_answer_on_the_set_is_one_physics_rules_out(expert) -> None:  # type: ignore[no-untyped-def]
    batch, _ = expert
    m = batch.measures
    for i, verdict in enumerate(batch.verdict):
        if verdict is Verdict.DUPLEX_MISMATCH:
            assert m["speed_bps"][i] <= 1e9 or m["half_duplex"][i] == 1.0
        if verdict is Verdict.OPTIC_DEGRADED:
            assert m["has_optics"][i] == 1.0
        if verdict is Verdict.HEALTHY:
            assert not batch.allowed.signs.errors[i]
