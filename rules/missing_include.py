"""An ``.include`` or ``.lib`` file that is not there.

What it finds
    An ``.include``/``.lib`` whose file does not exist beside the including file
    or in the include paths, a ``.lib FILE SECTION`` whose section the file lacks,
    or a path holding an unexpanded placeholder (``$PDK_ROOT``, ``@@PDK_ROOT``,
    ``{corner}``).

Why it matters
    PDK model libraries are often absent where netlists are reviewed, so checking
    goes on without the file; but every model and subcircuit it would define is
    then unknown, and checks that need those models say so rather than guess.

Example
    ::

        .lib /pdk/models/corners.lib tt

Fix
    Point ``--include-path`` (or ``include-paths`` in the config) at the folder
    that holds the file, or ignore this rule where the library is knowingly absent.
"""

from lintamp.rulekit.context import forward_diagnostics
from lintamp.findings import Severity

NAME = "missing-include"
CATEGORY = "references"
SEVERITY = Severity.WARNING
SUMMARY = "an .include or .lib file (or section) that cannot be found"

check = forward_diagnostics
