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

from lintamp.findings import Severity
from lintamp.rules._islands import (context_steps, elements, island_findings, net_phrase,
                                    related, terminal_lines)

NAME = "no-dc-path"
CATEGORY = "connectivity"
SEVERITY = Severity.ERROR
SUMMARY = "nodes with no DC path to ground"


def check(ctx):
    for view, island, _ in island_findings(ctx, NAME):
        first = island.first_device
        if first is None:
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
