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

from lintamp.circuit.kinds import TRANSISTORS
from lintamp.connectivity.dc_paths import unread_cells
from lintamp.findings import Severity
from lintamp.rules._pin_order import rail_side

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
        substrate = None if library_power else _substrate_pin(ctx, view, unused)
        # magic names a port after its metal when the parent's wiring overlaps a piece of
        # the cell's metal that carries no pin label: metal, not a pin of the design
        metal = all("#" in p for p in unused)
        stranded = _stranded_nets(ctx, view, unused)
        yield ctx.finding(
            location=view.cell.location, subject=port, view=view, nets=unused[:50],
            severity=Severity.INFO if library_power or substrate or metal else None,
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
                            "interface across its cells"] if library_power else []),
                         *([f"{stranded[0]}; it floats (dangling, no DC path), which follows "
                            "from this port and is not reported again"
                            + (f" ({len(stranded)} such net(s))" if len(stranded) > 1 else "")]
                           if stranded else []),
                         *(["the extractor named these ports after their metal (no pin "
                            "label): pieces of the cell's metal that the parent's wiring "
                            "overlaps, which nothing inside the cell connects to"]
                           if metal else []),
                         *([f"{view.label} holds only devices, and every instance ties "
                            f"{'it' if len(unused) == 1 else 'them'} to the substrate or well "
                            f"the transistors sit in ({substrate}): the spare substrate pin "
                            "a layout extractor gives its device cells"] if substrate else [])],
            fix=f"use {'it' if len(unused) == 1 else 'them'} inside {view.label}, or remove "
                f"{'it' if len(unused) == 1 else 'them'} from the .subckt line and from "
                "every instance",
            values={"instances": count, "ports": len(unused)})


def repeated_port(ctx, view, placeholder, port, count):
    """The later listing of a port named twice on the ``.subckt`` line."""
    first = view.ports.index(port)
    second = view.ports.index(placeholder)
    split = [dev for _, dev in _users(ctx).get(id(view), [])
             if len(dev.nets) > second
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


def _users(ctx) -> dict[int, list]:
    """id(cell view) -> [(parent view, instance)], every instance of every cell, once."""
    def build():
        out: dict[int, list] = {}
        for parent in ctx.cells():
            for dev in parent.instances():
                out.setdefault(id(dev.subcell), []).append((parent, dev))
        return out
    return ctx.memo(("unused-port", "users"), build)


def _stranded_nets(ctx, view, unused) -> list[str]:
    """'clk_out, on x1 pin clk_out, has no other terminal', per parent net that an
    unused port leaves with nothing else."""
    positions = [i for i, p in enumerate(view.ports) if p in unused]
    out = []
    for parent, dev in _users(ctx).get(id(view), [])[:1000]:
        for pos in positions:
            if pos < len(dev.nets):
                net = dev.nets[pos]
                if parent.net_terminals.degree(net) == 1 and not parent.is_external(net):
                    out.append(f"{net}, on {dev.display} pin {view.ports[pos]}, has no other "
                               "terminal")
    return out


def _substrate_pin(ctx, view, unused) -> str | None:
    """The body net the parents tie a device cell's unused pins to, or None.

    A layout extractor writes a cell per device (KLayout: ``pmos$1``, ``rppd$1``) with
    a substrate or well terminal that the device inside may not use (a resistor, or
    a PMOS whose well is another pin).  Such a pin is spare when the cell holds only
    devices and every instance puts it on a net that is a transistor body in the
    parent, directly or one instance down ("net 1, the body of M$1 in X$4")."""
    if any(d.kind == "instance" for d in view.devices):
        return None
    users = _users(ctx).get(id(view), [])
    if not users:
        return None
    positions = [i for i, p in enumerate(view.ports) if p in unused]
    example = None
    for parent, dev in users:
        for pos in positions:
            if pos >= len(dev.nets):
                return None
            body = _body_on(parent, dev.nets[pos])
            if body is None:
                return None
            example = example or f"net {dev.nets[pos]}, the {body}"
    return example


def _body_on(view, net: str) -> str | None:
    """'body of M1' or 'body of M$1 in X$4' for a transistor body on ``net``, else None."""
    for dev, pin in view.net_terminals.get(net, ()):
        if pin == "b" and dev.kind in TRANSISTORS:
            return f"body of {dev.display}"
        if dev.kind == "instance" and dev.subcell is not None and pin in dev.subcell.ports:
            for d, p in dev.subcell.net_terminals.get(pin, ()):  # pins are named after ports
                if p == "b" and d.kind in TRANSISTORS:
                    return f"body of {d.display} in {dev.display}"
    return None


BODY_PINS = ("bulk", "vbn", "vbp")  # body pins whose name says no side


def _power_pin(ctx, port: str) -> bool:
    """A supply, ground or well pin by name (the intent analysis's patterns)."""
    return rail_side(ctx, port) != 0 or port.lower() in BODY_PINS
