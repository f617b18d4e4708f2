"""A testbench whose block's supply pin nothing drives: the block is never powered.

What it finds
    In a deck with sources of its own (a testbench), a net on a block's supply pin
    (``vdd``, ``avdd``, ``vcc``, ``vpwr`` ...) that no voltage or current source and
    no other device reaches: only supply pins of instances touch it.  One finding per
    net.  A supply is known by its pin name for now.

Why it matters
    The block under test runs from a supply nobody connected: every node inside
    settles at 0 V (or wherever leakage puts it) and the simulation measures an
    unpowered circuit.  Usually the source was named differently (``VDD`` on ``vdd1``)
    or left out when the testbench was copied.

Example
    ::

        V1 vin 0 dc 0.9
        X1 vin out vdd 0 amp

Fix
    Add the supply source (``VDD vdd 0 1.8``), or connect the pin to the net the
    supply source drives.
"""

from lintamp.findings import Related, Severity
from lintamp.rules import _supply

NAME = "undriven-supply"
CATEGORY = "connectivity"
SEVERITY = Severity.WARNING
SUMMARY = "a testbench whose block's supply pin no source or device drives"


def check(ctx):
    top = ctx.design.top
    for net, terminals in _supply.undriven_supplies(ctx):
        dev, pin = terminals[0]
        blocks = ", ".join(f"{d.display} pin {p}" for d, p in terminals[:4])
        yield ctx.finding(
            location=dev.location, subject=net, view=top, nets=[net],
            elements=[d.name for d, _ in terminals],
            message=f"supply net {net} of {blocks} is driven by nothing: the block is not powered",
            explanation=[f"{net} reaches only supply pins ({blocks})",
                         "no voltage or current source and no other device connects to it, so "
                         "the block's supply floats (about 0 V at the operating point)"],
            fix=f"add a supply source on {net} (V... {net} 0 <volts>), or connect the pin to "
                "the net the supply source drives",
            values={"pins": len(terminals)},
            related=[Related(d.location, f"{d.display} pin {p}") for d, p in terminals[1:9]])
