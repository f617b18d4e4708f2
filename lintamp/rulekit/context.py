"""The analysis context a rule's ``check(ctx)`` receives.

It holds the parsed netlist and the elaborated design, and memoises every
analysis so that it runs once, and only when an enabled rule asks for it.
"""

from __future__ import annotations

from typing import Any, Callable, Iterable

from lintamp.circuit.design import CellView, Design
from lintamp.findings import Finding, Related, Severity
from lintamp.location import Location
from lintamp.netlist.statements import Diagnostic, Netlist


MAX_MESSAGE_CHARS = 400


class Context:
    """Shared facts about one netlist for every rule.

    ``options`` carries run-wide settings the rules may read (``bandwidth``,
    ``op_file``, thresholds via :meth:`threshold`).
    """

    def __init__(self, netlist: Netlist, design: Design, *, config: Any = None,
                 options: dict | None = None):
        self.netlist = netlist
        self.design = design
        self.config = config
        self.options = options or {}
        self._memo: dict[Any, Any] = {}
        self.rule: Any = None  # the RuleInfo whose check() is running (set by the runner)

    # -- memoised analyses ---------------------------------------------------------
    def memo(self, key: Any, compute: Callable[[], Any]) -> Any:
        """``compute()`` once per key for this netlist."""
        if key not in self._memo:
            self._memo[key] = compute()
        return self._memo[key]

    def cells(self) -> list[CellView]:
        """Every cell view once, the top level first, then definitions in file order."""
        return self.design.cells

    def diagnostics(self, rule: str) -> Iterable[Diagnostic]:
        for diag in self.netlist.diagnostics:
            if diag.rule == rule:
                yield diag
        for diag in self.design.diagnostics:
            if diag.rule == rule:
                yield diag

    def threshold(self, name: str, default: float) -> float:
        cfg = self.config
        if cfg is not None and hasattr(cfg, "threshold"):
            try:
                return cfg.threshold(name)
            except (KeyError, ValueError):
                return default
        return default

    # -- building findings ---------------------------------------------------------
    def finding(self, *, location: Location, subject: str, message: str,
                view: CellView | None = None, severity: Severity | None = None,
                nets: Iterable[str] = (), elements: Iterable[str] = (),
                explanation: Iterable[str] = (), fix: str = "",
                values: dict | None = None, related: Iterable[Related] = ()) -> Finding:
        """A finding of the running rule, with the cell and instance paths filled in."""
        cell = ""
        instances: tuple[str, ...] = ()
        if view is not None and not view.cell.is_top:
            cell = view.cell.label
            instances = tuple("/".join(p) for p in self.design.instances(view) if p)
        library = self._pdk_library(view)
        if library:
            severity = Severity.INFO
            explanation = (*explanation, f"{view.cell.label} is a cell of the PDK's {library} "
                           "standard-cell library that this deck does not use: the PDK's "
                           "netlist as published, not this design")
        if len(message) > MAX_MESSAGE_CHARS:  # one sentence; the detail belongs in explanation
            message = message[: MAX_MESSAGE_CHARS - 3] + "..."
        return Finding(
            rule=self.rule.name, severity=severity or self.rule.severity, location=location,
            subject=subject, message=message, cell=cell, instances=instances,
            nets=tuple(nets), elements=tuple(elements), explanation=tuple(explanation),
            fix=fix, values=dict(values or {}), related=tuple(related))

    def _pdk_library(self, view: CellView | None) -> str | None:
        """The PDK standard-cell library of a cell the deck does not use, or None."""
        if view is None or view.cell.is_top or self.design.in_deck(view):
            return None
        from lintamp.circuit.devicemap import pdk_cell_library
        return pdk_cell_library(view.cell.name)

    def from_diagnostic(self, diag: Diagnostic) -> Finding:
        """The reader's or parser's diagnostic as a finding of the running rule."""
        severity = Severity.parse(diag.severity) if diag.severity else self.rule.severity
        explanation = (f"expected: {diag.expected}",) if diag.expected else ()
        return Finding(rule=self.rule.name, severity=severity, location=diag.location,
                       subject=diag.subject, message=diag.message, explanation=explanation)


def forward_diagnostics(ctx: Context) -> Iterable[Finding]:
    """The ``check`` of a rule whose findings the reader or parser already made:
    each diagnostic of the running rule's name, as a finding."""
    for diag in ctx.diagnostics(ctx.rule.name):
        yield ctx.from_diagnostic(diag)
