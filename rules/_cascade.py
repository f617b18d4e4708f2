"""One cause, one finding: the include problems of a deck grouped by library, and
what they leave undefined (shared by missing-include, bad-include and unknown-cell).

A PDK library that is absent or refused here is named by many ``.include`` lines
(one per corner file); they are one cause.  Its consequences (instances of cells
nobody defines, parameters nobody sets) are counted and attached to the first
include finding of the deck, so that they are not reported once per use.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from lintamp.netlist.reader import OUTSIDE_EXPECTED, excerpt, is_machine_path, is_template_path
from lintamp.netlist.statements import Diagnostic

# Folder names under which PDKs and model collections keep their files: a library's
# root is the path before the first of them ('/foss/pdks/sky130A' for
# '/foss/pdks/sky130A/libs.tech/ngspice/sky130.lib.spice').
LIBRARY_FOLDERS = ("libs.tech", "libs.ref", "libraries", "models", "cells", "model", "lib")
LOCAL_SET = 3
TEMPLATE_KEY = "template placeholders"
_PLACEHOLDER = re.compile(r"\$\{|\$[A-Za-z_]|@|\{[A-Za-z_]")
_NUMBER = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?[a-zA-Z]*")


def library_root(target: str) -> str:
    """The folder that stands for the library an include path names."""
    parts = target.replace("\\", "/").split("/")
    for i, part in enumerate(parts[:-1]):
        if i > 0 and part.lower() in LIBRARY_FOLDERS:
            return "/".join(parts[:i]) or "/"
    return "/".join(parts[:-1]) or "."


def is_number_name(name: str) -> bool:
    """A subcircuit name that is a SPICE number (an R or C card written with an X)."""
    return _NUMBER.fullmatch(name) is not None


@dataclass
class IncludeGroup:
    rule: str
    root: str
    diagnostics: list[Diagnostic] = field(default_factory=list)

    @property
    def first(self) -> Diagnostic:
        return self.diagnostics[0]


def groups(ctx) -> list[IncludeGroup]:
    """Missing includes and includes refused because they name a place on another
    machine, grouped by (rule, library root), in file order of their first line."""
    def compute():
        found: dict[tuple[str, str], IncludeGroup] = {}
        for rule in ("missing-include", "bad-include"):
            for diag in ctx.diagnostics(rule):
                if not groupable(diag):
                    continue
                key = (rule, TEMPLATE_KEY if is_template_path(diag) else library_root(diag.subject))
                found.setdefault(key, IncludeGroup(rule, key[1])).diagnostics.append(diag)
        # files of the project's own folders are each their own cause, unless a set of
        # them (a folder of per-cell extraction files) is missing together
        kept = [g for g in found.values()
                if len(g.diagnostics) >= LOCAL_SET or is_machine_path(g.root)
                or g.root == TEMPLATE_KEY or _PLACEHOLDER.search(g.root)]
        return sorted(kept, key=lambda g: (g.first.location.path, g.first.location.line,
                                           g.first.location.column))
    return ctx.memo(("cascade", "groups"), compute)


def groupable(diag: Diagnostic) -> bool:
    if not diag.subject:
        return False
    if diag.rule == "missing-include":
        return not diag.message.startswith("library ")  # a missing .lib section stands alone
    return diag.expected == OUTSIDE_EXPECTED and is_machine_path(diag.subject)


def incomplete(ctx) -> bool:
    """Whether some include of this deck was not read (missing or refused)."""
    return bool(ctx.options.get("includes_missing")) or bool(groups(ctx)) or any(
        True for _ in ctx.diagnostics("bad-include"))


def unknown_instances(ctx) -> dict[str, list]:
    """Instances of cells nobody defines (numbers as names left out), by cell name:
    [(view, device), ...] in file order."""
    def compute():
        out: dict[str, list] = {}
        for view in ctx.cells():
            for dev in view.devices_of(kinds=("instance",)):
                if dev.kind != "instance" or dev.subcell is not None or not dev.element.model:
                    continue
                if is_number_name(dev.element.model):
                    continue
                out.setdefault(dev.element.model.lower(), []).append((view, dev))
        return out
    return ctx.memo(("cascade", "unknown"), compute)


def undefined_params(ctx) -> dict[str, int]:
    """Parameter names no scope defines, with the number of their uses."""
    def compute():
        from lintamp.circuit.values import UndefinedUse
        counts: dict[str, int] = {}
        for use in undefined_uses(ctx):
            if isinstance(use, UndefinedUse):
                counts[use.name] = counts.get(use.name, 0) + 1
        return counts
    return ctx.memo(("cascade", "params"), compute)


def undefined_uses(ctx) -> list:
    from lintamp.circuit.values import undefined_names
    return ctx.memo(("cascade", "uses"), lambda: list(undefined_names(ctx.netlist)))


def consequences(ctx) -> tuple[str, dict]:
    """The words and values of what the deck's unread includes leave undefined."""
    cells = unknown_instances(ctx)
    params = undefined_params(ctx)
    n_uses = sum(len(v) for v in cells.values()) + sum(params.values())
    if not cells and not params:
        return "", {}
    pieces = []
    if cells:
        pieces.append(f"{len(cells)} cell{'s' if len(cells) != 1 else ''}")
    if params:
        pieces.append(f"{len(params)} parameter{'s' if len(params) != 1 else ''}")
    words = (f"leaves {' and '.join(pieces)} undefined, used {n_uses} time"
             f"{'s' if n_uses != 1 else ''}")
    named = sorted(cells)[:4] + sorted(params)[:4]
    if named:
        words += " (" + ", ".join(excerpt(n, 40) for n in named) + (", ..." if len(cells) > 4 or len(params) > 4 else "") + ")"
    return words, {"undefined_cells": len(cells), "undefined_params": len(params), "uses": n_uses}


