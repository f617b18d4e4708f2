"""A part of the file written in a language lintamp does not read.

What it finds
    Sections after ``simulator lang=spectre`` (up to ``simulator lang=spice``).

Why it matters
    Those lines are skipped, so their devices and nets take part in no check.  The
    finding says so once, at the switch, so that a clean report is not mistaken
    for a checked one.

Example
    ::

        simulator lang=spectre
        R1 (a b) resistor r=1k

Fix
    Nothing to fix in the netlist; check a SPICE export of the block instead.
"""

from lintamp.rulekit.context import forward_diagnostics
from lintamp.findings import Severity

NAME = "unsupported-syntax"
CATEGORY = "syntax"
SEVERITY = Severity.INFO
SUMMARY = "a section written in a language lintamp does not read (skipped, said once)"

check = forward_diagnostics
