"""Seeded decks in the shape a layout extractor writes (scenarios of our own).

A post-layout deck is not a random mesh.  What this generator writes, from what the
extractors' output looks like:

- a top ``.subckt`` with ports, holding a few hundred transistors, each an X card of
  a small wrapper ``.subckt`` per device geometry (named device + ``_`` + six random
  characters, its pins in its own order, one or two M fingers inside, with the
  area/perimeter parameters an extractor writes);
- net names from the layout's coordinates (``a_n29_n1536#``, ``m1_3726_n2502#``,
  ``li_..#``), every wire a long tree of small series resistors (one node per
  segment) with a capacitor to the substrate on many segments;
- dense coupling capacitance between nodes of different wires;
- dangling stubs (a resistor to a dead end, a resistor and a capacitor to the
  substrate) and floating metal (fill held only by coupling capacitors);
- a testbench (supplies, sources, one X card of the top cell) so that ngspice
  expands the deck as lintamp does.

The transistors form self-biased legs (a PMOS and an NMOS diode in series, and a
mirror leg from each), so the operating point of the whole deck is well defined.
``core=`` adds a known pre-layout stage (level-1 ``.model`` cards lintamp evaluates)
whose nets are wired like every other net; ``analysis="ac"`` with ``probe=NET``
adds an AC current of 1 A into NET (every other AC source zero) and prints v(NET):
ngspice's impedance looking into NET, of the post-layout deck.

    python bench/extracted_shape.py OUT.sp [--elements 100000] [--seed 1]
                                    [--core cs_amp] [--analysis op|ac] [--probe out]
"""

from __future__ import annotations

import argparse
import random
import string
from pathlib import Path

MODELS = [
    # level 1 with capacitances, evaluated by lintamp's own engine and by ngspice MOS1
    ".model nfet_lv nmos level=1 vto=0.5 kp=200u gamma=0.4 phi=0.7 lambda=0.1 tox=4n "
    "cgso=0.3n cgdo=0.3n cgbo=0.1n cj=0.8m mj=0.5 cjsw=0.2n mjsw=0.33 pb=0.8",
    ".model pfet_lv pmos level=1 vto=-0.5 kp=100u gamma=0.4 phi=0.7 lambda=0.1 tox=4n "
    "cgso=0.3n cgdo=0.3n cgbo=0.1n cj=0.8m mj=0.5 cjsw=0.2n mjsw=0.33 pb=0.8",
]
VDD_V = 1.8

# The known cores: their top-cell ports (beyond vdd vss), devices as
# (kind, drain, gate, source, w_um, l_um), resistors as (a, b, ohm), and the
# testbench lines that bias them (top-level nets are the port names).
CORES = {
    "cs_amp": {
        "doc": "common-source NMOS with a resistor load (Razavi, Design of Analog CMOS ICs, sec. 3.3)",
        "ports": ["in", "out"],
        "devices": [("n", "out", "in", "vss", 10.0, 1.0)],
        "resistors": [("vdd", "out", 20e3)],
        "input_sources": ["vin in 0 dc 0.7 ac {ac}"],
        "bias_sources": [],
        "input": "in", "output": "out",
    },
    "cg_amp": {
        "doc": "common-gate NMOS, resistor-biased source, resistor load (Razavi sec. 3.5)",
        "ports": ["in", "out", "vb"],
        "devices": [("n", "out", "vb", "in", 10.0, 1.0)],
        "resistors": [("vdd", "out", 20e3), ("vss", "in", 12e3)],
        "input_sources": ["iin 0 in dc 0 ac {ac}"],
        "bias_sources": ["vb vb 0 dc 1.3"],
        "input": "in", "output": "out",
    },
    "diff_pair": {
        "doc": "NMOS differential pair, resistor loads, NMOS tail (Razavi sec. 4.2)",
        "ports": ["inp", "inn", "outp", "outn", "vbn"],
        "devices": [("n", "outn", "inp", "tail", 10.0, 1.0), ("n", "outp", "inn", "tail", 10.0, 1.0),
                    ("n", "tail", "vbn", "vss", 10.0, 1.0)],
        "resistors": [("vdd", "outn", 20e3), ("vdd", "outp", 20e3)],
        "input_sources": ["vinp inp 0 dc 1.1 ac {half}", "vinn inn 0 dc 1.1 ac {half} 180"],
        "bias_sources": ["vbn vbn 0 dc 0.7"],
        "input": "inp", "output": "outn",
    },
}

