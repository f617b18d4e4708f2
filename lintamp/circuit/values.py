"""Parameter scopes and element values: text -> numbers, per cell or per instance.

A value that names an undefined parameter is not guessed: it stays symbolic
(``None``) and the name is reported by :func:`undefined_names`.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Iterator, Mapping

from lintamp.location import Location
from lintamp.netlist.expr import (CircularDefinition, ExprError, UserFunc,
                                  compile_expr, evaluate_params, evaluate_value, parse_number,
                                  strip_delimiters)
from lintamp.netlist.statements import NO_PARAMS, Cell, Element, Netlist, is_digital_primitive

# names every SPICE expression may use without defining them
BUILTIN_NAMES = frozenset({"pi", "e", "temper", "temp", "hertz", "time", "true", "false",
                           "boltz", "planck", "echarge", "kelvin", "epsilon0", "mu0", "c"})
# keys whose value is a number even when written as a bare name (else a bare word
# is a string option, like CDL's topography=normal)
NUMERIC_KEYS = frozenset({"value", "r", "c", "l", "dc", "ac", "acphase", "gain", "tc1", "tc2",
                          "temp", "dtemp", "ic", "k", "res", "cap", "ind"})
GEOMETRY_PARAMS = frozenset({"w", "l", "nf", "m", "mult", "nfin", "ad", "as", "pd", "ps",
                             "nrd", "nrs", "sa", "sb", "sd", "area", "perim", "multi"})
# keys whose values are not numbers (file names, switches, model selectors)
NON_NUMERIC_KEYS = frozenset({"file", "model", "type", "spice_model", "dtemp_model",
                              "string", "sourcefile", "name"})


_IDENTIFIER = re.compile(r"[A-Za-z_][\w.]*")


def _funcs_of(cell: Cell) -> dict[str, UserFunc]:
    funcs: dict[str, UserFunc] = {}
    scopes = []
    c = cell
    while c is not None:
        scopes.append(c)
        c = c.parent
    for scope in reversed(scopes):  # inner definitions win
        for f in scope.funcs.values():
            try:
                funcs[f.name] = UserFunc(f.name, f.args, compile_expr(f.body))
            except ExprError:
                continue
    return funcs


@dataclass(slots=True)
class Scope:
    """Numeric parameter values and user functions visible at one place."""

    values: dict[str, float]
    funcs: dict[str, UserFunc]
    errors: dict[str, ExprError]

    def value(self, text: str | None) -> float | None:
        """The number a value token stands for, or None when it cannot be had."""
        if text is None:
            return None
        number = parse_number(text)
        if number is not None:
            return number
        try:
            result = evaluate_value(expression_body(text), self.values, self.funcs)
        except ExprError:
            return None
        return result if math.isfinite(result) else None


def top_scope(netlist: Netlist) -> Scope:
    funcs = _funcs_of(netlist.top)
    values, errors = evaluate_params([(p.name, p.text) for p in netlist.top.params], {}, funcs)
    return Scope(values, funcs, errors)


def cell_scope(cell: Cell, outer: Scope, overrides: Mapping[str, float] | None = None) -> Scope:
    """Parameters of ``cell`` for one binding: header defaults (or the instance's
    values in ``overrides``), then the cell's ``.param`` cards, over ``outer``."""
    if cell.is_top:
        return outer
    overrides = overrides or {}
    funcs = dict(outer.funcs)
    funcs.update(_funcs_of_local(cell))
    base = dict(outer.values)
    base.update(overrides)
    defs = [(p.name, p.text) for p in cell.params if p.name not in overrides]
    values, errors = evaluate_params(defs, base, funcs)
    merged = dict(base)
    merged.update(values)
    return Scope(merged, funcs, errors)


def _funcs_of_local(cell: Cell) -> dict[str, UserFunc]:
    out = {}
    for f in cell.funcs.values():
        try:
            out[f.name] = UserFunc(f.name, f.args, compile_expr(f.body))
        except ExprError:
            continue
    return out


def instance_overrides(element: Element, parent: Scope) -> dict[str, float]:
    """The instance's ``name=value`` parameters evaluated in the parent's scope."""
    out = {}
    for key, text in element.params.items():
        value = parent.value(text)
        if value is not None:
            out[key] = value
    return out


# -- undefined names -----------------------------------------------------------------
@dataclass(slots=True)
class UndefinedUse:
    name: str
    element: Element | None
    key: str  # the field: "value", a parameter key, or ".param NAME"
    location: Location
    symbolic_size: bool  # a bare name used as a geometry value (unsized netlist)
    cell: Cell | None = None


@dataclass(slots=True)
class BadExpression:
    element: Element | None
    key: str
    error: ExprError
    location: Location
    cell: Cell | None = None


_PROBE = re.compile(r"\b[vi]\s*\([^()]*\)", re.I)  # v(node), i(vsource): not parameters


def expression_body(text: str) -> str:
    """The expression of a value token: delimiters off, and braces nested in an
    unbraced expression read as parentheses (ngspice accepts ``(a ? {x} : {y})``)."""
    body = strip_delimiters(text)
    if body is text and "{" in body:
        body = body.replace("{", "(").replace("}", ")")
    return body


def _names_in(text: str) -> tuple[frozenset[str], ExprError | None]:
    body = expression_body(text)
    if parse_number(body) is not None:
        return frozenset(), None
    body = _PROBE.sub("0", body)
    try:
        return compile_expr(body).names, None
    except ExprError as exc:
        return frozenset(), exc


class _AnyOuterValue(Mapping):
    """Every name outside the scope reads as 1.0: only the scope's own definitions
    decide whether they form a cycle."""

    def __getitem__(self, key):
        return 1.0

    def __contains__(self, key):
        return True

    def __iter__(self):
        return iter(())

    def __len__(self):
        return 0


