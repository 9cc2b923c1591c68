"""Pause Python's automatic cyclic garbage collection for the length of one bulk operation.

A bulk operation (importing a bundle, the portfolio recheck, reading a site's list) allocates many
container objects that all live until it ends: rows, ops, dicts. None of them is garbage while it
runs, yet every 700 allocations start a collection of the young ones and, as they pile up, a full
collection that walks every object in the process (170-250 ms in the app at a 10,000-beam site).
Reference counting still frees every object without a cycle at once during the pause; only cycles
made during it wait for the first collection after it.

``gc_paused()`` is the one way this project pauses it: a context manager that restores the previous
state (enabled or not, and the thresholds) on exit, on an error too. Nothing changes the collector
for the whole process. Pauses may overlap, nested or from several threads: the first to enter saves
the state, the last to leave restores it, so an inner or concurrent pause never re-enables the
collector under another one still running, nor leaves it off after all have ended.
"""

from __future__ import annotations

import gc
import threading
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass


@dataclass
class _State:
    """The pauses running now and the collector state saved by the first of them."""

    depth: int = 0
    enabled: bool = True
    thresholds: tuple[int, ...] = ()


_LOCK = threading.Lock()
_STATE = _State()


def _enter() -> None:
    with _LOCK:
        if _STATE.depth == 0:
            _STATE.enabled, _STATE.thresholds = gc.isenabled(), gc.get_threshold()
            gc.disable()
        _STATE.depth += 1


def _leave() -> None:
    with _LOCK:
        _STATE.depth -= 1
        if _STATE.depth == 0:
            gc.set_threshold(*_STATE.thresholds)
            if _STATE.enabled:
                gc.enable()


@contextmanager
def gc_paused() -> Iterator[None]:
    """Run the block with automatic cyclic collection off; restore the previous state after it."""
    _enter()
    try:
        yield
    finally:
        _leave()


def pauses_running() -> int:
    """How many ``gc_paused`` blocks are running now (in any thread): for tests and diagnostics."""
    with _LOCK:
        return _STATE.depth
