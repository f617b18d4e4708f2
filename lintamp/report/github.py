"""GitHub Actions: one workflow-command annotation per finding, then the plain text report.

GitHub shows only a handful of annotations per step, so the full report follows.
Escaping follows the runner's rules (actions/toolkit ``command.ts``: ``escapeData``
for the message, ``escapeProperty`` for ``file=``/``title=``).

File and net names are the pull request's to choose: a file named
``::error title=x::y.sp`` would start a line of the text report and so be a workflow
command of its own.  The text report is therefore written between
``::stop-commands::TOKEN`` and ``::TOKEN::`` (GitHub's documented way to print text
the runner must not act on), with a token that is a hash of the text itself, so
the text cannot hold the token that ends it, and the output stays the same for the
same report.
"""

from __future__ import annotations

import hashlib
import io

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
    props = [f"file={escape_property(printable(loc.path))}"]
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
        buffer = io.StringIO()
        text = TextReporter(buffer, color=False, rules=self.rules,
                            tool_version=self.tool_version, counts=self.counts,
                            summary=self.summary)
        text.start()
        for finding in self.findings:
            text.handle(finding)
        text.finish(report)
        self.stream.write(inert(buffer.getvalue()))


def inert(text: str) -> str:
    """``text`` between ``::stop-commands::TOKEN`` and ``::TOKEN::``: the runner acts on
    no workflow command inside.  TOKEN is a hash of ``text``, so ``text`` cannot hold it."""
    token = "lintamp-" + hashlib.sha256(text.encode("utf-8", "surrogateescape")).hexdigest()[:32]
    end = "" if text.endswith("\n") or not text else "\n"
    return f"::stop-commands::{token}\n{text}{end}::{token}::\n"
