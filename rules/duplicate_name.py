"""Two elements with one name in one scope.

What it finds
    Two element cards in the same cell whose names differ only in case or not at
    all (SPICE names are case-insensitive), and two ``.subckt`` definitions of one
    name in one scope.

Why it matters
    Simulators reject the deck, or keep one of the two silently: a resistor pasted
    twice as ``R5`` disappears from the circuit, and so does whatever it connected.

Example
    ::

        R5 a b 10k
        R5 b c 22k

Fix
    Rename one of them (``R6 b c 22k``).
"""

from collections import Counter

from lintamp.rulekit.context import forward_diagnostics
from lintamp.findings import Related, Severity
from lintamp.text import excerpt

NAME = "duplicate-name"
CATEGORY = "references"
SEVERITY = Severity.ERROR
SUMMARY = "two elements with one name in one scope"


_BIG = 100_000  # names: above this many, compared by hash in an array before any set


def _repeated_names(devices) -> list[str] | None:
    """The devices' names (a DeviceList's, in order) where two of them are equal;
    None where all are distinct.  A big cell's names are told apart by their hashes
    first (one 8-byte integer each, sorted; the parser hashed the names of the runs of
    plain cards as it read them), so that the usual answer, all distinct, needs no
    list or set of a million strings; equal hashes fall back to the names."""
    if len(devices) > _BIG:
        hashes = devices.name_hashes()
        hashes.sort()
        if not (hashes[1:] == hashes[:-1]).any():
            return None
    names = devices.names()
    return None if len(set(names)) == len(names) else names


def check(ctx):
    yield from forward_diagnostics(ctx)
    for view in ctx.cells():
        names = _repeated_names(view.devices)
        if names is None:
            continue  # the usual case, found without a list per name
        counts = Counter(names)
        by_name: dict[str, list] = {}
        for d, name in enumerate(names):  # only the devices that share a name are made
            if counts[name] > 1:
                by_name.setdefault(name, []).append(view.devices[d])
        for name, devs in by_name.items():
            if len(devs) < 2:
                continue
            first, second = devs[0], devs[1]
            others = f" (and {len(devs) - 2} more)" if len(devs) > 2 else ""
            yield ctx.finding(
                location=second.location, subject=name, view=view, elements=[name],
                message=f"{excerpt(second.display)} has the name of the element at line "
                        f"{first.location.line}{others}",
                explanation=["SPICE names are case-insensitive and unique within a cell",
                             "a simulator rejects the deck (ngspice: 'device already exists') "
                             "or keeps only one of them"],
                fix="give each element its own name",
                values={"count": len(devs)},
                related=[Related(d.location, f"{d.display}") for d in [first] + devs[2:6]])
