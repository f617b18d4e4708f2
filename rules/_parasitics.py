"""Extraction facts, told apart from design errors (shared by dangling-net and no-dc-path).

A layout extractor writes the wiring of a cell as a network of small resistors and
capacitors.  Its dead-end stubs (a wire segment that ends in nothing: one resistor
pin alone on a node) and floating metal (fill, shields, unconnected wells held only
by coupling capacitors) are facts of the extraction, not errors of the design: one
info per cell with a count and the largest example, never one finding per net.

A cell is judged extracted from what the extractors write: many plain R/C elements
making most of the cell, or net names in the extractors' own shapes (magic's
``a_120_n45#``, ``m1_4520_n2420#``; the RC extractors' ``net.n12`` / ``net.t3``;
KLayout's ``$41``).
"""

from __future__ import annotations

import re
from collections import Counter

from lintamp.netlist.units import parse_number

EXTRACTED_NAME = re.compile(r"#|\.[nt]\d+$|^\\?\$\d+$|(^|/)vsubs$")
PASSIVE_KINDS = ("resistor", "capacitor")
MIN_EXTRACTED_RC = 30  # fewer plain R/C than this is a hand-drawn cell


def kind_counts(ctx, view) -> Counter:
    """How many devices of each kind the cell holds (from its device classes)."""
    def compute():
        classes = view.device_classes
        counts: Counter = Counter()
        if classes is None:
            return counts
        per_code = Counter(classes.codes) if classes.small else dict(
            enumerate(__import__("numpy").bincount(classes.codes, minlength=len(classes.keys)).tolist())
            if len(classes.codes) else [])
        for code, n in per_code.items():
            counts[classes.keys[code][0]] += n
        return counts
    return ctx.memo(("parasitics", "kinds", id(view)), compute)


def looks_extracted(ctx, view) -> bool:
    """Whether the cell reads as a layout extraction's RC network."""
    def compute():
        counts = kind_counts(ctx, view)
        rc = sum(counts[k] for k in PASSIVE_KINDS)
        total = sum(counts.values())
        if rc >= MIN_EXTRACTED_RC and rc * 2 >= total:
            return True
        nets = view.nets
        shaped = sum(1 for n in nets[:2000] if EXTRACTED_NAME.search(n))
        return shaped >= 10 and shaped * 4 >= min(len(nets), 2000)
    return ctx.memo(("parasitics", "extracted", id(view)), compute)


def is_extraction_net(ctx, view, net: str) -> bool:
    return EXTRACTED_NAME.search(net) is not None or looks_extracted(ctx, view)


def value_of(dev) -> float | None:
    """The element's value as a number, where it is written as one."""
    text = getattr(dev.element, "value", None)
    if not text:
        return None
    try:
        return parse_number(text)
    except (ValueError, TypeError):
        return None


def reaches_into_instance(ctx, view, net: str) -> bool:
    """Whether ``net`` names a node inside one of the cell's instances (``x1.mid``):
    ngspice-39 names the nodes of an expanded subcircuit so, and a card that writes
    that name connects to the node inside (checked: 'rp x1.mid probe 1' reads the
    divider's midpoint)."""
    if "." not in net:
        return False
    names = ctx.memo(("parasitics", "instances", id(view)), lambda: {
        d.name.lower() for d in view.devices_of(kinds=("instance",))})
    return net.split(".", 1)[0].lower() in names


def passive_inside(ctx, dev, pin: str, depth: int = 0) -> bool:
    """Whether an instance pin leads, inside the instance, only to parasitic elements:
    the port's net, and every net a resistor joins to it, carry only R and C pins (or
    pins of deeper instances that lead only to R and C).  magic writes one wrapper
    cell per device geometry with the substrate node as a port whose only terminals
    are the cell's capacitors to substrate (a PMOS wrapper's ``VSUBS``)."""
    sub = dev.subcell
    if sub is None or pin not in sub.ports or depth > 8:
        return False  # (an instance's pins are named after its cell's ports)
    return ctx.memo(("parasitics", "passive-port", id(sub), pin),
                    lambda: _only_passive(ctx, sub, pin, depth))


def _only_passive(ctx, view, port: str, depth: int) -> bool:
    seen, todo = {port}, [port]
    while todo:
        net = todo.pop()
        for dev, pin in view.net_terminals.get(net, ()):
            if dev.kind == "capacitor":
                continue
            if dev.kind == "resistor":
                for other in dev.nets[:2]:
                    if other in view.ports and other != port:
                        return False  # the wire reaches another port: not a dead end
                    if other not in seen:
                        seen.add(other)
                        todo.append(other)
            elif dev.kind != "instance" or not passive_inside(ctx, dev, pin, depth + 1):
                return False
    return True
