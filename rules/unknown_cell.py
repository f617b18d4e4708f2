"""An instance of a subcircuit that is not defined (nor mapped as a device).

What it finds
    An ``X`` line naming a subcircuit that no ``.subckt`` in scope defines and that
    the device map (``[devices]`` in the config, or the built-in open-PDK names)
    does not recognise (a warning inside a cell library, whose users may define
    it elsewhere; an error in a deck that instantiates it), once per cell and name
    with the other instances as related locations; also a subcircuit that
    instantiates itself, directly or through others, and ``--top`` naming a cell
    that does not exist.  Where some include of the deck was not read, or the names
    are cells of an open PDK's own libraries, the unknown cells are one info per
    cell (the missing include is the finding).  X cards that name a number
    (``XR5 a b 152``) are one warning per cell.

Why it matters
    A simulator stops at the first such instance.  lintamp cannot see inside it, so
    its ports look unconnected to every connectivity check.

Example
    ::

        X1 in out vdd 0 opamp
        * no .subckt opamp anywhere, and no .include that defines it

Fix
    Include the file that defines the subcircuit, correct the name, or map a PDK
    device name in ``[devices]``.
"""

import re

from lintamp.circuit.design import scopes
from lintamp.circuit.devicemap import PDK_LIBRARY_PREFIXES
from lintamp.findings import Related, Severity
from lintamp.rulekit.context import forward_diagnostics
from lintamp.rules import _cascade
from lintamp.text import excerpt, near_miss

NAME = "unknown-cell"
CATEGORY = "references"
SEVERITY = Severity.ERROR
SUMMARY = "an instance of a subcircuit that is not defined (nor mapped as a device)"
MAX_RELATED = 20
_TEMPLATE_MARK = re.compile(r"\$\{|\$[a-z_]|\{[a-z_]|@[a-z_]|<%", re.I)


def check(ctx):
    yield from forward_diagnostics(ctx)
    incomplete = _cascade.incomplete(ctx)
    for view in ctx.cells():
        dropped = _cascade.dropped_instances(view)
        if dropped:
            yield _dropped_finding(ctx, view, dropped)
    templates: list = []
    per_cell: dict[int, tuple] = {}  # id(view) -> (view, {name: [devices]}, {number: [devices]})
    for view in ctx.cells():
        for dev in view.devices_of(kinds=("instance",)):
            if dev.kind != "instance" or dev.subcell is not None or not dev.element.model:
                continue
            entry = per_cell.setdefault(id(view), (view, {}, {}))
            name = dev.element.model
            if _TEMPLATE_MARK.search(name):
                templates.append((view, dev))  # a generator's placeholder: not a cell name
                continue
            book = entry[2] if _cascade.is_number_name(name) else entry[1]
            book.setdefault(name.lower(), []).append(dev)
    if templates:
        view, first = templates[0]
        yield ctx.finding(
            location=first.location, subject="template placeholders", view=view,
            severity=Severity.INFO, elements=[d.name for _, d in templates][:50],
            message=f"{len(templates)} instance(s) name a placeholder a generator fills "
                    f"('{excerpt(first.element.model, 40)}'): this deck is a template",
            explanation=["a cell name written as ${name}, {name} or @name is the mark a "
                         "flow replaces before it runs the simulator"],
            fix="check the deck the flow writes from this template",
            values={"count": len(templates)})
    in_library: dict[str, list] = {}
    for view, names, numbers in per_cell.values():
        if numbers:
            yield _numbers_finding(ctx, view, numbers)
        if not names:
            continue
        if incomplete:
            yield _consequence_finding(ctx, view, names, incomplete=True)
            continue
        subs = set(ctx.netlist.cdl.get("kicad-eeschema", ()))
        beside = {n: d for n, d in names.items() if n in subs}
        if beside:  # eSim's converter includes <name>.sub for these
            yield _converter_finding(ctx, view, beside)
            names = {n: d for n, d in names.items() if n not in beside}
            if not names:
                continue
        from_pdk = {n: d for n, d in names.items() if n.startswith(PDK_LIBRARY_PREFIXES)}
        if from_pdk:
            yield _consequence_finding(ctx, view, from_pdk, incomplete=False)
            names = {n: d for n, d in names.items() if n not in from_pdk}
        library = not ctx.design.in_deck(view)
        if library:  # a cell library: one finding per missing name for the whole file
            for name, devs in names.items():
                in_library.setdefault(name, [view, []])[1].extend(devs)
            continue
        visible = [c for scope in scopes(view.cell) for c in scope.cells]
        for devs in names.values():
            yield _name_finding(ctx, view, devs, visible, False)
    for view, devs in in_library.values():
        visible = [c for scope in scopes(view.cell) for c in scope.cells]
        yield _name_finding(ctx, view, devs, visible, True)


