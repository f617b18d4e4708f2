"""Speed and memory at scale: every figure of the performance targets, one table.

Each lintamp figure is the median of ``--runs`` runs, each in a fresh process (so the
peak memory is that process's own, read with ``os.wait4``).  Beside it: the target,
and the baselines measured in the same run on the same file -- ngspice-39 reading it
in batch mode (no analysis; when ``ngspice`` is installed), run in turn with lintamp so
that the ratio is the median of side-by-side ratios, and plain Python reading the file
and splitting its lines.

Netlists come from ``bench/generate.py`` (seeded, scenarios of our own): ``flat(n)``
(70 % R, 25 % C, 5 % MOS) and ``hierarchical(levels, fanout)`` (a 50-device cell
instantiated fanout**levels times).

    python bench/bench_scale.py [--runs 3] [--sizes 100000 1000000] [--quick]

``--quick`` uses 20k/200k elements and one run (a smoke test, not the targets).
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

from generate import flat, hierarchical, write  # noqa: E402

# the report goes to stdout, which timed() discards (check -o refuses a device)
CHECK = ["-m", "lintamp", "check", "--no-config", "--format", "json"]
CONNECTIVITY = ["--only", "connectivity,references,syntax"]


def timed(argv: list[str], cwd: Path) -> tuple[float, int]:
    """Wall seconds and peak resident bytes of one fresh process."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    # an installed lintamp runs from compiled bytecode; without it every run recompiles
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    start = time.perf_counter()
    proc = subprocess.Popen(argv, cwd=cwd, env=env, stdout=subprocess.DEVNULL,
                            stderr=subprocess.DEVNULL)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - start
    proc.returncode = os.waitstatus_to_exitcode(status)
    if proc.returncode not in (0, 1):
        raise RuntimeError(f"{' '.join(argv)} exited with {proc.returncode}")
    return wall, usage.ru_maxrss * 1024


def median_run(argv, cwd, runs):
    results = [timed(argv, cwd) for _ in range(runs)]
    return statistics.median(r[0] for r in results), statistics.median(r[1] for r in results)


def paired(argv: list[str], path: Path, runs: int):
    """lintamp and ngspice run in turn on ``path``, ``runs`` times: the medians of
    each one's wall time and peak memory, and the median of the ratios of the two in
    each turn (on a shared machine whose speed drifts from minute to minute, a ratio
    taken side by side holds better than one of two medians taken minutes apart).
    Without ngspice: lintamp's figures and None."""
    if not shutil.which("ngspice"):
        return median_run(argv, path.parent, runs), None, None
    ours, theirs = [], []
    for _ in range(runs):
        ours.append(timed(argv, path.parent))
        theirs.append(timed(["ngspice", "-b", str(path)], path.parent))
    ratio = statistics.median(a[0] / b[0] for a, b in zip(ours, theirs))
    medians = [(statistics.median(r[0] for r in rs), statistics.median(r[1] for r in rs))
               for rs in (ours, theirs)]
    return medians[0], medians[1], ratio


def plain_python(path: Path, runs: int) -> float:
    code = f"open({str(path)!r}, encoding='utf-8').read().split('\\n')"
    return median_run([sys.executable, "-c", code], path.parent, runs)[0]


def print_table(header: tuple, rows: list[tuple]) -> None:
    """The rows in columns as wide as their widest cell, under the header."""
    widths = [max(len(str(row[i])) for row in rows + [header]) for i in range(len(header))]
    for row in [header, tuple("-" * w for w in widths), *rows]:
        print("  ".join(str(c).ljust(w) for c, w in zip(row, widths)).rstrip())


def fmt_s(v):
    return "-" if v is None else f"{v:.2f} s"


