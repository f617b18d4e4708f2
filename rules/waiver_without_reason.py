"""A waiver that gives no reason.

What it finds
-------------
A ``lintamp: waive RULE`` comment with nothing after ``--``.  Such a waiver waives
nothing: the finding it names is still reported, and so is the waiver.

Why it matters
--------------
A waiver records a design decision ("this node is high-impedance on purpose,
because ...").  Without the reason, the next reviewer cannot tell a considered
exception from a silenced warning, and cannot tell when it stops being true.

Example
-------
::

    * lintamp: waive dangling-net spare
    rspare spare 0 1meg

Fix
---
Write the reason after ``--``::

    * lintamp: waive dangling-net spare -- test pad, bonded only on the evaluation board
"""

from lintamp.findings import Severity

NAME = "waiver-without-reason"
CATEGORY = "waivers"
SEVERITY = Severity.WARNING
SUMMARY = "a waiver with no reason after --"


def check(ctx):
    """Produced by the decision layer (lintamp.decide), which sees every waiver."""
    return iter(())
