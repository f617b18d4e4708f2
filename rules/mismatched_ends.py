"""An ``.ends`` whose name is not the name of the ``.subckt`` it closes.

What it finds
    ``.ends NAME`` where NAME differs from the subcircuit opened last.

Why it matters
    Simulators close the innermost open subcircuit whatever the name says, so the
    deck runs; but a wrong name usually means a definition was pasted or renamed
    carelessly, or that an ``.ends`` is missing further up and the cards below
    belong to a different cell than the author thinks.

Example
    ::

        .subckt bias_gen nb vdd vss
        ...
        .ends bias

Fix
    Write the name of the subcircuit the ``.ends`` closes (``.ends bias_gen``), or
    leave the name out.
"""

from lintamp.rulekit.context import forward_diagnostics
from lintamp.findings import Severity

NAME = "mismatched-ends"
CATEGORY = "syntax"
SEVERITY = Severity.WARNING
SUMMARY = "an .ends whose name differs from the .subckt it closes"

check = forward_diagnostics
