"""Shared fixtures: the packaged model, the recorded snapshot files, a clean environment."""

from __future__ import annotations

import hashlib
import os
from collections.abc import Iterator
from pathlib import Path

import pytest

from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.batch import DiagnosisBatch
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.model.artefact import TreeArtefact
from linktriage.engine.simulate.ports import DEFAULT_START
from linktriage.network.demo import DemoClock, DemoNetwork, demo_polls
from linktriage.settings import Settings
from linktriage.store import Store

from agents.postgres import fresh_database, postgres_server
from slack_emulator import SlackEmulator
from webhook_receiver import WebhookReceiver

ROOT = Path(__file__).resolve().parent.parent
SNAPSHOTS = ROOT / "fixtures" / "snapshots"


@pytest.fixture(autouse=True)
def clean_environment(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Every test gets its own empty data directory: no trained model from elsewhere."""
    monkeypatch.setenv("LINKTRIAGE_HOME", str(tmp_path / "home"))
    for name in list(os.environ):
        if name.startswith(("LINKTRIAGE_", "SLACK_")) and name not in (
            "LINKTRIAGE_HOME",
            "LINKTRIAGE_REQUIRE_AGENTS",
            "LINKTRIAGE_AGENT_PATH",
        ):
            monkeypatch.delenv(name)
    monkeypatch.delenv("XDG_DATA_HOME", raising=False)


@pytest.fixture(scope="session")
def model() -> Model:
    """The model shipped in the package."""
    return Model(TreeArtefact.default())


@pytest.fixture(scope="session")
def demo_batch(model: Model) -> DiagnosisBatch:
    """Every port of the demo network, diagnosed with the packaged model."""
    return diagnose(demo_polls(), model)


@pytest.fixture(scope="session")
def snapshots() -> Path:
    """The folder of recorded snapshot files."""
    return SNAPSHOTS


@pytest.fixture
def emulator() -> Iterator[SlackEmulator]:
    """A local Slack Web API that records every call (test_slack adds a user group)."""
    running = SlackEmulator().start()
    yield running
    running.stop()


@pytest.fixture
def webhook() -> Iterator[WebhookReceiver]:
    """A webhook on loopback that takes every POST (a test may make some fail first)."""
    running = WebhookReceiver().start()
    yield running
    running.stop()


@pytest.fixture(scope="session")
def postgres_server_url() -> Iterator[str]:
    """A PostgreSQL server on loopback for the whole session (skipped where not installed)."""
    with postgres_server() as url:
        yield url


@pytest.fixture
def postgres_url(postgres_server_url: str, request: pytest.FixtureRequest) -> str:
    """A fresh database of its own on the session's PostgreSQL server."""
    name = "lt_" + hashlib.sha1(request.node.nodeid.encode()).hexdigest()[:16]
    return fresh_database(postgres_server_url, name)


@pytest.fixture(params=["sqlite", "postgresql"])
def database_url(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    """An empty database: a SQLite file, or one on a real PostgreSQL server on loopback."""
    if request.param == "sqlite":
        return f"sqlite:///{tmp_path / 'store.sqlite'}"
    return str(request.getfixturevalue("postgres_url"))


@pytest.fixture
def store(tmp_path: Path) -> Iterator[Store]:
    """A real SQLite store in a file of its own."""
    opened = Store(f"sqlite:///{tmp_path / 'store.sqlite'}")
    yield opened
    opened.close()


@pytest.fixture
def clock() -> DemoClock:
    """Simulated time, starting at the demo network's fixed moment."""
    return DemoClock(DEFAULT_START)


@pytest.fixture
def triage(store: Store, model: Model, clock: DemoClock) -> Triage:
    """The bot's service on the demo network, a real store and simulated time."""
    return Triage(
        network=DemoNetwork(clock=clock),
        store=store,
        model=model,
        settings=Settings(),
        clock=clock,
        sleep=clock.sleep,
    )
