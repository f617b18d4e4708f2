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
from lintamp.report.base import Reporter, plural, printable

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
        self._write_block(list(_finding_lines(finding)))

    def finish(self, report: Report) -> None:
        if self.counts:
            for text, style in _count_lines(self.findings, self.rules):
                self._write(text, style)
        if self.summary:
            self._write(summary_line(report), "bold")

    def _write(self, parts, style: str | None = None) -> None:
        self._write_block([(parts, style)])

    def _write_block(self, lines) -> None:
        """``lines``: (parts, style) where parts is a string or a list of (text, style) pieces."""
        pieces = [[(parts, style)] if isinstance(parts, str) else parts for parts, style in lines]
        if self._console is None:
            self.stream.write("".join("".join(text for text, _ in line) + "\n" for line in pieces))
            return
        from rich.text import Text

        block = Text()
        for number, line in enumerate(pieces):
            if number:
                block.append("\n")
            for text, piece_style in line:
                block.append(text, style=piece_style or "")
        self._console.print(block)


def _finding_lines(finding: Finding):
    loc = finding.location
    yield [(printable(f"{loc}: "), "bold"), (finding.severity.label, _STYLE[finding.severity]),
           (printable(f" {finding.rule}: "), "magenta"), (printable(finding.message), None)], None
    where = []
    if finding.cell:
        where.append(f"in cell {finding.cell}")
    if finding.instances:
        where.append(f"instances {', '.join(finding.instances)}")
    if where:
        yield INDENT + printable(", ".join(where)), "dim"
    for step in finding.explanation:
        yield INDENT + printable(step), None
    if finding.fix:
        yield [(INDENT + "fix: ", "green"), (printable(finding.fix), None)], None
    for related in finding.related:
        yield [(INDENT + printable(f"{related.location}: "), "bold"), (printable(related.note), "dim")], None


def _count_lines(findings: list[Finding], rules: dict):
    counts = Counter(f.rule for f in findings)
    if not counts:
        return
    width = max(len(str(n)) for n in counts.values())
    yield "Findings by rule:", "bold"
    for rule, count in sorted(counts.items(), key=lambda item: (-item[1], item[0])):
        info = rules.get(rule)
        summary = f"  {info.summary}" if info is not None else ""
        yield f"  {count:>{width}}  {printable(rule)}{summary}", None


def summary_line(report: Report) -> str:
    """One line: files checked, counts by severity, waived, baseline.

    ``6 files checked: 6 errors, 2 warnings, 0 infos.`` or ``3 files checked: clean.``
    """
    s = report.summary()
    files = plural(s["files"], "file")
    total = s["errors"] + s["warnings"] + s["infos"]
    if total == 0:
        text = f"{files} checked: clean"
    else:
        text = (f"{files} checked: {plural(s['errors'], 'error')}, "
                f"{plural(s['warnings'], 'warning')}, {plural(s['infos'], 'info')}")
    extra = []
    if s["waived"]:
        extra.append(f"{s['waived']} waived")
    if report.baseline_used:
        extra.append(f"{report.baseline_matched} accepted by the baseline")
        if report.baseline_gone:
            gone = len(report.baseline_gone)
            extra.append(f"{gone} baseline {'entry' if gone == 1 else 'entries'} no longer found")
    return text + (f" ({'; '.join(extra)})" if extra else "") + "."
