"""Reading speed and memory: parse + elaborate flat netlists of growing size.

Prints a table (median of several runs, each in a fresh process so peak memory is
the process's own): elements, seconds, peak MB, bytes per element, and the ratio to
the 100k run (linear growth means time(1M)/time(100k) near 10).  With ngspice
installed it also times ngspice reading the same file (no analysis).

    python bench/bench_read.py [--sizes 100000 1000000] [--runs 3]
"""

from __future__ import annotations

import argparse
import json
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))
sys.path.insert(0, str(HERE))

from generate import flat, write  # noqa: E402

CHILD = r"""
import json, resource, sys, time
sys.path.insert(0, sys.argv[1])
from pathlib import Path
t0 = time.perf_counter()
from lintamp.netlist.parser import parse_file
from lintamp.netlist.reader import ReadOptions
from lintamp.circuit.design import elaborate
netlist = parse_file(Path(sys.argv[2]), ReadOptions(root=Path(sys.argv[2]).parent))
t1 = time.perf_counter()
design = elaborate(netlist)
nets = len(design.top.net_terminals)
t2 = time.perf_counter()
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
print(json.dumps({"parse_s": t1 - t0, "elaborate_s": t2 - t1, "peak_b": peak, "nets": nets}))
"""


def lintamp_run(path: Path) -> dict:
    out = subprocess.run([sys.executable, "-c", CHILD, str(HERE.parent), str(path)],
                         capture_output=True, text=True, check=True)
    return json.loads(out.stdout)


def ngspice_run(path: Path) -> float | None:
    if not shutil.which("ngspice"):
        return None
    t0 = time.perf_counter()
    subprocess.run(["ngspice", "-b", str(path)], capture_output=True, cwd=path.parent)
    return time.perf_counter() - t0


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--sizes", type=int, nargs="+", default=[100_000, 1_000_000])
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--no-ngspice", action="store_true")
    args = ap.parse_args()
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in args.sizes:
            path = write(Path(tmp) / f"flat_{n}.sp", flat(n))
            runs = [lintamp_run(path) for _ in range(args.runs)]
            total = statistics.median(r["parse_s"] + r["elaborate_s"] for r in runs)
            parse = statistics.median(r["parse_s"] for r in runs)
            peak = statistics.median(r["peak_b"] for r in runs)
            ng = None if args.no_ngspice else statistics.median(
                [t for t in (ngspice_run(path) for _ in range(args.runs)) if t is not None] or [float("nan")])
            rows.append((n, parse, total, peak, ng))
    base = rows[0]
    print(f"{'elements':>10} {'parse s':>8} {'+elab s':>8} {'peak MB':>8} {'B/elem':>7} "
          f"{'t/t0':>6} {'mem/m0':>7} {'ngspice s':>9} {'vs ngspice':>10}")
    for n, parse, total, peak, ng in rows:
        ratio_ng = f"{total / ng:10.2f}" if ng and ng == ng else f"{'-':>10}"
        ng_text = f"{ng:9.2f}" if ng and ng == ng else f"{'-':>9}"
        print(f"{n:>10} {parse:8.2f} {total:8.2f} {peak / 1e6:8.0f} {peak / n:7.0f} "
              f"{total / base[2]:6.2f} {peak / base[3]:7.2f} {ng_text} {ratio_ng}")


if __name__ == "__main__":
    main()
