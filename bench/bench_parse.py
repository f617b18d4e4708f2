"""Read + parse speed and memory of flat netlists, for one or more source trees.

Each run is a fresh process that only reads and parses (``parse_file``: no
elaboration, no rules), with the cyclic GC off as ``lintamp check`` has it, so the
numbers are the reader's and parser's own: wall and CPU seconds, peak RSS of the
process, and the bytes still held per element once parsing is done (tracemalloc is
not used: it slows the run down several times).  Median of ``--runs``; the machine
is noisy (CPU seconds less so than wall), so compare medians, never single runs.

    python bench/bench_parse.py [--sizes 100000 1000000] [--runs 5] [--tree before=/tmp/base]

``--tree LABEL=PATH`` adds a source tree to compare with (for example a
``git archive`` of the commit before a change); this checkout is always measured,
as ``this``.  Netlists come from :func:`generate.flat` (seeded, the same every run).
"""

from __future__ import annotations

import argparse
import json
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from generate import flat, write  # noqa: E402

CHILD = r"""
import gc, json, resource, sys, time
sys.path.insert(0, sys.argv[1])
from pathlib import Path
from lintamp.netlist.parser import parse_file
from lintamp.netlist.reader import ReadOptions
def rss():
    with open("/proc/self/statm") as f:
        return int(f.read().split()[1]) * resource.getpagesize()
path = Path(sys.argv[2])
before = rss()
gc.disable()  # as lintamp check does around a whole file (lintamp.gcpause)
t0 = time.perf_counter()
c0 = time.process_time()
netlist = parse_file(path, ReadOptions(root=path.parent))
t1 = time.perf_counter()
c1 = time.process_time()
gc.enable()
gc.collect()
held = rss() - before
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
print(json.dumps({"parse_s": t1 - t0, "cpu_s": c1 - c0, "peak_b": peak, "held_b": held,
                  "elements": len(netlist.top.elements), "diagnostics": len(netlist.diagnostics)}))
"""


def run(tree: Path, path: Path) -> dict:
    out = subprocess.run([sys.executable, "-c", CHILD, str(tree), str(path)],
                         capture_output=True, text=True, check=True)
    return json.loads(out.stdout)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--sizes", type=int, nargs="+", default=[100_000, 1_000_000])
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--tree", action="append", default=[], metavar="LABEL=PATH",
                    help="another source tree to measure (repeatable)")
    args = ap.parse_args()
    trees = [tuple(t.split("=", 1)) for t in args.tree] + [("this", str(HERE.parent))]
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in args.sizes:
            path = write(Path(tmp) / f"flat_{n}.sp", flat(n))
            # interleave the trees run by run, so that a slow spell of the machine
            # hits each of them alike
            runs: dict[str, list[dict]] = {label: [] for label, _ in trees}
            for _ in range(args.runs):
                for label, tree in trees:
                    runs[label].append(run(Path(tree), path))
            for label, _ in trees:
                got = runs[label]
                rows.append((n, label, statistics.median(r["parse_s"] for r in got),
                             statistics.median(r["cpu_s"] for r in got),
                             statistics.median(r["peak_b"] for r in got),
                             statistics.median(r["held_b"] for r in got),
                             got[0]["elements"], got[0]["diagnostics"]))
    print(f"{'elements':>10} {'tree':>8} {'wall s':>7} {'cpu s':>6} {'peak MB':>8} "
          f"{'held MB':>8} {'B/elem':>7} {'parsed':>8} {'diags':>5}")
    for n, label, wall, cpu, peak, held, elements, diags in rows:
        print(f"{n:>10} {label:>8} {wall:7.2f} {cpu:6.2f} {peak / 1e6:8.0f} {held / 1e6:8.0f} "
              f"{held / n:7.0f} {elements:>8} {diags:>5}")


if __name__ == "__main__":
    main()
