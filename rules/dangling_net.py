"""A net touched by a single terminal.

What it finds
    A net that exactly one device terminal touches.  Inside a subcircuit a port counts
    as connected from outside, so ports are not reported; nor are globals and ground.
    A net whose one terminal is the output of a voltage source (V, E, H, B with
    ``V=``) is a computed test signal, not a missed connection, and is not reported.
    Cells with a card lintamp could not read are skipped: that card may be the
    second terminal; so are nets on pins of unknown subcircuits or of devices lintamp
    does not model (XSPICE code models, simulator-specific Y devices), and the top level of a
    design netlist (no source, no analysis: its nets are the design's pins).  A top-level
    net that ``.print``, ``.plot``, ``.save``, ``.meas`` or a ``.control`` script looks at
    (``v(out)``) is an observed output, not a forgotten one.  A net whose one terminal
    is a subcircuit port that drives it inside (an unused complementary output) is
    reported as information only.  A net whose one terminal is a gate or a base, a
    capacitor or a transistor body is left to ``unbiased-gate``, ``no-dc-path`` and
    ``body-tie``, which say what that one end leaves undetermined.

Why it matters
    A net with one end is nearly always a typo or a connection that was never made:
    ``R1 vdd outt 10k`` where ``out`` was meant leaves both ``out`` and ``outt`` half
    connected.  Simulators accept it (or see a floating node) and the circuit is
    silently different from the schematic.

Example
    ::

        V2 in 0 dc 0.9
        R1 vdd out 10k
        M1 outt in 0 0 nch      <- 'outt': the one terminal on this net

Fix
    Connect the net where it was meant to go, or delete the unused element.
"""

from lintamp.connectivity.dc_paths import (FULL, describe_terminal, interface_view,
                                       is_voltage_output, reaches_defined_level, unread_cells)
from lintamp.findings import Related, Severity
from lintamp.rules import _cascade, _parasitics, _supply
from lintamp.rules._islands import only_unused_pins, sealed_cells
from lintamp.rules._pin_order import touches_swapped

NAME = "dangling-net"
CATEGORY = "connectivity"
SEVERITY = Severity.WARNING
SUMMARY = "a net touched by a single terminal (inside a cell: not counting its ports' outside use)"


def _is_voltage_output(dev, pin) -> bool:
    if pin not in ("p", "n"):
        return False
    return dev.kind in ("vsource", "vcvs", "ccvs") or (
        dev.kind == "behavioral" and is_voltage_output(dev))


CONTROL_PINS = {"g", "b", "cp", "cn"}  # gates, bases, control inputs: no current flows in


def _drives_port(dev, pin) -> bool:
    """Inside the cell ``dev`` instantiates, does port ``pin`` reach a terminal that
    can drive it (a drain, an emitter, a resistor ...), not only gates and bases?"""
    sub = dev.subcell
    if sub is None:
        return False
    terminals = sub.net_terminals.get(pin, [])
    return any(p not in CONTROL_PINS or d.kind not in ("nmos", "pmos", "mos", "npn", "pnp", "bjt",
                                                       "njf", "pjf", "jfet", "vcvs", "vccs")
               for d, p in terminals)


