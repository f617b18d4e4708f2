"""Every rule, the impedance rules included, on decks in the shape layout extractors write.

Decks from ``bench/extracted_shape.py`` (seeded; a few hundred transistors in wrapper cells,
resistor trees per wire, local coupling capacitance, stubs, floating metal) around the
common-gate core, at each size.  Each figure is a fresh process running from compiled
bytecode (``python3 -m lintamp check --no-cache``), side by side in one run:

* every rule, with the impedance rules' element limit lifted to the deck's size (a bench
  override: past ``MAX_ELEMENTS`` the rules otherwise skip with a one-line note);
* connectivity rules only (``--only connectivity,references,syntax``);
* ngspice-39 ``.op`` on the same deck (the full run only: minutes on 1M elements).

Peak memory is the child's maximum resident set.  Targets (issue 24): every rule <= 2 x the
connectivity-only time and <= 0.1 x ngspice's ``.op``; growth of the largest size over the
one ten times smaller <= 11 in time and memory.

Usage: ``python3 bench/bench_extracted_impedance.py [--sizes 100000 1000000] [--quick]
[--timeout 1800]``; ``--quick`` runs 10k and 100k without ngspice.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "bench"))

from extracted_shape import extracted  # noqa: E402

CONNECTIVITY = "connectivity,references,syntax"
# every rule with the element limit of the impedance rules at the deck's size
EVERY_RULE = ("import sys; import lintamp.rulekit.impedance_numbers as n; n.MAX_ELEMENTS = 10**9; "
              "from lintamp.cli import main; sys.exit(main(sys.argv[1:]))")


def _env():
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)  # a user's install runs from .pyc files
    env["PYTHONPATH"] = str(ROOT)
    return env


def run_child(argv: list[str], timeout_s: float) -> tuple[float | None, float | None, str]:
    """(seconds, peak MB, last line of output) of one fresh process; None on a timeout.
    The peak is the child's maximum resident set as GNU time reports it."""
    start = time.perf_counter()
    try:
        proc = subprocess.run(["/usr/bin/time", "-f", "peak-kb %M", *argv], capture_output=True,
                              text=True, timeout=timeout_s, env=_env(), cwd=ROOT)
    except subprocess.TimeoutExpired:
        return None, None, f"timed out after {timeout_s:.0f} s"
    seconds = time.perf_counter() - start
    peak_mb = None
    lines = []
    for line in (proc.stdout + proc.stderr).strip().splitlines():
        if line.startswith("peak-kb "):
            peak_mb = int(line.split()[1]) / 1024
        else:
            lines.append(line)
    return seconds, peak_mb, lines[-1] if lines else ""


def measure(size: int, folder: Path, with_ngspice: bool, timeout_s: float) -> dict:
    deck = folder / f"extracted_{size}.sp"
    deck.write_text(extracted(size, seed=1, core="cg_amp"))
    check = [sys.executable, "-m", "lintamp", "check", "--no-cache", "--no-config", "--fail-on", "never"]
    conn_s, conn_mb, _ = run_child([*check, "--only", CONNECTIVITY, str(deck)], timeout_s)
    every_s, every_mb, every_last = run_child(
        [sys.executable, "-c", EVERY_RULE, "check", "--no-cache", "--no-config", "--fail-on", "never", str(deck)],
        timeout_s)
    row = {"size": size, "connectivity_s": conn_s, "connectivity_mb": conn_mb, "every_s": every_s,
           "every_mb": every_mb, "every_last": every_last, "ngspice_op_s": None}
    if with_ngspice:
        op_deck = folder / f"extracted_{size}_op.sp"
        op_deck.write_text(extracted(size, seed=1, core="cg_amp", analysis="op"))
        row["ngspice_op_s"], _mb, _ = run_child(["ngspice", "-b", str(op_deck)], timeout_s)
    return row


def _s(value):
    return "—" if value is None else f"{value:.2f}"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[100_000, 1_000_000])
    ap.add_argument("--quick", action="store_true", help="10k and 100k, no ngspice")
    ap.add_argument("--timeout", type=float, default=1800.0, help="seconds per child process")
    args = ap.parse_args(argv)
    sizes = [10_000, 100_000] if args.quick else sorted(args.sizes)
    rows = []
    with tempfile.TemporaryDirectory(prefix="lintamp-bench-") as tmp:
        for size in sizes:
            rows.append(measure(size, Path(tmp), not args.quick and size == sizes[-1], args.timeout))
            r = rows[-1]
            print(f"# {size}: every rule {_s(r['every_s'])} s ({r['every_last']})", file=sys.stderr)
    print("| deck (extracted shape) | every rule | connectivity only | ratio (target ≤ 2) | "
          "peak MB every / conn. | ngspice .op | every rule / ngspice .op (target ≤ 0.1) |")
    print("|---|---|---|---|---|---|---|")
    for r in rows:
        ratio = r["every_s"] / r["connectivity_s"] if r["every_s"] and r["connectivity_s"] else None
        to_ng = r["every_s"] / r["ngspice_op_s"] if r["every_s"] and r["ngspice_op_s"] else None
        print(f"| {r['size']:,} elements | {_s(r['every_s'])} s | {_s(r['connectivity_s'])} s | "
              f"{_s(ratio)} | {_s(r['every_mb'])} / {_s(r['connectivity_mb'])} | "
              f"{_s(r['ngspice_op_s'])} s | {_s(to_ng)} |")
    if len(rows) >= 2 and rows[-1]["every_s"] and rows[0]["every_s"]:
        grow_t = rows[-1]["every_s"] / rows[0]["every_s"]
        grow_m = (rows[-1]["every_mb"] / rows[0]["every_mb"]
                  if rows[-1]["every_mb"] and rows[0]["every_mb"] else None)
        print(f"\ngrowth {rows[-1]['size']:,} / {rows[0]['size']:,}, every rule: time {grow_t:.1f}, "
              f"memory {_s(grow_m)} (target ≤ 11 for 10x the elements)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