# the share of the elements left after the devices, per kind of card
SHARE_CHAIN_R = 0.45
SHARE_GROUND_C = 0.20
SHARE_STUB = 0.04  # stubs: one or two cards each
SHARE_FLOATING = 0.03
# the rest: coupling capacitors between wires


class _Names:
    """Unique layout-coordinate net names (``m1_3726_n2502#``) and element names."""

    def __init__(self, rng: random.Random):
        self.rng = rng
        self.used: set[str] = set()
        self.count = {"r": 0, "c": 0, "x": 0}

    def net(self, layer: str) -> str:
        rng = self.rng
        while True:
            x, y = rng.randrange(-9000, 9000), rng.randrange(-9000, 9000)
            name = f"{layer}_{'n' if x < 0 else ''}{abs(x)}_{'n' if y < 0 else ''}{abs(y)}#"
            if name not in self.used:
                self.used.add(name)
                return name

    def element(self, letter: str) -> str:
        k = self.count[letter]
        self.count[letter] = k + 1
        return f"{letter.upper()}{k}"


def _fmt_ohm(rng: random.Random) -> str:
    return f"{rng.uniform(0.05, 2.5):.4g}"


def _fmt_farad(rng: random.Random, lo: float = 0.01, hi: float = 2.0) -> str:
    return f"{rng.uniform(lo, hi):.4g}f"


def _wrapper_cells(rng: random.Random, n_geometries: int):
    """(name, kind, ports, inner cards, w, l, fingers) per device geometry."""
    cells = []
    suffixes: set[str] = set()
    for k in range(n_geometries):
        kind = "n" if k % 2 == 0 else "p"
        w = rng.choice((0.42, 0.65, 1.0, 2.0, 4.0))
        length = rng.choice((0.15, 0.18, 0.5, 1.0))
        fingers = rng.choice((1, 1, 2))
        cells.append(_wrapper(rng, kind, w, length, fingers, suffixes))
    return cells


def _wrapper(rng, kind, w, length, fingers, suffixes):
    while True:
        suffix = "".join(rng.choice(string.ascii_uppercase + string.digits) for _ in range(6))
        if suffix not in suffixes:
            suffixes.add(suffix)
            break
    device = "nfet_lv" if kind == "n" else "pfet_lv"
    name = f"{device}_{suffix}"
    half = int(w * 500) + 15
    pins = {"d": f"a_{half - 30}_n{int(length * 1000)}#", "g": f"a_n{half}_n{int(length * 1000) + 40}#",
            "s": f"a_n{half + 60}_n{int(length * 1000)}#", "b": "w_n211_n1798#" if kind == "p" else "VSUBS"}
    order = ["g", "d", "s", "b"]
    rng.shuffle(order)  # every geometry lists its pins in its own order
    ad = w * 0.29
    inner = []
    for f in range(fingers):
        d, s = (pins["d"], pins["s"]) if f % 2 == 0 else (pins["s"], pins["d"])
        inner.append(f"M{f} {d} {pins['g']} {s} {pins['b']} {device} w={w / fingers:g}u l={length:g}u "
                     f"ad={ad / fingers:.4g}p pd={2 * (w / fingers + 0.29):.4g}u "
                     f"as={ad / fingers:.4g}p ps={2 * (w / fingers + 0.29):.4g}u")
    return {"name": name, "kind": kind, "ports": [pins[p] for p in order], "order": order,
            "inner": inner, "w": w, "l": length, "fingers": fingers}


