"""Opening a store: an engine for a URL (a missing driver said plainly), SQLite's settings,
a URL fit to print, and what a store holds, read without creating anything."""

from __future__ import annotations

import re
import time
from pathlib import Path
from typing import Any

import sqlalchemy as sa
from sqlalchemy.engine import Connection, Engine

from linktriage.errors import StoreError
from linktriage.store.records import PollHistory, StoreState
from linktriage.store.schema import (
    JOBS_LEASE,
    leases_table,
    outbox_table,
    polls_table,
    schema_version_table,
)


def sqlite_pragmas(dbapi_connection: Any, _record: Any) -> None:
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA journal_mode=WAL")  # readers do not wait for the writer
    cursor.execute("PRAGMA foreign_keys=ON")
    cursor.execute("PRAGMA busy_timeout=5000")
    # After each checkpoint the log is cut back to this (64 MiB) instead of staying as
    # large as it ever grew.
    cursor.execute("PRAGMA journal_size_limit=67108864")
    cursor.close()


#: The extra that installs each database's driver (pyproject.toml).
_DRIVER_EXTRAS = {"postgresql": "postgresql"}


def masked_url(url: str) -> str:
    """A URL fit to print: any password replaced, even in a URL SQLAlchemy cannot parse."""
    try:
        return sa.make_url(url).render_as_string(hide_password=True)
    except sa.exc.ArgumentError:
        return re.sub(r"(://[^:/@\s]*:)[^@/\s]*@", r"\1***@", url)


def engine_for(url: str) -> Engine:
    """An engine for ``url``; a URL that does not parse, or whose driver is missing, is a
    StoreError that says what to do."""
    try:
        return sa.create_engine(url)
    except sa.exc.ArgumentError as exc:
        raise StoreError(
            f"The store URL {masked_url(url)!r} is not a database URL ({exc}).",
            hint='Write it as SQLAlchemy does, e.g. "postgresql://user@host/linktriage", or '
            "leave [store] url out for the SQLite file in the data directory.",
        ) from exc
    except ImportError as exc:
        backend = url.split(":", 1)[0].split("+", 1)[0]
        extra = _DRIVER_EXTRAS.get(backend)
        hint = (
            f"Install it with: pip install 'linktriage[{extra}]'"
            if extra
            else "Install the database driver SQLAlchemy names for this URL."
        )
        raise StoreError(
            f"The store at {masked_url(url)} needs a database driver that is not installed "
            f"({exc}).",
            hint=hint,
        ) from exc


def inspect_store(url: str) -> StoreState:
    """The store at ``url`` as it stands, creating nothing. Raises StoreError."""
    engine = engine_for(url)
    shown = masked_url(url)
    try:
        database = sa.make_url(url).database if engine.dialect.name == "sqlite" else None
        on_disk = database is not None and database not in ("", ":memory:")
        if on_disk and not Path(str(database)).exists():
            return StoreState(shown, False, None, None, None)
        with engine.connect() as conn:
            tables = sa.inspect(conn)
            if not tables.has_table(schema_version_table.name):
                return StoreState(shown, True, None, None, None)
            version = conn.execute(sa.select(sa.func.max(schema_version_table.c.version))).scalar()
            history = history_of(conn) if tables.has_table(polls_table.name) else None
            holder, waiting = None, 0
            if tables.has_table(leases_table.name):
                holder = lease_holder_in(conn, JOBS_LEASE, now=time.time())
            if tables.has_table(outbox_table.name):
                waiting = conn.execute(
                    sa.select(sa.func.count()).where(outbox_table.c.state == "waiting")
                ).scalar_one()
            size = None
            if engine.dialect.name == "postgresql":
                size = conn.exec_driver_sql("SELECT pg_database_size(current_database())").scalar()
        if on_disk:
            files = [Path(f"{database}{suffix}") for suffix in ("", "-wal")]
            size = sum(f.stat().st_size for f in files if f.exists())
        return StoreState(shown, True, int(version or 0), history, size, holder, int(waiting))
    except sa.exc.SQLAlchemyError as exc:
        first = str(exc).splitlines()[0]
        raise StoreError(f"Cannot reach the store at {shown}: {first}") from exc
    finally:
        engine.dispose()


def lease_holder_in(conn: Connection, name: str, *, now: float) -> str | None:
    """Who holds the lease ``name`` at ``now``, if anyone."""
    holder = conn.execute(
        sa.select(leases_table.c.holder).where(
            (leases_table.c.name == name) & (leases_table.c.expires_at >= now)
        )
    ).scalar()
    return None if holder is None else str(holder)


def history_of(conn: Connection) -> PollHistory:
    row = conn.execute(
        sa.select(
            sa.func.count(),
            sa.func.coalesce(sa.func.sum(polls_table.c.ports), 0),
            sa.func.min(polls_table.c.first),
            sa.func.max(polls_table.c.time),
        )
    ).one()
    return PollHistory(int(row[0]), int(row[1]), row[2], row[3])
