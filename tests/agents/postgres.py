"""A PostgreSQL server on loopback for the store's tests: Debian's postgresql, started in a
data directory of its own on a free port, trust authentication for one role, stopped and
removed at the end. Each test gets a database of its own.

PostgreSQL refuses to run as root; under root (CI containers) the server runs as the
``postgres`` user Debian's package creates.
"""

from __future__ import annotations

import glob
import os
import shutil
import socket
import subprocess
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import pytest

ROLE = "linktriage"


def _binaries() -> Path:
    """Where initdb and pg_ctl are: Debian keeps them out of PATH, per major version."""
    only = os.environ.get("LINKTRIAGE_AGENT_PATH")
    if only is not None:
        found = shutil.which("initdb", path=only) if only else None
    else:
        found = shutil.which("initdb") or next(
            iter(sorted(glob.glob("/usr/lib/postgresql/*/bin/initdb"), reverse=True)), None
        )
    if found is None:
        if os.environ.get("LINKTRIAGE_REQUIRE_AGENTS"):
            pytest.fail("PostgreSQL is not installed (.ci/run installs it)")
        pytest.skip("PostgreSQL is not installed")
    try:
        import psycopg  # noqa: F401  (SQLAlchemy 2.1's driver for postgresql:// URLs)
    except ImportError:
        pytest.skip("psycopg is not installed (pip install 'linktriage[postgresql]')")
    return Path(found).parent


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return int(probe.getsockname()[1])


@contextmanager
def postgres_server() -> Iterator[str]:
    """A running server; yields the URL of its ``postgres`` database."""
    bin_dir = _binaries()
    user = "postgres" if os.geteuid() == 0 else None
    folder = Path(tempfile.mkdtemp(prefix="linktriage-pg-"))
    if user is not None:
        shutil.chown(folder, user)
    data, log, port = folder / "data", folder / "server.log", _free_port()

    def run(*args: str) -> None:
        subprocess.run(args, check=True, capture_output=True, user=user, cwd=folder)

    try:
        run(str(bin_dir / "initdb"), "-D", str(data), "-U", ROLE, "--auth=trust", "-E", "UTF8")
        run(
            str(bin_dir / "pg_ctl"),
            "-D",
            str(data),
            "-l",
            str(log),
            "-w",
            "-o",
            f"-c listen_addresses=127.0.0.1 -p {port} -k {folder} -c fsync=off",
            "start",
        )
    except subprocess.CalledProcessError as exc:
        shutil.rmtree(folder, ignore_errors=True)
        said = (exc.stderr or b"").decode(errors="replace")[-2000:]
        pytest.fail(f"PostgreSQL did not start: {said}")
    try:
        yield f"postgresql://{ROLE}@127.0.0.1:{port}/postgres"
    finally:
        subprocess.run(
            [str(bin_dir / "pg_ctl"), "-D", str(data), "-m", "immediate", "-w", "stop"],
            capture_output=True,
            user=user,
            cwd=folder,
        )
        shutil.rmtree(folder, ignore_errors=True)


def fresh_database(server_url: str, name: str) -> str:
    """A new, empty database on the server; returns its URL."""
    import sqlalchemy as sa

    engine = sa.create_engine(server_url, isolation_level="AUTOCOMMIT")
    try:
        with engine.connect() as conn:
            conn.exec_driver_sql(f'DROP DATABASE IF EXISTS "{name}"')
            conn.exec_driver_sql(f'CREATE DATABASE "{name}"')
    finally:
        engine.dispose()
    return server_url.rsplit("/", 1)[0] + f"/{name}"
