"""Every real netlist in ../shared/corpus is read without a traceback, and the files
ngspice-39 accepts (NGSPICE_ACCEPTS.tsv, made by running ngspice-39 on each file)
produce no parse-error.  Skipped, with a message, where the corpus is absent.

The corpus-wide passes live here, in one pass per corpus repository: the same pass
finds the files where the parser takes runs of plain cards and checks that they parse
the same without runs (the line-by-line path is the definition the runs must keep)."""

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


def _snapshot(netlist):
    return ([(c.name, [(e, e.location, dict(e.params)) for e in c.elements])
             for c in netlist.all_cells()],
            [(d.rule, d.location, d.message) for d in netlist.diagnostics], netlist.title)


def _runs_taken_spy(patch) -> list[int]:
    from lintamp.netlist.parser import ParseContext
    taken: list[int] = []
    original = ParseContext.take_run

    def spy(self, text, path, first_line, count):
        taken.append(count)
        return original(self, text, path, first_line, count)
    patch.setattr(ParseContext, "take_run", spy)
    return taken


def _same_without_runs(path: Path, repo: Path) -> bool:
    from lintamp.netlist.parser import ParseContext, parse_file
    from lintamp.netlist.reader import ReadOptions
    opts = ReadOptions(root=repo, include_paths=(repo,))
    fast = _snapshot(parse_file(path, opts))
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(ParseContext, "runs", None)
        slow = _snapshot(parse_file(path, opts))
    return fast == slow


FILES_WITH_RUNS: dict[str, int] = {}  # repo -> files where runs were taken (filled below)


@pytest.mark.parametrize("repo", repos() or [None], ids=lambda r: r.name if r else "absent")
def test_corpus_reads_without_a_crash(repo, ngspice_accepts):
    if repo is None:
        pytest.skip(f"the shared corpus is not at {CORPUS}")
    config = Config()
    unexpected = []
    crashes = []
    count = 0
    differ = []
    with_runs = 0
    with pytest.MonkeyPatch.context() as patch:
        taken = _runs_taken_spy(patch)
        for path in files_of(repo):
            count += 1
            before = len(taken)
            result = check_file(path, config, include_paths=[repo])  # an exception fails the test
            if len(taken) > before:  # runs were taken: the same statements without them
                with_runs += 1
                patch.undo()
                if not _same_without_runs(path, repo):
                    differ.append(str(path))
                taken = _runs_taken_spy(patch)
            crashes.extend(result.internal_errors)
            key = (repo.name, path.relative_to(repo).as_posix())
            if key in ngspice_accepts and key not in KNOWN_PARSE_ERRORS:
                unexpected.extend(f"{f.location}: {f.message}" for f in result.findings
                                  if f.rule == "parse-error")
    FILES_WITH_RUNS[repo.name] = with_runs
    assert count > 0
    assert crashes == []
    assert unexpected == [], "\n".join(unexpected[:20])
    assert differ == [], differ[:20]


def test_runs_are_taken_across_the_corpus():
    # about 850 files of 6,300 take runs; the comparison above must have met many of them
    names = [r.name for r in repos()]
    if not names:
        pytest.skip(f"the shared corpus is not at {CORPUS}")
    if set(FILES_WITH_RUNS) != set(names):
        pytest.skip("needs the whole corpus pass of this module (run the module, not one case)")
    assert sum(FILES_WITH_RUNS.values()) > 100