def group_findings(ctx, rule: str):
    """The findings of ``rule`` for its include groups: one per library root."""
    from lintamp.findings import Related, Severity
    all_groups = groups(ctx)
    for group in all_groups:
        if group.rule != rule:
            continue
        first = group.first
        n = len(group.diagnostics)
        severity = Severity.parse(first.severity) if first.severity else ctx.rule.severity
        explanation = [first.message]
        values: dict = {"files": n}
        if group is all_groups[0]:
            words, more = consequences(ctx)
            if words:
                explanation.append("the includes not read " + words)
                values.update(more)
        what = "not found" if rule == "missing-include" else "outside the project, not read"
        if group.root == TEMPLATE_KEY:
            yield ctx.finding(
                location=first.location, subject=TEMPLATE_KEY, severity=Severity.INFO,
                message=f"this deck is a template: {n} include path(s) hold placeholders a "
                        f"generator fills (first: {excerpt(first.subject)})",
                explanation=["a path written with {name}, ${name} or @name is the mark a "
                             "characterisation flow replaces before it runs the simulator"]
                            + explanation[1:],
                values=values, fix="check the deck the flow writes from this template",
                related=[Related(d.location, excerpt(d.subject)) for d in group.diagnostics[1:]])
            continue
        values["library_root"] = group.root  # the same library for other decks: one finding
        if n > 1:
            message = (f"{n} include files under {excerpt(group.root)} are {what} "
                       f"(first: {excerpt(first.subject)})")
        else:
            message = first.message
            explanation = explanation[1:]  # the message says it already
        yield ctx.finding(
            location=first.location, subject=excerpt(group.root), severity=severity,
            message=message, explanation=explanation, values=values, fix=what_to_set(group),
            related=[Related(d.location, excerpt(d.subject)) for d in group.diagnostics[1:]])


def what_to_set(group: IncludeGroup) -> str:
    root = group.root
    if _PLACEHOLDER.search(root):
        return (f"the path holds a placeholder ({excerpt(root)}) that ngspice does not expand: "
                "check the deck the flow writes from this template, or write the path out")
    if root.startswith("~"):
        return (f"install the library under your home folder as {excerpt(root)}, or add the "
                "folder that holds it here with --include-path (include-paths in the config)")
    if is_machine_path(root):
        return (f"add {excerpt(root)} (or where that library is installed on this machine) with "
                "--include-path (include-paths in the config)")
    return ("add the folder that holds these files with --include-path (include-paths in the "
            "config), or correct the paths")


def alone(ctx, rule: str):
    """The diagnostics of ``rule`` that no group took."""
    taken = {id(d) for g in groups(ctx) for d in g.diagnostics}
    return [d for d in ctx.diagnostics(rule) if id(d) not in taken]


def dropped_instances(view) -> list:
    """The instances a schematic exporter noted it left out of this cell (xschem:
    '*  x1 -  inv  IS MISSING !!!!'), as the parser keeps them: pragmas of the cell."""
    return [p for p in view.cell.pragmas if p.verb == "dropped-instance"]


def open_by_dropped(ctx, view, rule: str, nets: list[str], first_location):
    """One info for the nets of a cell that are open because the export left
    instances out (the unknown-cell finding says so once)."""
    from lintamp.findings import Severity
    dropped = dropped_instances(view)
    names = ", ".join(p.args[0] for p in dropped[:6]) + (", ..." if len(dropped) > 6 else "")
    shown = ", ".join(nets[:6]) + (", ..." if len(nets) > 6 else "")
    return ctx.finding(
        location=first_location, subject="open by left-out instances", view=view,
        nets=nets[:50], severity=Severity.INFO,
        message=f"{len(nets)} net(s) of {view.label} are open where the export left out "
                f"{len(dropped)} instance(s) ({names}): {shown}",
        explanation=["the schematic export wrote that it could not find the symbol of these "
                     "instances and left them out (see unknown-cell); the nets they would "
                     "join are open in the netlist as written"],
        fix="make the symbol findable and export the netlist again",
        values={"count": len(nets), "dropped": len(dropped)})
