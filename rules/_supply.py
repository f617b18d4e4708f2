"""Which block pins are supplies, and which of a testbench's supply nets nothing drives
(shared by undriven-supply and dangling-net).

For now a pin is a supply by its name alone, and a net a schematic export lists as
its own pin (``*.iopin vdd``) is a port (``vdd``, ``avdd``, ``vcc``, ``vpwr`` ...):
a simple local test until the intent analysis (pin directions, config, pragmas)
answers it for every rule.
"""

from __future__ import annotations

import re

SUPPLY_PIN = re.compile(r"([ad]?vdd\w*|vcc\w*|vpwr\w*|vdd[ad]\w*|vpp|v\+|vpos)", re.I)
DRIVING_KINDS = ("vsource", "isource", "vcvs", "ccvs", "vccs", "cccs", "behavioral", "inductor",
                 "resistor", "nmos", "pmos", "npn", "pnp", "diode", "switch", "xspice", "other")


def is_supply_pin(name: str) -> bool:
    return SUPPLY_PIN.fullmatch(name) is not None


def undriven_supplies(ctx) -> list[tuple[str, list]]:
    """Top-level nets of a testbench that reach only blocks' supply pins: [(net,
    [(instance, pin), ...])].  A testbench is a top level with a source of its own."""
    def compute():
        design = ctx.design
        top = design.top
        if top is None or not top.cell.is_top or not design.in_deck(top):
            return []
        if not any(True for _ in top.devices_of(kinds=("vsource", "isource"))):
            return []
        found = []
        ground = design.ground
        observed = ctx.netlist.observed
        pins = declared_pins(ctx)
        for dev in top.devices_of(kinds=("instance",)):
            if dev.kind != "instance" or dev.subcell is None:
                continue
            for pin, net in zip(dev.pins, dev.nets):
                if (not is_supply_pin(pin) or net in ground or net in observed or net in pins
                        or top.is_external(net)):
                    continue
                terminals = top.net_terminals.get(net, [])
                if all(d.kind == "instance" and d.subcell is not None and is_supply_pin(p)
                       for d, p in terminals):
                    found.append((net, terminals))
        seen = set()
        out = []
        for net, terminals in found:
            if net not in seen:
                seen.add(net)
                out.append((net, terminals))
        return out
    return ctx.memo(("supply", "undriven"), compute)


def declared_pins(ctx) -> frozenset[str]:
    """Top-level nets a schematic export lists as its own pins (``*.ipin vin``,
    ``*.opin``, ``*.iopin``): the exported block's ports, which whatever
    instantiates it drives, biases and powers."""
    def compute():
        cdl = getattr(ctx.netlist, "cdl", {}) or {}
        return frozenset(word.lower() for key in (".ipin", ".opin", ".iopin", "ipin", "opin", "iopin")
                         for line in cdl.get(key, ()) for word in line.split())
    return ctx.memo(("supply", "declared pins"), compute)

