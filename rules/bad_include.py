"""An include that must not be read: a cycle, a path outside the project, too deep.

What it finds
    ``.include``/``.lib`` chains that come back to a file already being read (a
    cycle or a self-include), includes nested deeper than 40 levels, and paths that
    resolve outside the project root and the configured include paths (absolute
    paths, ``..`` escapes, symbolic links pointing out).

Why it matters
    A cycle makes a simulator loop or fail; a path out of the project reads files
    the netlist's author does not control (a CI gate reads netlists from anyone
    who opens a pull request).  lintamp does not read such files.

Example
    ::

        .include ../../../etc/models.inc

Fix
    Break the cycle; keep model files inside the project or add their folder with
    ``--include-path``.
"""

from lintamp.rulekit.context import forward_diagnostics
from lintamp.findings import Severity

NAME = "bad-include"
CATEGORY = "references"
SEVERITY = Severity.ERROR
SUMMARY = "an include cycle, an include outside the allowed folders, or includes nested too deep"

check = forward_diagnostics
