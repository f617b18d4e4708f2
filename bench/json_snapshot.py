"""A digest of `lintamp check --format json` per file, to show that a refactoring leaves
the output byte for byte as it was (not a test: run it by hand before and after).

    python bench/json_snapshot.py OUT_DIR [--groups samples fixtures deck100k corpus deck1m]
                                  [--corpus ../shared/corpus] [--decks /tmp/lintamp-decks]
    diff -r BEFORE_DIR AFTER_DIR

Every rule runs (``--isolated``: the default selection, which is all of them; no cache).
Each file is checked on its own, in this process, through ``lintamp.cli.main`` with the
report on stdout; OUT_DIR/<group>.tsv gets one line per file: the path, the SHA-256 of
stdout, of stderr, and the exit code.  Corpus files are checked with their repository
folder as the include path, as tests/test_corpus.py does.  The bench decks come from
``bench/generate.flat`` (seeded), written once into ``--decks``.  Run it from the same
folder before and after: the report's paths are relative to the current folder.
"""

from __future__ import annotations

import argparse
import contextlib
import hashlib
import io
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(HERE))

from generate import flat  # noqa: E402

from lintamp.cli import main as lintamp_main  # noqa: E402

SKIP_NAMES = {"LICENSE", "NOTICE", "COPYING", "README.md", "SOURCES.md"}
GROUPS = ("samples", "fixtures", "deck100k", "corpus", "deck1m")


def digest_of(argv: list[str]) -> tuple[str, str, int]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = lintamp_main(argv)
        except SystemExit as exc:  # argparse
            code = exc.code if isinstance(exc.code, int) else 2
    return (hashlib.sha256(out.getvalue().encode()).hexdigest(),
            hashlib.sha256(err.getvalue().encode()).hexdigest(), code)


def check_argv(path: Path, include: Path | None) -> list[str]:
    argv = ["check", "--no-config", "--no-cache", "--format", "json", "--fail-on", "never"]
    if include is not None:
        argv += ["--include-path", str(include)]
    return argv + [str(path)]


def jobs_of(group: str, corpus: Path, decks: Path):
    """(label, path, include folder) for each file of ``group``."""
    if group == "samples":
        for p in sorted((ROOT / "samples").glob("*.sp")):
            yield p.relative_to(ROOT).as_posix(), p.relative_to(ROOT), None
    elif group == "fixtures":
        for p in sorted((ROOT / "tests" / "fixtures").rglob("*")):
            if p.is_file():
                yield p.relative_to(ROOT).as_posix(), p.relative_to(ROOT), None
    elif group in ("deck100k", "deck1m"):
        n = 100_000 if group == "deck100k" else 1_000_000
        decks.mkdir(parents=True, exist_ok=True)
        path = decks / f"flat_{n}.sp"
        if not path.is_file():
            path.write_text(flat(n), encoding="utf-8")
        yield path.name, path, None
    elif group == "corpus":
        if not corpus.is_dir():
            print(f"the corpus is not at {corpus}: skipped", file=sys.stderr)
            return
        for repo in sorted(p for p in corpus.iterdir() if p.is_dir()):
            for p in sorted(repo.rglob("*")):
                if p.is_file() and p.name not in SKIP_NAMES and p.suffix != ".tsv":
                    yield p.relative_to(corpus).as_posix(), p, repo


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("out", type=Path)
    parser.add_argument("--groups", nargs="+", default=list(GROUPS[:4]), choices=GROUPS)
    parser.add_argument("--corpus", type=Path, default=ROOT.parent / "shared" / "corpus")
    parser.add_argument("--decks", type=Path, default=Path("/tmp/lintamp-decks"))
    args = parser.parse_args(argv)
    args.out.mkdir(parents=True, exist_ok=True)
    corpus = Path(args.corpus)
    for group in args.groups:
        start = time.perf_counter()
        lines = []
        for label, path, include in jobs_of(group, corpus, args.decks):
            out_sha, err_sha, code = digest_of(check_argv(path, include))
            lines.append(f"{label}\t{out_sha}\t{err_sha}\t{code}\n")
        (args.out / f"{group}.tsv").write_text("".join(lines), encoding="utf-8")
        print(f"{group}: {len(lines)} files, {time.perf_counter() - start:.1f} s", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
