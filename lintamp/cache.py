"""Content-hash cache of per-file results, in ``.lintamp_cache/`` under the project root.

A pre-commit hook re-checks the same unchanged netlists again and again; the cache
lets it skip reading, elaborating and analysing them.  The key is the SHA-256 of the
tool version, the rule set and configuration (``config_key``), and the names and
bytes of the file and of every file it included, so any edit anywhere misses.  The
value is the file's raw findings (before the decision layer) and its pragmas, which
the decision layer needs for waivers.

An entry that cannot be read or parsed, or that belongs to another key, is deleted
and treated as a miss: the cache is never trusted over re-checking, and never makes
a run fail.  Writes are atomic (temporary file + rename).  ``--no-cache`` is the
caller's: it simply does not use this class.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from pathlib import Path

from lintamp import __version__, safe_paths
from lintamp.baseline import atomic_write_bytes
from lintamp.findings import Finding
from lintamp.location import Location
from lintamp.pragma import Pragma

CACHE_DIR = ".lintamp_cache"
SCHEMA = 1
_MAX_ENTRY_BYTES = 64 * 1024 * 1024  # a bigger entry is not one we wrote


@dataclass(slots=True)
class CacheEntry:
    findings: list[Finding]
    pragmas: list[Pragma]


def config_key(config, rule_names) -> str:
    """The part of the key that is not file content: settings and the rules that run."""
    text = json.dumps({"config": config.fingerprint(), "rules": sorted(rule_names)}, sort_keys=True)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


class Cache:
    """Per-file results keyed by content.

    Parameters
    ----------
    root : Path
        The project root; entries go to ``root / ".lintamp_cache"``.
    config_key : str
        What besides file content decides the findings (see :func:`config_key`).
    """

    def __init__(self, root: Path, config_key: str, *, tool_version: str = __version__):
        self.folder = Path(root) / CACHE_DIR
        self.config_key = config_key
        self.tool_version = tool_version

    def key(self, paths: list[Path], kind: str = "result") -> str | None:
        """The entry key for a file and its includes (the checked file first); None if
        unreadable.  ``kind`` keeps manifests and results apart: nothing a netlist
        holds can make its result entry read as a manifest."""
        digest = hashlib.sha256()
        for part in ("lintamp", self.tool_version, self.config_key, kind):
            digest.update(part.encode("utf-8") + b"\0")
        for path in paths:
            try:
                # the reader's own refusals first: a pipe or device would block or never
                # end, a file over the reader's limit is not read whole to hash it
                data = safe_paths.read_regular(path, limit=safe_paths.MAX_NETLIST_BYTES)
            except OSError:
                return None
            name = str(path).encode("utf-8", "surrogateescape")
            digest.update(len(name).to_bytes(8, "big") + name)
            digest.update(len(data).to_bytes(8, "big") + data)
        return digest.hexdigest()

    def _entry_path(self, key: str) -> Path:
        return self.folder / key[:2] / f"{key}.json"

    def get(self, paths: list[Path]) -> list[Finding] | None:
        """The cached findings, or None on a miss."""
        entry = self.get_entry(paths)
        return None if entry is None else entry.findings

    def get_entry(self, paths: list[Path], kind: str = "result") -> CacheEntry | None:
        """The cached findings and pragmas, or None on a miss (a bad entry is deleted)."""
        key = self.key(paths, kind)
        if key is None:
            return None
        target = self._entry_path(key)
        try:
            if not self._own_folders(target):
                return None
            if target.is_symlink():
                raise ValueError("entry is a link")
            doc = json.loads(safe_paths.read_regular(target, limit=_MAX_ENTRY_BYTES).decode("utf-8"))
            if not isinstance(doc, dict) or doc.get("schema") != SCHEMA or doc.get("key") != key:
                raise ValueError("entry of another key or schema")
            findings = [Finding.from_json(item) for item in doc["findings"]]
            pragmas = [pragma_from_json(item) for item in doc["pragmas"]]
        except FileNotFoundError:
            return None
        except Exception:  # noqa: BLE001 - anything wrong with an entry means "re-check"
            self._discard(target)
            return None
        return CacheEntry(findings, pragmas)

    def put(self, paths: list[Path], findings: list[Finding], pragmas: list[Pragma] = (),
            kind: str = "result") -> bool:
        """Store a file's results; False (and nothing stored) when that is not possible."""
        key = self.key(paths, kind)
        if key is None:
            return False
        doc = {"schema": SCHEMA, "key": key,
               "findings": [f.to_json() for f in findings],
               "pragmas": [pragma_to_json(p) for p in pragmas]}
        target = self._entry_path(key)
        try:
            self._prepare_folder()
            if not safe_paths.private_folder(target.parent):
                return False  # a committed link or file where our folder goes: no cache
            # not flushed to disk: an entry lost in a crash is a miss, and a torn one
            # fails its key check (one fsync per entry made a cold run 6x slower)
            atomic_write_bytes(target, json.dumps(doc, sort_keys=True).encode("utf-8"),
                               durable=False)
        except (OSError, ValueError):
            return False  # a read-only checkout still gets its findings
        return True

    def get_manifest(self, path: Path) -> list[Path] | None:
        """The files ``path`` included when it was last checked, or None on a miss."""
        entry = self.get_entry([path], kind="manifest")
        if entry is None or not all(p.verb == "manifest-file" for p in entry.pragmas):
            return None
        return [Path(p.args[0]) for p in entry.pragmas]

    def put_manifest(self, path: Path, included: list[Path]) -> bool:
        """Record the files ``path`` included, in a key space of manifests only."""
        marks = [Pragma(verb="manifest-file", args=(str(p),), reason="",
                        location=Location(str(p), 1, 1)) for p in included]
        return self.put([path], [], marks, kind="manifest")

    def _own_folders(self, target: Path) -> bool:
        """Whether the cache folder and the entry's folder are real folders, not links
        a repository committed (absent ones are a plain miss)."""
        for folder in (self.folder, target.parent):
            if folder.is_symlink() or (folder.exists() and not folder.is_dir()):
                return False
        return True

    def _prepare_folder(self) -> None:
        if not safe_paths.private_folder(self.folder, create=False):
            if self.folder.is_symlink() or self.folder.exists():
                raise OSError(0, f"{self.folder} is a link or not a folder; the cache is not used")
        if self.folder.is_dir():
            return
        self.folder.mkdir(parents=True, exist_ok=True)
        # Keep the cache out of commits and backups (common practice for tool caches).
        atomic_write_bytes(self.folder / ".gitignore", b"# created by lintamp\n*\n", durable=False)
        atomic_write_bytes(self.folder / "CACHEDIR.TAG",
                           b"Signature: 8a477f597d28d172789f06886806bc55\n"
                           b"# lintamp cache; see https://bford.info/cachedir/\n", durable=False)

    @staticmethod
    def _discard(target: Path) -> None:
        try:
            target.unlink()
        except OSError:
            pass


