"""Diagnose throughput: 50,000 ports end to end, against the bare cost of json.loads.

    .venv/bin/python bench/diagnose_throughput.py [--ports N] [--rounds R]

Generates a snapshot file of N simulated ports (two polls each, lines shuffled, as a poller
might write them), then in each round times

* baseline: ``json.loads`` of every line of the file, nothing kept;
* linktriage: reading and validating the file, windows, features, guards, the tree, and
  writing the ``diagnose --json`` output (to /dev/null),

and prints each stage's cost as a multiple of the baseline measured in the same round.
Target: the whole of it at most 3x the baseline. The machine is shared, so the median
over rounds is the figure that counts.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from linktriage.diagnosis import Model, diagnose
from linktriage.render.jsonl import write_lines
from linktriage.simulate import simulate_prior
from linktriage.snapshot import iter_snapshots, read_snapshot_file, write_snapshots

TARGET = 3.0


def make_file(path: Path, ports: int) -> int:
    polls, _ = simulate_prior(ports, np.random.default_rng(20261201))
    order = np.random.default_rng(7).permutation(len(polls))
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
    median = statistics.median(totals)
    verdict = "meets" if median <= TARGET else "MISSES"
    print(f"median total: {median:.2f}x the bare json.loads parse")
    print(f"  {verdict} the target of at most {TARGET:.0f}x")
    return 0 if median <= TARGET else 1


if __name__ == "__main__":
    sys.exit(main())
