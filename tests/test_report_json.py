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


# The JSON writer must give exactly the text of the standard library's
# json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False) (Python
# documentation, json module: "indent" and "ensure_ascii"), which it replaces for speed.
TRICKY = [
    {}, [], "", 0, -1, 10**30, 0.1, -0.0, 1e-300, 1e300, 5e-324, True, False, None,
    {"a": [], "b": {}, "c": [[]], "d": [{}]},
    {"quote\"back\\slash": "tab\tnewline\ncr\rnul\x00bell\x07del\x7f", "é": "Ω µ ✓ \u2028 \u2029"},
    {"surrogate": "\ud800", "emoji": "\U0001f50c"},
    [1, [2, [3, [4, {"deep": [5.5, "x"]}]]]],
    {"values": {"z_ohm": 1e12, "open": "inf", "count": 3, "flag": True, "none": None}},
]


def test_writer_matches_the_standard_library_on_tricky_values():
    from lintamp.report.json_text import dumps_indented
    for doc in TRICKY:
        assert dumps_indented(doc) == json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False)


def test_writer_refuses_non_finite_floats_like_the_standard_library():
    import pytest
    from lintamp.report.json_text import dumps_indented
    for bad in (float("nan"), float("inf"), [float("-inf")]):
        with pytest.raises(ValueError):
            json.dumps(bad, allow_nan=False)
        with pytest.raises(ValueError):
            dumps_indented(bad)


def test_writer_hands_unusual_data_to_the_standard_library():
    from lintamp.report.json_text import dumps_indented
    for doc in ({1: "int key"}, ("a", "tuple"), {"k": (1, 2)}):
        assert dumps_indented(doc) == json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False)


def test_writer_matches_on_real_reports(rich_finding, tmp_path):
    from lintamp.report.json_report import report_document
    from lintamp.report.json_text import dumps_indented
    report = sample_report(rich_finding, tmp_path)
    doc = report_document(report, report.findings, "0.1.0")
    assert dumps_indented(doc) == json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False)


def test_streamed_writer_gives_the_standard_library_text():
    # reference: json.dumps(indent=2) of the same document (Python standard library)
    from lintamp.report.json_text import write_indented
    docs = [d for d in TRICKY if isinstance(d, dict)] + [
        {"k": (1, 2)}, {1: "int key"}, {}, {"empty": [], "one": [{}], "deep": [[1, [2]], {"a": [3]}]},
        {"odd": [{"t": (1, 2)}, {2: "int key inside"}, "plain"]}]
    for doc in docs:
        pieces: list[str] = []
        write_indented(doc, pieces.append)
        assert "".join(pieces) == json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
    pieces = []
    write_indented({"items": iter([{"a": 1}, [2]]), "none": iter([])}, pieces.append)
    assert "".join(pieces) == json.dumps({"items": [{"a": 1}, [2]], "none": []}, indent=2) + "\n"


def test_streamed_report_is_the_whole_document(rich_finding, tmp_path):
    import io

    from lintamp.report.json_report import JsonReporter, report_document
    from lintamp.report.base import emit
    report = sample_report(rich_finding, tmp_path)
    stream = io.StringIO()
    emit(JsonReporter(stream, color=False, rules={}, tool_version="0.1.0"), report)
    doc = report_document(report, report.findings, "0.1.0")
    assert stream.getvalue() == json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
