"""The library entry points: ``check_text``, ``check_paths``, and loaders.

The CLI is a thin layer over these.  Every function takes a
:class:`~lintamp.config.Config` (defaults when omitted) and returns data, never
prints.
"""

from __future__ import annotations

import os
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Iterable

from lintamp.findings import Finding, Report, Severity
from lintamp.gcpause import paused_gc, release, retain
from lintamp.location import Location
from lintamp.pragma import Pragma

# The reader, parser, circuit and analysis layers are imported inside the functions
# that use them: a cache hit needs none of them, and they cost more to import than
# the whole hit takes.
if TYPE_CHECKING:
    from lintamp.circuit.design import Design
    from lintamp.circuit.devicemap import DeviceMap
    from lintamp.netlist.reader import ReadOptions
    from lintamp.netlist.statements import Netlist

PARSER_RULES = ("parse-error", "undefined-param", "unknown-cell", "pin-mismatch",
                "unknown-model", "duplicate-name")


@dataclass(slots=True)
class FileResult:
    """Findings and pragmas of one checked file, before the decision layer."""

    path: str
    findings: list[Finding] = field(default_factory=list)
    pragmas: list[Pragma] = field(default_factory=list)
    internal_errors: list[str] = field(default_factory=list)
    files_read: list[str] = field(default_factory=list)


def default_config():
    from lintamp.config import Config
    return Config()


def _devmap(config) -> DeviceMap:
    from lintamp.circuit.devicemap import DeviceMap
    return DeviceMap(tuple(getattr(config, "devices", ()) or ()))


def project_root(path: Path, config) -> Path:
    """Where includes may come from: the config's folder, else the git work tree,
    else the current folder when the file is under it, else the file's folder."""
    source = getattr(config, "source", None)
    if source is not None:
        return Path(source).resolve().parent
    # from where the name is, not where a link leads (a committed link out of the
    # checkout must not make its target's folder the root)
    named = Path(os.path.abspath(path)).parent
    for folder in (named, *named.parents):
        if (folder / ".git").exists():
            return folder.resolve()
    start = named.resolve()
    cwd = Path.cwd()
    if cwd == named or cwd in named.parents or cwd.resolve() == start or cwd.resolve() in start.parents:
        return cwd.resolve()
    return start


def read_options(path: Path, config, include_paths: Iterable[Path] = ()) -> ReadOptions:
    from lintamp.netlist.reader import ReadOptions
    paths = tuple(Path(p).resolve() for p in (*getattr(config, "include_paths", ()), *include_paths))
    return ReadOptions(root=project_root(path, config), include_paths=paths,
                       display_root=Path.cwd())


def load_design(netlist: Netlist, config=None, *, top: str | None = None) -> Design:
    from lintamp.circuit.design import elaborate
    config = config or default_config()
    return elaborate(netlist, devmap=_devmap(config), top=top)


def enabled_rules(config):
    from lintamp.registry import all_rules
    rules = all_rules()
    out = []
    for rule in rules.values():
        if rule.check is None:
            continue
        enabled = getattr(config, "rule_enabled", None)
        if enabled is not None and not enabled(rule.name, rule.category):
            continue
        out.append(rule)
    return out


def analyse(netlist: Netlist, config=None, *, top: str | None = None,
            options: dict | None = None) -> FileResult:
    """Run every enabled rule over one parsed netlist."""
    from lintamp.rulekit.context import Context
    config = config or default_config()
    result = FileResult(path=netlist.path, files_read=list(netlist.files))
    design = load_design(netlist, config, top=top)
    opts = dict(options or {})
    opts.setdefault("includes_missing",
                    any(d.rule == "missing-include" for d in netlist.diagnostics))
    ctx = Context(netlist, design, config=config, options=opts)
    for rule in enabled_rules(config):
        ctx.rule = rule
        try:
            result.findings.extend(rule.check(ctx))
        except Exception as exc:  # a bug in a rule must not hide the other rules' findings
            import traceback
            detail = "".join(traceback.format_exception_only(type(exc), exc)).strip()
            where = traceback.extract_tb(exc.__traceback__)[-1]
            result.internal_errors.append(
                f"{netlist.path}: rule {rule.name} failed: {detail} "
                f"(at {os.path.basename(where.filename)}:{where.lineno}); "
                "this is a bug in lintamp, please report it with the netlist")
    for cell in netlist.all_cells():
        result.pragmas.extend(cell.pragmas)
    shared = sys.modules.get("lintamp.engine.shared_factor")  # loaded only when solves ran
    if shared is not None:
        shared.clear()  # the whole-network LUs of this netlist are not needed by the next
    retain(ctx)  # the command line exits without freeing it (see lintamp.gcpause)
    return result


