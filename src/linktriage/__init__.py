"""linktriage: triage misbehaving network links from their interface counters.

The public names below load on first use, so ``import linktriage`` stays cheap for the
command line and for collectors that only need the snapshot format.
"""

from __future__ import annotations

import importlib
from typing import Any

__version__ = "0.1.0"

_EXPORTS = {
    "DiagnosisBatch": "linktriage.diagnosis",
    "DiagnosisRecord": "linktriage.diagnosis",
    "LineProblem": "linktriage.snapshot",
    "LinktriageError": "linktriage.errors",
    "Model": "linktriage.diagnosis",
    "PollTable": "linktriage.polls",
    "Snapshot": "linktriage.snapshot",
    "Verdict": "linktriage.verdicts",
    "compute_windows": "linktriage.window",
    "diagnose": "linktriage.diagnosis",
    "feature_rows": "linktriage.features",
    "measure": "linktriage.measures",
    "read_snapshot_file": "linktriage.snapshot",
    "read_snapshots": "linktriage.snapshot",
}

__all__ = ["__version__", *sorted(_EXPORTS)]


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'linktriage' has no attribute {name!r}")
    return getattr(importlib.import_module(module), name)


def __dir__() -> list[str]:
    return __all__
