"""A waiver that matches no finding.

What it finds
-------------
A ``lintamp: waive RULE [SUBJECT] -- reason`` comment that covered no finding in
this run: the problem it excused was fixed, the rule or subject is misspelt, or the
comment sits where its scope does not reach the finding (a waiver on an element's
line covers that element and its nets only; elsewhere it covers its cell).

Why it matters
--------------
A stale waiver is a silent hole: when the same problem comes back later, in the
same place, nobody is told.  A misspelt one never worked at all.

Example
-------
The load resistor was made smaller, so the output is no longer too high-impedance,
but the waiver stayed::

    .subckt amp in out vdd vss
    * lintamp: waive unbuffered-output out -- drives only the on-chip sampler
    m1 out in vss vss nch w=4u l=0.5u
    rd vdd out 2k
    .ends

Fix
---
Remove the waiver, or correct its rule name (``lintamp rules`` lists them), its
subject, or its place.  Runs that turn the waived rule off (``--only``,
``--skip``, ``skip`` in the config or in its ``[paths]``) do not report the waiver.
"""

from lintamp.findings import Severity

NAME = "unused-waiver"
CATEGORY = "waivers"
SEVERITY = Severity.WARNING
SUMMARY = "a waiver that matches no finding"


def check(ctx):
    """Produced by the decision layer (lintamp.decide), which sees every waiver."""
    return iter(())
