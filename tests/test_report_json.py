"""JSON reporter: the schema-1 shape of INTERFACE.md, byte-identical for identical input."""

from __future__ import annotations

import json

from report_helpers import render, sample_report


def test_shape_matches_the_interface(rich_finding, tmp_path):
    doc = json.loads(render("json", sample_report(rich_finding, tmp_path)))
    assert list(doc) == ["tool", "version", "schema", "findings", "waived", "summary"]
    assert (doc["tool"], doc["version"], doc["schema"]) == ("lintamp", "0.1.0", 1)
    bias = next(f for f in doc["findings"] if f["rule"] == "unbiased-gate")
    assert set(bias) == {"rule", "severity", "path", "line", "column", "cell", "instances", "subject",
                         "nets", "elements", "message", "explanation", "fix", "values", "related",
                         "fingerprint"}
    assert bias["values"] == {"limit_ohm": 8000.0, "open": "inf", "region": "cutoff", "z_ohm": 1e12}
    assert bias["related"][0] == {"path": "blocks/bias.sp", "line": 13, "column": 1, "note": "gate of m1"}
    assert doc["waived"][0]["waiver"] == {"path": "blocks/amp.sp", "line": 19,
                                          "reason": "test pad, bonded on the evaluation board only"}
    assert doc["summary"] == {"files": 4, "errors": 2, "warnings": 1, "infos": 1, "waived": 1}
    assert "baseline_gone" not in doc


def test_baseline_gone_only_with_a_baseline(rich_finding, tmp_path):
    doc = json.loads(render("json", sample_report(rich_finding, tmp_path, baseline=True)))
    assert [e["subject"] for e in doc["baseline_gone"]] == ["gone"]


def test_byte_identical_twice(rich_finding, tmp_path):
    first = render("json", sample_report(rich_finding, tmp_path))
    rich_finding.values = dict(reversed(list(rich_finding.values.items())))  # rule-side order must not matter
    assert render("json", sample_report(rich_finding, tmp_path)) == first
