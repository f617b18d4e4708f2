"""A small cell's plain-list connectivity gives the findings the numpy path gives.

Cells below ``SMALL_TABLE_TERMINALS`` terminals keep their terminal tables as lists
and find DC components with a union-find; bigger cells use numpy arrays and a
sparse connected-components call.  Both must say the same thing about every deck:
each fixture, sample and a slice of the real corpus is checked twice, once with
every cell forced onto each path (common practice: two implementations of one
function are held to each other).
"""

from __future__ import annotations

from pathlib import Path

import pytest

import lintamp.circuit.design as design_module
from lintamp.api import check_text
from lintamp.config import Config

REPO = Path(__file__).resolve().parent.parent
CORPUS = REPO.parent / "shared" / "corpus"
CONNECTIVITY = ("connectivity", "references", "syntax")
DECKS = sorted((REPO / "tests" / "fixtures" / "rules").glob("*/*.sp")) + sorted((REPO / "samples").glob("*.sp"))


def _connectivity_findings(path: Path, threshold: int, monkeypatch) -> list[tuple]:
    monkeypatch.setattr(design_module, "SMALL_TABLE_TERMINALS", threshold)
    report = check_text(path.read_text(encoding="utf-8", errors="replace"), str(path),
                        Config(only=CONNECTIVITY))
    return sorted((f.rule, f.subject, f.location.line, f.message, f.nets, f.elements, f.explanation)
                  for f in report.findings)


@pytest.mark.parametrize("path", DECKS, ids=[f"{p.parent.name}/{p.name}" for p in DECKS])
def test_fixture_same_on_both_paths(path, monkeypatch):
    assert _connectivity_findings(path, 0, monkeypatch) == \
        _connectivity_findings(path, 10 ** 9, monkeypatch)


def test_corpus_same_on_both_paths(monkeypatch):
    if not CORPUS.is_dir():
        pytest.skip(f"corpus not found at {CORPUS} (checked out beside the repo as ../shared/corpus)")
    files = sorted(p for p in CORPUS.rglob("*") if p.suffix.lower() in (".sp", ".cir", ".spice")
                   and p.is_file() and p.stat().st_size < 200_000)
    for path in files[::max(1, len(files) // 40)][:40]:
        assert _connectivity_findings(path, 0, monkeypatch) == \
            _connectivity_findings(path, 10 ** 9, monkeypatch), path
