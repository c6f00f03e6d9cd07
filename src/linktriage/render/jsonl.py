"""JSON Lines: one object per port, the fields of SNAPSHOT-FORMAT's ``diagnose --json``.

The batch words and encodes a chunk of ports at a time
(:meth:`~linktriage.engine.diagnosis.batch.DiagnosisBatch.lines_many`); every line is
exactly ``dumps(batch.record(i))``.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import IO, Any

import msgspec

from linktriage.engine.diagnosis.batch import DiagnosisBatch

_encoder = msgspec.json.Encoder()
_encode = _encoder.encode
# Ports encoded together: the records of one chunk are alive at once.
_CHUNK = 1024


def dumps(record: Mapping[str, Any]) -> str:
    """One record (a diagnosis, a list of suspects) as a single line of JSON (UTF-8 text
    kept as it is; a number that is not finite written as null)."""
    return _encode(record).decode()


def write_lines(batch: DiagnosisBatch, rows: Sequence[int], out: IO[str]) -> None:
    """Write the records of ``rows``, one JSON object per line."""
    ordered = list(rows)
    raw = getattr(out, "buffer", None)  # a text stream over bytes: write the UTF-8 as is
    if raw is not None:
        out.flush()
    for start in range(0, len(ordered), _CHUNK):
        lines = batch.lines_many(ordered[start : start + _CHUNK])
        if raw is not None:
            raw.write(lines)
        else:
            out.write(lines.decode())
    if raw is not None:
        raw.flush()
