"""Time the small-signal engine on generated RC + MOS networks.

Network (our own scenario): an extracted block of amplifier chains side by side.
Each chain has CHAIN stages of one NMOS common-source amplifier (10k drain
resistor, gate biased by a 100k resistor from 0.8 V and AC-coupled from the
previous stage of its chain), each stage driving an RC ladder of 48 sections
(1k, 10 fF); one random
2 fF coupling capacitor per 100 nodes couples a ladder node to the
same position of the neighbouring ladder (wires running side by side, as in
extracted parasitics).  For each size:
one DC operating point, then one factorisation at 10 MHz and the driving-point
impedance of 1000 random nodes.  Median of ``--runs`` runs.

Usage: ``python bench/bench_impedance.py [--sizes 10000,30000,100000] [--runs 3]``
Target: factorisation + 1000 nodes <= 2 s at 100k nodes.

Measured (2 cores, scipy 1.17 SuperLU, one run): 10k nodes 0.36 s, 30k 0.52 s,
100k 1.43 s (0.79 s build + LU, 0.65 s for the 1000 nets).  The 1000 nets come
from ``ImpedanceSolver.z_many``: the nets are ordered last and one more LU gives
their Schur complement, whose inverse holds all 1000 values
(lintamp/engine/inverse_diagonal.py).  One forward/back substitution per net
took 13.0 s for the same figure (~12 ms each over nnz(L+U) = 0.62-0.88 M).

Until 2026-12 this network chained every stage into the next: 2000 cascaded
gain stages at 100k nodes, whose solution vectors overflowed to inf a few
hundred stages downstream of an injection.  ``--chain 1000000`` builds it again;
there the Schur complement overflows too, ``z_many`` sees it and falls back to
one substitution per net.  The "max rel err" column compares 20 of the nets with
single substitutions.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from lintamp.engine.operating_point import solve_operating_point  # noqa: E402
from lintamp.engine.small_signal import ImpedanceSolver  # noqa: E402
from lintamp.circuit.flat import FlatCircuit, FlatDevice, ModelCard, SourceValues  # noqa: E402
from lintamp.location import Location  # noqa: E402

LADDER = 48
CHAIN = 4  # stages per amplifier chain; a chain of thousands would overflow (gain 3^n)


def build_network(n_nodes: int, seed: int = 1, chain: int = CHAIN) -> FlatCircuit:
    rng = np.random.default_rng(seed)
    c = FlatCircuit()
    loc = Location("<bench>", 1)
    model = ModelCard("nch", "nmos", {"vto": 0.5, "kp": 200e-6, "gamma": 0.5, "phi": 0.7, "lambda": 0.1,
                                      "tox": 9e-9, "cgso": 2e-10, "cgdo": 2e-10, "cbd": 5e-15, "cbs": 5e-15})
    vdd, vb = c.net("vdd"), c.net("vb")
    c.add(FlatDevice("vdd", "vsource", (vdd, 0), loc, source=SourceValues(dc=3.0)))
    c.add(FlatDevice("vb", "vsource", (vb, 0), loc, source=SourceValues(dc=0.8)))
    prev_end = None
    stage = 0
    ladders = []
    while len(c.nets) < n_nodes:
        g, d = c.net(f"g{stage}"), c.net(f"d{stage}")
        c.add(FlatDevice(f"rb{stage}", "resistor", (vb, g), loc, value=100e3))
        c.add(FlatDevice(f"rd{stage}", "resistor", (vdd, d), loc, value=10e3))
        c.add(FlatDevice(f"m{stage}", "nmos", (d, g, 0, 0), loc, model=model, params={"w": 10e-6, "l": 1e-6}))
        if prev_end is not None:
            c.add(FlatDevice(f"cc{stage}", "capacitor", (prev_end, g), loc, value=100e-15))
        node = d
        ladder = [d]
        for k in range(LADDER):
            nxt = c.net(f"n{stage}_{k}")
            c.add(FlatDevice(f"r{stage}_{k}", "resistor", (node, nxt), loc, value=1e3))
            c.add(FlatDevice(f"c{stage}_{k}", "capacitor", (nxt, 0), loc, value=10e-15))
            node = nxt
            ladder.append(nxt)
        ladders.append(ladder)
        prev_end = node if (stage + 1) % chain else None
        stage += 1
    nets = len(c.nets)
    for k in range(nets // 100):
        i = int(rng.integers(0, len(ladders) - 1))
        pos = int(rng.integers(1, LADDER + 1))
        c.add(FlatDevice(f"cx{k}", "capacitor", (ladders[i][pos], ladders[i + 1][pos]), loc, value=2e-15))
    return c


def run(n_nodes: int, runs: int, n_probe: int = 1000, freq_hz: float = 10e6, chain: int = CHAIN):
    circuit = build_network(n_nodes, chain=chain)
    rng = np.random.default_rng(7)
    probes = [circuit.nets[i] for i in rng.choice(np.arange(1, len(circuit.nets)), n_probe, replace=False)]
    t_op, t_factor, t_solve = [], [], []
    for _ in range(runs):
        t0 = time.perf_counter()
        op = solve_operating_point(circuit)
        t1 = time.perf_counter()
        solver = ImpedanceSolver(circuit, op, freq_hz)
        t2 = time.perf_counter()
        z = solver.z_many(probes)
        t3 = time.perf_counter()
        t_op.append(t1 - t0)
        t_factor.append(t2 - t1)
        t_solve.append(t3 - t2)
    assert np.all(np.isfinite(z))
    check = [solver.z(node) for node in probes[:20]]
    rel_err = max(abs(a - b) / abs(b) for a, b in zip(z[:20], check) if b != 0)
    lu = solver._lu
    fill = lu.L.nnz + lu.U.nnz
    return {
        "nodes": len(circuit.nets),
        "devices": len(circuit.devices),
        "mos": sum(d.kind == "nmos" for d in circuit.devices),
        "op_s": statistics.median(t_op),
        "op_method": op.method,
        "factor_s": statistics.median(t_factor),
        "solve1000_s": statistics.median(t_solve),
        "lu_nnz": fill,
        "rel_err": rel_err,
    }


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="10000,30000,100000")
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--chain", type=int, default=CHAIN, help="gain stages per amplifier chain")
    args = ap.parse_args(argv)
    print(f"{'nodes':>8} {'devices':>8} {'mos':>5} {'op s':>7} {'build+LU s':>10} {'1000 z s':>9} "
          f"{'LU+1000 s':>10} {'nnz(L+U)':>10} {'max rel err':>11}  op method")
    for size in [int(s) for s in args.sizes.split(",")]:
        r = run(size, args.runs, chain=args.chain)
        print(f"{r['nodes']:>8} {r['devices']:>8} {r['mos']:>5} {r['op_s']:>7.2f} {r['factor_s']:>10.2f} "
              f"{r['solve1000_s']:>9.2f} {r['factor_s'] + r['solve1000_s']:>10.2f} {r['lu_nnz']:>10} "
              f"{r['rel_err']:>11.1e}  {r['op_method']}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
