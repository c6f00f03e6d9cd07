"""linktriage: triage misbehaving network links from their interface counters.

The public names below load on first use, so ``import linktriage`` stays cheap for the
command line and for collectors that only need the snapshot format.
"""

from __future__ import annotations

import importlib
from typing import Any

__version__ = "0.1.0"

_EXPORTS = {
    "DiagnosisBatch": "linktriage.engine.diagnosis.batch",
    "DiagnosisRecord": "linktriage.engine.format.answers",
    "LineProblem": "linktriage.engine.format.snapshot",
    "LinktriageError": "linktriage.errors",
    "Model": "linktriage.engine.diagnosis.loaded_model",
    "PollTable": "linktriage.engine.format.poll_table",
    "Snapshot": "linktriage.engine.format.snapshot",
    "Verdict": "linktriage.engine.verdicts",
    "compute_windows": "linktriage.engine.measure.window",
    "diagnose": "linktriage.engine.diagnosis.pipeline",
    "feature_rows": "linktriage.engine.model.features",
    "measure": "linktriage.engine.measure.measures",
    "read_snapshot_file": "linktriage.engine.format.snapshot",
    "read_snapshots": "linktriage.engine.format.snapshot",
}

__all__ = ["__version__", *sorted(_EXPORTS)]


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'linktriage' has no attribute {name!r}")
    return getattr(importlib.import_module(module), name)


def __dir__() -> list[str]:
    return __all__
