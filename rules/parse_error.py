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

from lintamp.rulekit.context import forward_diagnostics
from lintamp.findings import Severity

NAME = "parse-error"
CATEGORY = "syntax"
SEVERITY = Severity.ERROR
SUMMARY = "a card lintamp cannot read (with path:line:column and what was expected)"

check = forward_diagnostics
