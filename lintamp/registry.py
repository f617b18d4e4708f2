"""The rule registry: built-in rules from ``lintamp.rules``, plugins by entry point.

A rule module defines ``NAME``, ``CATEGORY``, ``SEVERITY`` (a :class:`Severity`),
``SUMMARY`` (one line), ``check(ctx)`` yielding findings, and a module docstring
with the sections *What it finds*, *Why it matters*, *Example*, *Fix*.  That
docstring is the single source of ``lintamp explain``, the docs and SARIF help.
Third-party rules register modules under the entry-point group ``lintamp.rules``;
a repository's own rules live in the folders its config names (``rule-paths``).  A
plugin or local rule that fails to import, lacks a rule's names, or takes the name of
a built-in rule (or of another plugin) is a :class:`RuleLoadError`: one line, exit 2.
"""

from __future__ import annotations

import ast
import hashlib
import importlib
import importlib.util
import json
import os
import pkgutil
import sys
from importlib.machinery import PathFinder
from dataclasses import dataclass
from pathlib import Path
from types import ModuleType
from typing import Callable, Iterable

from lintamp.findings import Finding, Severity

ENTRY_POINT_GROUP = "lintamp.rules"
_RULE_NAMES = ("NAME", "CATEGORY", "SEVERITY", "SUMMARY")


class RuleLoadError(Exception):
    """A rule from a plugin or a rule folder that cannot be used; the text names it."""


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


def _lazy_check(module_name: str) -> Callable[..., Iterable[Finding]]:
    """``check`` of a rule module, imported on the first call."""
    def check(ctx):
        return importlib.import_module(module_name).check(ctx)

    check.__qualname__ = check.__name__ = f"{module_name}.check"
    return check


def _from_source(module_name: str, path: Path) -> RuleInfo | None:
    """A built-in rule's metadata read from its source, without importing it.

    Listing the rules (``lintamp rules``, a cache hit, the decision layer) then costs
    no import of the analyses the rule uses (numpy, scipy, the parser).  Only plain
    literal assignments are read; anything else returns None and the module is
    imported as usual.
    """
    try:
        tree = ast.parse(path.read_text(encoding="utf-8"))
    except (OSError, SyntaxError, UnicodeDecodeError):
        return None
    values: dict[str, object] = {}
    has_check = False
    imported: set[str] = set()  # names bound by a top-level ``from ... import``
    for node in tree.body:
        if isinstance(node, ast.FunctionDef) and node.name == "check":
            has_check = True
        elif isinstance(node, ast.ImportFrom):
            imported.update(alias.asname or alias.name for alias in node.names)
        elif isinstance(node, (ast.Assign, ast.AnnAssign)):
            targets = node.targets if isinstance(node, ast.Assign) else [node.target]
            for target in targets:
                if not isinstance(target, ast.Name):
                    continue
                if target.id == "check":
                    # ``check = forward_diagnostics``: a function imported from elsewhere
                    if (isinstance(node, ast.Assign) and len(node.targets) == 1
                            and isinstance(node.value, ast.Name) and node.value.id in imported):
                        has_check = True
                        continue
                    return None  # check bound some other way: import the module
                if target.id not in ("NAME", "CATEGORY", "SEVERITY", "SUMMARY"):
                    continue
                value = node.value
                if (target.id == "SEVERITY" and isinstance(value, ast.Attribute)
                        and isinstance(value.value, ast.Name) and value.value.id == "Severity"
                        and value.attr in Severity.__members__):
                    values["SEVERITY"] = Severity[value.attr]
                    continue
                try:
                    values[target.id] = ast.literal_eval(value)
                except (ValueError, TypeError, SyntaxError):
                    return None
    if set(values) != {"NAME", "CATEGORY", "SEVERITY", "SUMMARY"} or not all(
            isinstance(values[k], str) for k in ("NAME", "CATEGORY", "SUMMARY")):
        return None
    return RuleInfo(
        name=values["NAME"], category=values["CATEGORY"], severity=values["SEVERITY"],
        summary=values["SUMMARY"], doc=(ast.get_docstring(tree, clean=False) or "").strip(),
        check=_lazy_check(module_name) if has_check else None, module=module_name)


