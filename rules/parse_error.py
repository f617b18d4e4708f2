"""A card lintamp cannot read.

What it finds
    A statement whose syntax lintamp does not understand: an element with too few
    nodes, an expression that does not parse, a ``.subckt`` never closed, a
    continuation line with nothing before it, a binary file.  The message gives
    ``path:line:column``, what was found and what was expected.

Why it matters
    A simulator stops at such a card, or reads it differently from what the author
    meant.  Everything after the card is still checked, but the unread card is a
    hole in every other check: its nets and devices are missing.

Example
    ::

        * the MOSFET lacks its model name
        M1 d g s b W=1u L=0.18u

Fix
    Write the card as the simulator's manual gives it: here
    ``M1 d g s b nch W=1u L=0.18u``.
"""

import re

from lintamp.findings import Related, Severity
from lintamp.rulekit.context import forward_diagnostics

NAME = "parse-error"
CATEGORY = "syntax"
SEVERITY = Severity.ERROR
SUMMARY = "a card lintamp cannot read (with path:line:column and what was expected)"

# a line of a generator's template language ('<% ... %>', '{% ... %}', '{{ ... }}'),
# as the reader quotes it at the start of its message
TEMPLATE_LINE = re.compile(r"'(<%|%>|\{%|\{\{)")


def check(ctx):
    template_lines = []
    placeholders = []
    exported = "kicad-eeschema" in ctx.netlist.cdl
    for finding in forward_diagnostics(ctx):
        if finding.rule == NAME and TEMPLATE_LINE.match(finding.message):
            template_lines.append(finding)  # one cause: the deck is a template
            continue
        if exported and finding.rule == NAME and finding.message[:1].lower() == "u":
            placeholders.append(finding)  # eSim's U cards: its converter writes them out
            continue
        yield finding
    if placeholders:
        yield _schematic_export(ctx, placeholders)
    if template_lines:
        first = template_lines[0]
        yield ctx.finding(
            location=first.location, subject="template code", severity=Severity.INFO,
            message=f"{len(template_lines)} line(s) of a generator's template code "
                    "(<% ... %>): this deck is a template, not a netlist",
            explanation=["a flow fills this template and writes the netlist it simulates; "
                         "the template's own code lines are not SPICE and are not read"],
            fix="check the netlist the flow writes from this template",
            values={"count": len(template_lines)},
            related=[Related(f.location, "template code") for f in template_lines[1:9]])


def _schematic_export(ctx, found):
    first = found[0]
    converted = ctx.netlist.cdl.get("converted-deck")
    return ctx.finding(
        location=first.location, subject="schematic placeholders", severity=Severity.INFO,
        message=f"{len(found)} U card(s) of a KiCad schematic netlist as eSim writes it: "
                "placeholders for its models and plots, not SPICE",
        explanation=["eSim's converter turns these U cards into XSPICE models and plot "
                     "commands and adds the .sub files of the subcircuits; the converted "
                     "deck is what ngspice runs"
                     + (f" ({converted[0]})" if converted else "")],
        fix=(f"check {converted[0]}" if converted else "check the deck eSim's converter writes "
             "(<name>.cir.out)"),
        values={"count": len(found)},
        related=[Related(f.location, "placeholder card") for f in found[1:9]])
