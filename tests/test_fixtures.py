"""The recorded snapshot files: current with the demo network, and diagnosed as labelled."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.answers import Verdict
from linktriage.engine.format.snapshot import read_snapshot_file
from linktriage.engine.verdicts import VERDICTS

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"
sys.path.insert(0, str(FIXTURES))
from record_demo import recordings  # noqa: E402


def test_the_recorded_files_match_what_the_demo_network_produces() -> None:
    for path, content in recordings().items():
        assert path.read_text(encoding="utf-8") == content, (
            f"rerun fixtures/record_demo.py ({path.name})"
        )


@pytest.mark.parametrize("verdict", VERDICTS)
def test_each_verdict_file_is_diagnosed_as_its_verdict(verdict: Verdict, model: Model) -> None:
    result = read_snapshot_file(FIXTURES / "snapshots" / "verdicts" / f"{verdict}.jsonl")
    assert result.problems == []
    batch = diagnose(result.polls, model)
    assert batch.verdict == [verdict]