def _converter_finding(ctx, view, names):
    first = min((d for devs in names.values() for d in devs), key=lambda d: d.location.line)
    shown = ", ".join(f"{n}.sub" for n in sorted(names)[:6])
    return ctx.finding(
        location=first.location, subject="subcircuits of the converter", view=view,
        severity=Severity.INFO, elements=sorted({d.name for devs in names.values() for d in devs})[:50],
        message=f"{len(names)} subcircuit(s) come from .sub files beside this schematic netlist "
                f"({shown}), which eSim's converter includes",
        explanation=["a KiCad schematic netlist as eSim writes it leaves its subcircuits to "
                     "the .sub files of the folder; the converted deck (<name>.cir.out) "
                     "includes them"],
        fix="check the converted deck", values={"count": len(names)})


def _name_finding(ctx, view, devs, visible, library):
    first = devs[0]
    model = first.element.model
    close = [m] if (m := near_miss(model, visible)) else []
    hint = f"; did you mean '{excerpt(close[0])}'?" if close else ""
    name, shown = excerpt(model), excerpt(first.display)
    times = f" ({len(devs)} instances)" if len(devs) > 1 else ""
    return ctx.finding(
        location=first.location, subject=first.name, view=view, elements=[d.name for d in devs],
        severity=Severity.WARNING if library else None,
        message=f"{shown} instantiates '{name}', which no .subckt defines{times}{hint}",
        explanation=[f"no .subckt {name} in this cell, its enclosing cells or the top level"
                     + (" (this is a library cell: the netlist it is used with may define it)"
                        if library else ""),
                     f"the nets on its {len(devs)} instance(s) are treated as connected "
                     "to an unknown block"],
        values={"count": len(devs)},
        related=[Related(d.location, f"also instantiates {name}: {excerpt(d.display)}")
                 for d in devs[1:1 + MAX_RELATED]],
        fix=f"include the file that defines {name}, correct the name, or map it as a "
            "device in [devices]")


def _consequence_finding(ctx, view, names, *, incomplete):
    """Cells whose definitions are in files not read here: one info per cell."""
    uses = sum(len(d) for d in names.values())
    listed = sorted(names, key=lambda n: (-len(names[n]), n))
    shown = ", ".join(f"{excerpt(names[n][0].element.model, 40)} x{len(names[n])}"
                      for n in listed[:5]) + (", ..." if len(listed) > 5 else "")
    first = min((devs[0] for devs in names.values()),
                key=lambda d: (d.location.line, d.location.column))
    return ctx.finding(
        location=first.location, subject="cells from unread includes", view=view,
        severity=Severity.INFO, elements=[d.name for devs in names.values() for d in devs][:50],
        message=f"{len(names)} cell(s) no file read here defines, used {uses} time(s): {shown}",
        explanation=[("some include files of this deck were not read (see missing-include / "
                      "bad-include); these cells are most likely defined there") if incomplete
                     else ("these are cells of an open PDK's libraries (standard, I/O or "
                           "device cells), which no file read here includes"),
                     "their instances are treated as unknown blocks"],
        values={"cells": len(names), "count": uses, "names": listed[:50]},
        fix="make the include files readable (--include-path), then check again" if incomplete
            else "include the PDK's cell library (its spice file) to check through these cells")


def _numbers_finding(ctx, view, numbers):
    devs = [d for group in numbers.values() for d in group]
    first = min(devs, key=lambda d: (d.location.line, d.location.column))
    shown = ", ".join(f"'{excerpt(n, 12)}'" for n in list(numbers)[:4]) + (", ..." if len(numbers) > 4 else "")
    return ctx.finding(
        location=first.location, subject="number as cell name", view=view,
        severity=Severity.WARNING, elements=[d.name for d in devs][:50],
        message=f"{len(devs)} X card(s) name a number where the subcircuit name belongs ({shown})",
        explanation=["the last field of an X card names the subcircuit; a number there reads "
                     "as an R or C card written with an X in front of its name",
                     "ngspice-39 stops on the first with 'unknown subckt'"],
        values={"count": len(devs)},
        fix="write these cards as R/C elements (drop the X), or name the PDK's resistor or "
            "capacitor cell")


def _dropped_finding(ctx, view, dropped):
    """Instances the schematic export left out of a cell, one finding for the cell."""
    symbols = sorted({p.args[1] for p in dropped if len(p.args) > 1})
    names = ", ".join(p.args[0] for p in dropped[:8]) + (", ..." if len(dropped) > 8 else "")
    return ctx.finding(
        location=dropped[0].location, subject=dropped[0].args[0], view=view,
        message=f"the schematic export left out {len(dropped)} instance(s) of "
                f"{', '.join(excerpt(s, 40) for s in symbols)} ({names}): the symbol was not found",
        explanation=["the exporter wrote 'IS MISSING' for these instances and no card for "
                     "them, so the netlist is not the schematic: the nets they would join "
                     "are open", "a simulator runs the deck without them"],
        values={"count": len(dropped)},
        related=[Related(p.location, f"{p.args[0]} left out") for p in dropped[1:MAX_RELATED]],
        fix="make the symbol findable (the symbol library path of the schematic editor) and "
            "export the netlist again")

