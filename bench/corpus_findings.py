"""Connectivity findings over the real-world corpus (not a test: run it by hand).

    python bench/corpus_findings.py [--corpus ../shared/corpus] [--show RULE] [--limit N]

Runs every connectivity rule (plus unused-port) over each netlist file of each
repository folder (include paths = that folder), prints a table of findings per rule
per repository, the time taken, and with ``--show RULE`` sample findings for a
hand review.  Skips with a message when the corpus is absent.
"""

from __future__ import annotations

import argparse
import os
import random
import sys
import time
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from lintamp.api import check_file  # noqa: E402
from lintamp.config import Config  # noqa: E402

RULES = ("dangling-net", "no-dc-path", "unbiased-gate", "source-loop", "current-cutset",
         "shorted-device", "body-tie", "unused-port")
NETLIST_ENDINGS = (".cir", ".sp", ".net", ".spi", ".spice", ".ckt", ".cdl", ".scs", ".sub")


def run(corpus: Path):
    table: dict[str, Counter] = {}
    samples = []
    errors = []
    files = 0
    start = time.perf_counter()
    config = Config()
    for repo in sorted(p for p in corpus.iterdir() if p.is_dir()):
        counts = table.setdefault(repo.name, Counter())
        for path in sorted(repo.rglob("*")):
            if not path.is_file() or path.suffix.lower() not in NETLIST_ENDINGS:
                continue
            files += 1
            try:
                result = check_file(path, config, include_paths=[repo])
            except Exception as exc:  # a crash is a bug to report, not a reason to stop
                errors.append(f"{path}: {type(exc).__name__}: {exc}")
                continue
            errors.extend(result.internal_errors)
            for f in result.findings:
                if f.rule in RULES:
                    counts[f.rule] += 1
                    samples.append((repo.name, f))
    return table, samples, errors, files, time.perf_counter() - start


def main(argv=None) -> int:
    parser = argparse.ArgumentParser()
    parser.add_argument("--corpus", default=str(ROOT.parent / "shared" / "corpus"))
    parser.add_argument("--show", action="append", default=[])
    parser.add_argument("--limit", type=int, default=10)
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args(argv)
    corpus = Path(args.corpus)
    if not corpus.is_dir():
        print(f"corpus not found at {corpus}; nothing to do")
        return 0
    table, samples, errors, files, seconds = run(corpus)
    width = max(len(r) for r in table) if table else 10
    print(f"{'repository':<{width}} " + " ".join(f"{r[:14]:>14}" for r in RULES))
    for repo, counts in table.items():
        print(f"{repo:<{width}} " + " ".join(f"{counts[r]:>14}" for r in RULES))
    total = Counter()
    for counts in table.values():
        total.update(counts)
    print(f"{'total':<{width}} " + " ".join(f"{total[r]:>14}" for r in RULES))
    print(f"{files} files in {seconds:.1f} s; {len(errors)} internal errors")
    for e in errors[:10]:
        print("  " + e)
    rng = random.Random(args.seed)
    for rule in args.show:
        chosen = [s for s in samples if s[1].rule == rule]
        rng.shuffle(chosen)
        print(f"\n== {rule}: {len(chosen)} findings, {min(args.limit, len(chosen))} shown")
        for repo, f in chosen[:args.limit]:
            loc = f.location
            print(f"- {os.path.relpath(loc.path) if os.path.isabs(loc.path) else loc.path}:"
                  f"{loc.line} [{f.cell or 'top'}] {f.subject}: {f.message}")
            for step in f.explanation[:3]:
                print(f"      {step[:200]}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
