"""GitHub Actions: one workflow-command annotation per finding, then the plain text report.

GitHub shows only a handful of annotations per step, so the full report follows.
Escaping follows the runner's rules (actions/toolkit ``command.ts``: ``escapeData``
for the message, ``escapeProperty`` for ``file=``/``title=``).
"""

from __future__ import annotations

from lintamp.findings import Finding, Report, Severity
from lintamp.report.base import Reporter, printable
from lintamp.report.text import TextReporter

COMMANDS = {Severity.ERROR: "error", Severity.WARNING: "warning", Severity.INFO: "notice"}


def escape_data(text: str) -> str:
    return text.replace("%", "%25").replace("\r", "%0D").replace("\n", "%0A")


def escape_property(text: str) -> str:
    return escape_data(text).replace(":", "%3A").replace(",", "%2C")


def annotation(finding: Finding) -> str:
    loc = finding.location
    props = [f"file={escape_property(loc.path)}"]
    if loc.line >= 1:
        props += [f"line={loc.line}", f"col={max(1, loc.column)}"]
    props.append(f"title={escape_property(finding.rule)}")
    lines = [finding.message, *finding.explanation] + ([f"fix: {finding.fix}"] if finding.fix else [])
    body = "\n".join(printable(line) for line in lines)
    return f"::{COMMANDS[finding.severity]} {','.join(props)}::{escape_data(body)}"


class GithubReporter(Reporter):
    def handle(self, finding: Finding) -> None:
        super().handle(finding)
        self.stream.write(annotation(finding) + "\n")

    def finish(self, report: Report) -> None:
        text = TextReporter(self.stream, color=False, rules=self.rules,
                            tool_version=self.tool_version, counts=self.counts,
                            summary=self.summary)
        text.start()
        for finding in self.findings:
            text.handle(finding)
        text.finish(report)