def pragma_to_json(pragma: Pragma) -> dict:
    loc = pragma.location
    return {"verb": pragma.verb, "args": list(pragma.args), "reason": pragma.reason,
            "path": loc.path, "line": loc.line, "column": loc.column, "inline": pragma.inline,
            "cell": pragma.cell, "element": pragma.element, "element_nets": list(pragma.element_nets)}


def pragma_from_json(data: dict) -> Pragma:
    element = data["element"]
    if element is not None and not isinstance(element, str):
        raise TypeError("element is not a string")
    args, nets = data["args"], data["element_nets"]
    if not all(isinstance(a, str) for a in [*args, *nets]):
        raise TypeError("args or element_nets are not strings")
    return Pragma(verb=str(data["verb"]), args=tuple(args), reason=str(data["reason"]),
                  location=Location(str(data["path"]), int(data["line"]), int(data["column"])),
                  inline=bool(data["inline"]), cell=str(data["cell"]), element=element,
                  element_nets=tuple(nets))


def file_digest(path: str | Path | None) -> str:
    """SHA-256 of a file's bytes (an ``--op`` table: the key holds its content, not its
    name); "" for no file, "unreadable" when it cannot be read within the limit."""
    if not path:
        return ""
    try:
        return hashlib.sha256(safe_paths.read_regular(path, limit=safe_paths.MAX_NETLIST_BYTES)).hexdigest()
    except OSError:
        return "unreadable"
