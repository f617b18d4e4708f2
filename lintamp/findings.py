"""What a rule reports: structured data first, words last.

A rule yields :class:`Finding` objects.  Reporters render them; the decision layer
(:mod:`lintamp.decide`) filters and re-grades them.  Tests assert on ``rule``,
``subject`` and ``values`` rather than on the English text.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from enum import IntEnum

from lintamp.location import Location


class Severity(IntEnum):
    """Ordered so that ``severity >= fail_on`` means "fails the run"."""

    INFO = 1
    WARNING = 2
    ERROR = 3

    @property
    def label(self) -> str:
        return self.name.lower()

    @classmethod
    def parse(cls, text: str) -> "Severity":
        try:
            return cls[text.strip().upper()]
        except KeyError:
            raise ValueError(f"unknown severity {text!r}; expected error, warning or info") from None


@dataclass(frozen=True, slots=True)
class Related:
    """A second place that explains a finding (the gate of m1, the other source of a loop)."""

    location: Location
    note: str


@dataclass(slots=True)
class Finding:
    """One problem found in a netlist.

    ``subject`` is the net or element the finding is about (within ``cell``);
    ``values`` holds numbers with their unit in the key (``z_ohm``, ``limit_ohm``,
    ``ratio``); ``explanation`` the reasoning steps in order; ``fix`` the usual remedy.
    """

    rule: str
    severity: Severity
    location: Location
    subject: str
    message: str
    cell: str = ""
    instances: tuple[str, ...] = ()
    nets: tuple[str, ...] = ()
    elements: tuple[str, ...] = ()
    explanation: tuple[str, ...] = ()
    fix: str = ""
    values: dict[str, float | str] = field(default_factory=dict)
    related: tuple[Related, ...] = ()

    @property
    def fingerprint(self) -> str:
        """Stable identity: rule, file, cell and subject, never line numbers.

        Moving a card, or editing unrelated lines, keeps the fingerprint; renaming the
        subject or moving it to another cell or file changes it.
        """
        key = "\x1f".join(
            (self.rule, self.location.path, self.cell, self.subject.lower(),
             ",".join(sorted(e.lower() for e in self.elements)))
        )
        return "v1:" + hashlib.sha256(key.encode("utf-8")).hexdigest()[:32]

    def sort_key(self) -> tuple:
        return (self.location.path, self.location.line, self.location.column,
                self.rule, self.subject)

    def to_json(self) -> dict:
        """The finding in the shape of INTERFACE.md (schema 1)."""
        return {
            "rule": self.rule,
            "severity": self.severity.label,
            "path": self.location.path,
            "line": self.location.line,
            "column": self.location.column,
            "cell": self.cell,
            "instances": list(self.instances),
            "subject": self.subject,
            "nets": list(self.nets),
            "elements": list(self.elements),
            "message": self.message,
            "explanation": list(self.explanation),
            "fix": self.fix,
            "values": dict(self.values),
            "related": [
                {"path": r.location.path, "line": r.location.line,
                 "column": r.location.column, "note": r.note}
                for r in self.related
            ],
            "fingerprint": self.fingerprint,
        }

    @classmethod
    def from_json(cls, data: dict) -> "Finding":
        """The inverse of :meth:`to_json` (the fingerprint is recomputed, not read).

        Raises ``KeyError``, ``TypeError`` or ``ValueError`` for data of another shape.
        """
        def strings(key: str) -> tuple[str, ...]:
            items = data.get(key, [])
            if not isinstance(items, list) or not all(isinstance(i, str) for i in items):
                raise TypeError(f"{key} is not a list of strings")
            return tuple(items)

        values = data.get("values", {})
        if not isinstance(values, dict):
            raise TypeError("values is not an object")
        return cls(
            rule=str(data["rule"]),
            severity=Severity.parse(data["severity"]),
            location=Location(str(data["path"]), int(data["line"]), int(data.get("column", 1))),
            subject=str(data["subject"]),
            message=str(data["message"]),
            cell=str(data.get("cell", "")),
            instances=strings("instances"),
            nets=strings("nets"),
            elements=strings("elements"),
            explanation=strings("explanation"),
            fix=str(data.get("fix", "")),
            values={str(k): v for k, v in values.items()},
            related=tuple(
                Related(Location(str(r["path"]), int(r["line"]), int(r.get("column", 1))),
                        str(r.get("note", "")))
                for r in data.get("related", [])
            ),
        )


@dataclass(slots=True)
class Waived:
    """A finding that an inline waiver covers, with the waiver's place and reason."""

    finding: Finding
    waiver_location: Location
    reason: str


@dataclass(slots=True)
class Report:
    """The result of a run: what the decision layer kept, in report order.

    ``findings`` is sorted by path, line, column, rule, subject; ``files`` are the
    paths checked (as given, relative where the user gave them relative), ``files_read``
    those and every file they include (what ``-o`` must never overwrite).
    ``baseline_gone`` lists fingerprints of baseline entries that no longer occur.
    """

    findings: list[Finding] = field(default_factory=list)
    waived: list[Waived] = field(default_factory=list)
    files: list[str] = field(default_factory=list)
    baseline_gone: list[dict] = field(default_factory=list)
    baseline_matched: int = 0
    baseline_used: bool = False  # a baseline was applied (reporters then list baseline_gone)
    files_read: list[str] = field(default_factory=list)  # every file read, includes too

    def count(self, severity: Severity) -> int:
        return sum(1 for f in self.findings if f.severity == severity)

    def summary(self) -> dict:
        return {"files": len(self.files), "errors": self.count(Severity.ERROR),
                "warnings": self.count(Severity.WARNING), "infos": self.count(Severity.INFO),
                "waived": len(self.waived)}
