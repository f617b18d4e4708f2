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

from lintamp.findings import Related, Severity

NAME = "duplicate-name"
CATEGORY = "references"
SEVERITY = Severity.ERROR
SUMMARY = "two elements with one name in one scope"


def check(ctx):
    for diag in ctx.diagnostics(NAME):
        yield ctx.from_diagnostic(diag)
    for view in ctx.cells():
        first: dict[str, object] = {}
        for dev in view.devices:
            earlier = first.get(dev.name)
            if earlier is None:
                first[dev.name] = dev
                continue
            yield ctx.finding(
                location=dev.location, subject=dev.name, view=view, elements=[dev.name],
                message=f"{dev.display} has the name of the element at line {earlier.location.line}",
                explanation=["SPICE names are case-insensitive and unique within a cell",
                             "a simulator rejects the deck or keeps only one of the two"],
                fix="give one of them a new name",
                related=[Related(earlier.location, f"first {earlier.display}")])
