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

from lintamp.rulekit.context import forward_diagnostics
from lintamp.findings import Related, Severity
from lintamp.text import excerpt

NAME = "duplicate-name"
CATEGORY = "references"
SEVERITY = Severity.ERROR
SUMMARY = "two elements with one name in one scope"


def check(ctx):
    yield from forward_diagnostics(ctx)
    for view in ctx.cells():
        for name, devs in view.devices_sharing_names().items():
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
