"""An instance of a subcircuit that is not defined (nor mapped as a device).

What it finds
    An ``X`` line naming a subcircuit that no ``.subckt`` in scope defines and that
    the device map (``[devices]`` in the config, or the built-in open-PDK names)
    does not recognise; also a subcircuit that instantiates itself, directly or
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

from lintamp.findings import Severity

NAME = "unknown-cell"
CATEGORY = "references"
SEVERITY = Severity.ERROR
SUMMARY = "an instance of a subcircuit that is not defined (nor mapped as a device)"


def check(ctx):
    for diag in ctx.diagnostics(NAME):
        yield ctx.from_diagnostic(diag)
    incomplete = ctx.options.get("includes_missing", False)
    for view in ctx.cells():
        for dev in view.devices:
            if dev.kind != "instance" or dev.subcell is not None or not dev.element.model:
                continue
            name = dev.element.model
            yield ctx.finding(
                location=dev.location, subject=dev.name, view=view, elements=[dev.name],
                severity=Severity.WARNING if incomplete else None,
                message=f"{dev.display} instantiates '{name}', which no .subckt defines",
                explanation=[f"no .subckt {name} in this cell, its enclosing cells or the top level"
                             + (" (some include files were not found, and it may be defined there)"
                                if incomplete else ""),
                             f"the {len(dev.nets)} nets on {dev.display} are treated as connected "
                             "to an unknown block"],
                fix=f"include the file that defines {name}, correct the name, or map it as a "
                    "device in [devices]")
