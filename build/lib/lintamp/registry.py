"""The rule registry: built-in rules from ``lintamp.rules``, plugins by entry point.

A rule module defines ``NAME``, ``CATEGORY``, ``SEVERITY`` (a :class:`Severity`),
``SUMMARY`` (one line), ``check(ctx)`` yielding findings, and a module docstring
with the sections *What it finds*, *Why it matters*, *Example*, *Fix*.  That
docstring is the single source of ``lintamp explain``, the docs and SARIF help.
Third-party rules register modules under the entry-point group ``lintamp.rules``.
"""

from __future__ import annotations

import importlib
import pkgutil
from dataclasses import dataclass
from types import ModuleType
from typing import Callable, Iterable

from lintamp.findings import Finding, Severity

ENTRY_POINT_GROUP = "lintamp.rules"


@dataclass(frozen=True, slots=True)
class RuleInfo:
    name: str
    category: str
    severity: Severity
    summary: str
    doc: str
    check: Callable[..., Iterable[Finding]] | None
    module: str

    def to_json(self) -> dict:
        return {"name": self.name, "category": self.category,
                "severity": self.severity.label, "summary": self.summary}


# Rules whose findings come from the reader and parser, not from a check() of their own.
_PARSER_RULES: dict[str, tuple[str, Severity, str]] = {}


def _from_module(module: ModuleType) -> RuleInfo:
    return RuleInfo(
        name=module.NAME,
        category=module.CATEGORY,
        severity=module.SEVERITY,
        summary=module.SUMMARY,
        doc=(module.__doc__ or "").strip(),
        check=getattr(module, "check", None),
        module=module.__name__,
    )


_cache: dict[str, RuleInfo] | None = None


def all_rules() -> dict[str, RuleInfo]:
    """Every known rule by name, built-in first, then plugins; computed once."""
    global _cache
    if _cache is not None:
        return _cache
    import lintamp.rules as package

    found: dict[str, RuleInfo] = {}
    for info in sorted(pkgutil.iter_modules(package.__path__), key=lambda m: m.name):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{package.__name__}.{info.name}")
        if hasattr(module, "NAME"):
            rule = _from_module(module)
            found[rule.name] = rule
    found.update(_plugin_rules(found))
    _cache = dict(sorted(found.items()))
    return _cache


def _plugin_rules(known: dict[str, RuleInfo]) -> dict[str, RuleInfo]:
    from importlib.metadata import entry_points

    plugins: dict[str, RuleInfo] = {}
    for ep in entry_points(group=ENTRY_POINT_GROUP):
        module = ep.load()
        rule = _from_module(module)
        if rule.name not in known:  # a plugin never replaces a built-in rule
            plugins[rule.name] = rule
    return plugins


def get_rule(name: str) -> RuleInfo | None:
    return all_rules().get(name)
