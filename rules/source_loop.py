"""A loop of ideal voltage sources / inductors / controlled-voltage outputs.

What it finds
    A closed loop made only of branches that fix the voltage across them at DC:
    independent V sources, inductors (0 V at DC), E and H outputs, B sources with
    ``V=``, and 0-ohm resistors -- two supplies in parallel included.  All ground names
    are one node.  A subcircuit whose ports are joined inside by such branches takes
    part in its parent's loops.  The message names the loop's members in order.  A
    single element with both ends on one net is ``shorted-device``.

Why it matters
    Around the loop KVL either contradicts the sources or leaves the loop current
    undetermined: the MNA matrix is singular.  ngspice-39 prints ``singular matrix:
    check node v1#branch`` (or ``l1#branch``) and the operating point fails.  (A 0-ohm
    resistor is reported as well, although ngspice-39 quietly replaces it by a small
    resistance: the loop still carries whatever current the mismatch drives.)

Example
    ::

        V1 vdd 0 1.8
        V2 vdd 0 1.8            <- a second supply in parallel
        V3 a 0 0.5
        L1 a b 10u
        V4 b 0 0.2              <- V3, L1, V4 close a loop through ground

Fix
    Remove the duplicated source, or put the real series resistance in the loop (an
    inductor's DCR, a source's output resistance; ngspice's ``.option rseries``).
"""

from lintamp.connectivity.loops import design_loops, node_label
from lintamp.findings import Related, Severity

NAME = "source-loop"
CATEGORY = "connectivity"
SEVERITY = Severity.ERROR
SUMMARY = "a loop of ideal voltage sources / inductors / controlled-voltage outputs"


def check(ctx):
    loops = design_loops(ctx)
    for view in ctx.cells():
        for loop in loops.get(id(view), ()):
            members = [loop.closing, *loop.path]
            names = [b.note for b in members]
            order = " -> ".join(node_label(n) for n in (*loop.nodes, loop.nodes[0]))
            closing = loop.closing.device
            elements = []
            for b in members:
                if b.device.name not in elements:
                    elements.append(b.device.name)
            nets = [node_label(n) for n in loop.nodes]
            yield ctx.finding(
                location=closing.location, subject=closing.name, view=view, nets=nets,
                elements=elements,
                message=f"{closing.display} closes a loop of zero-impedance DC branches: "
                        + "; ".join(names),
                explanation=[f"around the loop {order}: " + "; ".join(names),
                             "each branch fixes the voltage across it at DC (an inductor and "
                             "a 0-ohm resistor fix 0 V)",
                             "KVL around the loop is then contradicted or leaves the loop "
                             "current undetermined; ngspice-39 reports 'singular matrix: "
                             f"check node {closing.name}#branch'"],
                fix="remove the duplicated source, or add the real series resistance (an "
                    "inductor's DCR, a source's output resistance)",
                values={"loop_branches": len(members)},
                related=[Related(b.device.location, b.note) for b in loop.path[:8]])
