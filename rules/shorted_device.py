"""A device with its terminals on one net (diode connections excepted).

What it finds
    A resistor, capacitor, inductor or diode with both ends on one net; a voltage or
    current source with both ends on one net; a MOS or JFET with gate, drain and source
    on one net; a BJT with collector = emitter.  Not reported, because they are
    intentional: a diode-connected MOS (gate = drain) or BJT (base = collector), a
    MOS capacitor (drain = source = body, gate on another net), and any MOS with
    drain = source but its gate elsewhere -- the shape of a layout dummy (gate at the
    off rail) as well as of a MOS capacitor, common in extracted netlists -- or with
    all four terminals on one net (a dummy tied to its rail, as schematic flows
    write edge dummies).  PDK devices (subcircuits the device map names) with drain,
    gate and source on one net, a BJT with every terminal on one net, or a PDK
    resistor with both ends on one net are layout dummies: one info per cell with
    their count.

Why it matters
    The device does nothing (a dead element, a transistor that can never carry
    current), or, for a voltage source, contradicts itself: KVL demands 0 V across it
    while it forces its value.  Most often a node was typed twice.

Example
    ::

        R3 out out 10k
        M4 n1 n1 n1 0 nch      <- gate, drain and source on n1

Fix
    Connect the terminal that was typed twice to the net that was meant, or remove the
    element.
"""

import re

from lintamp.circuit.kinds import BJT_KINDS, JFET_KINDS, MOS_KINDS
from lintamp.findings import Severity

NAME = "shorted-device"
CATEGORY = "connectivity"
SEVERITY = Severity.WARNING
SUMMARY = "a device with its terminals on one net (diode connections excepted)"

TWO_ENDED = {"resistor": ("p", "n"), "capacitor": ("p", "n"), "inductor": ("p", "n"),
             "diode": ("a", "k"), "vsource": ("p", "n"), "isource": ("p", "n")}


def shorted_pins(dev) -> tuple[str, str] | None:
    """The pin pair of ``dev`` that one net shorts, when that is a defect."""
    net = dev.net
    if dev.kind in TWO_ENDED:
        a, b = TWO_ENDED[dev.kind]
        if net(a) is not None and net(a) == net(b):
            return a, b
        return None
    if dev.kind in MOS_KINDS or dev.kind in JFET_KINDS:
        d, s = net("d"), net("s")
        if d is None or d != s:
            return None
        if net("g") != d:
            return None  # a MOS capacitor or a layout dummy: gate against the tied channel
        if net("b") == d:
            return None  # every terminal on one net: a layout dummy tied to its rail
        return "d", "s"
    if dev.kind in BJT_KINDS:
        c, e = net("c"), net("e")
        if c is not None and c == e:
            return "c", "e"
    return None


_EXTRACTION_NODE = re.compile(r"\.[nt]\d+$")


def _root(net: str | None) -> str | None:
    """An extracted node's net ('avss.t80' is a node of 'avss')."""
    return _EXTRACTION_NODE.sub("", net) if net else net


def is_layout_dummy(dev) -> bool:
    """A PDK device (a subcircuit the device map names) placed for matching or
    density with no job: a MOS with drain, gate and source on one net, a BJT with
    every terminal on one net (an extractor's nodes of one net count as one), a
    resistor or capacitor with both ends on one net.  Plain M/Q/R cards are never dummies."""
    if dev.spec is None:
        return False
    net = dev.net
    if dev.kind in MOS_KINDS:
        return _root(net("d")) == _root(net("s")) == _root(net("g"))
    if dev.kind in BJT_KINDS:
        return _root(net("c")) == _root(net("e")) == _root(net("b"))
    if dev.kind in ("resistor", "capacitor"):
        return net("p") is not None and net("p") == net("n")
    return False


def check(ctx):
    for view in ctx.cells():
        dummies = []
        # only a device with one net on two terminals can be shorted
        for dev in view.devices_with_repeated_nets():
            pins = shorted_pins(dev)
            if pins is None:
                continue
            if is_layout_dummy(dev):
                dummies.append(dev)
                continue
            net = dev.net(pins[0])
            values = {"pins": f"{pins[0]},{pins[1]}"}
            steps = [f"{dev.display} has {pins[0]} and {pins[1]} both on {net}"]
            if dev.kind == "vsource":
                steps.append("a voltage source across one net contradicts KVL; ngspice-39 "
                             f"stops: 'instance {dev.name} is a shorted VSRC'")
            elif dev.kind in BJT_KINDS:
                steps.append("its collector-emitter path is shorted: it can never carry "
                             "current between them")
            elif dev.kind in MOS_KINDS or dev.kind in JFET_KINDS:
                steps.append("its channel is shorted: it can never carry current between "
                             "drain and source")
            else:
                steps.append(f"no voltage can appear across it, so {dev.display} does nothing")
            yield ctx.finding(
                # a shorted V source is fatal in ngspice-39 ("instance v1 is a shorted VSRC")
                severity=Severity.ERROR if dev.kind == "vsource" else None,
                location=dev.location, subject=dev.name, view=view, nets=[net],
                elements=[dev.name],
                message=f"{dev.display} has {pins[0]} and {pins[1]} on one net ({net})",
                explanation=steps,
                fix="connect the terminal typed twice to the net that was meant, or remove "
                    "the element",
                values=values)
        if dummies:
            first = dummies[0]
            kinds = sorted({d.kind for d in dummies})
            yield ctx.finding(
                location=first.location, subject="layout dummies", view=view,
                elements=[d.name for d in dummies][:50], severity=Severity.INFO,
                message=f"{len(dummies)} dummy device(s) ({', '.join(kinds)}) with their "
                        f"terminals tied on one net, e.g. {first.display} on {first.nets[0]}",
                explanation=["PDK devices with drain, gate and source (or every terminal, or "
                             "both ends) on one net: dummies placed for matching, "
                             "etch or density, which carry no current",
                             "they are not loads or diode connections in any impedance "
                             "reasoning"],
                fix="nothing to do when they are dummies; a device meant to work has a "
                    "terminal typed twice",
                values={"count": len(dummies)})

