"""Seeded generators of large netlists for the benchmarks (scenarios of our own).

``flat(n)``: n elements, 70 % R, 25 % C, 5 % MOS, on a mesh of about n/3 nets with
realistic fan-out (a post-layout extraction looks like this).  ``hierarchical(levels,
fanout)``: a 50-device cell instantiated fanout**levels times.
"""

from __future__ import annotations

import random
from pathlib import Path


def flat(n_elements: int, seed: int = 1) -> str:
    rng = random.Random(seed)
    n_nets = max(4, n_elements // 3)
    lines = ["* generated flat netlist", ".model nch nmos level=1 vto=0.5 kp=200u lambda=0.1",
             ".model pch pmos level=1 vto=-0.5 kp=100u lambda=0.1", "vdd n1 0 1.8"]
    for i in range(n_elements):
        a = rng.randrange(n_nets)
        b = min(n_nets - 1, max(0, a + rng.randint(-30, 30)))
        r = rng.random()
        if r < 0.70:
            lines.append(f"r{i} n{a} n{b} {rng.uniform(1, 500):.3f}")
        elif r < 0.95:
            lines.append(f"c{i} n{a} {'0' if rng.random() < 0.6 else f'n{b}'} {rng.uniform(0.1, 5):.3f}f")
        else:
            g = rng.randrange(n_nets)
            model = "nch" if rng.random() < 0.5 else "pch"
            bulk = "0" if model == "nch" else "n1"
            lines.append(f"m{i} n{a} n{g} n{b} {bulk} {model} w={rng.choice((0.42, 1, 2))}u l=0.15u")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def hierarchical(levels: int, fanout: int, seed: int = 1) -> str:
    """A 50-device leaf cell under ``levels`` levels of ``fanout`` instances each."""
    rng = random.Random(seed)
    out = ["* generated hierarchy", ".model nch nmos level=1 vto=0.5 kp=200u",
           ".model pch pmos level=1 vto=-0.5 kp=100u", ".subckt leaf a b vdd vss"]
    nets = ["a", "b", "vdd", "vss"] + [f"i{k}" for k in range(20)]
    for k in range(50):
        x, y = rng.sample(nets, 2)
        if k % 5 == 0:
            out.append(f"m{k} {x} {rng.choice(nets)} {y} vss nch w=1u l=0.15u")
        else:
            out.append(f"r{k} {x} {y} {rng.uniform(1, 1e4):.1f}")
    out.append(".ends leaf")
    child = "leaf"
    for level in range(1, levels + 1):
        name = f"lvl{level}"
        out.append(f".subckt {name} a b vdd vss")
        for k in range(fanout):
            out.append(f"x{k} a m{k} vdd vss {child}" if k % 2 else f"x{k} m{k} b vdd vss {child}")
        out.append(f".ends {name}")
        child = name
    out += ["vdd vdd 0 1.8", f"xtop in out vdd 0 {child}", "rin in 0 1k", "rout out 0 1k", ".end"]
    return "\n".join(out) + "\n"


def write(path: Path, text: str) -> Path:
    path.write_text(text)
    return path