def circular_params(cell: Cell) -> Iterator[tuple[str, CircularDefinition]]:
    """The ``.param`` names of ``cell`` that are defined in terms
    of themselves, with the error naming the cycle.

    Notes
    -----
    One evaluation of the cell's definitions: O(total size of their texts).
    """
    # Header defaults are left out: they bind in the caller's scope, so a default such
    # as mult='mult' (HSPICE, Xyce) takes the caller's value and is no cycle.
    defs = [(p.name, p.text) for p in cell.params if p.name not in cell.defaults]
    if not defs:
        return
    _, errors = evaluate_params(defs, _AnyOuterValue())
    for name, error in errors.items():
        if isinstance(error, CircularDefinition):
            yield name, error


def undefined_names(netlist: Netlist) -> Iterator[UndefinedUse | BadExpression]:
    """Every use of a parameter name that no scope defines, cell by cell.

    Yields :class:`UndefinedUse` for unknown names and :class:`BadExpression` for
    expressions that do not parse.

    Notes
    -----
    One pass over every value of every element: O(total value tokens).
    """
    passed = _passed_params(netlist)
    model_names = {name for c in netlist.all_cells() for name in c.models}
    # a netlist with no parameter definitions at all is unsized: its bare names
    # (w=WA, res=rK) are symbolic values, not misspellings
    unsized = not any(c.params or c.defaults for c in netlist.all_cells())
    scopes: dict[int, frozenset] = {}  # names each cell's scope defines, its parents' included

    def scope_names(cell) -> frozenset:
        # built once per cell from its parent's (a parent's own object where the cell
        # adds nothing): O(cells), not O(cells x depth), for deeply nested definitions
        chain = []
        c = cell
        while c is not None and id(c) not in scopes:
            chain.append(c)
            c = c.parent
        names = scopes[id(c)] if c is not None else frozenset(BUILTIN_NAMES)
        for c in reversed(chain):
            own = {p.name for p in c.params} | set(c.defaults) | set(c.funcs)
            if own - names:
                names = names | own
            scopes[id(c)] = names
        return names

    for cell in netlist.all_cells():
        known = scope_names(cell) | passed.get(id(cell), set())
        where = {p.name: p.location for p in cell.params}
        for name, error in circular_params(cell):
            yield BadExpression(None, f".param {name}", error, where.get(name, cell.location), cell)
        for p in cell.params:
            if p.text.startswith('"'):
                continue  # a string parameter
            names, err = _names_in(p.text)
            if err is not None:
                yield BadExpression(None, f".param {p.name}", err, p.location, cell)
                continue
            for name in sorted(names - known):
                yield UndefinedUse(name, None, f".param {p.name}", p.location, False, cell)
        for element in cell.elements_beyond_runs():  # a run's cards are plain: see below
            if element.params is NO_PARAMS:
                continue  # a plain card, its value already read as a number (see NO_PARAMS)
            letter = element.letter
            if letter in "yan" or is_digital_primitive(element):
                continue  # simulator-specific devices: their parameters are not expressions
            value, params, src = element.value, element.params, element.source
            if not params and src is None:
                # the common case of an extracted deck: 'R1 a b 326.1', one numeric value
                if value is None or parse_number(value) is not None:
                    if value is not None or letter not in "rcl" or not element.model:
                        continue
            if (letter in "rcl" and value is None and element.model
                    and element.model not in model_names and element.model not in known
                    and not (params.keys() & {"l", "w", "r", "c", "value"})):
                # 'R1 a b rvla': neither a .model nor a parameter of that name
                yield UndefinedUse(element.model, element, "value", element.location, unsized, cell)
                continue
            fields = []
            if value is not None and src is None:
                fields.append(("value", value))
            fields.extend((k, v) for k, v in params.items() if k not in NON_NUMERIC_KEYS)
            if src is not None:
                fields.extend(("dc" if k == "dc" else k, v) for k, v in
                              (("dc", src.dc), ("ac", src.ac_mag), ("acphase", src.ac_phase)) if v)
            for key, text in fields:
                if text is None or parse_number(text) is not None or text.startswith('"'):
                    continue  # a number, or a string value
                names, err = _names_in(text)
                if err is not None:
                    yield BadExpression(element, key, err, element.location, cell)
                    continue
                bare = text[:1] not in "{'\""
                if bare and _IDENTIFIER.fullmatch(text) and key not in NUMERIC_KEYS | GEOMETRY_PARAMS:
                    continue  # a string option, not a number
                # an instance's parameter may use the instance's other parameters
                # (sky130: ad='int((nf+1)/2) * W/nf * 0.29'); they bind in the cell it calls
                unknown = names - known - element.params.keys()
                for name in sorted(unknown):
                    yield UndefinedUse(name, element, key, element.location,
                                       bare and (key in GEOMETRY_PARAMS or unsized
                                                 and _IDENTIFIER.fullmatch(text) is not None), cell)


def _passed_params(netlist: Netlist) -> dict[int, set[str]]:
    """For each cell, the parameter names its instances pass (HSPICE and Xyce let an
    instance give a parameter the .subckt line does not declare)."""
    from lintamp.circuit.design import find_cell
    passed: dict[int, set[str]] = {}
    for cell in netlist.all_cells():
        for element in cell.elements_beyond_runs():  # (runs hold R, C and L cards only)
            if element.letter == "x" and element.params and element.model:
                target = find_cell(cell, element.model)
                if target is not None:
                    passed.setdefault(id(target), set()).update(element.params)
    return passed