def check_file(path: Path, config=None, *, top: str | None = None,
               include_paths: Iterable[Path] = (), options: dict | None = None) -> FileResult:
    from lintamp.netlist.parser import parse_file  # here: a cache hit never needs the parser
    config = config or default_config()
    release()  # the previous file's objects, if the command line kept them
    with paused_gc():  # see lintamp.gcpause: millions of live objects, almost no cycles
        netlist = parse_file(path, read_options(path, config, include_paths))
        if options and options.get("op_from"):  # --op-from: the deck is written from this file
            options = dict(options, netlist_path=str(path), read_options=read_options(path, config, include_paths))
        return analyse(netlist, config, top=top, options=options)


def check_text(text: str, path: str = "<text>", config=None, *, top: str | None = None,
               options: dict | None = None) -> Report:
    """Check netlist text held in memory; includes resolve from the current folder."""
    from lintamp.decide import decide
    from lintamp.netlist.parser import parse_text
    from lintamp.netlist.reader import ReadOptions
    config = config or default_config()
    opts = ReadOptions(root=Path.cwd(), include_paths=tuple(getattr(config, "include_paths", ())),
                       display_root=Path.cwd())
    with paused_gc():
        result = analyse(parse_text(text, path, opts), config, top=top, options=options)
    report = decide(result.findings, result.pragmas, config)
    report.files = [path]
    return report


def collect_paths(paths: Iterable[str | Path], config) -> list[Path]:
    """Files named, and netlist files under folders named (by the config's globs)."""
    out: list[Path] = []
    seen: set[Path] = set()
    for given in paths:
        p = Path(given)
        if p.is_dir():
            for root, dirs, files in os.walk(p):
                dirs[:] = sorted(d for d in dirs if not d.startswith(".") and d != "__pycache__")
                for name in sorted(files):
                    f = Path(root) / name
                    if config.wants_file(f) and f not in seen:
                        seen.add(f)
                        out.append(f)
        elif p not in seen:
            seen.add(p)
            out.append(p)
    return out


def _cached_check(path: Path, config, cache, top, include_paths, options) -> FileResult:
    """``check_file`` through the content-hash cache.

    A small manifest entry, keyed by the file's own bytes, lists the files it read;
    the result entry is keyed by all of them, so an edit to any include misses.
    Files with missing includes are not cached (the missing file may appear).
    """
    files = cache.get_manifest(path)
    if files is not None:
        entry = cache.get_entry([path, *files])
        if entry is not None:
            return FileResult(path=str(path), findings=entry.findings, pragmas=entry.pragmas)
    result = check_file(path, config, top=top, include_paths=include_paths, options=options)
    if not result.internal_errors and not any(f.rule == "missing-include" for f in result.findings):
        included = [Path(f) for f in result.files_read[1:]]
        cache.put_manifest(path, included)
        cache.put([path, *included], result.findings, result.pragmas)
    return result


_CODE_KEY: str | None = None


def code_fingerprint() -> str:
    """Size and modification time of every module of lintamp and its rules: a cache
    written by other code (an edited checkout, another install) is never reused."""
    global _CODE_KEY
    if _CODE_KEY is None:
        import hashlib
        import lintamp
        import lintamp.rules
        digest = hashlib.sha256()
        folders = {Path(lintamp.__file__).parent, Path(lintamp.rules.__file__).parent}
        for folder in sorted(folders):
            for path in _python_files(str(folder)):
                st = os.stat(path)
                digest.update(f"{path}:{st.st_size}:{st.st_mtime_ns};".encode())
        _CODE_KEY = digest.hexdigest()[:16]
    return _CODE_KEY


