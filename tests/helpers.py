"""Small builders for hand-written snapshot lines, so tests state only what matters, and
one collector question asked the way the service asks it."""

from __future__ import annotations

import asyncio
import json
import os
import shutil
import subprocess
import sys
from collections.abc import Awaitable, Callable
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any, TypeVar

from linktriage.engine.format.counters import COLUMN_INDEX, COLUMNS
from linktriage.engine.format.poll_table import PollTable
from linktriage.engine.format.snapshot import read_snapshots
from linktriage.network.collectors.base import Collector, Reading

T0 = "2026-03-02T08:00:00Z"
C = TypeVar("C", bound=Collector)
R = TypeVar("R")


def line(
    time: str = T0,
    counters: dict[str, int] | None = None,
    *,
    device: str = "lark-test-sw1",
    port: str = "port1",
    oper_status: str = "up",
    **fields: Any,
) -> str:
    """One snapshot line as JSON text."""
    record = {
        "device": device,
        "port": port,
        "time": time,
        "oper_status": oper_status,
        "counters": counters or {},
        **fields,
    }
    return json.dumps(record)


def _modulus(name: str) -> int:
    """Where a counter wraps: its width in the catalogue (names it does not know: by "HC")."""
    known = COLUMN_INDEX.get(name)
    wide = COLUMNS[known].bits == 64 if known is not None else "HC" in name
    return 2**64 if wide else 2**32


def grown(
    grow: dict[str, int],
    *,
    window_s: float = 300.0,
    last: dict[str, Any] | None = None,
    port: str = "port1",
    device: str = "lark-test-sw1",
    **state: Any,
) -> list[str]:
    """Two polls of one port ``window_s`` apart, each counter grown by ``grow`` between
    them from a start value of its own (Counter32 names wrap modulo 2^32), with ``state``
    at both polls and ``last`` changing fields at the second."""
    t1 = datetime.fromisoformat(T0.replace("Z", "+00:00")) + timedelta(seconds=window_s)
    first = {name: 3_000_000_000 + 7 * k for k, name in enumerate(grow)}
    second = {name: (first[name] + value) % _modulus(name) for name, value in grow.items()}
    fields = {"device": device, "port": port, **state}
    later = {**fields, **(last or {})}
    return [
        line(T0, first, **fields),
        line(t1.isoformat().replace("+00:00", "Z"), second, **later),
    ]


def stepped(
    steps: list[dict[str, int]],
    *,
    every_s: float = 300.0,
    port: str = "port1",
    device: str = "lark-test-sw1",
    **state: Any,
) -> list[str]:
    """Polls of one port ``every_s`` apart, each counter grown by ``steps[k]`` in interval
    ``k``; a step's ``link_changes`` is how many times the link went down or up within it."""
    start = datetime.fromisoformat(T0.replace("Z", "+00:00"))
    names = sorted({name for step in steps for name in step if name != "link_changes"})
    value = {name: 3_000_000_000 + 7 * k for k, name in enumerate(names)}
    changes = 0
    out = [line(T0, dict(value), device=device, port=port, link_changes=0, **state)]
    for k, step in enumerate(steps, 1):
        changes += step.get("link_changes", 0)
        for name in names:
            value[name] = (value[name] + step.get(name, 0)) % _modulus(name)
        at = (start + timedelta(seconds=every_s * k)).isoformat().replace("+00:00", "Z")
        out.append(line(at, dict(value), device=device, port=port, link_changes=changes, **state))
    return out


def polls(*lines: str) -> PollTable:
    """Parse lines that must all be valid."""
    result = read_snapshots(lines)
    assert result.problems == [], result.problems
    return result.polls


def named(table: PollTable) -> dict[str, dict[str, Any]]:
    """Every row of a poll table by device, port and time, each value by its own name (the
    snapshot format's counter names, the table's field names): equal for two tables that
    hold the same readings, whatever order their catalogues keep columns in."""
    from linktriage.engine.format.counters import COLUMNS

    out: dict[str, dict[str, Any]] = {}
    for i in range(len(table)):
        key = f"{table.device[i]} {table.port[i]} {table.time[i]!r}"
        readings = {**{f"state.{k}": v[i] for k, v in table.state.items()},
                    **{f"optics.{k}": v[i] for k, v in table.optics.items()}}  # fmt: skip
        out[key] = {
            "status": str(table.oper_status[i]),
            "counters": {
                c.name: int(table.counters[i, j])
                for j, c in enumerate(COLUMNS)
                if table.present[i, j]
            },
            "readings": {k: float(v) for k, v in readings.items() if v == v},  # NaN: absent
            "neighbor": [table.neighbor_device[i], table.neighbor_port[i]],
            "extra": {k: v[i] for k, v in table.extra.items() if v[i] is not None},
        }
    return out


