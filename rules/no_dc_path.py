"""Nodes with no DC path to ground.

What it finds
    A net, or an island of nets joined among themselves, that no DC path (resistor,
    inductor, voltage source, junction, transistor channel) connects to ground, to a
    supply that is itself grounded, or to a port of its subcircuit (a port counts as
    biased from outside).  One finding per island, at its first element, listing the
    nets.  Islands that hold a gate or base are reported as ``unbiased-gate``, islands
    that a current source feeds as ``current-cutset``.  The top level of a design
    netlist (instances, but no source and no analysis card) is the design's interface:
    its nets count as driven from outside.  Cells with a card or an include lintamp
    could not read are not judged.

Why it matters
    At DC a capacitor is open, so the island's voltage is not determined by anything:
    the nodal conductance matrix is singular.  ngspice-39 prints ``Warning: singular
    matrix: check node n3``, tries GMIN and source stepping, and fails or returns a
    meaningless level.

Example
    ::

        * two capacitors in series: the middle node floats
        V1 in 0 dc 0 ac 1
        C1 in n3 1p
        C2 n3 0 1p

Fix
    Give the node a DC return: a resistor to a defined level (large enough not to load
    the signal), or connect the net that was meant.  As a simulator-only crutch,
    ngspice's ``.option rshunt`` puts a large resistor from every node to ground.
"""

from lintamp.findings import Related, Severity
from lintamp.text import plural
from lintamp.rules import _cascade, _parasitics
from lintamp.connectivity.dc_paths import FULL, islands
from lintamp.rules._islands import (context_steps, elements, implicit_rail, island_findings, net_phrase,
                                    related, sealed_cells, terminal_lines)

NAME = "no-dc-path"
CATEGORY = "connectivity"
SEVERITY = Severity.ERROR
SUMMARY = "nodes with no DC path to ground"


def check(ctx):
    floating: dict[int, list] = {}
    implicit: dict[int, list] = {}
    for view, island, _ in island_findings(ctx, NAME):
        first = island.first_device
        if first is None:
            continue
        if _cascade.dropped_instances(view):
            continue  # open where the export left instances out: unknown-cell says it once

        if any(_parasitics.reaches_into_instance(ctx, view, n) for n in island.nets):
            continue  # 'x1.mid' is the node inside x1, as ngspice-39 names it
        if _floating_metal(ctx, view, island):
            floating.setdefault(id(view), [view]).append(island)
            continue
        rail = implicit_rail(ctx, view, island)
        if rail:
            implicit.setdefault(id(view), [view, rail]).append(island)
            continue
        count = len(island.nets)
        yield ctx.finding(
            location=first.location, subject=island.nets[0], view=view,
            nets=island.nets, elements=elements(island),
            message=f"{net_phrase(island)} {'has' if count == 1 else 'have'} no DC path to ground",
            explanation=[
                f"on {'this net' if count == 1 else 'these nets'}: {terminal_lines(island)}",
                "nothing that conducts at DC (resistor, inductor, voltage source, junction, "
                "channel) joins them to ground, a grounded supply or a port",
                *context_steps(view, island),
                "so their DC voltage is undetermined: the nodal matrix is singular; ngspice-39 "
                f"reports 'singular matrix: check node {island.nets[0]}'",
            ],
            fix="add a DC return (a resistor to a defined level) or make the connection "
                "that was meant",
            values={"island_nets": count, "terminals": len(island.terminals)},
            related=related(island, skip=first))
    for view, *found in floating.values():
        yield _floating_finding(ctx, view, found)
    for view, rail, *found in implicit.values():
        yield _implicit_rail_finding(ctx, view, rail, found)
    for view in sealed_cells(ctx).values():
        if not view.ports:
            finding = _portless_finding(ctx, view)
            if finding is not None:
                yield finding



def _floating_metal(ctx, view, island) -> bool:
    """Metal an extractor wrote that only coupling capacitors (and wire resistors)
    hold: every terminal on the island is an R or C pin, one at least a C, or the pin
    of an instance that leads inside only to R and C (magic's substrate node in a
    cell of device wrappers, when the cell does not bring it out as a port)."""
    kinds = {dev.kind for dev, pin in island.terminals
             if dev.kind != "instance" or not _parasitics.passive_inside(ctx, dev, pin)}
    passive = any(dev.kind == "capacitor" or dev.kind == "instance" for dev, _ in island.terminals)
    if not passive or not kinds <= set(_parasitics.PASSIVE_KINDS):
        return False
    return all(_parasitics.EXTRACTED_NAME.search(n) for n in island.nets) or \
        _parasitics.looks_extracted(ctx, view)


