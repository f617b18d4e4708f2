"""JUnit XML reporter: one test case per checked file, well-formed, deterministic."""

from __future__ import annotations

import xml.etree.ElementTree as ET

from conftest import make_finding
from lintamp.config import Config
from lintamp.decide import decide
from report_helpers import KNOWN, render, sample_report


def test_one_case_per_file(rich_finding, tmp_path):
    out = render("junit", sample_report(rich_finding, tmp_path))
    root = ET.fromstring(out)
    suite = root.find("testsuite")
    cases = {c.get("name"): c for c in suite.findall("testcase")}
    assert sorted(cases) == ["blocks/amp.sp", "blocks/bias.sp", "blocks/clean.sp", "dir with space/odd%name.sp"]
    assert cases["blocks/clean.sp"].find("failure") is None
    failure = cases["blocks/amp.sp"].find("failure")
    assert failure.get("message") == "2 findings: dangling-net, unbuffered-output"
    assert failure.get("type") == "warning"
    assert (root.get("tests"), root.get("failures")) == ("4", "3")


def test_control_characters_do_not_break_the_xml(tmp_path):
    finding = make_finding(message="bad byte \x01 in card", path="a.sp")
    report = decide([finding], [], Config(root=tmp_path), known_rules=KNOWN, files=["a.sp"])
    ET.fromstring(render("junit", report))


def test_byte_identical_twice(rich_finding, tmp_path):
    assert render("junit", sample_report(rich_finding, tmp_path)) == render("junit", sample_report(rich_finding, tmp_path))
