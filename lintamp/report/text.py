"""Human-readable report: one block per finding, then a summary line.

::

    blocks/bias.sp:12:3: error unbiased-gate: gate net nb has no DC bias path
        in cell biasgen, instances x1, x2
        nb connects only to gates of m0, m1
        fix: add a bias resistor from nb to a defined level
        blocks/bias.sp:13:1: gate of m1

Colour (rich) only when asked for; plain text otherwise, without importing rich.
Netlist text goes into rich ``Text`` objects, never into markup, so a net named
``[red]`` prints as written.
"""

from __future__ import annotations

from collections import Counter

from lintamp.findings import Finding, Report, Severity
from lintamp.report.base import Reporter, plural

INDENT = "    "
_STYLE = {Severity.ERROR: "bold red", Severity.WARNING: "yellow", Severity.INFO: "cyan"}


class TextReporter(Reporter):
    def start(self) -> None:
        self._console = None
        if self.color:
            from rich.console import Console  # only here: start-up time matters

            self._console = Console(file=self.stream, force_terminal=True, color_system="standard",
                                    highlight=False, markup=False, emoji=False, soft_wrap=True)

    def handle(self, finding: Finding) -> None:
        super().handle(finding)
        for text, style in _finding_lines(finding):
            self._write(text, style)

    def finish(self, report: Report) -> None:
        if self.statistics:
            for text, style in _statistics_lines(self.findings, self.rules):
                self._write(text, style)
        self._write(summary_line(report), "bold")

    def _write(self, parts, style: str | None = None) -> None:
        """``parts``: a string, or a list of (text, style) pieces on one line."""
        if isinstance(parts, str):
            parts = [(parts, style)]
        if self._console is None:
            self.stream.write("".join(text for text, _ in parts) + "\n")
            return
        from rich.text import Text

        line = Text()
        for text, piece_style in parts:
            line.append(text, style=piece_style or "")
        self._console.print(line)


def _finding_lines(finding: Finding):
    loc = finding.location
    yield [(f"{loc}: ", "bold"), (finding.severity.label, _STYLE[finding.severity]),
           (f" {finding.rule}: ", "magenta"), (finding.message, None)], None
    where = []
    if finding.cell:
        where.append(f"in cell {finding.cell}")
    if finding.instances:
        where.append(f"instances {', '.join(finding.instances)}")
    if where:
        yield INDENT + ", ".join(where), "dim"
    for step in finding.explanation:
        yield INDENT + step, None
    if finding.fix:
        yield [(INDENT + "fix: ", "green"), (finding.fix, None)], None
    for related in finding.related:
        yield [(INDENT + f"{related.location}: ", "bold"), (related.note, "dim")], None


def _statistics_lines(findings: list[Finding], rules: dict):
    counts = Counter(f.rule for f in findings)
    if not counts:
        return
    width = max(len(str(n)) for n in counts.values())
    for rule, count in sorted(counts.items(), key=lambda item: (-item[1], item[0])):
        info = rules.get(rule)
        summary = f"  {info.summary}" if info is not None else ""
        yield f"{count:>{width}}  {rule}{summary}", None


def summary_line(report: Report) -> str:
    """One line: counts by severity, files, waived, baseline."""
    s = report.summary()
    files = plural(s["files"], "file")
    total = s["errors"] + s["warnings"] + s["infos"]
    if total == 0:
        text = f"No findings in {files}"
    else:
        text = (f"Found {plural(s['errors'], 'error')}, {plural(s['warnings'], 'warning')}, "
                f"{plural(s['infos'], 'info')} in {files}")
    extra = []
    if s["waived"]:
        extra.append(f"{s['waived']} waived")
    if report.baseline_used:
        extra.append(f"{report.baseline_matched} accepted by the baseline")
        if report.baseline_gone:
            gone = len(report.baseline_gone)
            extra.append(f"{gone} baseline {'entry' if gone == 1 else 'entries'} no longer found")
    return text + (f" ({'; '.join(extra)})" if extra else "") + "."
