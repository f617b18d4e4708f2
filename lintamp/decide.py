"""The one place where policy is applied to what the rules found.

Rules report everything they see; :func:`decide` turns that into the run's
:class:`~lintamp.findings.Report`, in this order:

1. ``only`` / ``skip`` drop rules that are off;
2. ``[paths]`` entries' ``skip`` drop rules for matching files (root-relative posix paths);
3. ``[severity]`` re-grades what is left;
4. inline waivers (``lintamp: waive RULE [SUBJECT] -- reason``) move findings to
   ``Report.waived``; a waiver without a reason waives nothing and is reported
   (``waiver-without-reason``), and one that matches nothing is reported
   (``unused-waiver``); those two go through steps 1-3 like any finding;
5. the baseline drops findings it accepts, fingerprint by fingerprint, and what it
   lists that no longer occurs goes to ``Report.baseline_gone``;
6. findings are sorted by path, line, column, rule, subject.

Scope of a waiver (INTERFACE.md): one on an element's own line or on the line just
before it covers findings about that element and its nets; any other covers its
cell (a ``.subckt``, or the top level of its file).  An optional SUBJECT narrows
it to findings about that net or element.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, replace
from typing import Iterable, Mapping

from lintamp.baseline import Baseline
from lintamp.config import Config, rule_catalog
from lintamp.findings import Finding, Report, Severity, Waived
from lintamp.pragma import Pragma

UNUSED_WAIVER = "unused-waiver"
WAIVER_WITHOUT_REASON = "waiver-without-reason"
WAIVE_VERB = "waive"


@dataclass(slots=True)
class _Waiver:
    pragma: Pragma
    rule: str
    subject: str | None
    used: int = 0

    def scope_text(self) -> str:
        p = self.pragma
        if p.element is not None:
            where = f"element {p.element}" + (f" and its nets {', '.join(p.element_nets)}"
                                              if p.element_nets else "")
        else:
            where = f"cell {p.cell}" if p.cell else "the top level of the file"
        return where + (f", subject {self.subject}" if self.subject else "")

    def covers(self, finding: Finding) -> bool:
        p = self.pragma
        if finding.rule != self.rule or finding.location.path != p.location.path:
            return False
        if finding.cell.lower() != p.cell.lower():
            return False
        names = _names_of(finding)
        if p.element is not None:
            element = p.element.lower()
            nets = {n.lower() for n in p.element_nets}
            if not (finding.subject.lower() == element or finding.subject.lower() in nets
                    or element in {e.lower() for e in finding.elements}
                    or nets & {n.lower() for n in finding.nets}):
                return False
        return self.subject is None or self.subject.lower() in names


def _names_of(finding: Finding) -> set[str]:
    return ({finding.subject.lower()} | {n.lower() for n in finding.nets}
            | {e.lower() for e in finding.elements})


def decide(findings: Iterable[Finding], pragmas: Iterable[Pragma], config: Config,
           baseline: Baseline | None = None,
           known_rules: Mapping[str, str] | Iterable[str] | None = None,
           *, files: Iterable[str] = ()) -> Report:
    """Apply the project's policy to raw findings.

    Parameters
    ----------
    findings : iterable of Finding
        Everything the parser and the rules reported (not modified: re-graded
        findings are copies).
    pragmas : iterable of Pragma
        Every pragma read; only ``waive`` ones matter here.
    config : Config
        Selection, severity overrides, ``[paths]`` skips; ``config.root`` makes paths
        relative for their globs.
    baseline : Baseline, optional
        Accepted findings to drop.
    known_rules : mapping rule -> category, or names, optional
        Default: the registry plus the parser-level rules.
    files : iterable of str
        The files checked, for ``Report.files``.

    Notes
    -----
    O(F * W_f) for F findings and W_f waivers in the finding's file, plus sorting.
    """
    catalog = rule_catalog(known_rules)
    relpaths: dict[str, str] = {}

    def relpath(path: str) -> str:
        if path not in relpaths:
            relpaths[path] = config.relative_path(path)
        return relpaths[path]

    def keep(finding: Finding) -> Finding | None:
        category = catalog.get(finding.rule, "")
        if not config.rule_enabled(finding.rule, category):
            return None
        if config.paths and config.skipped_in_file(
                finding.rule, category, relpath(finding.location.path)):
            return None
        severity = config.severity_for(finding.rule, category, finding.severity)
        return finding if severity == finding.severity else replace(finding, severity=severity)

    kept = [f for f in (keep(f) for f in findings) if f is not None]

    waivers, malformed = _read_waivers(pragmas)
    by_path: dict[str, list[_Waiver]] = {}
    for waiver in waivers:
        by_path.setdefault(waiver.pragma.location.path, []).append(waiver)

    report = Report(files=list(files))
    remaining: list[Finding] = []
    for finding in kept:
        waiver = next((w for w in by_path.get(finding.location.path, ()) if w.covers(finding)), None)
        if waiver is None:
            remaining.append(finding)
        else:
            waiver.used += 1
            report.waived.append(Waived(finding, waiver.pragma.location, waiver.pragma.reason.strip()))

    for waiver in waivers:
        if waiver.used == 0 and _waiver_rule_active(waiver, config, catalog, relpath):
            remaining.append(_unused_finding(waiver, catalog))
    for pragma, problem in malformed:
        remaining.append(problem)
    remaining = [f for f in (keep(f) if f.rule in (UNUSED_WAIVER, WAIVER_WITHOUT_REASON) else f
                             for f in remaining) if f is not None]

    remaining.sort(key=Finding.sort_key)
    if baseline is not None:
        report.baseline_used = True
        remaining = _apply_baseline(remaining, baseline, report)
    report.findings = remaining
    report.waived.sort(key=lambda w: w.finding.sort_key())
    return report


def _read_waivers(pragmas: Iterable[Pragma]) -> tuple[list[_Waiver], list[tuple[Pragma, Finding]]]:
    """Split ``waive`` pragmas into usable waivers and reason-less ones (as findings)."""
    usable: list[_Waiver] = []
    malformed: list[tuple[Pragma, Finding]] = []
    for pragma in pragmas:
        if pragma.verb.lower() != WAIVE_VERB:
            continue
        rule = pragma.args[0].lower() if pragma.args else ""
        subject = pragma.args[1] if len(pragma.args) > 1 else None
        if rule and not (pragma.reason or "").strip():
            malformed.append((pragma, Finding(
                rule=WAIVER_WITHOUT_REASON, severity=Severity.WARNING, location=pragma.location,
                subject=rule, cell=pragma.cell, message=f"waiver for {rule} gives no reason, so it waives nothing",
                explanation=("a waiver is a design decision; the reason after `--` records it for reviewers",),
                fix=f"write the reason after `--`: `lintamp: waive {' '.join(pragma.args)} -- why this is fine`",
                values={"waived_rule": rule},
            )))
            continue
        usable.append(_Waiver(pragma, rule, subject))
    return usable, malformed


def _waiver_rule_active(waiver: _Waiver, config: Config, catalog: Mapping[str, str], relpath) -> bool:
    """Whether the waived rule ran on the waiver's file (else "unused" would be noise)."""
    if waiver.rule not in catalog:
        return True  # a misspelt rule name is always worth saying
    category = catalog[waiver.rule]
    if not config.rule_enabled(waiver.rule, category):
        return False
    return not (config.paths and config.skipped_in_file(
        waiver.rule, category, relpath(waiver.pragma.location.path)))


