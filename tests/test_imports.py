"""An import-light core: diagnosing needs numpy, msgspec and pydantic; not scikit-learn, and
not pandas or scipy (a third of a second to import, more than a one-port answer takes)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

HEAVY = ("sklearn", "slack_bolt", "slack_sdk", "apscheduler", "pysnmp", "httpx", "matplotlib")


def loaded_after(statement: str) -> set[str]:
    code = f"import sys; {statement}; print(' '.join(sorted(sys.modules)))"
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return {name.split(".")[0] for name in done.stdout.split()}


@pytest.mark.parametrize(
    "statement",
    [
        "import linktriage",
        "import linktriage.engine.model.features",
        "import linktriage.engine.format.snapshot",
        "from linktriage.engine.diagnosis.pipeline import Model, diagnose; Model.load()",
        "import linktriage.cli",
        "import linktriage.bot.triage",
        "import linktriage.transports.console",
        "import linktriage.render.blocks",
        "import linktriage.render.charts",
    ],
)
def test_the_core_loads_no_heavy_library(statement: str) -> None:
    assert loaded_after(statement).isdisjoint(HEAVY)


@pytest.mark.parametrize(
    "statement",
    [
        "import linktriage.engine.format.snapshot",
        "import linktriage.engine.measure.measures",
        "import linktriage.engine.physics",
        "from linktriage.engine.diagnosis.pipeline import Model, diagnose; Model.load()",
        "import linktriage.render.text",
        "import linktriage.render.jsonl",
    ],
)
def test_the_engine_path_loads_neither_pandas_nor_scipy(statement: str) -> None:
    assert loaded_after(statement).isdisjoint({"pandas", "scipy"})


def test_diagnosing_a_clean_port_from_the_command_line_loads_neither_pandas_nor_scipy(
    tmp_path: Path,
) -> None:
    # scipy's inverse beta is loaded only once some port counted errors
    # (linktriage.engine.measure.measures).
    line = {
        "device": "lark-core1",
        "port": "up1",
        "time": "2026-12-02T10:00:00Z",
        "oper_status": "up",
        "counters": {"ifHCInUcastPkts": 10**6, "ifInErrors": 0},
    }
    later = {
        **line,
        "time": "2026-12-02T10:05:00Z",
        "counters": {"ifHCInUcastPkts": 2 * 10**6, "ifInErrors": 0},
    }
    path = tmp_path / "one.jsonl"
    path.write_text(json.dumps(line) + "\n" + json.dumps(later) + "\n", encoding="utf-8")
    statement = (
        "from linktriage.cli import main\n"
        "try:\n"
        f"    main(['diagnose', '--json', '--snapshots', {str(path)!r}])\n"
        "except SystemExit:\n"
        "    pass"
    )
    loaded = loaded_after(f"exec({statement!r})")
    assert "linktriage" in loaded
    assert loaded.isdisjoint({"pandas", "scipy", *HEAVY})


def test_the_package_root_itself_loads_almost_nothing() -> None:
    assert loaded_after("import linktriage").isdisjoint({"numpy", "pandas", "pydantic", "click"})
