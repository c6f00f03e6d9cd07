"""The house's layering, as import-linter contracts in pyproject.toml: the core imports
nothing from the network readers, the bot, the drawers, the transports or the command
line; no layer imports from one above it; no import cycles at any depth."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).parents[1]
CONFIG = ROOT / "pyproject.toml"
LINT = Path(sys.executable).with_name("lint-imports")


def lint(source: Path) -> subprocess.CompletedProcess[str]:
    """import-linter's verdict on the package under ``source``, with the project's
    contracts."""
    env = {**os.environ, "PYTHONPATH": str(source)}
    return subprocess.run(
        [str(LINT), "--config", str(CONFIG), "--no-cache"],
        capture_output=True,
        text=True,
        env=env,
        cwd=source,
    )


@pytest.fixture
def copy_of_the_house(tmp_path: Path) -> Path:
    """The package copied aside, to break on purpose."""
    shutil.copytree(ROOT / "src" / "linktriage", tmp_path / "linktriage")
    return tmp_path


def test_every_arrow_of_the_house_points_down() -> None:
    done = lint(ROOT / "src")
    assert done.returncode == 0, done.stdout + done.stderr
    assert "0 broken" in done.stdout


@pytest.mark.parametrize(
    ("module", "upward"),
    [
        # the engine reaching the readers, the drawers
        ("engine/diagnosis/pipeline.py", "linktriage.network.inventory_network"),
        ("engine/measure/window.py", "linktriage.render.words"),
        ("engine/measure/window.py", "linktriage.engine.physics"),  # inside the engine
        ("engine/format/counters.py", "linktriage.engine.format.snapshot"),  # inside a part
        ("store/__init__.py", "linktriage.bot.triage"),  # the store reaching the bot
        ("render/blocks.py", "linktriage.transports.slack"),  # a drawer reaching a transport
        ("network/watched.py", "linktriage.network.inventory_network"),  # inside a folder
    ],
)
def test_an_import_from_a_layer_above_breaks_the_build(
    copy_of_the_house: Path, module: str, upward: str
) -> None:
    path = copy_of_the_house / "linktriage" / module
    path.write_text(path.read_text() + f"\nimport {upward}  # noqa: E402\n")
    done = lint(copy_of_the_house)
    assert done.returncode != 0
    assert "BROKEN" in done.stdout and upward in done.stdout


def test_an_import_cycle_within_one_layer_breaks_the_build(copy_of_the_house: Path) -> None:
    # The counter catalogue and the optics sit in one layer of the format (`:`), so each may
    # import the other as far as the layers go; both doing so is a cycle all the same.
    for name, other in (("counters", "optics"), ("optics", "counters")):
        path = copy_of_the_house / "linktriage" / "engine" / "format" / f"{name}.py"
        path.write_text(
            path.read_text() + f"\nimport linktriage.engine.format.{other}  # noqa: E402\n"
        )
    done = lint(copy_of_the_house)
    assert done.returncode != 0
    assert "at any depth BROKEN" in done.stdout  # the cycle contract, and only it
    contracts = CONFIG.read_text().count("[[tool.importlinter.contracts]]")
    assert f"{contracts - 1} kept, 1 broken" in done.stdout
    assert ".optics -> .counters" in done.stdout
