"""Every real netlist in ../shared/corpus is read without a traceback, and the files
ngspice-39 accepts (NGSPICE_ACCEPTS.tsv, made by running ngspice-39 on each file)
produce no parse-error.  Skipped, with a message, where the corpus is absent."""

from __future__ import annotations

from pathlib import Path

import pytest

from lintamp.api import check_file
from lintamp.config import Config

CORPUS = Path(__file__).resolve().parent.parent.parent / "shared" / "corpus"
SKIP_NAMES = {"LICENSE", "NOTICE", "COPYING", "README.md", "SOURCES.md"}

# Known exceptions: files ngspice accepts that lintamp still reports a parse-error in,
# each with its reason.  (Empty: keep it so, or say why here.)
KNOWN_PARSE_ERRORS: dict[tuple[str, str], str] = {}


def repos() -> list[Path]:
    if not CORPUS.is_dir():
        return []
    return sorted(p for p in CORPUS.iterdir() if p.is_dir())


def accepted() -> set[tuple[str, str]]:
    listing = CORPUS / "NGSPICE_ACCEPTS.tsv"
    if not listing.is_file():
        return set()
    return {tuple(line.rstrip("\n").split("\t")[:2]) for line in listing.open(encoding="utf-8")
            if "\t" in line}


def files_of(repo: Path) -> list[Path]:
    return sorted(p for p in repo.rglob("*")
                  if p.is_file() and p.name not in SKIP_NAMES and p.suffix != ".tsv")


@pytest.fixture(scope="module")
def ngspice_accepts():
    return accepted()


@pytest.mark.parametrize("repo", repos() or [None], ids=lambda r: r.name if r else "absent")
def test_corpus_reads_without_a_crash(repo, ngspice_accepts):
    if repo is None:
        pytest.skip(f"the shared corpus is not at {CORPUS}")
    config = Config()
    unexpected = []
    crashes = []
    count = 0
    for path in files_of(repo):
        count += 1
        result = check_file(path, config, include_paths=[repo])  # an exception fails the test
        crashes.extend(result.internal_errors)
        key = (repo.name, path.relative_to(repo).as_posix())
        if key in ngspice_accepts and key not in KNOWN_PARSE_ERRORS:
            unexpected.extend(f"{f.location}: {f.message}" for f in result.findings
                              if f.rule == "parse-error")
    assert count > 0
    assert crashes == []
    assert unexpected == [], "\n".join(unexpected[:20])
