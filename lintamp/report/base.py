"""The interface every reporter implements: start, handle each finding, finish.

The driver (the CLI) calls ``start()`` once, ``handle(finding)`` for each finding of
``report.findings`` in order, then ``finish(report)``; :func:`emit` does exactly
that.  Streaming formats write in ``handle``; document formats collect and write in
``finish``.  Waived findings, the summary and baseline results come from the report.
"""

from __future__ import annotations

import math
import re
from typing import TextIO

from lintamp.findings import Finding, Report
from lintamp.registry import RuleInfo
from lintamp.text import plural  # noqa: F401 - the reporters import it from here


class Reporter:
    """Base class: keeps the handled findings; subclasses render."""

    def __init__(self, stream: TextIO, *, color: bool, rules: dict[str, RuleInfo],
                 tool_version: str, counts: bool = False, summary: bool = True):
        self.stream = stream
        self.color = color
        self.rules = rules
        self.tool_version = tool_version
        self.counts = counts  # the text report's findings per rule
        self.summary = summary  # the text report's closing line (off with --quiet)
        self.findings: list[Finding] = []

    def start(self) -> None:
        """Called once before any finding."""

    def handle(self, finding: Finding) -> None:
        """Called for each reported finding, in report order."""
        self.findings.append(finding)

    def finish(self, report: Report) -> None:
        """Called once at the end with the whole report."""


def emit(reporter: Reporter, report: Report) -> None:
    """Drive a reporter through a report."""
    reporter.start()
    for finding in report.findings:
        reporter.handle(finding)
    reporter.finish(report)


def json_number(value):
    """A value JSON can carry: non-finite floats become the strings "inf", "-inf", "nan"."""
    if isinstance(value, float) and not math.isfinite(value):
        return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")
    return value


def finding_data(finding: Finding) -> dict:
    """``Finding.to_json`` with ``values`` sorted by key and made JSON-safe."""
    data = finding.to_json()
    data["values"] = {k: json_number(v) for k, v in sorted(data["values"].items())}
    return data


_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f]")


def printable(text: str) -> str:
    r"""One line of text safe for a terminal: control characters (newlines, ESC ...) escaped.

    Netlist text is untrusted; a net name holding an escape sequence must not
    restyle the user's terminal, nor a newline split a ``path:line:col:`` line.

    >>> print(printable("a" + chr(10) + "b" + chr(27) + "[31m"))
    a\nb\x1b[31m
    """
    return _CONTROL.sub(lambda m: repr(m.group())[1:-1], text)
