"""The decision layer: selection, severity, per-path skips, waiver scope, baseline, order.

Findings and pragmas are built by hand in scenarios of our own; the expected
behaviour is the contract in INTERFACE.md ("Pragmas in netlists", "Configuration").
"""

from __future__ import annotations

from pathlib import Path

from conftest import KNOWN, make_finding, make_waiver
from lintamp.baseline import Baseline
from lintamp.config import Config, parse_config
from lintamp.decide import decide
from lintamp.findings import Severity


def config_from(data: dict, root: Path) -> Config:
    return parse_config(data, source=root / "lintamp.toml", known_rules=KNOWN)


def rules_of(report):
    return [(f.rule, f.subject) for f in report.findings]


def test_only_skip_and_categories(tmp_path):
    findings = [make_finding("dangling-net"), make_finding("unbuffered-output", subject="out"),
                make_finding("unused-port", subject="p")]
    config = config_from({"only": ["connectivity", "unused-port"]}, tmp_path)
    assert rules_of(decide(findings, [], config, known_rules=KNOWN)) == [
        ("dangling-net", "n1"), ("unused-port", "p")]
    config = config_from({"skip": ["impedance"]}, tmp_path)
    assert {f.rule for f in decide(findings, [], config, known_rules=KNOWN).findings} == {
        "dangling-net", "unused-port"}


def test_severity_override_copies_the_finding(tmp_path):
    original = make_finding("dangling-net", severity=Severity.WARNING)
    config = config_from({"severity": {"connectivity": "error"}}, tmp_path)
    report = decide([original], [], config, known_rules=KNOWN)
    assert report.findings[0].severity is Severity.ERROR
    assert original.severity is Severity.WARNING  # the rule's own finding is untouched
    assert report.summary() == {"files": 0, "errors": 1, "warnings": 0, "infos": 0, "waived": 0}