def _python_files(folder: str) -> list[str]:
    """What ``sorted(Path(folder).rglob("*.py"))`` lists, as strings, at a third of the cost.

    The same files (every name ending in ``.py``, in every folder below that is not a
    symbolic link) in the same order (by path components), so the fingerprint is the
    one earlier versions wrote.
    """
    found: list[tuple[tuple[str, ...], str]] = []
    for root, dirs, files in os.walk(folder):
        parts = tuple(Path(root).parts)
        for name in (*dirs, *files):
            if name.endswith(".py"):
                found.append(((*parts, name), os.path.join(root, name)))
    found.sort()
    return [path for _, path in found]


def _check_one(job) -> FileResult:
    path, config, top, include_paths, options, use_cache = job
    rule_paths = tuple(getattr(config, "rule_paths", ()) or ())
    if rule_paths:  # a worker process started without them loads them too (once)
        from lintamp.registry import load_rule_folder
        for folder in rule_paths:
            load_rule_folder(folder)
    if use_cache:
        from lintamp.cache import Cache, config_key, file_digest
        code = code_fingerprint()
        if rule_paths:
            from lintamp.registry import local_rules_fingerprint
            code += local_rules_fingerprint(rule_paths)
        cache = Cache(Path(getattr(config, "root", Path.cwd())),
                      config_key(config, [r.name for r in enabled_rules(config)]) + code + repr(
                          (top, [str(p) for p in include_paths], sorted((options or {}).items()),
                           file_digest((options or {}).get("op_file")))))  # the table's content
        return _cached_check(path, config, cache, top, include_paths, options)
    return check_file(path, config, top=top, include_paths=include_paths, options=options)


