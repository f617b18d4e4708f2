"""A subcircuit port that nothing inside connects to.

What it finds
    A ``.subckt`` port that no element inside the definition touches.  Empty
    definitions (no elements at all: black boxes, layout abstracts) are not reported,
    nor are cells with a card lintamp could not read, nor PSPICE ``OPTIONAL:`` ports
    (a library cell declares its optional power pins whether it uses them or not).

    A port listed twice on the ``.subckt`` line (schematic exports write ``GND GND``
    for two pins of one name) is read as ngspice-39 reads it: the body's net is the
    first listing, and the later pin connects to nothing inside.  That is a warning
    where an instance puts different nets on the two pins (the second one goes
    nowhere), an info otherwise.

    The unused ports of one cell are one finding that lists them.

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

from lintamp.connectivity.dc_paths import unread_cells
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
        repeated = view.cell.repeated_ports
        unused = []
        count = ctx.design.instance_count(view)
        for port in dict.fromkeys(view.ports):
            if port in optional or view.net_terminals.degree(port):
                continue
            if port in repeated:
                yield repeated_port(ctx, view, port, repeated[port], count)
                continue
            unused.append(port)
        if not unused:
            continue
        # the unused ports of one cell are one finding (a wrapper's spare pins, a
        # standard cell's body pins in an abstract netlist): one cause, one finding
        port = unused[0]
        shown = ", ".join(unused[:8]) + (f" and {len(unused) - 8} more" if len(unused) > 8 else "")
        # a library cell the deck does not use, whose unused pins are all supply or well
        # pins (a standard cell keeps VPWR/VGND/VPB/VNB for one interface across the
        # library; a tie or diode cell leaves some of them unused by design)
        library_power = (not ctx.design.in_deck(view)
                         and all(_power_pin(ctx, p) for p in unused))
        yield ctx.finding(
            location=view.cell.location, subject=port, view=view, nets=unused[:50],
            severity=Severity.INFO if library_power else None,
            message=(f"port {port} of {view.label} is not connected to anything inside"
                     if len(unused) == 1 else
                     f"{len(unused)} ports of {view.label} are not connected to anything "
                     f"inside ({shown})"),
            explanation=[f"{view.label} has {len(view.devices)} element(s); none touches "
                         f"{shown}",
                         "whatever a parent connects there goes nowhere"
                         + (f" ({count} instance(s))" if count else ""),
                         *(["a library cell this deck does not instantiate, and only supply or "
                            "well pins are unused: a cell library keeps them for one pin "
                            "interface across its cells"] if library_power else [])],
            fix=f"use {'it' if len(unused) == 1 else 'them'} inside {view.label}, or remove "
                f"{'it' if len(unused) == 1 else 'them'} from the .subckt line and from "
                "every instance",
            values={"instances": count, "ports": len(unused)})


def repeated_port(ctx, view, placeholder, port, count):
    """The later listing of a port named twice on the ``.subckt`` line."""
    first = view.ports.index(port)
    second = view.ports.index(placeholder)
    split = [dev for parent in ctx.cells() for dev in parent.instances()
             if dev.subcell is view and len(dev.nets) > second
             and dev.nets[first] != dev.nets[second]]
    steps = [f"pins {first + 1} and {second + 1} of {view.label} are both named {port}; "
             f"ngspice-39 joins the body's {port} to pin {first + 1} and leaves pin "
             f"{second + 1} connected to nothing inside"]
    if split:
        steps.append(f"{split[0].display} puts {split[0].nets[first]} on pin {first + 1} and "
                     f"{split[0].nets[second]} on pin {second + 1}: {split[0].nets[second]} "
                     "is not joined to anything through this cell"
                     + (f" ({len(split)} such instance(s))" if len(split) > 1 else ""))
    else:
        steps.append("no instance puts different nets on the two pins, so nothing is lost "
                     "today" + ("" if count else " (the cell is not instantiated here)"))
    return ctx.finding(
        location=view.cell.location, subject=port, view=view, nets=[port],
        severity=None if split else Severity.INFO,
        message=f"port {port} of {view.label} is listed twice; pin {second + 1} connects to "
                "nothing inside",
        explanation=steps,
        fix=f"list {port} once on the .subckt line and drop the extra node from every "
            "instance, or give the second pin its own name if it is a separate net",
        values={"instances": count, "pin": second + 1, "first_pin": first + 1})


WELL_PINS = ("vpb", "vnb", "vpw", "vnw", "vsub", "sub", "bulk", "nwell", "pwell", "vbn", "vbp")


def _power_pin(ctx, port: str) -> bool:
    """A supply, ground or well pin by name (the intent analysis's patterns)."""
    from lintamp.connectivity.intent import matches, patterns
    return port in WELL_PINS or bool(matches(port, patterns(ctx.config, "supply"))
                                     or matches(port, patterns(ctx.config, "ground")))
