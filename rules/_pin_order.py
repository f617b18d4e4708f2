"""Instances whose nets follow another order than their subcircuit's ports.

A netlist written for a cell with one port order and read against a definition with
another (a CDL of a spare cell written in layout pin order, a schematic exported
before the symbol's pins were reordered) connects every net to the wrong pin.  The
sign that cannot be a choice: a net named exactly as one of the cell's rail ports
(``VGND``) sits on a port of the opposite rail (``VPWR``) or a signal port, while
the port of its own name carries another net.  Shared by ``swapped-pins`` (the
finding) and the island rules (whose islands there are its consequences).
"""

from __future__ import annotations

from dataclasses import dataclass

WELL_HIGH = ("vpb", "vnw", "nwell")  # n-well bias: at the supply
WELL_LOW = ("vnb", "vpw", "pwell", "vsub", "vsubs", "sub")  # p-well / substrate bias: at ground


@dataclass(frozen=True)
class Misplaced:
    net: str    # the net, named as one of the cell's ports
    pin: str    # the port it sits on
    own: str    # the port of its own name
    there: str  # the net that port carries instead


def rail_side(ctx, name: str) -> int:
    """+1 for a supply or n-well name, -1 for a ground or p-well name, 0 otherwise
    (the intent analysis's supply and ground patterns; shared with unused-port)."""
    from lintamp.connectivity.intent import matches, patterns
    low = name.lower()
    if low in WELL_HIGH or matches(low, patterns(ctx.config, "supply")):
        return 1
    if low in WELL_LOW or matches(low, patterns(ctx.config, "ground")):
        return -1
    return 0


def misplaced(ctx, dev) -> list[Misplaced]:
    """The nets of an instance that sit on another port than the one of their own name,
    when one of them at least puts a rail on the opposite rail or on a signal port;
    [] otherwise (a supply net on a body pin, ``vdd`` on ``vpb``, is a choice)."""
    sub = dev.subcell
    if sub is None:
        return []
    ports = [p.lower() for p in sub.ports]
    position = {p: i for i, p in reversed(list(enumerate(ports)))}
    nets = dev.nets[:len(ports)]
    out = []
    crossing = False
    for i, net in enumerate(nets):
        base = net.lower()
        j = position.get(base)
        if j is None or j == i or ports[i] == base or j >= len(nets):
            continue
        if nets[j].lower() == net.lower():
            continue  # the port of its own name carries it too: a short, not an order
        side, there = rail_side(ctx, base), rail_side(ctx, ports[i])
        if side and side != there:
            crossing = True
        out.append(Misplaced(net=net, pin=sub.ports[i], own=sub.ports[j], there=nets[j]))
    if not crossing or len(out) < 2:
        return []
    # the rails first: they are what makes it certain
    return sorted(out, key=lambda m: rail_side(ctx, m.net) == 0)


def swapped_instances(ctx, view) -> dict[str, list[Misplaced]]:
    """Instance name -> its misplaced nets, for the instances of ``view`` in another order."""
    def compute():
        return {dev.name: found for dev in view.instances()
                if (found := misplaced(ctx, dev))}
    return ctx.memo(("pin-order", id(view)), compute)


def touches_swapped(ctx, view, terminals) -> bool:
    """Whether any of (device, pin) is a pin of an instance whose pins are in another order."""
    swapped = swapped_instances(ctx, view)
    return bool(swapped) and any(d.name in swapped for d, _ in terminals)
