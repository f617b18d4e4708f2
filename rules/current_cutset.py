"""Nodes whose only DC connections are current sources.

What it finds
    A net, or an island of nets, that no DC path joins to ground, a grounded supply or
    a port, while one or more ideal current sources (I, G, F, B with ``I=``) feed it
    from outside: two current sources stacked with nothing else on the middle node, or
    a current source charging only a capacitor.

Why it matters
    The currents into the island must sum to zero at DC, but nothing there can absorb
    a difference: KCL over-constrains the cut set and the voltage is undetermined.
    ngspice-39 reports ``singular matrix: check node mid``; with two nominally equal
    sources the real circuit drives the node into a rail.

Example
    ::

        * two current sources in series; nothing else sets mid
        I1 vdd mid 10u
        I2 mid 0 10u

Fix
    Give the node a DC return (a resistor, a diode-connected load) or close a feedback
    loop that sets its level; replace one of two stacked sources by a device whose
    current depends on the node voltage.
"""

from lintamp.findings import Severity
from lintamp.rules._islands import (context_steps, elements, island_findings, listing,
                                    net_phrase, related, terminal_lines)

NAME = "current-cutset"
CATEGORY = "connectivity"
SEVERITY = Severity.ERROR
SUMMARY = "nodes whose only DC connections are current sources"


def check(ctx):
    for view, island, _ in island_findings(ctx, NAME):
        feeds = []
        for dev, _pin in island.current_feeds:
            if dev.display not in feeds:
                feeds.append(dev.display)
        first = island.first_device
        if first is None:
            continue
        count = len(island.nets)
        yield ctx.finding(
            location=first.location, subject=island.nets[0], view=view, nets=island.nets,
            elements=elements(island),
            message=f"{net_phrase(island)} {'is' if count == 1 else 'are'} fed only by current "
                    f"source(s) {listing(feeds)}",
            explanation=[
                f"on {'this net' if count == 1 else 'these nets'}: {terminal_lines(island)}",
                f"the only DC branches into {'it' if count == 1 else 'them'} are current "
                f"sources ({listing(feeds)}); they fix currents, not a voltage",
                "KCL at this cut set has no solution unless the currents cancel exactly, and "
                "even then the voltage is undetermined",
                *context_steps(view, island),
                f"ngspice-39 reports 'singular matrix: check node {island.nets[0]}'",
            ],
            fix="add a DC return (a resistor or a diode-connected load) or feedback that sets "
                "the node",
            values={"island_nets": count, "current_sources": len(feeds)},
            related=related(island, skip=first))