PACKAGE = Path(__file__).resolve().parents[1] / "src" / "linktriage"


def package_copy(where: Path, edits: dict[str, Callable[[str], str]]) -> Path:
    """A copy of the linktriage package under ``where``, each file named in ``edits``
    (relative to the package) rewritten by its function; returns the folder to put on
    PYTHONPATH. A test changes the product as a developer would, in a copy."""
    root = where / "package"
    shutil.copytree(PACKAGE, root / "linktriage", ignore=shutil.ignore_patterns("__pycache__"))
    for name, edit in edits.items():
        path = root / "linktriage" / name
        before = path.read_text()
        after = edit(before)
        assert after != before, f"the edit of {name} changed nothing"
        path.write_text(after)
    return root


def run_in_copy(root: Path, script: str, *args: str) -> subprocess.CompletedProcess[str]:
    """Run ``script`` in a fresh interpreter that imports the package copy at ``root``
    (and these test helpers); it must exit 0."""
    tests = Path(__file__).resolve().parent
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(root), str(tests)])}
    check = f"import linktriage; assert linktriage.__file__.startswith({str(root)!r})\n"
    done = subprocess.run(
        [sys.executable, "-c", check + script, *args],
        env=env,
        capture_output=True,
        text=True,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    return done


def artefact_of(clf: Any, features: list[str]) -> Any:
    """A fitted scikit-learn tree as a linktriage artefact (with a placeholder summary)."""
    from linktriage.engine.model.artefact import TrainingSummary, TreeArtefact, content_version
    from linktriage.engine.model.train import tree_arrays

    arrays = tree_arrays(clf)
    classes = [str(c) for c in clf.classes_]
    summary = TrainingSummary(
        seed=0, simulated_ports=0, rows=0, folds=5, ccp_alpha=0.0, selection="test",
        cv_macro_f1=0.0, cv_macro_f1_se=0.0, best_cv_macro_f1=0.0, best_ccp_alpha=0.0,
        per_class_recall={}, healthy_false_alarm=0.0,
        sklearn_version="test",
    )  # fmt: skip
    return TreeArtefact(
        version=content_version(features, classes, arrays),
        features=features,
        classes=classes,
        tree=arrays,
        training=summary,
    )


def ask_once(collector: C, question: Callable[[C], Awaitable[R]]) -> R:
    """One question to a collector on a loop of its own, closing the collector after."""

    async def once() -> R:
        try:
            return await question(collector)
        finally:
            await collector.close()

    return asyncio.run(once())


def read_once(collector: Collector, ports: list[str] | None = None) -> Reading:
    """One read of a collector, as one poll of the service makes it."""
    return ask_once(collector, lambda c: c.read(ports))


def polled_for_an_hour(folder: Path, settings: str = "") -> Path:
    """A settings file (with ``settings`` added) whose store, a SQLite file in ``folder``,
    holds the poll job's last hour of the demo network, up to five minutes ago: recent
    enough that a question or a list needs one fresh poll, not two."""
    import time

    from linktriage.bot.jobs import Jobs
    from linktriage.bot.triage import Triage
    from linktriage.engine.diagnosis.loaded_model import Model
    from linktriage.network.demo import DemoClock, DemoNetwork
    from linktriage.settings import Settings
    from linktriage.store import Store

    store_path = folder / "s.sqlite"
    config = folder / "c.toml"
    config.write_text(f'[store]\nurl = "sqlite:///{store_path}"\n{settings}')
    clock = DemoClock(time.time() - 3600.0)
    store = Store(f"sqlite:///{store_path}")
    triage = Triage(DemoNetwork(clock=clock), store, Model.load(), Settings(), clock=clock)
    jobs = Jobs(triage, post=lambda reply: None, channel=None, holding=True)  # the only replica
    for _ in range(12):
        jobs.poll()
        clock.sleep(300.0)
    store.close()
    return config