def _unused_finding(waiver: _Waiver, catalog: Mapping[str, str]) -> Finding:
    p = waiver.pragma
    if not waiver.rule:
        message = "waiver names no rule, so it waives nothing"
        fix = "write `lintamp: waive RULE [SUBJECT] -- reason`"
    elif waiver.rule not in catalog:
        message = f"waiver names {waiver.rule}, which is not a rule, so it waives nothing"
        fix = "correct the rule name (`lintamp rules` lists them) or remove the waiver"
    else:
        message = f"waiver for {waiver.rule} matches no finding"
        fix = "remove the waiver, or correct its rule or subject"
    return Finding(
        rule=UNUSED_WAIVER, severity=Severity.WARNING, location=p.location,
        subject=waiver.subject or p.element or waiver.rule or "waive", cell=p.cell,
        message=message,
        explanation=(f"the waiver covers {waiver.scope_text()}",
                     f"no {waiver.rule or 'such'} finding was reported there"),
        fix=fix, elements=(p.element,) if p.element else (),
        values={"waived_rule": waiver.rule},
    )


def _apply_baseline(findings: list[Finding], baseline: Baseline, report: Report) -> list[Finding]:
    budget = baseline.counts
    new: list[Finding] = []
    for finding in findings:
        fingerprint = finding.fingerprint
        if budget[fingerprint] > 0:
            budget[fingerprint] -= 1
            report.baseline_matched += 1
        else:
            new.append(finding)
    # The last entries of a fingerprint are the ones reported gone: deterministic.
    seen: Counter = Counter()
    totals = baseline.counts
    matched = {fp: totals[fp] - budget[fp] for fp in totals}
    for entry in baseline.entries:
        fp = entry["fingerprint"]
        seen[fp] += 1
        if seen[fp] > matched[fp]:
            report.baseline_gone.append(dict(entry))
    report.baseline_gone.sort(key=lambda e: (e["path"], e["rule"], e["subject"], e["fingerprint"]))
    return new


def exit_code(report: Report, fail_on: Severity | None) -> int:
    """INTERFACE.md: 1 when a finding is at or above ``fail_on`` (None: never), else 0."""
    if fail_on is None:
        return 0
    return 1 if any(f.severity >= fail_on for f in report.findings) else 0
