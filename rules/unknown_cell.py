"""An instance of a subcircuit that is not defined (nor mapped as a device).

What it finds
    An ``X`` line naming a subcircuit that no ``.subckt`` in scope defines and that
    the device map (``[devices]`` in the config, or the built-in open-PDK names)
    does not recognise (a warning inside a cell library, whose users may define
    it elsewhere; an error in a deck that instantiates it); also a subcircuit that instantiates itself, directly or
    through others, and ``--top`` naming a cell that does not exist.

Why it matters
    A simulator stops at the first such instance.  lintamp cannot see inside it, so
    its ports look unconnected to every connectivity check.

Example
    ::

        X1 in out vdd 0 opamp
        * no .subckt opamp anywhere, and no .include that defines it

Fix
    Include the file that defines the subcircuit, correct the name, or map a PDK
    device name in ``[devices]``.
"""

import difflib

from lintamp.circuit.design import scopes
from lintamp.rulekit.context import forward_diagnostics
from lintamp.findings import Severity
from lintamp.text import excerpt

NAME = "unknown-cell"
CATEGORY = "references"
SEVERITY = Severity.ERROR
SUMMARY = "an instance of a subcircuit that is not defined (nor mapped as a device)"


def check(ctx):
    yield from forward_diagnostics(ctx)
    incomplete = ctx.options.get("includes_missing", False)
    for view in ctx.cells():
        library = not ctx.design.in_deck(view)
        for dev in view.devices_of(kinds=("instance",)):
            if dev.kind != "instance" or dev.subcell is not None or not dev.element.model:
                continue
            names = [c for scope in scopes(view.cell) for c in scope.cells]
            # a name longer than any real one has no close match worth the quadratic search
            close = (difflib.get_close_matches(dev.element.model, names, n=1)
                     if len(dev.element.model) <= 60 else [])
            hint = f"; did you mean '{excerpt(close[0])}'?" if close else ""
            name, shown = excerpt(dev.element.model), excerpt(dev.display)
            yield ctx.finding(
                location=dev.location, subject=dev.name, view=view, elements=[dev.name],
                severity=Severity.WARNING if incomplete or library else None,
                message=f"{shown} instantiates '{name}', which no .subckt defines{hint}",
                explanation=[f"no .subckt {name} in this cell, its enclosing cells or the top level"
                             + (" (some include files were not found, and it may be defined there)"
                                if incomplete else "")
                             + (" (this is a library cell: the netlist it is used with may define it)"
                                if library and not incomplete else ""),
                             f"the {len(dev.nets)} nets on {shown} are treated as connected "
                             "to an unknown block"],
                fix=f"include the file that defines {name}, correct the name, or map it as a "
                    "device in [devices]")
