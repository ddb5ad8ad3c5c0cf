"""The cyclic garbage collector paused while a phase builds data that holds no reference cycles.

Each collection walks every object built so far: with a large design loaded and analysed, a single full
collection costs more than the rules it interrupts. Loading and the rules phase build plain data (models,
results, findings) whose memory reference counting frees, so the collector is off while they run and back on,
as it was, when they end.
"""

from __future__ import annotations

import contextlib
import gc
from collections.abc import Iterator


@contextlib.contextmanager
def collector_paused() -> Iterator[None]:
    """Run the enclosed block with the cyclic collector off, then restore it as it was."""
    was_on = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_on:
            gc.enable()
