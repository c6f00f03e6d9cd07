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
        ("diagnosis.py", "linktriage.network.polling"),  # the core reaching the readers
        ("window.py", "linktriage.render.words"),  # the core reaching the drawers
        ("store.py", "linktriage.bot.triage"),  # the store reaching the bot
        ("render/blocks.py", "linktriage.transports.slack"),  # a drawer reaching a transport
        ("network/interface.py", "linktriage.network.polling"),  # inside a folder
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
    # phy reads the poll table; the table importing phy back is allowed by the layers
    # (one layer, `:`) but is a cycle
    path = copy_of_the_house / "linktriage" / "polls.py"
    path.write_text(path.read_text() + "\nimport linktriage.phy  # noqa: E402\n")
    done = lint(copy_of_the_house)
    assert done.returncode != 0
    assert "at any depth BROKEN" in done.stdout  # the cycle contract, and only it
    assert "5 kept, 1 broken" in done.stdout
    assert ".polls -> .phy" in done.stdout