def check(ctx):
    skip = unread_cells(ctx)
    ground = ctx.design.ground
    portless = {k for k, v in sealed_cells(ctx).items() if not v.ports}  # no-dc-path says it once
    for view in ctx.cells():
        if id(view) in skip or id(view) in portless or interface_view(ctx.design, view):
            continue
        roleless = view.roleless_nets()
        # a top-level net that .print/.plot/.save or a .control script looks at is observed
        observed = ctx.netlist.observed if view.cell.is_top else set()
        # a testbench's supply net that only blocks' supply pins reach: undriven-supply
        # is the finding (one cause, one finding)
        unpowered = ({net for net, _ in _supply.undriven_supplies(ctx)}
                     | _supply.declared_pins(ctx)  # pins of an exported schematic: used outside
                     if view is ctx.design.top else set())
        stubs: list = []
        unknown_pins: list = []
        boxed_pins: list = []
        opened: list = []  # open because the export left instances out
        left_out = bool(_cascade.dropped_instances(view))
        for net in view.net_terminals.with_degree(1):
            if (view.is_external(net) or net in ground or net in roleless or net in observed
                    or net in unpowered):
                continue
            terminals = view.net_terminals[net]
            dev, pin = terminals[0]
            if _is_voltage_output(dev, pin) or dev.kind in ("xspice", "other"):
                continue  # a computed test signal, or a device whose pins lintamp cannot judge
            if dev.kind == "line" and pin.startswith("t"):
                continue  # a pin of a many-conductor line lintamp does not name
            if _parasitics.reaches_into_instance(ctx, view, net):
                continue  # 'x1.mid' is the node inside x1, as ngspice-39 names it
            if touches_swapped(ctx, view, terminals):
                continue  # an instance in another pin order: swapped-pins says it once
            if only_unused_pins(terminals):
                continue  # the cell leaves that port unused inside: unused-port says it
            if left_out:
                opened.append((net, dev.location))
                continue
            if dev.kind == "capacitor":
                continue  # a capacitor alone on its net: no-dc-path is the finding (one cause)
            if pin == "b" and dev.kind in ("nmos", "pmos") and len(dev.nets) <= 4:
                continue  # a body alone on its net: body-tie says it floats (one cause, one finding)
            if (pin == "g" and dev.kind in ("nmos", "pmos", "njf", "pjf")) or \
                    (pin == "b" and dev.kind in ("npn", "pnp")):
                continue  # a gate or base alone on its net: unbiased-gate says nothing biases it
            if dev.kind in _parasitics.PASSIVE_KINDS and _parasitics.is_extraction_net(ctx, view, net):
                stubs.append((net, dev, pin))  # a dead-end stub of an extracted RC network
                continue
            if dev.kind == "instance" and dev.subcell is None:
                unknown_pins.append((net, dev, pin))  # unknown-cell is the finding
                continue
            if dev.kind == "instance" and not reaches_defined_level(ctx, view, net, FULL):
                continue  # a pin that leads to gates only: the island rules say it once
            if dev.kind == "instance" and not dev.subcell.devices:
                boxed_pins.append((net, dev, pin))  # a black box: its pins' directions unknown
                continue
            if dev.kind == "instance" and _drives_port(dev, pin):
                # an output pin left open (an unused complementary output) is common and
                # harmless; say so quietly
                yield ctx.finding(
                    location=dev.location, subject=net, view=view, nets=[net],
                    elements=[dev.name], severity=Severity.INFO,
                    message=f"{net} is an open output: only {describe_terminal(dev, pin)} touches it",
                    explanation=[f"inside {dev.subcell.label}, port {pin} reaches terminals that "
                                 "drive it, so this is an output nothing uses",
                                 "harmless when meant (an unused complementary output); a "
                                 "misspelt net name when not"],
                    fix=f"connect {net} to its load, or leave it and waive this finding",
                    values={"terminals": 1})
                continue
            yield ctx.finding(
                location=dev.location, subject=net, view=view, nets=[net], elements=[dev.name],
                message=f"{net} is touched only by {describe_terminal(dev, pin)}",
                explanation=[f"{net} has one terminal: {dev.display} pin {pin}",
                             "a net needs at least two connections to carry a current; one "
                             "end is usually a misspelt net name or a connection never made"]
                            + ([] if view.cell.is_top else
                               [f"{net} is not a port of {view.label}, so nothing outside "
                                "reaches it"]),
                fix=f"connect {net} where it was meant to go, or remove {dev.display}",
                values={"terminals": 1})
        if opened:
            yield _cascade.open_by_dropped(ctx, view, NAME, [n for n, _ in opened], opened[0][1])
        if stubs:
            yield _stubs_finding(ctx, view, stubs)
        if unknown_pins:
            yield _unknown_pins_finding(ctx, view, unknown_pins)
        if boxed_pins:
            yield _unknown_pins_finding(ctx, view, boxed_pins, black_box=True)


def _stubs_finding(ctx, view, stubs):
    """The dead-end stubs of a cell's extracted RC network: one info with a count."""
    def size(item):
        value = _parasitics.value_of(item[1])
        return value if value is not None else -1.0
    net, dev, pin = max(stubs, key=size)
    first = min(stubs, key=lambda s: (s[1].location.line, s[1].location.column))
    return ctx.finding(
        location=first[1].location, subject="extraction stubs", view=view,
        nets=[s[0] for s in stubs][:50], elements=[s[1].name for s in stubs][:50],
        severity=Severity.INFO,
        message=f"{len(stubs)} dead-end stub(s) of the extracted RC network "
                f"(largest: {net}, on {describe_terminal(dev, pin)})",
        explanation=["each of these nets is touched by one resistor or capacitor pin only: a "
                     "wire segment or a coupling capacitor the extractor wrote up to where the "
                     "metal ends", "an extraction fact, not a connection the design lacks"],
        fix="nothing to do for the extraction; look again only where a stub is a net the "
            "design names",
        values={"count": len(stubs)},
        related=[Related(dev.location, f"largest stub: {net}")])


def _unknown_pins_finding(ctx, view, items, black_box: bool = False):
    """Nets that only an unknown cell's pin touches (consequences of unknown-cell), or
    only a black box's pin (an empty .subckt: an abstract view with no directions)."""
    first = min(items, key=lambda s: (s[1].location.line, s[1].location.column))
    shown = ", ".join(s[0] for s in items[:5]) + (", ..." if len(items) > 5 else "")
    cells = sorted({s[1].subcell.label for s in items}) if black_box else []
    why = (f"{', '.join(cells[:3])} {'is an empty .subckt' if len(cells) == 1 else 'are empty .subckts'} "
           "(a black box for an abstract view), so whether its pins are open outputs or "
           "inputs is not known" if black_box else
           "the cell these pins belong to is not defined here (see unknown-cell), "
           "so whether its pins are open outputs or inputs is not known")
    return ctx.finding(
        location=first[1].location,
        subject="nets on black boxes" if black_box else "nets on unknown cells", view=view,
        nets=[s[0] for s in items][:50], elements=sorted({s[1].name for s in items})[:50],
        severity=Severity.INFO,
        message=f"{len(items)} net(s) touched only by a pin of "
                f"{'a black-box' if black_box else 'an undefined'} cell ({shown})",
        explanation=[why],
        fix="define or include the cell, then check again", values={"count": len(items)})

