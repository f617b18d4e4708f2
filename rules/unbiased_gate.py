"""A MOS/JFET gate or BJT base net that no DC path biases.

What it finds
    A DC island (see ``no-dc-path``) that holds a MOS or JFET gate or a BJT base,
    reported here instead of as ``no-dc-path``: an AC-coupled input without a bias
    resistor, or a current-mirror gate net that touches only gates because the diode
    connection of the reference device was left out.  Also a BJT base or JFET gate that
    only the device's own junctions reach: nothing supplies base current.

Why it matters
    A gate draws no DC current, so nothing sets the net's voltage; the nodal matrix is
    singular.  ngspice-39 does not stop: it warns ``singular matrix: check node nb``,
    tries GMIN stepping and source stepping (both fail), and its transient operating
    point then settles on a dead point -- the floating gate at 0 V, the devices on it
    off (drain current about a picoampere), a current source into them at megavolts --
    and simulates on from there without another word.  A floating
    BJT base does not stop the simulator -- junction GMIN lets it settle near 0.4 V --
    but the transistor is then off (collector current around a nanoampere), silently.

Example
    ::

        * mirror: the reference M0 was meant to be diode-connected (gate = drain)
        I0 vdd nd 10u
        M0 nd nb 0 0 nch
        M1 o1 nb 0 0 nch
        M2 o2 nb 0 0 nch

Fix
    Diode-connect the mirror reference (gate to drain), or bias an AC-coupled gate with
    a resistor to a defined level (corner 1/(2 pi R C) below the signal band); give a
    base a bias divider or base current.
"""

from lintamp.findings import Severity
from lintamp.rules._islands import (context_steps, elements, island_findings, listing,
                                    net_phrase, related, terminal_lines)

NAME = "unbiased-gate"
CATEGORY = "connectivity"
SEVERITY = Severity.ERROR
SUMMARY = "a MOS/JFET gate or BJT base net that no DC path biases (reported instead of no-dc-path there)"


def controls_phrase(controls: list[str]) -> str:
    """``gates of M0, M1, M2`` when every entry is a plain gate (or base), else the list."""
    for word in ("gate", "base"):
        prefix = f"{word} of "
        if controls and all(c.startswith(prefix) and " inside " not in c for c in controls):
            names = [c[len(prefix):] for c in controls]
            return (f"{word}s of " if len(names) > 1 else prefix) + listing(names)
    return listing(controls)


def _only_controls(island) -> bool:
    return all(d.kind != "capacitor" and (pin == "g" or pin == "b" or d.kind == "instance")
               for d, pin in island.terminals)


def check(ctx):
    for view, island, bias_only in island_findings(ctx, NAME):
        first = island.first_device
        if first is None:
            continue
        net = island.nets[0]
        controls = listing(island.controls)
        if bias_only:
            word = "base" if any(c.startswith("base") for c in island.controls) else "gate"
            message = (f"{net} reaches DC only through the junctions of the device it biases "
                       f"({controls}): nothing supplies {word} current")
            steps = [f"on {net}: {terminal_lines(island)}",
                     f"the only DC path from {net} runs through the {word} junction itself; "
                     f"KCL then forces zero {word} current",
                     "so the device is off; a simulator does not complain: ngspice-39 lets "
                     "the base settle near 0.4 V through junction leakage (GMIN)",
                     *context_steps(view, island)]
            fix = (f"bias the {word}: a divider or resistor to a defined level, or a "
                   "current into it")
        else:
            has_cap = any(d.kind == "capacitor" for d, _ in island.terminals)
            if _only_controls(island):
                message = (f"{net} touches only the {controls_phrase(island.controls)}: "
                           f"nothing sets its DC voltage")
            else:
                message = f"{net_phrase(island)} drives {controls} with no DC bias"
            steps = [f"on {'this net' if len(island.nets) == 1 else 'these nets'}: "
                     f"{terminal_lines(island)}",
                     "a gate draws no DC current"
                     + (" and a coupling capacitor is open at DC" if has_cap else "")
                     + f", so nothing sets {net}'s voltage",
                     *context_steps(view, island),
                     "the nodal matrix is singular: ngspice-39 warns 'singular matrix: "
                     f"check node {net}', fails GMIN and source stepping, and its transient "
                     f"operating point lands on a dead point ({net} at 0 V, the devices it "
                     "drives off), from which it simulates on without another warning"]
            if has_cap:
                fix = (f"bias {net}: a resistor from it to a defined level (the coupling "
                       "capacitor and that resistor set the input's high-pass corner, "
                       "1/(2 pi R C))")
            elif len(island.nets) == 1 and len(island.terminals) == 1:
                # one terminal on the net: most often a misspelt net name (the one
                # finding for it: dangling-net leaves lone gates to this rule)
                steps.insert(1, f"{net} has no other terminal: most often a misspelt net "
                                "name, or a connection never made")
                fix = (f"connect {net} where it was meant to go (check the spelling against "
                       "the nets nearby), or give it a DC path to a defined level")
            elif _only_controls(island) and len(island.controls) > 1:
                fix = ("diode-connect the mirror's reference device (its gate to its own "
                       "drain, which the reference current feeds), or drive the net from a "
                       "bias generator")
            else:
                fix = (f"give {net} a DC path: a resistor to a defined level, or the diode "
                       "connection of the device that should set it")
        yield ctx.finding(
            location=first.location, subject=net, view=view, nets=island.nets,
            elements=elements(island), message=message, explanation=steps, fix=fix,
            severity=Severity.WARNING if bias_only else None,
            values={"island_nets": len(island.nets), "gates": len(island.controls),
                    "simulator_fails": "no" if bias_only else "yes"},
            related=related(island, skip=first))
