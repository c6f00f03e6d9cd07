"""SNMP bench: one poll of a 48-port switch by the collector, against net-snmp's snmpbulkwalk.

    .venv/bin/python bench/walk_snmp.py [--ports N] [--rounds N]

snmpsim (tests/agents/snmp.py) serves a recorded walk of a simulated switch with IF-MIB and
EtherLike-MIB counters on loopback. Timed, each the median of ``--rounds``:

* the collector's read: sysUpTime, then GETBULK walks of the 33 columns it needs, four at
  a time, parsed into snapshots;
* snmpbulkwalk of the same 33 columns, one after another (one process each, as a script
  that polls column by column would run them);
* snmpbulkwalk of the three tables those columns are in (ifTable, ifXTable,
  dot3StatsTable), which is what an engineer types, and which walks every column of them.

All use max-repetitions 25. The figures are ratios against the snmpbulkwalk runs of the
same round, so a busy machine slows both sides alike.
"""

from __future__ import annotations

import argparse
import asyncio
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from linktriage.network.collectors.base import Target
from linktriage.network.collectors.snmp import (
    COUNTER_COLUMNS,
    DOT3_ENTRY,
    IF_ENTRY,
    IFX_ENTRY,
    STATE_COLUMNS,
    SnmpCollector,
)

from agents.fleet import Fleet
from agents.snmp import Snmpsim, recorded_walk

COMMUNITY = "lark48"


def bulkwalk(binary: str, port: int, oid: str) -> int:
    """snmpbulkwalk one subtree; the number of values it printed."""
    done = subprocess.run(
        [binary, "-v2c", "-c", COMMUNITY, "-Cr25", "-On", "-Oq", f"127.0.0.1:{port}", oid],
        capture_output=True, text=True, check=True,
    )  # fmt: skip
    return len(done.stdout.splitlines())


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--ports", type=int, default=48)
    parser.add_argument("--rounds", type=int, default=7)
    args = parser.parse_args()
    binary = shutil.which("snmpbulkwalk")
    if binary is None:
        sys.exit("snmpbulkwalk is not installed (Debian package snmp; .ci/run installs it)")

    fleet = Fleet(1, args.ports, seed=5)
    with tempfile.TemporaryDirectory() as folder:
        agent = Snmpsim(Path(folder), recorded_walk(fleet, fleet.names[0], time.time()), COMMUNITY)
        try:
            os.environ["LARK_BENCH_COMMUNITY"] = COMMUNITY
            target = Target(
                "lark-bench48",
                "127.0.0.1",
                {"port": agent.port, "community": {"env": "LARK_BENCH_COMMUNITY"}},
                timeout_s=5.0,
                retries=0,
            )
            columns = [*COUNTER_COLUMNS, *STATE_COLUMNS]
            tables = [IF_ENTRY, IFX_ENTRY, DOT3_ENTRY]
            # One loop and one collector for every round, as the service keeps them.
            with asyncio.Runner() as runner:
                collector = SnmpCollector(target)
                runner.run(collector.read())  # warm: the engine, imports, snmpsim's caches
                ours, by_column, by_table = [], [], []
                for _ in range(args.rounds):
                    start = time.perf_counter()
                    reading = runner.run(collector.read())
                    ours.append(time.perf_counter() - start)
                    assert len(reading.snapshots) == args.ports, reading.problems
                    start = time.perf_counter()
                    values_by_column = sum(bulkwalk(binary, agent.port, oid) for oid in columns)
                    by_column.append(time.perf_counter() - start)
                    start = time.perf_counter()
                    values_by_table = sum(bulkwalk(binary, agent.port, oid) for oid in tables)
                    by_table.append(time.perf_counter() - start)
                runner.run(collector.close())
        finally:
            agent.stop()

    ours_s, column_s, table_s = (statistics.median(t) for t in (ours, by_column, by_table))
    print(f"one {args.ports}-port switch (snmpsim on loopback), median of {args.rounds} rounds:")
    print(f"  collector read, {len(columns)} columns, snapshots built: {ours_s * 1000:8.1f} ms")
    print(
        f"  snmpbulkwalk of the same {len(columns)} columns ({values_by_column} values): "
        f"{column_s * 1000:8.1f} ms  ({column_s / ours_s:.1f}x the collector's time)"
    )
    print(
        f"  snmpbulkwalk of the 3 tables ({values_by_table} values):       "
        f"{table_s * 1000:8.1f} ms  ({table_s / ours_s:.1f}x the collector's time)"
    )


if __name__ == "__main__":
    main()