def _legs(n_transistors: int):
    """Self-biased legs: (kind, drain, gate, source) with logical net names, in groups of
    four (``n_transistors`` rounded down to a multiple of four, at least one group): a PMOS diode over an NMOS diode (node x), and a mirror leg whose NMOS takes
    its gate from x, with a PMOS diode load (node y)."""
    devices = []
    for k in range(max(1, n_transistors // 4)):
        x, y = f"x{k}", f"y{k}"
        devices += [("p", x, x, "vdd"), ("n", x, x, "vss"), ("n", y, x, "vss"), ("p", y, y, "vdd")]
    return devices


def extracted(n_elements: int, seed: int = 1, transistors: int = 300, core: str | None = None,
              testbench: bool = True, analysis: str | None = None, probe: str | None = None,
              top: str = "amp_top", floating_metal: bool = True) -> str:
    """The text of a deck of about ``n_elements`` element cards in the extracted shape.

    ``transistors``: the number of biased filler transistors (X cards of wrapper cells),
    beside the core's.  ``core``: one of ``CORES`` or None.  ``testbench``: the
    supplies, the core's sources and an X card of the top cell (else the top cell
    alone, as the extractor writes it).  ``analysis``: None, ``"op"`` or ``"ac"``
    (``.ac dec 10 1k 10g``; with ``probe``, a 1 A AC current into that top-level net
    with every other AC source at zero, and ``.print ac`` of its voltage: the
    impedance looking into it).  ``floating_metal=False`` leaves out the pieces held
    only by coupling capacitors (their share goes to coupling): ngspice's DC matrix is
    singular with them (it falls back to gmin and source stepping, then a transient
    operating point, about 20 s on a 5k deck), so a deck meant for comparing with
    ngspice's ``.op`` / ``.ac`` is better without.
    """
    if core is not None and core not in CORES:
        raise ValueError(f"unknown core {core!r}; one of {', '.join(CORES)}")
    if analysis not in (None, "op", "ac"):
        raise ValueError("analysis is None, 'op' or 'ac'")
    rng = random.Random(seed)
    names = _Names(rng)
    spec = CORES.get(core)
    core_ports = spec["ports"] if spec else []
    ports = ["vdd", "vss", *core_ports]
    if probe is not None and probe not in ports:
        raise ValueError(f"probe {probe!r} is not a port of the top cell ({' '.join(ports)})")
    names.used.update(ports)

    # devices: (kind, drain, gate, source, geometry or None) on logical nets
    legs = _legs(transistors) if transistors > 0 else []
    wrappers = _wrapper_cells(rng, max(2, min(40, transistors // 8 + 2)))
    by_kind = {"n": [c for c in wrappers if c["kind"] == "n"], "p": [c for c in wrappers if c["kind"] == "p"]}
    placed = [(kind, d, g, s, rng.choice(by_kind[kind]), False) for kind, d, g, s in legs]
    suffixes = {c["name"].rsplit("_", 1)[1] for c in wrappers}
    if spec:
        for kind, d, g, s, w, length in spec["devices"]:
            cell = _wrapper(rng, kind, w, length, 1, suffixes)
            wrappers.append(cell)
            placed.append((kind, d, g, s, cell, True))

    # every logical net is a wire: its first node is its name (a port name, or a
    # coordinate name of the device layer)
    logical = []
    for _, d, g, s, _cell, _core in placed:
        for net in (d, g, s):
            if net not in logical:
                logical.append(net)
    for net in ("vdd", "vss", *core_ports):
        if net not in logical:
            logical.append(net)
    for a, b, _ in (spec["resistors"] if spec else []):
        for net in (a, b):
            if net not in logical:
                logical.append(net)
    node_of = {net: (net if net in ports else names.net("a")) for net in logical}

    n_cards = sum(c["fingers"] for c in wrappers) + len(placed) + (len(spec["resistors"]) if spec else 0)
    n_cards += (6 if testbench else 0)
    budget = max(0, n_elements - n_cards)
    n_chain = int(budget * SHARE_CHAIN_R)
    n_ground = int(budget * SHARE_GROUND_C)
    n_stub = int(budget * SHARE_STUB)
    n_float = int(budget * SHARE_FLOATING) if floating_metal else 0
    n_couple = max(0, budget - n_chain - n_ground - n_stub - n_float)

    body: list[str] = []
    # wires: trees of series resistors; rails and long signal wires get more segments
    weights = [8.0 if net in ("vdd", "vss") else (0.3 if spec and net in core_ports + ["tail"] else
                                                    rng.uniform(0.5, 1.5)) for net in logical]
    total_w = sum(weights)
    wire_nodes: dict[str, list[str]] = {}
    all_nodes: list[str] = []
    wire_of_node: list[int] = []
    for k, net in enumerate(logical):
        segments = max(1, int(n_chain * weights[k] / total_w))
        nodes = [node_of[net]]
        layer = rng.choice(("li", "m1", "m2", "m3"))
        rail = net in ("vdd", "vss")
        for _ in range(segments):
            # a rail is a wide mesh of low-ohm segments (its IR drop stays in millivolts);
            # a signal wire a long thin chain with a branch now and then
            here = nodes[-1] if rng.random() < (0.5 if rail else 0.9) else rng.choice(nodes)
            new = names.net(layer)
            ohm = f"{rng.uniform(0.001, 0.02):.3g}" if rail else _fmt_ohm(rng)
            body.append(f"{names.element('r')} {here} {new} {ohm}")
            nodes.append(new)
        wire_nodes[net] = nodes
        all_nodes.extend(nodes)
        wire_of_node.extend([k] * len(nodes))
    # capacitance to the substrate on segments
    made = 0
    while made < n_ground:
        node = rng.choice(all_nodes)
        if node != "vss":
            body.append(f"{names.element('c')} {node} vss {_fmt_farad(rng)}")
            made += 1
    # coupling between wires that run side by side: the wires run in bundles of
    # four, each couples to the others of its bundle, a node to the node beside it
    # (the coupling stays local, as in a layout: coupling between any wires made
    # ngspice's reordering take minutes on a 30k deck), and a share to the supply
    wires = [wire_nodes[net] for net in logical]
    sizes = [len(w) for w in wires]
    starts = [0]
    for size in sizes:
        starts.append(starts[-1] + size)
    n_all = len(all_nodes)

    def beside(i: int) -> str:
        a = wire_of_node[i]
        if rng.random() < 0.15:
            return "vdd"
        first = a - a % 4
        b = first + rng.randrange(4)
        if b == a or b >= len(wires) or wires[b][0] == "vdd" or wires[a][0] == "vdd":
            return ""
        t = (i - starts[a]) / max(1, sizes[a])
        j = min(sizes[b] - 1, max(0, int(t * sizes[b]) + rng.randint(-2, 2)))
        return wires[b][j]

    couples = 0
    while couples < n_couple and n_all > 1:
        i = rng.randrange(n_all)
        other = beside(i)
        if other:
            body.append(f"{names.element('c')} {all_nodes[i]} {other} {_fmt_farad(rng, 0.005, 0.5)}")
            couples += 1
    # dangling stubs: a resistor to a dead end, or a resistor and a capacitor to the substrate
    made = 0
    while made < n_stub:
        end = names.net(rng.choice(("li", "m1")))
        body.append(f"{names.element('r')} {rng.choice(all_nodes)} {end} {_fmt_ohm(rng)}")
        made += 1
        if rng.random() < 0.6 and made < n_stub:
            body.append(f"{names.element('c')} {end} vss {_fmt_farad(rng)}")
            made += 1
    # floating metal: small pieces (a few nodes in series) held only by coupling
    # capacitors to the wires they lie over, at least one on every node
    made = 0
    while n_float - made >= 1:
        size = rng.randrange(1, 5)
        while size > 1 and made + 2 * size - 1 > n_float:
            size -= 1
        anchor = rng.randrange(n_all)  # the wires it lies over
        piece = [names.net(rng.choice(("m2", "m3", "m4")))]
        for _ in range(size - 1):
            new = names.net("m2")
            body.append(f"{names.element('r')} {piece[-1]} {new} {_fmt_ohm(rng)}")
            piece.append(new)
            made += 1
        for k, node in enumerate(piece):
            spare = n_float - made - (len(piece) - k)  # cards left beyond one per node
            for _ in range(1 + (1 if spare > 0 and rng.random() < 0.5 else 0)):
                near = all_nodes[min(n_all - 1, anchor + rng.randint(-3, 3))]
                body.append(f"{names.element('c')} {node} {near} {_fmt_farad(rng, 0.005, 0.3)}")
                made += 1

    # the devices: one X card each, its pins on nodes of its wires, in the wrapper's order
    instances = []
    for kind, d, g, s, cell, is_core in placed:
        pin_node = {"d": rng.choice(wire_nodes[d]), "g": rng.choice(wire_nodes[g]),
                    "s": rng.choice(wire_nodes[s]),
                    "b": rng.choice(wire_nodes["vss" if kind == "n" else "vdd"])}
        if is_core:
            # the core's own pins sit at the named ports (the nets the testbench drives)
            pin_node.update({p: node_of[n] for p, n in (("d", d), ("g", g), ("s", s)) if n in ports})
        instances.append(f"{names.element('x')} {' '.join(pin_node[p] for p in cell['order'])} {cell['name']}")
    core_r = []
    for a, b, ohm in (spec["resistors"] if spec else []):
        core_r.append(f"{names.element('r')} {wire_nodes[a][len(wire_nodes[a]) // 2]} {node_of[b]} {ohm:g}")

    out = [f"* {top}: extracted-shape deck (bench/extracted_shape.py, seed {seed}, "
           f"{n_elements} elements{', core ' + core if core else ''})"]
    if spec:
        out.append(f"* core: {spec['doc']}")
    out += MODELS
    for cell in wrappers:
        out.append(f".subckt {cell['name']} {' '.join(cell['ports'])}")
        out += cell["inner"]
        out.append(f".ends {cell['name']}")
    out.append(f".subckt {top} {' '.join(ports)}")
    out += instances + core_r + body
    out.append(f".ends {top}")
    if testbench:
        ac_on = probe is None
        out.append(f"xtop {' '.join('0' if p == 'vss' else p for p in ports)} {top}")
        out.append(f"vdd vdd 0 dc {VDD_V}")
        for line in (spec["input_sources"] if spec else []):
            out.append(line.format(ac=1 if ac_on else 0, half=0.5 if ac_on else 0))
        out += spec["bias_sources"] if spec else []
        if probe is not None:
            out.append(f"iprobe 0 {probe} dc 0 ac 1")
        if analysis == "op":
            out.append(".op")
        elif analysis == "ac":
            out.append(".ac dec 10 1k 10g")
            out.append(f".print ac vr({probe or (spec['output'] if spec else 'vdd')}) "
                       f"vi({probe or (spec['output'] if spec else 'vdd')})")
    out.append(".end")
    return "\n".join(out) + "\n"


def write(path: Path, text: str) -> Path:
    path = Path(path)
    path.write_text(text, encoding="utf-8")
    return path


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("out", type=Path)
    ap.add_argument("--elements", type=int, default=100_000)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--transistors", type=int, default=300)
    ap.add_argument("--core", choices=sorted(CORES))
    ap.add_argument("--no-testbench", action="store_true")
    ap.add_argument("--analysis", choices=("op", "ac"))
    ap.add_argument("--probe")
    ap.add_argument("--no-floating-metal", action="store_true")
    args = ap.parse_args(argv)
    write(args.out, extracted(args.elements, seed=args.seed, transistors=args.transistors, core=args.core,
                              testbench=not args.no_testbench, analysis=args.analysis, probe=args.probe,
                              floating_metal=not args.no_floating_metal))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
