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

from lintamp import __version__
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

    def key(self, paths: list[Path]) -> str | None:
        """The entry key for a file and its includes (the checked file first); None if unreadable."""
        digest = hashlib.sha256()
        for part in ("lintamp", self.tool_version, self.config_key):
            digest.update(part.encode("utf-8") + b"\0")
        for path in paths:
            try:
                if not Path(path).is_file():  # a pipe or device would block or never end
                    return None
                data = Path(path).read_bytes()
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

    def get_entry(self, paths: list[Path]) -> CacheEntry | None:
        """The cached findings and pragmas, or None on a miss (a bad entry is deleted)."""
        key = self.key(paths)
        if key is None:
            return None
        target = self._entry_path(key)
        try:
            if target.stat().st_size > _MAX_ENTRY_BYTES:
                raise ValueError("entry too large")
            doc = json.loads(target.read_bytes().decode("utf-8"))
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

    def put(self, paths: list[Path], findings: list[Finding], pragmas: list[Pragma] = ()) -> bool:
        """Store a file's results; False (and nothing stored) when that is not possible."""
        key = self.key(paths)
        if key is None:
            return False
        doc = {"schema": SCHEMA, "key": key,
               "findings": [f.to_json() for f in findings],
               "pragmas": [pragma_to_json(p) for p in pragmas]}
        target = self._entry_path(key)
        try:
            self._prepare_folder()
            target.parent.mkdir(exist_ok=True)
            atomic_write_bytes(target, json.dumps(doc, sort_keys=True).encode("utf-8"))
        except (OSError, ValueError):
            return False  # a read-only checkout still gets its findings
        return True

    def _prepare_folder(self) -> None:
        if self.folder.is_dir():
            return
        self.folder.mkdir(parents=True, exist_ok=True)
        # Keep the cache out of commits and backups (common practice for tool caches).
        (self.folder / ".gitignore").write_text("# created by lintamp\n*\n", encoding="utf-8")
        (self.folder / "CACHEDIR.TAG").write_text(
            "Signature: 8a477f597d28d172789f06886806bc55\n# lintamp cache; see https://bford.info/cachedir/\n",
            encoding="utf-8")

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
