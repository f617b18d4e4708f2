"""A ``lintamp:`` comment in a netlist, as the parser hands it on.

It lives in a module of its own, beside :mod:`lintamp.location`, because a cache hit
rebuilds pragmas for the decision layer (waivers) without reading any netlist, and
must not pay for importing the netlist layer to do so.  ``lintamp.netlist.statements``
re-exports it.
"""

from __future__ import annotations

from dataclasses import dataclass

from lintamp.location import Location


@dataclass(slots=True)
class Pragma:
    """A ``lintamp:`` comment: verb and arguments, with its place and the cell it sits in."""

    verb: str  # current-input, voltage-output, load, bandwidth, waive, ...
    args: tuple[str, ...]
    reason: str
    location: Location
    inline: bool = False  # written at the end of a card (applies to that card's element)
    cell: str = ""  # the cell it sits in ("" = top level)
    element: str | None = None  # the element it is attached to (inline, or the line after)
    element_nets: tuple[str, ...] = ()  # that element's nets
