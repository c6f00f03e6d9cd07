"""Shared fixtures: the packaged model, the recorded snapshot files, a clean environment."""

from __future__ import annotations

from pathlib import Path

import pytest

from linktriage.diagnosis import Model
from linktriage.model.artefact import TreeArtefact

ROOT = Path(__file__).resolve().parent.parent
SNAPSHOTS = ROOT / "fixtures" / "snapshots"


@pytest.fixture(autouse=True)
def clean_environment(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Every test gets its own empty data directory: no trained model from elsewhere."""
    monkeypatch.setenv("LINKTRIAGE_HOME", str(tmp_path / "home"))
    monkeypatch.delenv("XDG_DATA_HOME", raising=False)


@pytest.fixture(scope="session")
def model() -> Model:
    """The model shipped in the package."""
    return Model(TreeArtefact.default())


@pytest.fixture(scope="session")
def snapshots() -> Path:
    """The folder of recorded snapshot files."""
    return SNAPSHOTS