def test_paths_skips_match_root_relative_posix_paths(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    config = config_from({"paths": {"tb/**": {"skip": ["connectivity"]}, "*.cir": {"skip": ["all"]}}}, tmp_path)
    findings = [make_finding(path="tb/top_tb.sp"), make_finding(path="blocks/amp.sp"),
                make_finding(path=str(tmp_path / "tb" / "abs.sp")), make_finding(path="x/y.cir"),
                make_finding("unbuffered-output", path="tb/top_tb.sp", subject="out")]
    kept = [(f.rule, f.location.path) for f in decide(findings, [], config, known_rules=KNOWN).findings]
    assert kept == [("dangling-net", "blocks/amp.sp"), ("unbuffered-output", "tb/top_tb.sp")]


def test_cell_waiver_covers_that_cell_only(tmp_path):
    waiver = make_waiver("dangling-net", cell="biasgen", line=3)
    inside = make_finding(cell="biasgen", line=8, subject="spare")
    other_cell = make_finding(cell="amp", line=20, subject="spare")
    other_file = make_finding(cell="biasgen", path="blocks/other.sp", subject="spare")
    other_rule = make_finding("no-dc-path", cell="biasgen", line=9, subject="spare")
    report = decide([inside, other_cell, other_file, other_rule], [waiver], Config(root=tmp_path),
                    known_rules=KNOWN)
    assert [w.finding for w in report.waived] == [inside]
    assert report.waived[0].reason == "on purpose"
    assert report.waived[0].waiver_location == waiver.location
    assert len(report.findings) == 3


def test_top_level_waiver_and_subject_narrowing(tmp_path):
    waiver = make_waiver("dangling-net", "n2")
    findings = [make_finding(subject="n1", line=7), make_finding(subject="n2", line=8),
                make_finding(subject="n3", line=9, nets=("n2",))]
    report = decide(findings, [waiver], Config(root=tmp_path), known_rules=KNOWN)
    assert sorted(w.finding.subject for w in report.waived) == ["n2", "n3"]
    assert rules_of(report) == [("dangling-net", "n1")]


def test_element_waiver_inline_and_line_before(tmp_path):
    # An inline waiver on m1's card, and one on the line before r1: each covers its element and nets.
    inline = make_waiver("unbiased-gate", line=12, cell="amp", element="m1",
                         element_nets=("out", "g1", "vss", "vss"), inline=True)
    before = make_waiver("dangling-net", line=13, cell="amp", element="r1", element_nets=("a", "b"))
    findings = [
        make_finding("unbiased-gate", cell="amp", line=12, subject="g1", elements=("m1",)),
        make_finding("unbiased-gate", cell="amp", line=30, subject="g9", elements=("m9",)),
        make_finding("dangling-net", cell="amp", line=14, subject="b"),
        make_finding("dangling-net", cell="amp", line=40, subject="c"),
    ]
    report = decide(findings, [inline, before], Config(root=tmp_path), known_rules=KNOWN)
    assert sorted(w.finding.subject for w in report.waived) == ["b", "g1"]
    assert sorted(f.subject for f in report.findings) == ["c", "g9"]


def test_waiver_without_reason_waives_nothing_and_is_reported(tmp_path):
    waiver = make_waiver("dangling-net", reason="   ", line=4)
    report = decide([make_finding(line=9)], [waiver], Config(root=tmp_path), known_rules=KNOWN)
    assert rules_of(report) == [("waiver-without-reason", "dangling-net"), ("dangling-net", "n1")]
    assert report.findings[0].severity is Severity.WARNING
    assert report.findings[0].location.line == 4
    assert not report.waived


def test_unused_and_misspelt_waivers_are_reported(tmp_path):
    unused = make_waiver("dangling-net", "nx", line=3)
    misspelt = make_waiver("danglingnet", line=4)
    report = decide([make_finding(line=9)], [unused, misspelt], Config(root=tmp_path), known_rules=KNOWN)
    assert [(f.rule, f.location.line) for f in report.findings] == [
        ("unused-waiver", 3), ("unused-waiver", 4), ("dangling-net", 9)]
    assert report.findings[0].values["waived_rule"] == "dangling-net"
    assert "not a rule" in report.findings[1].message


def test_unused_waiver_is_quiet_when_its_rule_did_not_run(tmp_path):
    waiver = make_waiver("unbuffered-output", line=3)
    config = config_from({"only": ["connectivity"]}, tmp_path)
    assert decide([], [waiver], config, known_rules=KNOWN).findings == []
    config = config_from({"paths": {"blocks/*": {"skip": ["impedance"]}}}, tmp_path)
    assert decide([], [waiver], config, known_rules=KNOWN).findings == []
    # And the waiver rules themselves obey selection and severity like any rule.
    config = config_from({"skip": ["unused-waiver"]}, tmp_path)
    assert decide([], [make_waiver("dangling-net")], config, known_rules=KNOWN).findings == []
    config = config_from({"severity": {"waivers": "error"}}, tmp_path)
    assert decide([], [make_waiver("dangling-net")], config, known_rules=KNOWN).findings[0].severity is Severity.ERROR


def test_other_pragmas_are_not_waivers(tmp_path):
    from lintamp.location import Location
    from lintamp.netlist.statements import Pragma
    pragma = Pragma("voltage-output", ("out",), "", Location("blocks/amp.sp", 2, 1))
    assert decide([], [pragma], Config(root=tmp_path), known_rules=KNOWN).findings == []


def test_baseline_counts_and_gone_entries(tmp_path):
    twice = [make_finding(line=5), make_finding(line=50)]  # same fingerprint: no line in it
    assert twice[0].fingerprint == twice[1].fingerprint
    other = make_finding(subject="n7", line=70)
    baseline = Baseline.from_findings([twice[0], other, make_finding(subject="gone", line=1)])
    report = decide(twice + [other], [], Config(root=tmp_path), baseline, known_rules=KNOWN)
    # One entry covers one finding: the second occurrence is new.
    assert [(f.subject, f.location.line) for f in report.findings] == [("n1", 50)]
    assert report.baseline_matched == 2 and report.baseline_used
    assert [e["subject"] for e in report.baseline_gone] == ["gone"]


def test_order_is_path_line_column_rule_subject(tmp_path):
    findings = [make_finding("unused-port", path="b.sp", line=1), make_finding(path="a.sp", line=9),
                make_finding("no-dc-path", path="a.sp", line=9, subject="z"),
                make_finding("no-dc-path", path="a.sp", line=9, subject="a"),
                make_finding(path="a.sp", line=2, column=7), make_finding(path="a.sp", line=2, column=3)]
    report = decide(list(reversed(findings)), [], Config(root=tmp_path), known_rules=KNOWN)
    assert [f.sort_key() for f in report.findings] == sorted(f.sort_key() for f in findings)


def test_exit_code_follows_fail_on(tmp_path):
    # INTERFACE.md "Exit codes": 1 for findings at or above --fail-on, else 0; never -> 0.
    from lintamp.decide import exit_code
    report = decide([make_finding(severity=Severity.WARNING)], [], Config(root=tmp_path), known_rules=KNOWN)
    assert exit_code(report, Severity.WARNING) == 1 and exit_code(report, Severity.INFO) == 1
    assert exit_code(report, Severity.ERROR) == 0 and exit_code(report, None) == 0
    waived = decide([make_finding()], [make_waiver("dangling-net")], Config(root=tmp_path), known_rules=KNOWN)
    assert exit_code(waived, Severity.INFO) == 0