def fmt_mb(v):
    return "-" if v is None else f"{v / 1e6:.0f} MB"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--sizes", type=int, nargs=2, default=[100_000, 1_000_000],
                    metavar=("SMALL", "BIG"))
    ap.add_argument("--levels", type=int, default=4)
    ap.add_argument("--fanout", type=int, default=32)
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--no-impedance", action="store_true")
    args = ap.parse_args(argv)
    if args.quick:
        args.runs, args.sizes, args.levels, args.fanout = 1, [20_000, 200_000], 3, 16
    py = sys.executable
    timed([py, "-m", "lintamp", "--version"], ROOT)  # compile the bytecode once, as an install does
    rows = []  # (figure, measured, target, ngspice, plain python, ratio)
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        small_n, big_n = args.sizes
        measured = {}
        for n in (small_n, big_n):
            path = write(tmp / f"flat_{n}.sp", flat(n))
            (wall, peak), ng, side_by_side = paired(
                [py, *CHECK, "--no-cache", *CONNECTIVITY, path.name], path, args.runs)
            wall_all, peak_all = median_run([py, *CHECK, "--no-cache", path.name], tmp, args.runs)
            split_s = plain_python(path, args.runs)
            measured[n] = (wall, peak)
            ratio = f"{side_by_side:.2f} x ngspice" if ng else "-"
            rows.append((f"flat {n:,}: check, connectivity rules", fmt_s(wall),
                         "<= ngspice" if n == big_n else "", fmt_s(ng and ng[0]), fmt_s(split_s), ratio))
            rows.append((f"flat {n:,}: peak memory", f"{fmt_mb(peak)} ({peak / n:.0f} B/elem)",
                         "<= 500 MB" if n == big_n else "", fmt_mb(ng and ng[1]), "", ""))
            rows.append((f"flat {n:,}: check, every rule", fmt_s(wall_all), "", "", "",
                         f"{fmt_mb(peak_all)} peak"))
        t_ratio = measured[big_n][0] / measured[small_n][0]
        m_ratio = measured[big_n][1] / measured[small_n][1]
        grow = big_n / small_n
        rows.append((f"growth time {big_n:,}/{small_n:,}", f"{t_ratio:.2f}", f"<= {grow * 1.1:.0f}", "", "", ""))
        rows.append((f"growth memory {big_n:,}/{small_n:,}", f"{m_ratio:.2f}", f"<= {grow * 1.1:.0f}", "", "", ""))

        hier = write(tmp / "hier.sp", hierarchical(args.levels, args.fanout))
        instances = args.fanout ** args.levels
        wall, peak = median_run([py, *CHECK, "--no-cache", hier.name], tmp, args.runs)
        rows.append((f"hierarchy: 50-device cell x {instances:,}, every rule", fmt_s(wall), "<= 2 s",
                     "", "", fmt_mb(peak) + " peak"))

        small = tmp / "small"
        small.mkdir()
        shutil.copy(ROOT / "samples" / "bias_block.sp", small / "bias_block.sp")
        shutil.copy(ROOT / "samples" / "models.lib", small / "models.lib")
        cold = median_run([py, *CHECK, "--no-cache", "bias_block.sp"], small, max(3, args.runs))[0]
        cold_conn = median_run([py, *CHECK, "--no-cache", *CONNECTIVITY, "bias_block.sp"], small,
                               max(3, args.runs))[0]
        timed([py, *CHECK, "bias_block.sp"], small)  # fill the cache
        warm = median_run([py, *CHECK, "bias_block.sp"], small, max(3, args.runs))[0]
        start_only = median_run([py, "-c", "pass"], small, max(3, args.runs))[0]
        rows.append(("small cell (samples/bias_block.sp), every rule, cold", fmt_s(cold), "<= 0.3 s",
                     "", "", f"python start {start_only:.2f} s"))
        rows.append(("small cell, connectivity rules, cold", fmt_s(cold_conn), "<= 0.3 s", "", "", ""))
        rows.append(("small cell, warm cache", fmt_s(warm), "<= 0.15 s", "", "", ""))

    if not args.no_impedance:
        from bench_impedance import run as impedance_run
        size = 10_000 if args.quick else 100_000
        r = impedance_run(size, args.runs)
        rows.append((f"impedance: LU + 1000 nodes, {r['nodes']:,} nodes",
                     fmt_s(r["factor_s"] + r["solve1000_s"]), "<= 2 s", "", "",
                     f"LU {r['factor_s']:.2f} s, solves {r['solve1000_s']:.2f} s"))

    print_table(HEADER, rows)
    print(f"\nmedian of {args.runs} run(s), each a fresh process; {os.cpu_count()} cores; "
          f"python {sys.version.split()[0]}")
    return 0


HEADER = ("figure", "lintamp", "target", "ngspice-39 read", "python split", "note")

if __name__ == "__main__":
    raise SystemExit(main())
