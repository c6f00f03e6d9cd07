"""The package's public surface is small and stays as listed."""

from __future__ import annotations

import pytest

import linktriage

PUBLIC = [
    "DiagnosisBatch", "DiagnosisRecord", "LineProblem", "LinktriageError", "Model",
    "PollTable", "Snapshot", "Verdict", "__version__", "compute_windows", "diagnose",
    "feature_rows", "measure", "read_snapshot_file", "read_snapshots",
]  # fmt: skip


def test_all_lists_exactly_the_public_names() -> None:
    assert sorted(linktriage.__all__) == sorted(PUBLIC)


def test_every_public_name_resolves() -> None:
    for name in linktriage.__all__:
        assert getattr(linktriage, name) is not None


def test_an_unknown_name_is_an_attribute_error() -> None:
    with pytest.raises(AttributeError, match="nothing_here"):
        linktriage.nothing_here  # type: ignore[attr-defined]  # noqa: B018
