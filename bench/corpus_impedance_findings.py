"""Run the four impedance rules over the shared corpus and list every finding.

Usage::

    python bench/corpus_impedance_findings.py [--corpus ../shared/corpus] [--jobs 2]
        [--timeout 60] [--limit N] [--json out.json]

Include paths are each repository's own folder.  A file that takes longer than
``--timeout`` seconds is listed as timed out (a bench target, not a test).  The
summary counts files, files with trusted numbers, info findings (no numbers,
with the reason) and the real findings per rule.  Skips with a message when
the corpus is absent.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from collections import Counter
from concurrent.futures import ProcessPoolExecutor, TimeoutError as FutureTimeout
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO))

RULES = ("high-z-current-input", "unbuffered-output", "undefined-dc-level", "device-region")
SKIP_NAMES = {"LICENSE", "NOTICE", "COPYING", "README.md", "SOURCES.md"}


def _one(args):
    path, repo = args
    from lintamp.api import check_file
    from lintamp.config import Config, with_overrides

    config = with_overrides(Config(), only=RULES)
    start = time.perf_counter()
    result = check_file(Path(path), config, include_paths=[Path(repo)])
    elapsed = time.perf_counter() - start
    return {"path": path, "seconds": elapsed, "errors": result.internal_errors,
            "findings": [f.to_json() for f in result.findings if f.rule in RULES]}


def files(corpus: Path) -> list[tuple[str, str]]:
    out = []
    for repo in sorted(p for p in corpus.iterdir() if p.is_dir()):
        for path in sorted(repo.rglob("*")):
            if path.is_file() and path.name not in SKIP_NAMES and path.suffix != ".tsv":
                out.append((str(path), str(repo)))
    return out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--corpus", default=str(REPO.parent / "shared" / "corpus"))
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--timeout", type=float, default=60.0)
    ap.add_argument("--limit", type=int, default=0)
    ap.add_argument("--json", default="")
    args = ap.parse_args(argv)
    corpus = Path(args.corpus)
    if not corpus.is_dir():
        print(f"skipped: no corpus at {corpus}")
        return 0
    todo = files(corpus)
    if args.limit:
        todo = todo[: args.limit]
    results, timed_out, crashed = [], [], []
    start = time.perf_counter()
    with ProcessPoolExecutor(max_workers=args.jobs) as pool:
        futures = [(item, pool.submit(_one, item)) for item in todo]
        for item, fut in futures:
            try:
                results.append(fut.result(timeout=args.timeout))
            except FutureTimeout:
                timed_out.append(item[0])
            except Exception as exc:  # a crash is what this bench is here to catch
                crashed.append(f"{item[0]}: {type(exc).__name__}: {exc}")
    wall = time.perf_counter() - start
    counts, reasons = Counter(), Counter()
    for res in results:
        for f in res["findings"]:
            if f["subject"] == "(operating point)":
                counts["info (no numbers)"] += 1
                reasons[f["values"].get("reason", "").split(":")[0]] += 1
                continue
            counts[f["rule"] + (" (info: band only from .ac)" if f["severity"] == "info" else "")] += 1
            rel = Path(f["path"]).as_posix()
            print(f"{rel}:{f['line']}: {f['rule']} {f['cell'] or '(top)'}/{f['subject']}: {f['message']}")
        crashed.extend(res["errors"])
    print()
    print(f"files: {len(todo)} in {wall:.1f} s wall ({args.jobs} jobs); "
          f"slowest {max((r['seconds'] for r in results), default=0):.2f} s")
    for key, n in sorted(counts.items()):
        print(f"  {key}: {n}")
    for key, n in reasons.most_common():
        print(f"    no numbers because {key}: {n}")
    print(f"  timed out (> {args.timeout:g} s): {len(timed_out)}")
    for t in timed_out:
        print(f"    {t}")
    print(f"  crashes / internal errors: {len(crashed)}")
    for c in crashed:
        print(f"    {c}")
    if args.json:
        Path(args.json).write_text(json.dumps({"results": results, "timed_out": timed_out,
                                               "crashed": crashed}, indent=1))
    return 1 if crashed else 0


if __name__ == "__main__":
    sys.exit(main())
