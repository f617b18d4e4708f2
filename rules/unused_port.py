"""A subcircuit port that nothing inside connects to.

What it finds
    A ``.subckt`` port that no element inside the definition touches.  Empty
    definitions (no elements at all: black boxes, layout abstracts) are not reported,
    nor are cells with a card lintamp could not read, nor PSPICE ``OPTIONAL:`` ports
    (a library cell declares its optional power pins whether it uses them or not).

Why it matters
    Whatever the parent connects to that port goes nowhere: a supply, bias or input
    that the block silently ignores.  Often a port was renamed inside the body but not
    on the ``.subckt`` line, so the body uses a new, unconnected net instead.

Example
    ::

        .subckt buf in out vdd vss ibias
        M1 vdd in out vss nch
        I1 out vss 20u          <- ibias is never used
        .ends

Fix
    Use the port inside (the net meant to carry it), or remove it from the ``.subckt``
    line and from every instance.
"""

from lintamp.analysis.dc_paths import unread_cells
from lintamp.findings import Severity

NAME = "unused-port"
CATEGORY = "references"
SEVERITY = Severity.WARNING
SUMMARY = "a subcircuit port that nothing inside connects to"


def check(ctx):
    skip = unread_cells(ctx)
    for view in ctx.cells():
        if view.cell.is_top or not view.devices or id(view) in skip:
            continue
        optional = view.cell.optional_ports
        for port in dict.fromkeys(view.ports):
            if port in optional or view.net_terminals.get(port):
                continue
            count = ctx.design.instance_count(view)
            yield ctx.finding(
                location=view.cell.location, subject=port, view=view, nets=[port],
                message=f"port {port} of {view.label} is not connected to anything inside",
                explanation=[f"{view.label} has {len(view.devices)} element(s); none touches "
                             f"{port}",
                             "whatever a parent connects there goes nowhere"
                             + (f" ({count} instance(s))" if count else "")],
                fix=f"use {port} inside {view.label}, or remove it from the .subckt line "
                    "and from every instance",
                values={"instances": count})
