"""Bulk work over many ports without Python's cyclic garbage collector in the way.

Reading a file of snapshots or wording the records of thousands of ports makes hundreds of
thousands of small objects with no reference cycles; the cyclic collector would rescan them
again and again as they pile up (about a fifth of the time of writing ``diagnose --json``,
measured with bench/diagnose_throughput.py). Reference counting still frees them.
"""

from __future__ import annotations

import gc
from collections.abc import Iterator
from contextlib import contextmanager


@contextmanager
def gc_paused() -> Iterator[None]:
    """Pause the cyclic collector for the block, and restore it as it was."""
    collecting = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if collecting:
            gc.enable()
