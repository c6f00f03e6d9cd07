"""Store growth: bytes per poll, a week of the poll job with retention, digest time.

    .venv/bin/python bench/store_growth.py [--small N] [--large N] [--days D]

On a simulated fleet of 48-port switches (tests/agents/fleet.py; 97% of ports healthy,
the rest spread over the faults), on simulated time, into real SQLite files:

* bytes per port per poll: one round of ``--small`` ports packed into the store, against
  the snapshot format's JSON lines of the same polls (how the store kept them before);
* a week: the poll job (Poller.poll_round) every 5 minutes for ``--days`` days at
  ``--small`` ports, forgetting polls older than [store] keep_polls_h (72 h); the polls
  kept at the end, and the largest the file (and its write-ahead log) grew, target under
  2 GB; and the file's bytes per port poll kept, indexes included, target at most 200;
* digest time at ``--small`` and ``--large`` ports, the store holding a day of 5-minute
  polls (the last hour polled for real, the 23 before filled with copies of them, which
  the digest does not read but the indexes hold); against the bare ``diagnose`` of the
  same polls in memory, measured in the same run; target under 10 s at 100,000 ports.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path

import sqlalchemy as sa

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from linktriage.bot.triage import Triage
from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.snapshot import iter_snapshots
from linktriage.engine.verdicts import FAULTS, TREE_VERDICTS
from linktriage.network.demo import DemoClock
from linktriage.settings import Settings
from linktriage.store import Store

from agents.fleet import Fleet, FleetNetwork

PORTS_PER_SWITCH = 48
POLL_S = 300.0
TARGET_BYTES_PER_POLL = 200
TARGET_WEEK_BYTES = 2e9
TARGET_DIGEST_S = 10.0
#: A site on a normal day: most ports healthy, a few per hundred in trouble (the faults the
#: simulator draws: the tree's).
DRAWN_FAULTS = sorted(FAULTS & set(TREE_VERDICTS))
SITE_MIX = {"healthy": 0.97, **{fault: 0.03 / len(DRAWN_FAULTS) for fault in DRAWN_FAULTS}}


def fleet(ports: int, clock: DemoClock) -> FleetNetwork:
    return FleetNetwork(
        Fleet(max(1, ports // PORTS_PER_SWITCH), PORTS_PER_SWITCH, mix=SITE_MIX), clock
    )


def on_disk(path: Path) -> int:
    return sum(p.stat().st_size for p in (path, Path(f"{path}-wal")) if p.exists())


def bytes_per_poll(ports: int, folder: Path) -> None:
    clock = DemoClock(time.time())
    table = fleet(ports, clock).fleet.read_all(clock())
    json_bytes = sum(len(s.model_dump_json(exclude_none=True)) + 1 for s in iter_snapshots(table))
    store = Store(f"sqlite:///{folder / 'one.sqlite'}")
    store.add_polls(table)
    with store.engine.connect() as conn:
        packed = int(conn.exec_driver_sql("SELECT sum(length(body)) FROM poll_packs").scalar() or 0)
    store.close()
    print(
        f"bytes per port per poll ({len(table):,} ports): packed {packed / len(table):.0f}, "
        f"as a JSON line {json_bytes / len(table):.0f} ({json_bytes / packed:.1f}x more)"
    )


def week(ports: int, days: float, folder: Path, model: Model) -> None:
    path = folder / "week.sqlite"
    clock = DemoClock(time.time())
    network = fleet(ports, clock)
    store = Store(f"sqlite:///{path}")
    settings = Settings()
    triage = Triage(network, store, model, settings, clock=clock, sleep=clock.sleep)
    rounds = int(days * 86_400 / POLL_S)
    largest, forgotten, started = 0, 0, time.perf_counter()
    for n in range(rounds):
        forgotten += triage.poller.poll_round().forgotten
        clock.sleep(POLL_S)
        if n % 288 == 287:
            largest = max(largest, on_disk(path))
            print(
                f"  day {(n + 1) // 288}: {on_disk(path) / 1e6:,.0f} MB on disk, "
                f"{time.perf_counter() - started:.0f} s",
                flush=True,
            )
    largest = max(largest, on_disk(path))
    history = store.poll_history()
    with store.engine.connect() as conn:
        conn.exec_driver_sql("PRAGMA wal_checkpoint(TRUNCATE)")
    per_poll = path.stat().st_size / max(history.ports, 1)
    store.close()
    kept_h = settings.store.keep_polls_h
    expected = min(rounds, int(kept_h * 3600 / POLL_S) + 1) * len(network.ports())
    print(
        f"a week of the poll job ({days:g} days, {rounds:,} rounds of {len(network.ports()):,} "
        f"ports, polls kept {kept_h:g} h): {history.ports:,} port polls kept "
        f"(at most {expected:,}), {forgotten:,} forgotten, largest on disk "
        f"{largest / 1e9:.2f} GB; target < {TARGET_WEEK_BYTES / 1e9:g} GB: "
        f"{'met' if largest < TARGET_WEEK_BYTES else 'NOT met'}"
    )
    met = "met" if per_poll <= TARGET_BYTES_PER_POLL else "NOT met"
    print(
        f"bytes on disk per port poll kept (SQLite, indexes included): {per_poll:.0f}; "
        f"target <= {TARGET_BYTES_PER_POLL}: {met}"
    )


def digest_time(ports: int, folder: Path, model: Model, repeats: int = 3) -> None:
    path = folder / f"day-{ports}.sqlite"
    clock = DemoClock(time.time() - 86_400)
    network = fleet(ports, clock)
    store = Store(f"sqlite:///{path}")
    triage = Triage(network, store, model, Settings(), clock=clock, sleep=clock.sleep)
    clock.sleep(23 * 3600)
    for _ in range(12):  # the last hour, polled for real
        triage.poller.poll_round()
        clock.sleep(POLL_S)
    with store.engine.begin() as conn:  # the 23 hours before: copies of that hour
        for hour in range(1, 24):
            conn.execute(
                sa.text(
                    "INSERT INTO poll_packs (device, time, first, ports, body) "
                    "SELECT device, time - :s, first - :s, ports, body FROM poll_packs "
                    "WHERE time >= :t"
                ),
                {"s": hour * 3600.0, "t": clock() - 3600.0},
            )
    with store.engine.connect() as conn:  # the copies out of the write-ahead log
        conn.exec_driver_sql("PRAGMA wal_checkpoint(TRUNCATE)")
    size = on_disk(path)
    polls = store.polls_since(clock() - Settings().chat.recent_poll_s)
    bare, whole = [], []
    for _ in range(repeats):
        start = time.perf_counter()
        diagnose(polls, model)
        bare.append(time.perf_counter() - start)
        start = time.perf_counter()
        reply = triage.digests.digest()
        whole.append(time.perf_counter() - start)
    store.close()
    took, baseline = statistics.median(whole), statistics.median(bare)
    print(
        f"digest at {len(network.ports()):,} ports (store {size / 1e9:.2f} GB, a day of polls): "
        f"{took:.2f} s ({took / baseline:.1f}x the bare diagnose of its {len(polls):,} polls, "
        f"{baseline:.2f} s); {len(reply.items):,} suspects; target < {TARGET_DIGEST_S:g} s: "
        f"{'met' if took < TARGET_DIGEST_S else 'NOT met'}",
        flush=True,
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--small", type=int, default=10_000)
    parser.add_argument("--large", type=int, default=100_000)
    parser.add_argument("--days", type=float, default=7.0)
    args = parser.parse_args()
    model = Model.load()
    with tempfile.TemporaryDirectory() as folder:
        bytes_per_poll(args.small, Path(folder))
        digest_time(args.small, Path(folder), model)
        digest_time(args.large, Path(folder), model)
        week(args.small, args.days, Path(folder), model)


if __name__ == "__main__":
    main()
