"""Netlist shapes that stress one part of the checker each (scenarios of our own).

The random mesh of :func:`generate.flat` spreads terminals evenly; real decks do not.
An extracted block has supply and body nets with a terminal on every device, an
array has one enable line on every gate, a ladder is one long chain.  Each function
here returns the text of a deck of about ``n`` elements built around one such
shape, so that a per-net or per-island step that is quadratic shows up as a
growth ratio well above the size ratio (see ``bench_growth.py``).
"""

from __future__ import annotations


def floating_enable(n: int) -> str:
    """An array whose enable line drives every gate and is never driven: one island
    holding n/2 gate terminals (unbiased-gate's largest finding)."""
    out = ["* array with an undriven enable line", "vdd vdd 0 1.8", ".model nch nmos level=1"]
    for i in range(n // 2):
        out += [f"m{i} b{i} en 0 0 nch w=1u l=0.1u", f"r{i} vdd b{i} 10k"]
    return "\n".join(out + [".end"]) + "\n"


def many_floating_gates(n: int) -> str:
    """n/2 separate undriven gate nets: many small islands."""
    out = ["* every gate on its own undriven net", "vdd vdd 0 1.8", ".model nch nmos level=1"]
    for i in range(n // 2):
        out += [f"m{i} d{i} g{i} 0 0 nch w=1u l=0.1u", f"r{i} vdd d{i} 10k"]
    return "\n".join(out + [".end"]) + "\n"


def extracted_block(n: int) -> str:
    """A post-layout style .subckt with no sources: stacked NMOS pairs whose bodies
    share vss (body != source), PMOS on vdd, and wiring R/C to shared nets."""
    out = ["* extracted block, no sources inside", ".model nch nmos level=1",
           ".model pch pmos level=1", ".subckt blk vdd vss in out"]
    for i in range(n // 5):
        out += [f"mn{i}a x{i} in{i % 50} vss vss nch w=1u l=0.1u",
                f"mn{i}b o{i} in{(i + 1) % 50} x{i} vss nch w=1u l=0.1u",
                f"mp{i} o{i} in{i % 50} vdd vdd pch w=2u l=0.1u",
                f"c{i} o{i} vss 1f", f"r{i} o{i} out 10"]
    out += [".ends", "x1 vdd 0 in out blk"]
    return "\n".join(out + [".end"]) + "\n"


def shared_body(n: int) -> str:
    """NMOS and PMOS bodies on one net no source sets, away from their sources."""
    out = ["* one body net for both polarities", ".model nch nmos level=1", ".model pch pmos level=1",
           ".subckt blk a b"]
    for i in range(n // 2):
        kind = "nch" if i % 2 else "pch"
        out += [f"m{i} d{i} a s{i} sub {kind} w=1u l=0.1u", f"r{i} s{i} b 1k"]
    out += [".ends", "x1 a 0 blk", "v1 a 0 1"]
    return "\n".join(out + [".end"]) + "\n"


def long_ladder(n: int) -> str:
    """One RC ladder n/2 sections long, driven at one end (a deep DC path walk)."""
    out = ["* one long RC ladder", "v1 n0 0 1"]
    for i in range(n // 2):
        out += [f"r{i} n{i} n{i + 1} 1", f"c{i} n{i + 1} 0 1f"]
    return "\n".join(out + [".end"]) + "\n"


def floating_ladder(n: int) -> str:
    """The same ladder with its driver and ground capacitors gone: one big island
    of n/2 + 1 nets with no DC path (no-dc-path's largest finding)."""
    out = ["* a ladder nothing drives", "v1 top 0 1", "r0 top 0 1k"]
    for i in range(n):
        out.append(f"r{i + 1} n{i} n{i + 1} 1")
    return "\n".join(out + [".end"]) + "\n"


def current_fed_nodes(n: int) -> str:
    """n/2 nodes each set only by two current sources (current-cutset)."""
    out = ["* nodes between opposing current sources", "vdd vdd 0 1.8"]
    for i in range(n // 2):
        out += [f"ia{i} vdd m{i} 1u", f"ib{i} m{i} 0 1u"]
    return "\n".join(out + [".end"]) + "\n"


def parallel_sources(n: int) -> str:
    """n V sources all in parallel on one pair of nets (one big source-loop)."""
    out = ["* sources in parallel"]
    for i in range(n):
        out.append(f"v{i} a 0 1")
    out.append("r1 a 0 1k")
    return "\n".join(out + [".end"]) + "\n"


def many_cells(n: int) -> str:
    """n/4 distinct small subcircuits, each instantiated once from the top."""
    out = ["* many distinct cells", "vdd vdd 0 1.8"]
    for k in range(n // 4):
        out += [f".subckt c{k} a b", f"r1 a m {k + 1}", "r2 m b 1k", "c1 m 0 1f", ".ends",
                f"x{k} vdd o{k} c{k}"]
    return "\n".join(out + ["r0 o0 0 1k", ".end"]) + "\n"


def deep_hierarchy(n: int) -> str:
    """A chain of n/3 cells, each instantiating the next (depth n/3)."""
    depth = max(2, n // 3)
    out = ["* a deep hierarchy", "vdd vdd 0 1.8", ".subckt l0 a b", "r1 a b 1k", ".ends"]
    for k in range(1, depth):
        out += [f".subckt l{k} a b", f"x1 a m l{k - 1}", "r1 m b 1k", ".ends"]
    out += [f"x0 vdd 0 l{depth - 1}"]
    return "\n".join(out + [".end"]) + "\n"


def mirror_array(n: int) -> str:
    """One diode-connected reference and n/2 mirror outputs, each into its own load
    resistor: a biased circuit the operating point solves, so the impedance rules
    run (and every output device relates to the one reference)."""
    out = ["* one bias line for a row of current sources", "vdd vdd 0 1.8", "iref vdd ref 10u",
           ".model nch nmos level=1 vto=0.5 kp=200u lambda=0.1", "m0 ref ref 0 0 nch w=1u l=1u"]
    for i in range(1, n // 2):
        out += [f"m{i} o{i} ref 0 0 nch w=1u l=1u", f"r{i} vdd o{i} 10k"]
    return "\n".join(out + [".end"]) + "\n"


def amplifier_chain(n: int) -> str:
    """n/4 common-source stages in cascade, each AC-coupled to the next and biased
    by a divider: the impedance rules find ports, stages and loads across it."""
    out = ["* a chain of biased gain stages", "vdd vdd 0 1.8", "vin in 0 dc 0 ac 1",
           ".model nch nmos level=1 vto=0.5 kp=200u lambda=0.1", "rs in g0 1k"]
    for i in range(n // 4):
        out += [f"m{i} d{i} g{i} 0 0 nch w=2u l=1u", f"rd{i} vdd d{i} 20k", f"rb{i} vdd g{i} 1meg",
                f"cc{i} d{i} g{i + 1} 1p"]
    out.append(f"rl g{n // 4} 0 100k")
    return "\n".join(out + [".end"]) + "\n"


SHAPES = {f.__name__: f for f in (floating_enable, many_floating_gates, extracted_block, shared_body,
                                  long_ladder, floating_ladder, current_fed_nodes, parallel_sources,
                                  many_cells, deep_hierarchy, mirror_array, amplifier_chain)}