class _SourceMemo:
    """What :func:`_from_source` made of each built-in rule file, kept beside the bytecode.

    Parsing every rule module's source takes longer than all the rest of a cached
    check of a small file, and the sources change only when lintamp does.  So the
    results are kept in the rules package's ``__pycache__`` folder (where Python keeps
    its compiled modules, and on the same terms: not written when
    ``sys.dont_write_bytecode`` is set, never an error when the folder is read-only),
    each under the SHA-256 of the source bytes it was read from.  An entry whose
    source changed in any way is read again from the source.
    """

    SCHEMA = 1

    def __init__(self, package: ModuleType):
        self.path: Path | None = None
        self.entries: dict[str, dict] = {}
        self.changed = False
        try:
            pyc = importlib.util.cache_from_source(package.__file__)
        except (NotImplementedError, TypeError, ValueError):  # no bytecode cache at all
            return
        self.path = Path(pyc).parent / f"rule-metadata.{sys.implementation.cache_tag}.json"
        try:
            doc = json.loads(self.path.read_bytes())
            if doc.get("schema") == self.SCHEMA and isinstance(doc.get("rules"), dict):
                self.entries = doc["rules"]
        except (OSError, ValueError, AttributeError):
            pass  # none yet, or unreadable: read the sources

    def from_source(self, module_name: str, path: Path) -> RuleInfo | None:
        """:func:`_from_source` of the file, from the memo when its bytes are unchanged."""
        try:
            digest = hashlib.sha256(path.read_bytes()).hexdigest()
        except OSError:
            return _from_source(module_name, path)
        entry = self.entries.get(module_name)
        if isinstance(entry, dict) and entry.get("sha256") == digest:
            rule = self._rule(module_name, entry.get("rule"))
            if rule is not False:
                return rule
        rule = _from_source(module_name, path)
        if rule is None or isinstance(rule.severity, Severity):
            self.entries[module_name] = {"sha256": digest, "rule": None if rule is None else {
                "name": rule.name, "category": rule.category, "severity": rule.severity.name,
                "summary": rule.summary, "doc": rule.doc, "check": rule.check is not None}}
            self.changed = True
        return rule

    @staticmethod
    def _rule(module_name: str, data) -> RuleInfo | None | bool:
        """The memo's rule (None: the module must be imported); False for a bad entry."""
        if data is None:
            return None
        try:
            return RuleInfo(name=data["name"], category=data["category"],
                            severity=Severity[data["severity"]], summary=data["summary"],
                            doc=data["doc"],
                            check=_lazy_check(module_name) if data["check"] else None,
                            module=module_name)
        except (KeyError, TypeError):
            return False

    def save(self) -> None:
        if not self.changed or self.path is None or sys.dont_write_bytecode:
            return
        text = json.dumps({"schema": self.SCHEMA, "rules": self.entries}, sort_keys=True)
        scratch = self.path.with_name(f"{self.path.name}.{os.getpid()}.tmp")
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            scratch.write_text(text, encoding="utf-8")
            os.replace(scratch, self.path)  # readers see the old file or the new, never half
        except OSError:
            try:
                scratch.unlink()
            except OSError:
                pass


_cache: dict[str, RuleInfo] | None = None


def all_rules() -> dict[str, RuleInfo]:
    """Every known rule by name, built-in first, then plugins; computed once."""
    global _cache
    if _cache is not None:
        return _cache
    import lintamp.rules as package

    found: dict[str, RuleInfo] = {}
    memo = _SourceMemo(package)
    for info in sorted(pkgutil.iter_modules(package.__path__), key=lambda m: m.name):
        if info.name.startswith("_"):
            continue
        name = f"{package.__name__}.{info.name}"
        rule = memo.from_source(name, Path(package.__path__[0]) / f"{info.name}.py")
        if rule is None:
            module = importlib.import_module(name)
            if not hasattr(module, "NAME"):
                continue
            rule = _from_module(module)
        found[rule.name] = rule
    memo.save()
    found.update(_plugin_rules(found))
    _cache = dict(sorted(found.items()))
    return _cache


def _checked_rule(module: ModuleType, origin: str) -> RuleInfo:
    """The rule a plugin or local module defines, or a :class:`RuleLoadError` naming it."""
    missing = [name for name in _RULE_NAMES if not hasattr(module, name)]
    if missing:
        raise RuleLoadError(f"{origin} is not a rule module: it defines no {', '.join(missing)}")
    if not callable(getattr(module, "check", None)):
        raise RuleLoadError(f"{origin} defines no check(ctx) function")
    if not isinstance(module.NAME, str) or not module.NAME or not isinstance(module.SEVERITY, Severity):
        raise RuleLoadError(f"{origin}: NAME must be a non-empty string and SEVERITY a Severity")
    return _from_module(module)


def _refuse_clash(rule: RuleInfo, origin: str, known: dict[str, RuleInfo]) -> None:
    from lintamp.config import BUILTIN_RULE_CATEGORIES
    if rule.name in BUILTIN_RULE_CATEGORIES or (rule.name in known and known[rule.name].module.startswith(
            "lintamp.rules.")):
        raise RuleLoadError(f"{origin}: rule name {rule.name!r} is a built-in rule's; "
                            "give the rule a name of its own")
    if rule.name in known:
        raise RuleLoadError(f"{origin}: rule name {rule.name!r} is taken by {known[rule.name].module}; "
                            "give the rule a name of its own")


