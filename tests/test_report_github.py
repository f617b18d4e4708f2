"""GitHub workflow-command annotations and their escaping.

Escaping source: GitHub's workflow-commands docs and actions/toolkit
packages/core/src/command.ts (escapeData: % CR LF; escapeProperty: also : and ,).
"""

from __future__ import annotations

from conftest import make_finding
from lintamp.findings import Severity
from lintamp.report.github import annotation, escape_data, escape_property
from report_helpers import render, sample_report


def test_escaping_rules():
    assert escape_data("100%\r\nnext: a,b") == "100%25%0D%0Anext: a,b"
    assert escape_property("a:b,c%\n") == "a%3Ab%2Cc%25%0A"


def test_annotation_line():
    finding = make_finding("dangling-net", path="dir,x/a:b.sp", line=4, column=2,
                           explanation=("only r1 touches it",), fix="connect or remove it",
                           severity=Severity.INFO)
    assert annotation(finding) == ("::notice file=dir%2Cx/a%3Ab.sp,line=4,col=2,title=dangling-net::"
                                   "dangling-net on n1%0Aonly r1 touches it%0Afix: connect or remove it")


def test_annotations_then_full_text_report(rich_finding, tmp_path):
    out = render("github", sample_report(rich_finding, tmp_path)).splitlines()
    annotations = [line for line in out if line.startswith(("::error", "::warning", "::notice"))]
    assert len(annotations) == 4
    assert annotations[0].startswith("::warning file=blocks/amp.sp,line=4,col=1,title=dangling-net::")
    assert all("\n" not in a for a in annotations)
    # the text report follows, fenced so the runner acts on nothing in it (GitHub docs,
    # "Stopping and starting workflow commands")
    assert out[4].startswith("::stop-commands::")
    token = out[4].removeprefix("::stop-commands::")
    assert out[5] == "blocks/amp.sp:4:1: warning dangling-net: dangling-net on spare"
    assert out[-2].startswith("4 files checked: 2 errors")
    assert out[-1] == f"::{token}::"
