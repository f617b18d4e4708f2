"""Instances whose nets follow another order than their subcircuit's ports.

What it finds
    An ``X`` line whose nets carry the names of the subcircuit's own ports, but at
    other positions: a net named as a rail port (``VGND``) lands on the opposite rail
    (``VPWR``) or on a signal pin, while the port of its own name gets another net.
    A supply net on a body pin (``VPWR`` on ``VPB``) is a choice and is not reported,
    nor is a net that also sits on the port of its name.  One finding per cell,
    listing its instances in another order.

Why it matters
    SPICE connects an instance's nets by position.  Written in another order (a CDL
    in layout pin order, a symbol whose pins were reordered after export), every net
    reaches the wrong pin: the supply lands on ground, an output on the supply.
    ngspice-39 simulates it as written, without a word; the gates and outputs inside
    then float or fight, which other rules would report one net at a time.

Example
    ::

        .subckt buf in vdd vss vout
        M1 vout in vss vss nch w=1u l=0.18u
        M2 vout in vdd vdd pch w=2u l=0.18u
        .ends
        x1 a vout vdd vss buf     <- written for the order in vout vdd vss

Fix
    Write the nets in the order of the ``.subckt`` line (or regenerate the netlist
    from the same cell view the definition comes from).
"""

from lintamp.findings import Related, Severity
from lintamp.rules._pin_order import swapped_instances

NAME = "swapped-pins"
CATEGORY = "references"
SEVERITY = Severity.WARNING
SUMMARY = "an instance whose nets follow another order than its subcircuit's ports"


def check(ctx):
    for view in ctx.cells():
        swapped = swapped_instances(ctx, view)
        if not swapped:
            continue
        devices = [d for d in view.instances() if d.name in swapped]
        first = devices[0]
        shown = ", ".join(f"{m.net} on pin {m.pin} (its own pin {m.own} gets {m.there})"
                          for m in swapped[first.name][:3])
        count = len(devices)
        yield ctx.finding(
            location=first.location, subject=first.name, view=view,
            elements=[d.name for d in devices], nets=[m.net for m in swapped[first.name]],
            message=(f"{first.display} connects its nets in another order than "
                     f".subckt {first.subcell.label} lists its ports"
                     + (f" (and {count - 1} more instance(s) in {view.label})" if count > 1 else "")),
            explanation=[f"{first.display}: {shown}",
                         f"ports of {first.subcell.label}: {' '.join(first.subcell.ports[:12])}",
                         "SPICE connects by position, so each net reaches the pin at its place "
                         "in the list, not the pin of its name; the islands and open pins this "
                         "leaves inside are this one cause and are not reported one by one"],
            fix=f"write the nets in the order of the .subckt {first.subcell.label} line",
            values={"instances": count, "misplaced": len(swapped[first.name])},
            related=[Related(d.subcell.cell.location, f".subckt {d.subcell.label}")
                     for d in devices[:1]]
                    + [Related(d.location, f"{d.display}, also in another order")
                       for d in devices[1:9]])
