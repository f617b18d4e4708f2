"""JSON report, schema 1 of INTERFACE.md; identical input gives identical bytes."""

from __future__ import annotations

from lintamp.findings import Report, Waived
from lintamp.report.base import Reporter, finding_data
from lintamp.report.json_text import write_indented

SCHEMA = 1


def waived_data(waived: Waived) -> dict:
    data = finding_data(waived.finding)
    data["waiver"] = {"path": waived.waiver_location.path, "line": waived.waiver_location.line,
                      "reason": waived.reason}
    return data


def report_document(report: Report, findings, tool_version: str, *, lazy: bool = False) -> dict:
    """The report as JSON data; with ``lazy`` its findings are an iterator that builds
    each one's data when asked (for :func:`write_indented`)."""
    data = map(finding_data, findings)
    doc = {"tool": "lintamp", "version": tool_version, "schema": SCHEMA,
           "findings": data if lazy else list(data),
           "waived": [waived_data(w) for w in report.waived],
           "summary": report.summary()}
    if report.baseline_used:
        doc["baseline_gone"] = [dict(sorted(e.items())) for e in report.baseline_gone]
    return doc


class JsonReporter(Reporter):
    def finish(self, report: Report) -> None:
        doc = report_document(report, self.findings, self.tool_version, lazy=True)
        write_indented(doc, self.stream.write)
