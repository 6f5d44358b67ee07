"""Pause Python's cyclic garbage collector while a large input is built.

Reading a plant makes hundreds of thousands of objects (YAML nodes, plain data, models,
the graph) and nearly all of them live on. Each automatic collection on the way walks
the ones made so far again, so a plant ten times larger took about twenty times longer
to read. Nothing made while loading is cyclic garbage worth finding early; the collector
runs as usual again once loading is done, error or not.
"""

from __future__ import annotations

import gc
from collections.abc import Iterator
from contextlib import contextmanager


@contextmanager
def collector_paused() -> Iterator[None]:
    """Collector off inside (a ``with`` block or a decorated function), back as it was after."""
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()
