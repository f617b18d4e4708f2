"""Pause Python's cyclic garbage collector while a big netlist is being built.

Reading, elaborating and checking a netlist allocates millions of small objects that
all stay alive (cards, elements, devices, terminals).  The cyclic collector runs
every few hundred allocations and its older generations scan everything alive, so
on a million-element file it costs more than the work itself.  Those objects form
almost no reference cycles and are freed by reference counting, so pausing the
collector for the duration of one file's check loses nothing; it is switched back
on (and any cycles collected by the normal schedule) afterwards.
"""

from __future__ import annotations

import gc
from contextlib import contextmanager
from typing import Iterator


@contextmanager
def paused_gc() -> Iterator[None]:
    """Disable the cyclic collector inside the block; nested use is safe.

    >>> with paused_gc():
    ...     gc.isenabled()
    False
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()
