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
import os  # noqa: F401  (tests reach the writer's os functions through this module)
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

from lintamp.config import ConfigError
from lintamp.findings import Finding, Report

SCHEMA = 1
MAX_BASELINE_BYTES = 256 * 1024 * 1024  # a bigger file is not a baseline lintamp wrote
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


def write_baseline(path: Path, report: Report, *, protect=()) -> Baseline:
    """Write the report's findings (not the waived ones) as the new baseline, atomically.

    Findings already covered by an old baseline are not in ``report.findings``;
    call :func:`lintamp.decide.decide` without a baseline to record everything.
    ``protect``: files never overwritten (the netlists checked); nor is a symbolic
    link written through (see :func:`lintamp.safe_paths.write_atomic`).
    """
    baseline = Baseline.from_findings(report.findings)
    baseline.path = Path(path)
    try:
        atomic_write_bytes(Path(path), baseline_bytes(baseline), protect=protect)
    except OSError as err:
        raise BaselineError(str(path), "", f"cannot write it ({err.strerror or err})",
                            "a writable regular file, not a link or a netlist") from None
    return baseline


def load_baseline(path: Path) -> Baseline:
    """Read a baseline file.

    Raises
    ------
    BaselineError
        When the file is missing, unreadable, not JSON, of another tool or schema,
        or has entries of the wrong shape; the message says which and where.
    """
    from lintamp.safe_paths import read_regular
    where = str(path)
    try:
        raw = read_regular(path, limit=MAX_BASELINE_BYTES)  # never a pipe or /dev/zero
    except FileNotFoundError:
        raise BaselineError(where, "", "file not found",
                            "a file written by `lintamp check --write-baseline`") from None
    except OSError as err:
        raise BaselineError(where, "", f"cannot read it ({err.strerror or err})", "a readable file") from None
    try:
        doc = json.loads(raw.decode("utf-8"))
    except RecursionError:
        raise BaselineError(where, "", "is nested too deeply to be a baseline",
                            "a baseline written by lintamp (rewrite it with --write-baseline)") from None
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


def atomic_write_bytes(path: Path, data: bytes, *, protect=(), durable: bool = True) -> None:
    """Replace ``path`` with ``data`` so that readers see the old file or the new, never half.

    :func:`lintamp.safe_paths.write_atomic`: a temporary file in the same folder,
    flushed to disk, renamed over the target; never through a symbolic link, never
    over a file in ``protect``; the old file's permissions kept.  If anything fails,
    the temporary file is removed and the old file stays as it was.
    """
    from lintamp.safe_paths import write_atomic
    write_atomic(path, data, protect=protect, durable=durable)
