"""Output formats of ``linktriage diagnose``: a diagnosis batch as terminal text or JSON
Lines, one module per format."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import IO

from linktriage.engine.diagnosis.batch import DiagnosisBatch
from linktriage.render import jsonl, text

Renderer = Callable[[DiagnosisBatch, Sequence[int], IO[str]], None]

#: Output formats of ``linktriage diagnose``, by name.
RENDERERS: dict[str, Renderer] = {
    "text": text.write_table,
    "json": jsonl.write_lines,
}
