"""Growth of the check time with deck size, shape by shape: finds quadratic steps.

For every shape of :mod:`shapes` (one big island, one huge supply or body net, a
long ladder, many cells, a deep hierarchy ...) the deck is checked at two sizes in
fresh processes, and the table prints each time (the command's own, after its
imports) and the ratio.  A step linear in the deck grows by the size ratio (4 by
default, about 4.5 with a sort); a ratio past ``--limit`` (default 6) is marked
QUADRATIC?  and deserves a profile.  Median of ``--runs`` runs.

    python bench/bench_growth.py [--small 20000] [--factor 4] [--runs 3] [--every-rule]
        [--shapes floating_enable,long_ladder]
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

from shapes import SHAPES  # noqa: E402

RUNNER = """
import json, os, sys, time
from lintamp.cli import main
start = time.perf_counter()
code = main(sys.argv[1:])
print(json.dumps({"seconds": time.perf_counter() - start, "exit": code}))
"""


def timed_check(path: Path, every_rule: bool) -> float:
    argv = ["check", "--no-config", "--no-cache", "--format", "json", "-o", os.devnull]
    if not every_rule:
        argv += ["--only", "connectivity,references,syntax"]
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    env.pop("PYTHONDONTWRITEBYTECODE", None)  # as an installed lintamp runs
    out = subprocess.run([sys.executable, "-c", RUNNER, *argv, str(path)], cwd=path.parent, env=env,
                         capture_output=True, text=True, timeout=3600)
    got = json.loads(out.stdout.strip().splitlines()[-1])
    if got["exit"] not in (0, 1):
        raise RuntimeError(f"{path}: exit {got['exit']}: {out.stderr[-2000:]}")
    return got["seconds"]


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--small", type=int, default=20000, help="elements in the smaller deck")
    ap.add_argument("--factor", type=int, default=4, help="size ratio of the larger deck")
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--limit", type=float, default=6.0, help="growth ratio that is marked")
    ap.add_argument("--every-rule", action="store_true", help="every rule, not only connectivity")
    ap.add_argument("--shapes", default=",".join(SHAPES))
    args = ap.parse_args(argv)
    big = args.small * args.factor
    print(f"{'shape':22} {args.small:>9,} el {big:>9,} el  growth (size x{args.factor})")
    marked = 0
    with tempfile.TemporaryDirectory() as tmp:
        for name in args.shapes.split(","):
            shape = SHAPES[name]
            seconds = []
            for n in (args.small, big):
                path = Path(tmp) / f"{name}_{n}.sp"
                path.write_text(shape(n), encoding="utf-8")
                seconds.append(statistics.median(timed_check(path, args.every_rule)
                                                 for _ in range(args.runs)))
            ratio = seconds[1] / max(seconds[0], 1e-9)
            flag = "  QUADRATIC?" if ratio > args.limit else ""
            marked += bool(flag)
            print(f"{name:22} {seconds[0]:>10.2f} s {seconds[1]:>10.2f} s  {ratio:6.1f}{flag}", flush=True)
    return 1 if marked else 0


if __name__ == "__main__":
    raise SystemExit(main())
