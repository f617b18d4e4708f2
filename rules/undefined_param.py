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

import re

from lintamp.circuit.design import visible_params
from lintamp.circuit.values import BadExpression
from lintamp.findings import Severity
from lintamp.rules import _cascade
from lintamp.text import excerpt, near_miss

NAME = "undefined-param"
CATEGORY = "syntax"
SEVERITY = Severity.ERROR
SUMMARY = "an expression uses a parameter that is not defined in scope"

# The marks a characterisation flow leaves for its generator to fill: a whole value
# '{Vdd}', '[{ena}*{Vdvdd}]', '${vref}', '@temp', '<% ... %>'.
_WHOLE_PLACEHOLDER = re.compile(r"\{\s*[A-Za-z_][\w\[\]]*\s*\}")
_PLACEHOLDER_MARK = re.compile(r"\[\{|\$\{|\$[A-Za-z_]|^@|<%")
_PLACEHOLDER_ERROR = re.compile(r"(found|unexpected) '(\[|\$|@|<)'")


def check(ctx):
    symbolic: dict[int, list] = {}
    from_includer: dict[int, list] = {}
    from_unread: dict[int, list] = {}
    library = not ctx.design.deck_cells  # a cell library: its includer's .params are visible
    incomplete = _cascade.incomplete(ctx)
    uses = _cascade.undefined_uses(ctx)
    template = [u for u in uses if _placeholder_shaped(u)]
    if _is_template(ctx, template):
        yield _template_finding(ctx, template)
        taken = {id(u) for u in template}
        uses = [u for u in uses if id(u) not in taken]
    for use in uses:
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
        # the parameter being defined is no candidate ('.param speed1 = {speed}')
        defining = use.key[len(".param "):].lower() if use.key.startswith(".param ") else None
        close = ([m] if use.cell and (m := near_miss(
            use.name, [p for p in visible_params(use.cell) if p.lower() != defining])) else [])
        if close:
            pass  # a near miss of a defined name is a slip: always an error
        elif use.symbolic_size or _bare_name(use):
            # a bare name as a value (w=WA, 'R1 a b rval') is a symbolic size whether
            # or not the file defines some other parameter
            symbolic.setdefault(id(view), [view]).append(use)
            continue
        elif incomplete:
            from_unread.setdefault(id(view), [view]).append(use)
            continue
        elif library and view is not None and not view.cell.is_top:
            from_includer.setdefault(id(view), [view]).append(use)
            continue
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
    for view, *group in symbolic.values():
        names, shown, first = _summary(group)
        yield ctx.finding(
            location=first.location, subject="symbolic sizes", view=view, severity=Severity.INFO,
            message=f"device sizes and values are symbolic ({shown}): {len(group)} value(s) stay unsized",
            explanation=["bare names used as values (W, L, M, NF, a resistance) with no "
                         "definition: an unsized netlist",
                         "checks that need sizes (operating point, impedances) skip these devices"],
            fix="size the netlist, or define the names with .param",
            values={"count": len(group), "names": names})
    for view, *group in from_includer.values():
        names, shown, first = _summary(group)
        yield ctx.finding(
            location=first.location, subject="parameters from the includer", view=view,
            severity=Severity.INFO,
            message=f"{view.label} uses parameters this library does not define ({shown}): "
                    f"{len(group)} value(s) wait for the deck that includes it",
            explanation=["this file is a cell library (its top level holds no element of its "
                         "own), so a .param of the deck that includes it is visible here",
                         "checked alone, those values stay symbolic"],
            fix="define them in every deck that includes this library, or give them defaults "
                "on the .subckt line", values={"count": len(group), "names": names})
    for view, *group in from_unread.values():
        names, shown, first = _summary(group)
        yield ctx.finding(
            location=first.location, subject="parameters from unread includes", view=view,
            severity=Severity.INFO,
            message=f"parameters no file read here defines ({shown}): {len(group)} value(s) "
                    "stay symbolic",
            explanation=["some include files of this deck were not read (see missing-include / "
                         "bad-include); these parameters are most likely defined there"],
            fix="make the include files readable (--include-path), then check again",
            values={"count": len(group), "names": names})


def _field_text(use) -> str:
    element = getattr(use, "element", None)
    if element is None:
        return ""
    if use.key == "value":
        return element.value or element.model or ""
    text = element.params.get(use.key) if element.params else None
    if text is None and element.source is not None and use.key in ("dc", "ac", "acphase"):
        src = element.source
        text = {"dc": src.dc, "ac": src.ac_mag, "acphase": src.ac_phase}[use.key]
    return str(text or "")


def _placeholder_shaped(use) -> bool:
    if isinstance(use, BadExpression):
        return _PLACEHOLDER_ERROR.search(str(use.error)) is not None
    text = _field_text(use).strip()
    return bool(text) and (_WHOLE_PLACEHOLDER.fullmatch(text) is not None
                           or _PLACEHOLDER_MARK.search(text) is not None)


def _is_template(ctx, shaped) -> bool:
    """A deck is a template when it holds a generator's own marks ('[{', '${', '@',
    '<%', a placeholder in an include path); whole values '{name}' alone are the
    shape of any undefined parameter and do not make one."""
    if not shaped:
        return False
    if any(isinstance(u, BadExpression) or _PLACEHOLDER_MARK.search(_field_text(u)) for u in shaped):
        return True
    return any("placeholder" in d.message for d in ctx.diagnostics("missing-include"))


def _template_finding(ctx, shaped):
    first = min(shaped, key=lambda u: (u.location.path, u.location.line, u.location.column))
    names = sorted({getattr(u, "name", None) or _field_text(u) or u.key for u in shaped})
    shown = ", ".join(excerpt(n, 24) for n in names[:6]) + (", ..." if len(names) > 6 else "")
    return ctx.finding(
        location=first.location, subject="template placeholders", severity=Severity.INFO,
        message=f"this deck is a template: {len(shaped)} value(s) hold placeholders a "
                f"generator fills ({shown})",
        explanation=["values written as {Name}, [ ... ], ${name} or @name with no .param of "
                     "that name are the marks a characterisation flow replaces before it runs "
                     "the simulator", "checked as written, these values stay unknown"],
        fix="check the deck the flow writes from this template",
        values={"count": len(shaped), "names": names[:50]})


def _bare_name(use) -> bool:
    """Whether the use is a whole value written as a bare name (no braces, quotes)."""
    text = _field_text(use).strip()
    return bool(text) and text.lower() == use.name.lower()

def _summary(uses):
    """The sorted names of a cell's uses, the first six of them for a message, and the
    first use in the file."""
    names = sorted({u.name for u in uses})
    shown = ", ".join(excerpt(n, 20) for n in names[:6]) + (", ..." if len(names) > 6 else "")
    return names, shown, min(uses, key=lambda u: (u.location.line, u.location.column))
