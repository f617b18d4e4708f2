"""Pause Python's cyclic garbage collector while a big netlist is being built.

Reading, elaborating and checking a netlist allocates millions of small objects that
all stay alive (cards, elements, devices, terminals).  The cyclic collector runs
every few hundred allocations and its older generations scan everything alive, so
on a million-element file it costs more than the work itself.  Those objects form
almost no reference cycles and are freed by reference counting, so pausing the
collector for the duration of one file's check loses nothing; it is switched back
on afterwards.

Switching it back on is not free either: everything allocated while it was paused sits
in the youngest generation, and the first collection after that would scan it all
(seconds for a million elements).  So after a big block (more than
:data:`FREEZE_ABOVE` new tracked objects) the objects still alive are frozen
(``gc.freeze``: left out of collections); the next paused block unfreezes them
first, so a process that checks file after file still collects, on the normal
schedule, whatever cycles the earlier files left.

Freeing is not free either: a million-element netlist is five million objects, and
handing them back one by one takes about half a second.  The command line has no use
for them once the findings are out, so it asks :func:`retain` to keep the last file's
objects alive and leaves with ``os._exit`` (see ``lintamp.cli.run``), as the operating
system takes the whole heap back at once.  A Python caller never asks, and frees them
as usual.
"""

from __future__ import annotations

import gc
from contextlib import contextmanager
from typing import Iterator

FREEZE_ABOVE = 500_000  # tracked objects allocated in the block

# set by the command line only (lintamp.cli.run): keep the last file's netlist alive
# to the process's end instead of freeing it object by object
retain_until_exit = False
_retained: list[object] = []


def retain(obj: object) -> None:
    """Keep ``obj`` (what the last file's check built) alive until the process ends,
    when the command line asked for that."""
    if retain_until_exit:
        _retained[:] = [obj]


def release() -> None:
    """Free what :func:`retain` kept: called before the next file is read, so a run
    over many files never holds two files' objects at once."""
    _retained.clear()


@contextmanager
def paused_gc() -> Iterator[None]:
    """Disable the cyclic collector inside the block; nested use is safe.

    >>> with paused_gc():
    ...     gc.isenabled()
    False
    """
    was_enabled = gc.isenabled()
    if was_enabled and gc.get_freeze_count():
        gc.unfreeze()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            if gc.get_count()[0] > FREEZE_ABOVE:
                gc.freeze()
            gc.enable()
