"""An import-light core: diagnosing needs numpy, pandas, scipy and pydantic, not scikit-learn."""

from __future__ import annotations

import subprocess
import sys

import pytest

HEAVY = ("sklearn", "slack_bolt", "slack_sdk", "apscheduler", "pysnmp", "httpx")


def loaded_after(statement: str) -> set[str]:
    code = f"import sys; {statement}; print(' '.join(sorted(sys.modules)))"
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return {name.split(".")[0] for name in done.stdout.split()}


@pytest.mark.parametrize(
    "statement",
    [
        "import linktriage",
        "import linktriage.features",
        "import linktriage.snapshot",
        "from linktriage.diagnosis import Model, diagnose; Model.load()",
        "import linktriage.cli",
        "import linktriage.bot.triage",
        "import linktriage.transports.console",
        "import linktriage.render.blocks",
    ],
)
def test_the_core_loads_no_heavy_library(statement: str) -> None:
    assert loaded_after(statement).isdisjoint(HEAVY)


def test_the_package_root_itself_loads_almost_nothing() -> None:
    assert loaded_after("import linktriage").isdisjoint({"numpy", "pandas", "pydantic", "click"})
