"""An include that must not be read: a cycle, a path outside the project, too deep.

What it finds
    ``.include``/``.lib`` chains that come back to a file already being read (a
    cycle or a self-include), includes nested deeper than 40 levels, and paths that
    resolve outside the project root and the configured include paths (absolute
    paths, ``..`` escapes, symbolic links pointing out).

    An absolute or home path (a library on the author's machine: ``/foss/pdks/...``,
    ``~/pdk/...``) is a warning, as a missing file is, one per library with the
    other include lines as related locations; a relative path that climbs out of
    the project, a cycle or a chain too deep is an error.

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

from lintamp.findings import Severity
from lintamp.rules import _cascade

NAME = "bad-include"
CATEGORY = "references"
SEVERITY = Severity.ERROR
SUMMARY = "an include cycle, an include outside the allowed folders, or includes nested too deep"

def check(ctx):
    yield from _cascade.group_findings(ctx, NAME)
    for diag in _cascade.alone(ctx, NAME):
        yield ctx.from_diagnostic(diag)
