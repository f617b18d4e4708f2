"""Speed and memory on decks in the shape layout extractors write, one table.

The decks come from ``bench/extracted_shape.py`` (seeded, a scenario of our own): a
top ``.subckt`` of a few hundred transistors as X cards of wrapper cells per device
geometry, coordinate net names (``a_n29_n1536#``), every wire a long resistor tree
with capacitance to the substrate, dense coupling capacitance, dangling stubs and
floating metal, under a testbench.  For each size: lintamp's connectivity rules
(``--only connectivity,references,syntax``) run in turn with ngspice-39 reading the
deck (batch, no analysis), so that the ratio is the median of side-by-side ratios;
every rule (the impedance rules included: they skip a deck this size today, with a
note); the growth from the small deck to the big one.  Each figure is the median
of ``--runs`` fresh processes, peak memory read with ``os.wait4`` (helpers shared
with ``bench_scale.py``).

The full run also times ngspice-39's ``.op`` on the big deck, once, with ``.option
rshunt`` so that the floating metal leaves no singular matrix; ``--no-op`` leaves it
out.  Its reordering of the matrix dominates: 34 s on the 100k deck (21 s of it
reordering), and the 1M deck did not finish in 40 minutes on the shared 2-core
machine, so past :data:`OP_TIMEOUT_S` the row shows '-'.  Other baselines hook
in through :data:`BASELINES` (a name, and a function of the deck's path giving
``(wall_s, peak_bytes)`` or None).

    python bench/bench_extracted.py [--runs 3] [--sizes 100000 1000000] [--quick] [--no-op]

``--quick`` uses 20k/200k elements and one run, and no ``.op`` (a smoke test).
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

from bench_scale import (CHECK, CONNECTIVITY, fmt_mb, fmt_s, median_run, paired,  # noqa: E402
                         print_table, timed)
from extracted_shape import extracted, write  # noqa: E402

OP_TIMEOUT_S = 1800


def ngspice_op(path: Path):
    """ngspice-39 solving the deck's operating point (``.op``, batch), once: wall
    seconds and peak bytes, or None without ngspice or past :data:`OP_TIMEOUT_S`
    (``timeout`` runs it; ``os.wait4`` counts the peak of the child it waited for)."""
    if not shutil.which("ngspice") or not shutil.which("timeout"):
        return None
    text = path.read_text(encoding="utf-8")
    body, end = text.rsplit(".end", 1)
    deck = path.with_name(path.stem + "_op.sp")
    deck.write_text(body + ".option rshunt=1e12\n.op\n.end" + end, encoding="utf-8")
    try:
        return timed(["timeout", str(OP_TIMEOUT_S), "ngspice", "-b", deck.name], path.parent)
    except RuntimeError:  # timed out (124) or failed
        return None


# name -> function(path of the big deck) -> (wall_s, peak_bytes) or None; run once each
# in the full run.  Add a baseline here (an ngspice .ac at the ports, say).
BASELINES = {"ngspice-39 .op (rshunt 1e12)": ngspice_op}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--sizes", type=int, nargs=2, default=[100_000, 1_000_000],
                    metavar=("SMALL", "BIG"))
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--no-op", action="store_true", help="leave out the baselines of BASELINES")
    args = ap.parse_args(argv)
    if args.quick:
        args.runs, args.sizes, args.no_op = 1, [20_000, 200_000], True
    py = sys.executable
    timed([py, "-m", "lintamp", "--version"], ROOT)  # compile the bytecode once, as an install does
    rows = []  # (figure, lintamp, target, ngspice-39 read, note)
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        small_n, big_n = args.sizes
        conn, every = {}, {}
        for n in (small_n, big_n):
            path = write(tmp / f"extracted_{n}.sp", extracted(n, seed=args.seed))
            (wall, peak), ng, side_by_side = paired(
                [py, *CHECK, "--no-cache", *CONNECTIVITY, path.name], path, args.runs)
            wall_all, peak_all = median_run([py, *CHECK, "--no-cache", path.name], tmp, args.runs)
            conn[n], every[n] = (wall, peak), (wall_all, peak_all)
            big = n == big_n
            rows.append((f"extracted {n:,}: connectivity rules", fmt_s(wall),
                         "<= 1.0 x ngspice" if big else "", fmt_s(ng and ng[0]),
                         f"{side_by_side:.2f} x ngspice, side by side" if ng else ""))
            rows.append((f"extracted {n:,}: peak memory", f"{fmt_mb(peak)} ({peak / n:.0f} B/elem)",
                         "<= 500 MB" if big else "", fmt_mb(ng and ng[1]), ""))
            rows.append((f"extracted {n:,}: every rule", fmt_s(wall_all),
                         "<= 2 x connectivity" if big else "", "",
                         f"{wall_all / wall:.2f} x connectivity, {fmt_mb(peak_all)} peak"))
            if big and not args.no_op:
                for name, baseline in BASELINES.items():
                    got = baseline(path)
                    rows.append((f"extracted {n:,}: {name}", "", "", "",
                                 "-" if got is None else
                                 f"{fmt_s(got[0])}, {fmt_mb(got[1])} peak; every rule "
                                 f"{wall_all / got[0]:.3f} x (target <= 0.1)"))
        grow = big_n / small_n
        for label, figures in (("connectivity", conn), ("every rule", every)):
            t_ratio = figures[big_n][0] / figures[small_n][0]
            m_ratio = figures[big_n][1] / figures[small_n][1]
            rows.append((f"growth {big_n:,}/{small_n:,}, {label}: time / memory",
                         f"{t_ratio:.2f} / {m_ratio:.2f}", f"<= {grow * 1.1:.0f}", "", ""))

    print_table(("figure", "lintamp", "target", "ngspice-39 read", "note"), rows)
    print(f"\nmedian of {args.runs} run(s), each a fresh process; {os.cpu_count()} cores; "
          f"python {sys.version.split()[0]}; deck seed {args.seed}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
