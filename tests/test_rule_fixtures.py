"""Every rule's bad/good example netlists under tests/fixtures/rules/<rule>/.

A folder named after a rule must hold ``bad.sp`` and ``good.sp``.  The bad file lists
its expected findings in header comments, ``* expect: RULE SUBJECT``; it must produce
exactly the listed (rule, subject) pairs of the folder's rule, and the good file none.
The scenarios are our own; the expected findings follow the reasoning of
analog-knowledge.md section 4 (common practice).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from lintamp.api import check_text
from lintamp.registry import all_rules

FIXTURES = Path(__file__).resolve().parent / "fixtures" / "rules"
EXPECT = re.compile(r"^\*\s*expect:\s*(\S+)\s+(\S+)\s*$", re.I | re.M)
FOLDERS = sorted(p for p in FIXTURES.iterdir() if p.is_dir()) if FIXTURES.is_dir() else []


def _pairs(path: Path, rule: str) -> set[tuple[str, str]]:
    report = check_text(path.read_text(), str(path))
    return {(f.rule, f.subject) for f in report.findings if f.rule == rule}


@pytest.mark.parametrize("folder", FOLDERS, ids=[p.name for p in FOLDERS])
def test_folder_is_a_rule_with_both_examples(folder):
    assert folder.name in all_rules(), f"{folder.name} is not a known rule"
    assert (folder / "bad.sp").is_file() and (folder / "good.sp").is_file()


@pytest.mark.parametrize("folder", FOLDERS, ids=[p.name for p in FOLDERS])
def test_bad_example_gives_exactly_the_expected_findings(folder):
    bad = folder / "bad.sp"
    # the file may expect findings of other rules too; each rule's own test checks those
    expected = {(r.lower(), s.lower()) for r, s in EXPECT.findall(bad.read_text())
                if r.lower() == folder.name}
    assert expected, f"{bad} has no '* expect: {folder.name} SUBJECT' lines"
    assert _pairs(bad, folder.name) == expected


@pytest.mark.parametrize("folder", FOLDERS, ids=[p.name for p in FOLDERS])
def test_good_example_gives_none(folder):
    assert _pairs(folder / "good.sp", folder.name) == set()


@pytest.mark.parametrize("folder", FOLDERS, ids=[p.name for p in FOLDERS])
def test_rule_docstring_shows_the_bad_example(folder):
    doc = all_rules()[folder.name].doc
    example = doc.split("Example", 1)[1].split("\nFix", 1)[0]
    bad = {" ".join(line.split()).lower() for line in (folder / "bad.sp").read_text().splitlines()}
    cards = [" ".join(line.split("<-")[0].split()).lower() for line in example.splitlines()]
    cards = [c for c in cards if c[:1].isalpha()]
    assert cards, f"{folder.name}: no netlist lines in the Example section"
    missing = [c for c in cards if c not in bad]
    assert not missing, f"{folder.name}: Example lines not in bad.sp: {missing}"
