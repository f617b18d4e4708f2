"""SARIF 2.1.0 log for code-scanning services.

One run; ``tool.driver.rules`` holds every known rule (sorted by id) with its
summary, its docstring as full description and help (text and markdown), and its
default level.  Each result points at its file relative to ``%SRCROOT%``, lists
related locations, carries the explanation steps as a code flow in order, the
finding's fingerprint under ``lintampFingerprint/v1``, and the structured values in
``properties``.  Waived findings are results with an ``inSource`` suppression whose
justification is the waiver's reason.
"""

from __future__ import annotations

import json
import re
from pathlib import PurePosixPath
from urllib.parse import quote

from lintamp.findings import Finding, Related, Report, Severity, Waived
from lintamp.location import Location
from lintamp.registry import RuleInfo
from lintamp.report.base import Reporter, json_number

SARIF_VERSION = "2.1.0"
SARIF_SCHEMA_URI = "https://json.schemastore.org/sarif-2.1.0.json"
SRCROOT = "%SRCROOT%"
FINGERPRINT_KEY = "lintampFingerprint/v1"
LEVELS = {Severity.ERROR: "error", Severity.WARNING: "warning", Severity.INFO: "note"}


def artifact_location(path: str) -> dict:
    """A relative posix path under %SRCROOT%; an absolute path as a file: URI."""
    posix = path.replace("\\", "/")
    if PurePosixPath(posix).is_absolute() or re.match(r"^[A-Za-z]:/", posix):
        return {"uri": "file://" + ("" if posix.startswith("/") else "/") + quote(posix, safe="/:")}
    return {"uri": quote(posix.removeprefix("./"), safe="/"), "uriBaseId": SRCROOT}


def physical_location(location: Location) -> dict:
    data = {"artifactLocation": artifact_location(location.path)}
    if location.line >= 1:
        data["region"] = {"startLine": location.line, "startColumn": max(1, location.column)}
    return data


def doc_markdown(doc: str) -> str:
    """Docstring sections (``Title`` over ``-----``) as markdown headings; the rest kept."""
    lines = doc.splitlines()
    out: list[str] = []
    i = 0
    while i < len(lines):
        line = lines[i]
        nxt = lines[i + 1] if i + 1 < len(lines) else ""
        if line.strip() and re.fullmatch(r"\s*[-=]{3,}\s*", nxt):
            out.append("## " + line.strip())
            i += 2
            continue
        out.append(line.replace("``", "`"))
        i += 1
    return "\n".join(out).strip() + "\n"


def rule_descriptor(name: str, info: RuleInfo | None) -> dict:
    if info is None:  # a parser-level rule without a module of its own
        return {"id": name, "name": name, "shortDescription": {"text": name}}
    doc = info.doc or info.summary
    first_paragraph = doc.split("\n\n", 1)[0].strip()
    return {
        "id": name,
        "name": name,
        "shortDescription": {"text": info.summary},
        "fullDescription": {"text": first_paragraph},
        "help": {"text": doc, "markdown": doc_markdown(doc)},
        "defaultConfiguration": {"level": LEVELS[info.severity]},
        "properties": {"category": info.category, "tags": [info.category]},
    }


def related_location(index: int, related: Related) -> dict:
    return {"id": index, "physicalLocation": physical_location(related.location),
            "message": {"text": related.note or "related"}}


def result_for(finding: Finding, rule_index: int, *, baseline_used: bool) -> dict:
    result = {
        "ruleId": finding.rule,
        "ruleIndex": rule_index,
        "level": LEVELS[finding.severity],
        "message": {"text": finding.message},
        "locations": [{"physicalLocation": physical_location(finding.location)}],
    }
    if finding.related:
        result["relatedLocations"] = [related_location(i, r) for i, r in enumerate(finding.related, 1)]
    if finding.explanation:
        steps = [{"location": {"physicalLocation": physical_location(finding.location),
                               "message": {"text": step}}} for step in finding.explanation]
        result["codeFlows"] = [{"threadFlows": [{"locations": steps}]}]
    result["partialFingerprints"] = {FINGERPRINT_KEY: finding.fingerprint}
    if baseline_used:
        result["baselineState"] = "new"
    result["properties"] = {
        "subject": finding.subject, "cell": finding.cell, "instances": list(finding.instances),
        "nets": list(finding.nets), "elements": list(finding.elements), "fix": finding.fix,
        "values": {k: json_number(v) for k, v in sorted(finding.values.items())},
    }
    return result


def sarif_log(findings: list[Finding], report: Report, rules: dict[str, RuleInfo],
              tool_version: str) -> dict:
    names = set(rules) | {f.rule for f in findings} | {w.finding.rule for w in report.waived}
    ordered = sorted(names)
    index = {name: i for i, name in enumerate(ordered)}
    results = [result_for(f, index[f.rule], baseline_used=report.baseline_used) for f in findings]
    for waived in report.waived:
        results.append(_suppressed(waived, index))
    driver = {"name": "lintamp", "version": tool_version, "semanticVersion": tool_version,
              "rules": [rule_descriptor(name, rules.get(name)) for name in ordered]}
    run = {
        "tool": {"driver": driver},
        "originalUriBaseIds": {SRCROOT: {"description": {"text": "The project root: the folder of the lintamp configuration."}}},
        "columnKind": "unicodeCodePoints",
        "results": results,
    }
    return {"$schema": SARIF_SCHEMA_URI, "version": SARIF_VERSION, "runs": [run]}


def _suppressed(waived: Waived, index: dict[str, int]) -> dict:
    result = result_for(waived.finding, index[waived.finding.rule], baseline_used=False)
    result["suppressions"] = [{
        "kind": "inSource", "status": "accepted", "justification": waived.reason,
        "location": {"physicalLocation": physical_location(waived.waiver_location)},
    }]
    return result


class SarifReporter(Reporter):
    def finish(self, report: Report) -> None:
        log = sarif_log(self.findings, report, self.rules, self.tool_version)
        self.stream.write(json.dumps(log, indent=2, ensure_ascii=False, allow_nan=False) + "\n")
