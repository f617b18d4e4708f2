"""The baseline: findings a project accepts for now, so that only new ones fail a run.

A baseline file is JSON::

    {"tool": "lintamp", "schema": 1,
     "entries": [{"fingerprint": "v1:...", "rule": "...", "path": "...",
                  "subject": "...", "message": "..."}]}

Entries are matched by fingerprint only (rule, file, cell, subject and elements; never
line numbers), so moving cards around keeps them matched.  A fingerprint listed N times
covers N findings.  :func:`lintamp.decide.decide` applies it.
"""

from __future__ import annotations

import json
import os
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

from lintamp.config import ConfigError
from lintamp.findings import Finding, Report

SCHEMA = 1
_ENTRY_KEYS = ("fingerprint", "rule", "path", "subject", "message")


class BaselineError(ConfigError):
    """A baseline file the tool cannot use (exit code 2, like a bad config)."""


@dataclass(slots=True)
class Baseline:
    """Accepted findings: the entries as read, and how often each fingerprint occurs."""

    entries: list[dict] = field(default_factory=list)
    path: Path | None = None

    @property
    def counts(self) -> Counter:
        return Counter(e["fingerprint"] for e in self.entries)

    @classmethod
    def from_findings(cls, findings: list[Finding]) -> "Baseline":
        entries = [entry_for(f) for f in findings]
        entries.sort(key=_entry_order)
        return cls(entries=entries)


def entry_for(finding: Finding) -> dict:
    return {"fingerprint": finding.fingerprint, "rule": finding.rule,
            "path": finding.location.path, "subject": finding.subject,
            "message": finding.message}


def _entry_order(entry: dict) -> tuple:
    return (entry["path"], entry["rule"], entry["subject"], entry["fingerprint"], entry["message"])


def baseline_bytes(baseline: Baseline) -> bytes:
    """The file's bytes: sorted entries, sorted keys, two-space indent, final newline."""
    doc = {"tool": "lintamp", "schema": SCHEMA, "entries": sorted(baseline.entries, key=_entry_order)}
    return (json.dumps(doc, indent=2, sort_keys=True, ensure_ascii=False) + "\n").encode("utf-8")


def write_baseline(path: Path, report: Report) -> Baseline:
    """Write the report's findings (not the waived ones) as the new baseline, atomically.

    Findings already covered by an old baseline are not in ``report.findings``;
    call :func:`lintamp.decide.decide` without a baseline to record everything.
    """
    baseline = Baseline.from_findings(report.findings)
    baseline.path = Path(path)
    try:
        atomic_write_bytes(Path(path), baseline_bytes(baseline))
    except OSError as err:
        raise BaselineError(str(path), "", f"cannot write it ({err.strerror or err})",
                            "a writable folder") from None
    return baseline


def load_baseline(path: Path) -> Baseline:
    """Read a baseline file.

    Raises
    ------
    BaselineError
        When the file is missing, unreadable, not JSON, of another tool or schema,
        or has entries of the wrong shape; the message says which and where.
    """
    where = str(path)
    try:
        raw = Path(path).read_bytes()
    except FileNotFoundError:
        raise BaselineError(where, "", "file not found",
                            "a file written by `lintamp check --write-baseline`") from None
    except OSError as err:
        raise BaselineError(where, "", f"cannot read it ({err.strerror or err})", "a readable file") from None
    try:
        doc = json.loads(raw.decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as err:
        where_in = f"{where}:{err.lineno}:{err.colno}" if isinstance(err, json.JSONDecodeError) else where
        raise BaselineError(where_in, "", f"not valid JSON ({getattr(err, 'msg', err)})",
                            "a baseline written by lintamp (rewrite it with --write-baseline)") from None
    if not isinstance(doc, dict) or doc.get("tool") != "lintamp":
        raise BaselineError(where, "tool", "is not \"lintamp\"", "a baseline written by lintamp")
    if doc.get("schema") != SCHEMA:
        raise BaselineError(where, "schema", f"is {doc.get('schema')!r}",
                            f"{SCHEMA} (rewrite the baseline with this version's --write-baseline)")
    entries = doc.get("entries")
    if not isinstance(entries, list):
        raise BaselineError(where, "entries", "is missing or not a list", "a list of entries")
    for index, entry in enumerate(entries):
        if not isinstance(entry, dict) or not all(isinstance(entry.get(k), str) for k in _ENTRY_KEYS):
            raise BaselineError(where, f"entries[{index}]", "is not a complete entry",
                                "an object with string " + ", ".join(_ENTRY_KEYS))
    return Baseline(entries=[{k: e[k] for k in _ENTRY_KEYS} for e in entries], path=Path(path))


def atomic_write_bytes(path: Path, data: bytes) -> None:
    """Replace ``path`` with ``data`` so that readers see the old file or the new, never half.

    The bytes go to a temporary file in the same folder, are flushed to disk, then
    renamed over the target (``os.replace`` is atomic on one file system).  If
    anything fails, the temporary file is removed and the old file stays as it was.
    """
    import tempfile  # here, not at the top: reading a baseline or a cache entry never needs it

    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    fd, tmp_name = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp_name, path)
    except BaseException:
        try:
            os.unlink(tmp_name)
        except OSError:
            pass
        raise
    _fsync_folder(folder)


def _fsync_folder(folder: Path) -> None:
    # Makes the rename itself durable; not every platform lets a folder be opened.
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)
