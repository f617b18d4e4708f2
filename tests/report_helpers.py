"""Reports built from hand-made findings (scenarios of our own) for the reporter tests."""

from __future__ import annotations

import io

from conftest import make_finding, make_waiver
from lintamp.baseline import Baseline
from lintamp.config import Config
from lintamp.decide import decide
from lintamp.findings import Finding, Severity
from lintamp.registry import all_rules
from lintamp.report import get_reporter
from lintamp.report.base import emit

KNOWN = {"unbiased-gate": "connectivity", "dangling-net": "connectivity",
         "unbuffered-output": "impedance", "unused-waiver": "waivers",
         "waiver-without-reason": "waivers", "parse-error": "syntax"}


def sample_report(rich: Finding, tmp_path, *, baseline=False):
    findings = [
        rich,
        make_finding("dangling-net", path="blocks/amp.sp", line=4, subject="spare", cell="amp"),
        make_finding("unbuffered-output", path="blocks/amp.sp", line=9, subject="out", cell="amp",
                     severity=Severity.INFO, message="out: 5 kΩ drives 1 kΩ, 100% loss, a,b:c"),
        make_finding("parse-error", path="dir with space/odd%name.sp", line=2, column=5, subject="",
                     severity=Severity.ERROR, message="cannot read 'r1 a' ; expected two nodes and a value\nnext"),
        make_finding("dangling-net", path="blocks/amp.sp", line=20, subject="tp", cell="amp"),
    ]
    pragmas = [make_waiver("dangling-net", "tp", path="blocks/amp.sp", line=19, cell="amp",
                           reason="test pad, bonded on the evaluation board only")]
    base = Baseline.from_findings([make_finding("dangling-net", path="old.sp", subject="gone")]) if baseline else None
    files = ["blocks/amp.sp", "blocks/bias.sp", "dir with space/odd%name.sp", "blocks/clean.sp"]
    return decide(findings, pragmas, Config(root=tmp_path), base, known_rules=KNOWN, files=files)


def render(name: str, report, *, color=False, counts=False, rules=None) -> str:
    stream = io.StringIO()
    reporter = get_reporter(name)(stream, color=color, rules=all_rules() if rules is None else rules,
                                  tool_version="0.1.0", counts=counts)
    emit(reporter, report)
    return stream.getvalue()