def _floating_finding(ctx, view, islands):
    largest = max(islands, key=lambda i: len(i.terminals))
    first = min((i.first_device for i in islands),
                key=lambda d: (d.location.path, d.location.line, d.location.column))
    nets = [n for i in islands for n in i.nets]
    wrapped = sum(1 for i in islands if any(d.kind == "instance" for d, _ in i.terminals))
    return ctx.finding(
        location=first.location, subject="floating metal", view=view, nets=nets[:50],
        severity=Severity.INFO,
        message=f"{len(islands)} piece(s) of floating metal held only by coupling capacitors "
                f"({len(nets)} net(s); largest: {net_phrase(largest)}, "
                f"{plural(len(largest.terminals), 'terminal')})",
        explanation=[
            "on these nets every terminal is a parasitic capacitor (or a wire resistor "
            "between such nets): fill, shields or unconnected wells the extractor wrote with "
            "their coupling",
            *([f"{'it reaches' if len(islands) == 1 else f'{wrapped} of them reach'} only "
               "capacitors inside instances: the "
               "substrate node of the extractor's device cells, which this cell does not "
               "bring out as a port"] if wrapped else []),
            "an extraction fact; a simulator needs a DC return there only for its operating "
            "point (ngspice-39: '.option rshunt' gives one)"],
        fix="nothing to do for the extraction; tie the metal in layout if it was meant to be "
            "a shield or a well tap" + ("; to simulate the cell on its own, make the "
                                        "substrate node a port" if wrapped else ""),
        values={"count": len(islands), "island_nets": len(nets)},
        related=[Related(largest.first_device.location, f"largest: {largest.nets[0]}")])


def _implicit_rail_finding(ctx, view, rail, islands):
    nets = [n for i in islands for n in i.nets]
    first = min((i.first_device for i in islands),
                key=lambda d: (d.location.path, d.location.line, d.location.column))
    gates = sum(len(i.controls) for i in islands)
    return ctx.finding(
        location=first.location, subject=rail, view=view, nets=nets[:50],
        severity=Severity.INFO,
        message=f"{view.label} uses the rail {rail} without a port or .global: as SPICE reads "
                f"it, {rail} is local to the cell and floats ({net_phrase(islands[0])})",
        explanation=[f"{rail} is not on the .subckt line of {view.label} and no .global names "
                     "it; LVS tools join power nets by name, so a cell library written for them "
                     "takes it as global",
                     f"this deck does not instantiate {view.label}; the {len(nets)} net(s) and "
                     f"{gates} gate or base pin(s) left without a level follow from this one "
                     "cause"],
        fix=f"add {rail} to the .subckt line (or '.global {rail}') before simulating the cell",
        values={"island_nets": len(nets), "gates": gates},
        related=[Related(first.location, f"first element: {first.display}")])


def _portless_finding(ctx, view):
    """A .subckt with devices and no ports (a layout extraction that found no pin
    labels): every net inside floats, one finding for the cell instead of one per net."""
    found = [i for i in islands(ctx, view, FULL) if i.first_device is not None]
    if not found:
        return None  # it holds its own sources and ground: a closed circuit
    gates = sum(1 for i in found for dev, pin in i.terminals if pin in ("g", "b"))
    first = min((i.first_device for i in found),
                key=lambda d: (d.location.path, d.location.line, d.location.column))
    nets = [n for i in found for n in i.nets]
    return ctx.finding(
        location=view.cell.location, subject=view.cell.name, view=view, nets=nets[:50],
        severity=Severity.WARNING,
        message=f".subckt {view.label} has no ports: its {len(nets)} net(s) reach nothing "
                "outside, so none of them has a DC level",
        explanation=[f"{view.label} holds {len(view.devices)} element(s) and lists no port on its "
                     ".subckt line; nothing inside is a source or ground",
                     "a layout extraction writes such a cell when the layout carries no pin "
                     "labels; LVS then has nothing to compare, and an instance of it "
                     "connects to nothing",
                     f"the {len(found)} floating island(s) inside ({gates} gate or base pin(s)) "
                     "follow from this one cause and are not listed one by one"],
        fix="label the pins in the layout (or add the ports to the .subckt line) and extract again",
        values={"islands": len(found), "island_nets": len(nets), "gates": gates},
        related=[Related(first.location, f"first element: {first.display}")])
