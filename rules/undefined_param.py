"""An expression uses a parameter that no scope defines.

What it finds
    A name in a value or expression (``{rload*2}``, ``'wn/2'``, ``r=rval``) that is
    neither a ``.param`` of the cell or an enclosing scope, a ``.subckt`` parameter,
    nor a built-in constant.  A bare name used as a device size (``w=WA l=LA`` in an
    unsized netlist) is reported once per cell as information: the sizes stay
    symbolic and numbers that need them are not computed.  So are the names a cell
    library (a file whose top level instantiates nothing) leaves to the deck that
    includes it, unless one is a near miss of a name it defines.

Why it matters
    A simulator refuses the deck, or (in some dialects) takes the name as zero.
    lintamp keeps the value symbolic and cannot compute anything from it.

Example
    ::

        .param rl=10k
        R1 out 0 {rload}

Fix
    Define the parameter (``.param rload=10k``), pass it to the subcircuit, or
    correct the spelling.
"""

import difflib

from lintamp.circuit.design import visible_params
from lintamp.circuit.values import BadExpression, undefined_names
from lintamp.findings import Severity
from lintamp.text import excerpt

NAME = "undefined-param"
CATEGORY = "syntax"
SEVERITY = Severity.ERROR
SUMMARY = "an expression uses a parameter that is not defined in scope"


def check(ctx):
    symbolic: dict[int, list] = {}
    from_includer: dict[int, list] = {}
    library = not ctx.design.deck_cells  # a cell library: its includer's .params are visible
    for use in undefined_names(ctx.netlist):
        view = ctx.design.view_of(use.cell) if use.cell is not None else None
        if isinstance(use, BadExpression):
            element, key, error = use.element, use.key, use.error
            yield ctx.finding(
                location=use.location, subject=(element.key if element else key), view=view,
                message=f"cannot read the expression of {excerpt(key)}"
                        + (f" of {excerpt(element.name)}" if element else "")
                        + f": {excerpt(str(error), 120)}",
                severity=Severity.ERROR,
                explanation=["the value stays unknown, so nothing that depends on it is computed"],
                elements=[element.key] if element else [])
            continue
        if use.symbolic_size:
            symbolic.setdefault(id(view), [view]).append(use)
            continue
        # a name longer than any real one has no close match worth the quadratic search
        close = (difflib.get_close_matches(use.name, visible_params(use.cell), n=1)
                 if use.cell and len(use.name) <= 60 else [])
        if library and not close and view is not None and not view.cell.is_top:
            from_includer.setdefault(id(view), [view]).append(use)
            continue  # (a near miss of a defined name stays an error: a slip, not an import)
        where = excerpt(f"{use.key} of {use.element.name}" if use.element else use.key)
        hint = f"; did you mean '{excerpt(close[0])}'?" if close else ""
        shown = excerpt(use.name)
        yield ctx.finding(
            location=use.location, subject=use.name, view=view,
            message=f"'{shown}' in {where} is not a defined parameter{hint}",
            elements=[use.element.key] if use.element else [],
            explanation=[f"no .param, .subckt parameter or built-in constant named '{shown}' "
                         "is visible here", "the value stays symbolic; a simulator rejects the deck"],
            fix=f"define it (.param {shown}=...), pass it as a subcircuit parameter, "
                "or correct the spelling")
    for view, *uses in symbolic.values():
        names, shown, first = _summary(uses)
        yield ctx.finding(
            location=first.location, subject="symbolic sizes", view=view, severity=Severity.INFO,
            message=f"device sizes and values are symbolic ({shown}): {len(uses)} value(s) stay unsized",
            explanation=["bare names used as W, L, M or NF with no definition: an unsized netlist",
                         "checks that need sizes (operating point, impedances) skip these devices"],
            fix="size the netlist, or define the names with .param", values={"count": len(uses)})
    for view, *uses in from_includer.values():
        names, shown, first = _summary(uses)
        yield ctx.finding(
            location=first.location, subject="parameters from the includer", view=view,
            severity=Severity.INFO,
            message=f"{view.label} uses parameters this library does not define ({shown}): "
                    f"{len(uses)} value(s) wait for the deck that includes it",
            explanation=["this file is a cell library (its top level holds no element of its "
                         "own), so a .param of the deck that includes it is visible here",
                         "checked alone, those values stay symbolic"],
            fix="define them in every deck that includes this library, or give them defaults "
                "on the .subckt line", values={"count": len(uses), "names": names})


def _summary(uses):
    """The sorted names of a cell's uses, the first six of them for a message, and the
    first use in the file."""
    names = sorted({u.name for u in uses})
    shown = ", ".join(excerpt(n, 20) for n in names[:6]) + (", ..." if len(names) > 6 else "")
    return names, shown, min(uses, key=lambda u: (u.location.line, u.location.column))
