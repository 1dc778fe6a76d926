"""Pausing Python's automatic garbage collection around allocation-heavy loops.

Building the plan document (many small dicts) and laying out sheets with WeasyPrint (large
object graphs per page) both spend a quarter or more of their time in the automatic collector
walking objects that are still alive (measured with the scripts in benchmarks/). Neither creates
reference cycles that must be freed early, so the collector is paused and run once at the end,
or every ``collect_every`` steps to keep memory bounded.
"""

from __future__ import annotations

import contextlib
import gc

__all__ = ["gc_paused"]


@contextlib.contextmanager
def gc_paused(collect_every: int | None = None):
    """Pause automatic garbage collection in the ``with`` block; restore its state after.

    Yields a function to call once per step: with ``collect_every`` = n it collects every n
    calls (and once at the end); without it, it does nothing.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    count = 0

    def step() -> None:
        nonlocal count
        count += 1
        if collect_every and count % collect_every == 0:
            gc.collect()

    try:
        yield step
    finally:
        if collect_every:
            gc.collect()
        if was_enabled:
            gc.enable()
