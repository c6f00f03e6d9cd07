"""Diagnose throughput: 50,000 ports end to end, against the bare cost of json.loads.

    .venv/bin/python bench/diagnose_throughput.py [--ports N] [--rounds R]

Generates a snapshot file of N simulated ports (two or three polls each, its lines in time
order, as a poller writes them: every port of one poll, then the next), then in each round
times

* baseline: ``json.loads`` of every line of the file, nothing kept;
* linktriage: reading and validating the file, windows, features, guards, the tree, and
  writing the ``diagnose --json`` output (to /dev/null),

and prints each stage's cost as a multiple of the baseline measured in the same round.
Target: the whole of it at most 1.5x the baseline. The machine is shared, so the median
over rounds is the figure that counts. Then ``linktriage diagnose --json`` runs on the file
in a process of its own for its peak memory (target 250 MB), then on ten copies of the file
under other device names, 500,000 ports (target 1 GB; ``--no-large`` skips it), and on a
one-port file for its time from start to answer, against a bare Python start (target 0.5 s).
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from linktriage.engine.diagnosis.loaded_model import Model
from linktriage.engine.diagnosis.pipeline import diagnose
from linktriage.engine.format.snapshot import iter_snapshots, read_snapshot_file, write_snapshots
from linktriage.engine.prior import simulate_prior
from linktriage.render.jsonl import write_lines

TARGET = 1.5
TARGET_PEAK_MB = 250
TARGET_LARGE_PEAK_MB = 1000
LARGE_COPIES = 10
TARGET_ONE_PORT_S = 0.5
COMMAND = Path(sys.executable).with_name("linktriage")


def make_file(path: Path, ports: int) -> int:
    polls, _ = simulate_prior(ports, np.random.default_rng(20261201))
    order = np.argsort(polls.time, kind="stable")
    with open(path, "w", encoding="utf-8") as fp:
        return write_snapshots(iter_snapshots(polls.take(order)), fp)


def baseline(path: Path) -> float:
    start = time.perf_counter()
    with open(path, "rb") as fp:
        for raw in fp:
            json.loads(raw)
    return time.perf_counter() - start


def pipeline(path: Path, model: Model) -> tuple[float, float, float, int]:
    t0 = time.perf_counter()
    result = read_snapshot_file(path)
    t1 = time.perf_counter()
    batch = diagnose(result.polls, model)
    t2 = time.perf_counter()
    with open(os.devnull, "w", encoding="utf-8") as sink:
        write_lines(batch, range(len(batch)), sink)
    t3 = time.perf_counter()
    return t1 - t0, t2 - t1, t3 - t2, len(batch)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--ports", type=int, default=50_000)
    parser.add_argument("--rounds", type=int, default=9)
    parser.add_argument("--no-large", action="store_true", help="skip the 500,000-port file")
    args = parser.parse_args()
    model = Model.load()
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "snapshots.jsonl"
        lines = make_file(path, args.ports)
        size = path.stat().st_size
        print(f"file: {args.ports:,} ports, {lines:,} lines, {size / 1e6:.0f} MB")
        header = ("round", "json.loads", "read", "diagnose", "json out", "total")
        print(" ".join(f"{h:>{w}}" for h, w in zip(header, (5, 11, 7, 9, 9, 7), strict=True)))
        totals = []
        for n in range(1, args.rounds + 1):
            base = baseline(path)
            read, work, out, ports = pipeline(path, model)
            assert ports == args.ports
            ratio = (read + work + out) / base
            totals.append(ratio)
            print(
                f"{n:>5} {base:>10.2f}s {read / base:>6.2f}x {work / base:>8.2f}x "
                f"{out / base:>8.2f}x {ratio:>6.2f}x"
            )
        peak_mb = command_peak_mb(path)
        large_mb = None
        if not args.no_large:
            large = Path(tmp) / "large.jsonl"
            copy_renamed(path, large, LARGE_COPIES)
            path.unlink()  # keep the disk's share small: the copies are all that is read now
            large_mb = command_peak_mb(large)
            path = large
        one = Path(tmp) / "one.jsonl"
        with open(path, "rb") as whole, open(one, "wb") as first:
            first.write(whole.readline())
        one_s, bare_s = command_seconds(one), python_seconds()
    median = statistics.median(totals)
    verdict = "meets" if median <= TARGET else "MISSES"
    print(f"median total: {median:.2f}x the bare json.loads parse")
    print(f"  {verdict} the target of at most {TARGET:g}x")
    memory = "meets" if peak_mb <= TARGET_PEAK_MB else "MISSES"
    print(f"peak memory of `linktriage diagnose --json` on the file: {peak_mb:.0f} MB")
    print(f"  {memory} the target of at most {TARGET_PEAK_MB} MB at 50,000 ports")
    if large_mb is not None:
        large_ports = args.ports * LARGE_COPIES
        memory = "meets" if large_mb <= TARGET_LARGE_PEAK_MB else "MISSES"
        print(f"peak memory at {large_ports:,} ports: {large_mb:.0f} MB")
        print(f"  {memory} the target of at most {TARGET_LARGE_PEAK_MB:,} MB at 500,000 ports")
    quick = "meets" if one_s <= TARGET_ONE_PORT_S else "MISSES"
    print(
        f"`linktriage diagnose` of a one-port file: {one_s:.2f} s (a bare Python start "
        f"{bare_s:.2f} s)"
    )
    print(f"  {quick} the target of at most {TARGET_ONE_PORT_S} s")
    return 0 if median <= TARGET else 1


#: Runs the command in a fresh process and reports that process's own peak resident
#: memory (VmHWM: a new process image starts its own count, whatever its parent held).
_PEAK = """
import sys
from linktriage.cli import main
try:
    main(sys.argv[1:])
except SystemExit:
    pass
for line in open("/proc/self/status"):
    if line.startswith("VmHWM"):
        print(line.split()[1], file=sys.stderr)
"""


def copy_renamed(path: Path, out: Path, copies: int) -> None:
    """``copies`` copies of the file, each under its own device names (``c3sim00413``)."""
    with open(out, "wb") as fp:
        for k in range(copies):
            with open(path, "rb") as src:
                for raw in src:
                    fp.write(raw.replace(b'"device":"', f'"device":"c{k}'.encode(), 1))


def command_peak_mb(path: Path) -> float:
    """Peak resident memory of ``linktriage diagnose --json`` on ``path``, in MB."""
    done = subprocess.run(
        [sys.executable, "-c", _PEAK, "diagnose", "--json", "--snapshots", str(path)],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        text=True,
        check=True,
    )
    return int(done.stderr.split()[-1]) / 1024  # VmHWM is in kB


def command_seconds(path: Path, rounds: int = 5) -> float:
    """Median wall time of the command on ``path``, start-up included."""
    times = []
    for _ in range(rounds):
        start = time.perf_counter()
        subprocess.run(
            [str(COMMAND), "diagnose", "--snapshots", str(path)],
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
            check=True,
        )
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def python_seconds(rounds: int = 5) -> float:
    """Median wall time of starting Python and doing nothing: the floor under any command."""
    times = []
    for _ in range(rounds):
        start = time.perf_counter()
        subprocess.run([sys.executable, "-c", "pass"], check=True)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


if __name__ == "__main__":
    sys.exit(main())
