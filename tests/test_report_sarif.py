"""SARIF reporter, validated against the SARIF 2.1.0 (OASIS) official schema.

The schema is the OASIS TC's errata01 copy kept unmodified in tests/schemas (see
SOURCE.md there: where it comes from, its SHA-256 and its licence note), so a fresh
clone validates SARIF without anything outside the repository.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pytest

from conftest import REPO
from lintamp.registry import all_rules
from report_helpers import render, sample_report

SCHEMA_PATH = REPO / "tests" / "schemas" / "sarif-schema-2.1.0.json"
SCHEMA_SHA256 = "c3b4bb2d6093897483348925aaa73af03b3e3f4bd4ca38cef26dcb4212a2682e"  # SOURCE.md


def test_the_vendored_schema_is_the_published_file():
    assert hashlib.sha256(SCHEMA_PATH.read_bytes()).hexdigest() == SCHEMA_SHA256
    assert (SCHEMA_PATH.parent / "SOURCE.md").is_file()


@pytest.fixture(scope="module")
def validator():
    import jsonschema

    schema = json.loads(SCHEMA_PATH.read_text(encoding="utf-8"))
    cls = jsonschema.validators.validator_for(schema)
    cls.check_schema(schema)
    return cls(schema, format_checker=cls.FORMAT_CHECKER)


def assert_valid(validator, log: dict) -> None:
    errors = sorted(validator.iter_errors(log), key=lambda e: list(e.absolute_path))
    assert not errors, "\n".join(f"{list(e.absolute_path)}: {e.message}" for e in errors[:10])


def test_valid_and_complete(validator, rich_finding, tmp_path):
    # Source: SARIF 2.1.0 (OASIS) official schema, errata01.
    log = json.loads(render("sarif", sample_report(rich_finding, tmp_path)))
    assert_valid(validator, log)
    run = log["runs"][0]
    driver = run["tool"]["driver"]
    assert driver["name"] == "lintamp" and driver["version"] == "0.1.0"
    ids = [r["id"] for r in driver["rules"]]
    assert ids == sorted(ids) and "unused-waiver" in ids and "parse-error" in ids
    waiver_rule = driver["rules"][ids.index("waiver-without-reason")]
    assert waiver_rule["defaultConfiguration"] == {"level": "warning"}
    assert waiver_rule["shortDescription"]["text"] == all_rules()["waiver-without-reason"].summary
    assert "## Why it matters" in waiver_rule["help"]["markdown"]
    assert "Why it matters" in waiver_rule["help"]["text"]
    for result in run["results"]:
        assert driver["rules"][result["ruleIndex"]]["id"] == result["ruleId"]
        assert "security-severity" not in json.dumps(result)
    bias = next(r for r in run["results"] if r["ruleId"] == "unbiased-gate")
    assert bias["level"] == "error"
    assert bias["locations"][0]["physicalLocation"] == {
        "artifactLocation": {"uri": "blocks/bias.sp", "uriBaseId": "%SRCROOT%"},
        "region": {"startLine": 12, "startColumn": 3}}
    assert [r["message"]["text"] for r in bias["relatedLocations"]] == ["gate of m1", "c1 to ground"]
    steps = bias["codeFlows"][0]["threadFlows"][0]["locations"]
    assert [s["location"]["message"]["text"] for s in steps] == list(rich_finding.explanation)
    assert bias["partialFingerprints"] == {"lintampFingerprint/v1": rich_finding.fingerprint}
    assert bias["properties"]["values"]["z_ohm"] == 1e12 and bias["properties"]["values"]["open"] == "inf"
    info = next(r for r in run["results"] if r["ruleId"] == "unbuffered-output")
    assert info["level"] == "note"
    odd = next(r for r in run["results"] if r["ruleId"] == "parse-error")
    assert odd["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == "dir%20with%20space/odd%25name.sp"
    waived = [r for r in run["results"] if "suppressions" in r]
    assert len(waived) == 1
    assert waived[0]["suppressions"][0]["kind"] == "inSource"
    assert waived[0]["suppressions"][0]["justification"] == "test pad, bonded on the evaluation board only"


def test_valid_with_baseline_and_when_empty(validator, rich_finding, tmp_path):
    from lintamp.findings import Report
    log = json.loads(render("sarif", sample_report(rich_finding, tmp_path, baseline=True)))
    assert_valid(validator, log)
    assert {r.get("baselineState") for r in log["runs"][0]["results"] if "suppressions" not in r} == {"new"}
    assert_valid(validator, json.loads(render("sarif", Report(), rules={})))


def test_broken_log_is_caught_by_the_schema(validator, rich_finding, tmp_path):
    # The check must be able to fail: a level SARIF does not define.
    log = json.loads(render("sarif", sample_report(rich_finding, tmp_path)))
    log["runs"][0]["results"][0]["level"] = "fatal"
    assert list(validator.iter_errors(log))


def test_byte_identical_twice(rich_finding, tmp_path):
    first = render("sarif", sample_report(rich_finding, tmp_path))
    assert render("sarif", sample_report(rich_finding, tmp_path)) == first


def test_absolute_paths_become_file_uris():
    from lintamp.report.sarif import artifact_location
    assert artifact_location("/home/u/a b.sp") == {"uri": "file:///home/u/a%20b.sp"}
    assert artifact_location("./x/y.sp") == {"uri": "x/y.sp", "uriBaseId": "%SRCROOT%"}


SAMPLE_FILES = sorted((REPO / "samples").glob("*.sp"))
FIXTURE_FILES = sorted((REPO / "tests" / "fixtures" / "rules").glob("*/bad.sp"))


@pytest.mark.parametrize("netlist", SAMPLE_FILES + FIXTURE_FILES,
                         ids=lambda p: f"{p.parent.name}/{p.name}")
def test_every_sample_and_rule_example_gives_valid_sarif(validator, netlist, tmp_path):
    # Source: SARIF 2.1.0 (OASIS) official schema: the real reports of the samples and of
    # every rule's failing example, with their related locations and reasoning flows
    from lintamp.cli import main
    out = tmp_path / "report.sarif"
    code = main(["check", "--no-config", "--no-cache", "--format", "sarif", "-o", str(out), str(netlist)])
    assert code in (0, 1)
    log = json.loads(out.read_text(encoding="utf-8"))
    assert_valid(validator, log)
    results = log["runs"][0]["results"]
    if netlist in FIXTURE_FILES:
        assert results, f"{netlist} gave no results"
        assert all(r["partialFingerprints"] for r in results)