def check_paths(paths: Iterable[str | Path], config=None, *, top: str | None = None,
                include_paths: Iterable[Path] = (), baseline=None,
                options: dict | None = None, jobs: int = 1,
                use_cache: bool = False, progress=None) -> tuple[Report, list[str]]:
    """Check files and folders; returns the decided report and any internal errors.

    ``jobs`` > 1 checks files in that many processes; results keep the file order,
    so the report is the same whatever ``jobs`` is.  ``use_cache`` reads and writes
    ``.lintamp_cache/`` under the config root.  ``progress(done, total, path)``, when
    given, is called after each file.
    """
    from lintamp.decide import decide
    config = config or default_config()
    findings: list[Finding] = []
    pragmas: list[Pragma] = []
    errors: list[str] = []
    files = collect_paths(paths, config)
    include_paths = tuple(include_paths)
    work = [(f, config, top, include_paths, options, use_cache) for f in files]
    results: list[FileResult] = []
    if jobs > 1 and len(files) > 1:
        from concurrent.futures import ProcessPoolExecutor
        with ProcessPoolExecutor(max_workers=min(jobs, len(files))) as pool:
            for result in pool.map(_check_one, work, chunksize=max(1, len(work) // (4 * jobs))):
                results.append(result)
                if progress is not None:
                    progress(len(results), len(files), result.path)
    else:
        for job in work:
            results.append(_check_one(job))
            if progress is not None:
                progress(len(results), len(files), results[-1].path)
    seen: set[tuple] = set()
    seen_pragmas: set[tuple] = set()
    # merged in path order, not the order given: where two decks report one finding of a
    # library they both include, the same deck's copy is kept whatever the order
    for result in sorted(results, key=lambda r: str(r.path)):
        # a file included by several checked files yields its findings once
        for finding in result.findings:
            key = (finding.fingerprint, finding.location, finding.message)
            if key not in seen:
                seen.add(key)
                findings.append(finding)
        for pragma in result.pragmas:
            key = (pragma.location, pragma.verb, pragma.args)
            if key not in seen_pragmas:
                seen_pragmas.add(key)
                pragmas.append(pragma)
        errors.extend(result.internal_errors)
    report = decide(findings, pragmas, config, baseline)
    report.findings = cap_findings(fold_shared_libraries(report.findings))
    report.files = [_display(f) for f in files]
    report.files_read = sorted({f for r in results for f in r.files_read})
    return report, errors


def fold_shared_libraries(findings: list[Finding]) -> list[Finding]:
    """One finding per include library that several checked decks cannot read (a PDK
    absent on this machine is one cause, not one warning per testbench): the first
    deck's finding stays and names the others; the others go.  The findings are in
    report order, so the one kept is the same from run to run."""
    from dataclasses import replace
    from lintamp.findings import Related

    by_root: dict[tuple[str, str], list[int]] = {}
    for k, f in enumerate(findings):
        root = f.values.get("library_root") if f.values else None
        if root:
            by_root.setdefault((f.rule, root), []).append(k)
    drop: set[int] = set()
    folded: dict[int, Finding] = {}
    for (_, root), places in by_root.items():
        if len(places) < 2:
            continue
        first, others = findings[places[0]], [findings[k] for k in places[1:]]
        decks = sorted({f.location.path for f in others} - {first.location.path})
        folded[places[0]] = replace(
            first, explanation=(*first.explanation,
                                f"the same holds for {len(decks)} other checked deck(s); "
                                "they are not listed one by one"),
            values={**first.values, "decks": len(decks) + 1},
            related=(*first.related, *(Related(f.location, "same library, another deck")
                                       for f in others[:8])))
        drop.update(places[1:])
    if not folded:
        return findings
    return [folded.get(k, f) for k, f in enumerate(findings) if k not in drop]


MAX_FINDINGS_PER_RULE = 1000  # per file: past this a report is a flood, not a review


def cap_findings(findings: list[Finding]) -> list[Finding]:
    """At most :data:`MAX_FINDINGS_PER_RULE` findings of one rule in one file (after
    waivers and the baseline), then one finding that counts the rest, at the highest
    severity among them, so ``--fail-on`` decides as it would on all of them."""
    counts: dict[tuple[str, str], int] = {}
    for f in findings:
        key = (f.location.path, f.rule)
        counts[key] = counts.get(key, 0) + 1
    if all(n <= MAX_FINDINGS_PER_RULE for n in counts.values()):
        return findings
    kept: list[Finding] = []
    shown: dict[tuple[str, str], int] = {}
    dropped: dict[tuple[str, str], list[Finding]] = {}
    for f in findings:
        key = (f.location.path, f.rule)
        shown[key] = shown.get(key, 0) + 1
        if shown[key] <= MAX_FINDINGS_PER_RULE:
            kept.append(f)
        else:
            dropped.setdefault(key, []).append(f)
    for (path, rule), rest in dropped.items():
        kept.append(Finding(rule=rule, severity=max(f.severity for f in rest), location=rest[0].location,
                            subject=f"{len(rest)} more",
                            message=f"{len(rest)} more {rule} findings in {path} not listed "
                                    f"(the first {MAX_FINDINGS_PER_RULE} are)"))
    kept.sort(key=Finding.sort_key)
    return kept


def _display(path: Path) -> str:
    try:
        rel = os.path.relpath(path, Path.cwd())
    except ValueError:
        rel = str(path)
    return rel.replace(os.sep, "/")


def flat_circuit_from_text(text: str, path: str = "<text>", config=None, *, top: str | None = None):
    """Parse, elaborate and flatten netlist text into the engine's numeric circuit."""
    from lintamp.circuit.flatten import flatten
    from lintamp.netlist.parser import parse_text
    from lintamp.netlist.reader import ReadOptions
    config = config or default_config()
    netlist = parse_text(text, path, ReadOptions(root=Path.cwd(), display_root=Path.cwd()))
    return flatten(load_design(netlist, config, top=top))


def severity_counts(report: Report) -> dict[str, int]:
    return {s.label: report.count(s) for s in Severity}


__all__ = ["check_text", "check_paths", "check_file", "analyse", "flat_circuit_from_text",
           "collect_paths", "load_design", "FileResult", "Location"]