def _plugin_rules(known: dict[str, RuleInfo]) -> dict[str, RuleInfo]:
    if not _may_declare_plugins():
        return {}
    from importlib.metadata import entry_points

    plugins: dict[str, RuleInfo] = {}
    for ep in entry_points(group=ENTRY_POINT_GROUP):
        origin = f"rule plugin {ep.name} ({ep.value})"
        try:
            module = ep.load()
        except Exception as exc:  # any failure of someone else's module: name it, exit 2
            raise RuleLoadError(f"{origin} failed to import: {type(exc).__name__}: {exc}") from None
        rule = _checked_rule(module, origin)
        _refuse_clash(rule, origin, {**known, **plugins})
        plugins[rule.name] = rule
    return plugins


_local_folders: dict[Path, list[RuleInfo]] = {}


def load_rule_folder(folder: Path) -> list[RuleInfo]:
    """Import every ``*.py`` (not starting with ``_``) of a repository's rule folder and
    add its rules to :func:`all_rules`; a folder is loaded once per process.

    The modules are named ``lintamp_local_rules.<folder digest>.<file stem>``, so two
    folders may hold files of one name.  Raises :class:`RuleLoadError`.
    """
    folder = Path(folder).resolve()
    if folder in _local_folders:
        return _local_folders[folder]
    rules = all_rules()
    digest = hashlib.sha256(str(folder).encode("utf-8")).hexdigest()[:12]
    loaded: list[RuleInfo] = []
    for path in sorted(folder.glob("*.py")):
        if path.name.startswith("_"):
            continue
        module_name = f"lintamp_local_rules.r{digest}.{path.stem}"
        origin = f"local rule {path}"
        spec = importlib.util.spec_from_file_location(module_name, path)
        if spec is None or spec.loader is None:
            raise RuleLoadError(f"{origin} cannot be imported")
        module = importlib.util.module_from_spec(spec)
        sys.modules[module_name] = module
        try:
            spec.loader.exec_module(module)
        except Exception as exc:  # the repository's own code: name the file, exit 2
            del sys.modules[module_name]
            raise RuleLoadError(f"{origin} failed to import: {type(exc).__name__}: {exc}") from None
        rule = _checked_rule(module, origin)
        _refuse_clash(rule, origin, rules)
        rules[rule.name] = rule
        loaded.append(rule)
    global _cache
    _cache = dict(sorted(rules.items()))
    _local_folders[folder] = loaded
    return loaded


def local_rules_fingerprint(folders: Iterable[Path]) -> str:
    """Size and modification time of every file of the rule folders (for the cache key)."""
    digest = hashlib.sha256()
    for folder in folders:
        for path in sorted(Path(folder).glob("*.py")):
            try:
                st = path.stat()
            except OSError:
                continue
            digest.update(f"{path}:{st.st_size}:{st.st_mtime_ns};".encode())
    return digest.hexdigest()[:16]


def import_rule_modules() -> None:
    """Import every rule's module: rules declare their thresholds when imported
    (:func:`lintamp.config.register_threshold`), and listing the rules reads only
    their sources."""
    for rule in all_rules().values():
        importlib.import_module(rule.module)


def get_rule(name: str) -> RuleInfo | None:
    return all_rules().get(name)


def _may_declare_plugins() -> bool:
    """False only when no installed distribution can declare a ``lintamp.rules`` entry point.

    Importing :mod:`importlib.metadata` and scanning every distribution costs more than
    a whole cached check of a small file, and almost every environment has no plugin.
    So first look where :mod:`importlib.metadata` looks -- the ``*.dist-info`` and
    ``*.egg-info`` folders (and an ``.egg``'s ``EGG-INFO``) of every ``sys.path``
    folder -- for an ``entry_points.txt`` that names the group at all.  Whatever this
    look cannot see the same way answers True and leaves the decision to
    :mod:`importlib.metadata`: a zip file on ``sys.path``, another finder of
    distributions on ``sys.meta_path``, a file it cannot read, or
    :mod:`importlib.metadata` already imported (and perhaps patched, as tests do).
    """
    if "importlib.metadata" in sys.modules:
        return True
    for finder in sys.meta_path:
        if finder is not PathFinder and getattr(finder, "find_distributions", None) is not None:
            return True
    marker = ENTRY_POINT_GROUP.encode("ascii")
    for entry in sys.path:
        if not isinstance(entry, str):
            return True
        folder = entry or "."
        try:
            children = os.listdir(folder)
        except OSError:
            if os.path.exists(folder):  # a zip file, or a folder we may not list
                return True
            continue
        is_egg = os.path.basename(entry).lower().endswith(".egg")
        for child in children:
            low = child.lower()
            if not (low.endswith((".dist-info", ".egg-info")) or (is_egg and low == "egg-info")):
                continue
            try:
                with open(os.path.join(folder, child, "entry_points.txt"), "rb") as stream:
                    if marker in stream.read():
                        return True
            except (FileNotFoundError, NotADirectoryError, IsADirectoryError, PermissionError):
                continue  # importlib.metadata reads no entry points from it either
            except OSError:
                return True
    return False
