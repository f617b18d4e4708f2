"""An ``.include`` or ``.lib`` file that is not there.

What it finds
    An ``.include``/``.lib`` whose file does not exist beside the including file
    or in the include paths, a ``.lib FILE SECTION`` whose section the file lacks,
    or a path holding an unexpanded placeholder (``$PDK_ROOT``, ``@@PDK_ROOT``,
    ``{corner}``).

    The include lines of one library (a PDK's corner files, named by one folder)
    are one finding, with the others as related locations; the first include
    finding of a deck also says what the unread files leave undefined ("leaves 14
    cells and 6 parameters undefined, used 236 times"), and those uses are then not
    reported one by one.  ``~`` in a path is the home folder, as ngspice-39 reads
    it; ``$NAME`` and ``${NAME}`` ngspice does not expand, so neither does lintamp.

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

from dataclasses import replace

from lintamp.findings import Severity
from lintamp.rules import _cascade

NAME = "missing-include"
CATEGORY = "references"
SEVERITY = Severity.WARNING
SUMMARY = "an .include or .lib file (or section) that cannot be found"


def check(ctx):
    yield from _cascade.group_findings(ctx, NAME)
    for diag in _cascade.alone(ctx, NAME):
        finding = ctx.from_diagnostic(diag)
        name = diag.subject.strip("'\"")
        if "symbolic link" in diag.message:  # one link file, however many decks include it
            finding = replace(finding, values={**finding.values,
                                               "library_root": diag.message.split(" ", 1)[0]})
        elif name and "/" not in name and "\\" not in name and "placeholder" not in diag.message:
            # a bare file name is looked up in the include paths, the same for every deck
            # of a run: decks missing it share one cause (folded into one finding by the run)
            finding = replace(finding, values={**finding.values, "library_root": name})
        yield finding
