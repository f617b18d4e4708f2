"""Exact reduction of the resistor networks of a flat circuit before the DC solve.

A post-layout deck is mostly wire: chains of resistors through internal nodes that
nothing else touches, stubs that end in a capacitor or nowhere, and metal that only
coupling capacitors hold.  At DC the capacitors are open, so such an internal node
carries no current of its own and can be eliminated exactly (Gaussian elimination of
its row, which for a node joined only by conductances is the star-mesh transform):

* a node with one resistor to the rest (a dangling stub): the resistor carries no
  current and the node sits at its neighbour's voltage;
* a node with two resistors (a chain): one resistor ``R1 + R2`` between the
  neighbours (series merging);
* a node with three resistors: the triangle of the star-mesh transform (as many
  resistors as before, one node less);
* resistors between the same two nodes add as conductances (parallel merging);
* a group of such nodes that no kept net joins (floating metal, a floating
  resistor mesh): its voltage is undetermined and does not affect any other node.

Nets that anything else touches -- device terminals, sources, controlled sources and
their control nodes, zero-ohm resistors -- and the nets a caller names are kept with
their net numbers.  The voltage of every eliminated node follows from its neighbours'
(``v_x = sum(g_i v_i) / sum(g_i)``, in reverse order of elimination): exact up to
round-off.  Only positive resistances are eliminated, so no step divides by a sum
that could cancel.

Examples
--------
>>> from lintamp.circuit.flat import FlatCircuit, FlatDevice, SourceValues
>>> from lintamp.location import Location
>>> c = FlatCircuit(); loc = Location("<doc>", 1)
>>> a, m, b = c.net("a"), c.net("m"), c.net("b")
>>> _ = c.add(FlatDevice("v1", "vsource", (a, 0), loc, source=SourceValues(dc=1.0)))
>>> _ = c.add(FlatDevice("r1", "resistor", (a, m), loc, value=1e3))
>>> _ = c.add(FlatDevice("r2", "resistor", (m, 0), loc, value=3e3))
>>> red = reduce_for_dc(c)
>>> [(sorted(d.nodes), d.value) for d in red.circuit.devices if d.kind == "resistor"]
[([0, 1], 4000.0)]
>>> red.expand({0: 0.0, a: 1.0})[m]
0.75
"""

from __future__ import annotations

from dataclasses import dataclass, field

from lintamp.circuit.flat import FlatCircuit, FlatDevice

MAX_STAR_DEGREE = 3  # star-mesh on more neighbours adds resistors (fill): left to the LU


@dataclass
class Elimination:
    """One eliminated node: its voltage is ``sum(weight * v(neighbour))``."""

    net: int
    neighbours: tuple[int, ...]
    weights: tuple[float, ...]


@dataclass
class DcReduction:
    """A circuit with the same net numbers and fewer resistors, and how to undo it.

    ``circuit`` holds every device that is not a plain positive resistor or a
    capacitor, unchanged, plus the resistors left after merging (named ``~r<k>``
    when merged).  ``steps`` recovers the eliminated nets; ``floating`` are the nets
    whose DC level nothing sets (metal only capacitors hold).
    """

    circuit: FlatCircuit
    steps: list[Elimination] = field(default_factory=list)
    floating: set[int] = field(default_factory=set)
    resistors_before: int = 0

    @property
    def eliminated(self) -> int:
        return len(self.steps) + len(self.floating)

    def expand(self, voltages: dict[int, float]) -> dict[int, float]:
        """``voltages`` of the kept nets, plus every eliminated net's (floating ones left out).

        Notes
        -----
        O(eliminated nets), one pass in reverse order of elimination.
        """
        out = dict(voltages)
        out.setdefault(0, 0.0)
        for step in reversed(self.steps):
            if step.net not in self.floating:
                out[step.net] = sum(w * out[n] for n, w in zip(step.neighbours, step.weights))
        return out


def _plain_resistor(dev: FlatDevice) -> bool:
    return (dev.kind == "resistor" and dev.value is not None and dev.value > 0
            and len(dev.nodes) == 2 and dev.nodes[0] != dev.nodes[1])


def reduce_for_dc(circuit: FlatCircuit, keep=()) -> DcReduction:
    """The circuit as the DC solve needs it: capacitors out, wire resistance reduced.

    Parameters
    ----------
    circuit : the flat circuit (not changed).
    keep : net indices that must stay (besides every net a non-resistor touches).

    Notes
    -----
    O(resistors): each elimination touches at most three neighbours, and a node is
    looked at again only when one of its neighbours is eliminated.
    """
    kept: set[int] = {0, *keep}
    others: list[FlatDevice] = []
    resistors: list[FlatDevice] = []
    capacitor_nets: set[int] = set()
    for dev in circuit.devices:
        if dev.kind == "capacitor" and dev.value is not None:
            capacitor_nets.update(dev.nodes)  # open at DC
            continue
        if _plain_resistor(dev):
            resistors.append(dev)
        else:
            others.append(dev)
            kept.update(dev.nodes)
    adjacency: dict[int, dict[int, float]] = {}
    for dev in resistors:
        a, b = dev.nodes
        g = 1.0 / dev.value
        row_a = adjacency.setdefault(a, {})
        row_a[b] = row_a.get(b, 0.0) + g
        row_b = adjacency.setdefault(b, {})
        row_b[a] = row_b.get(a, 0.0) + g
    steps: list[Elimination] = []
    pending = [n for n in adjacency if n not in kept and len(adjacency[n]) <= MAX_STAR_DEGREE]
    while pending:
        net = pending.pop()
        row = adjacency.get(net)
        if row is None or len(row) > MAX_STAR_DEGREE or net in kept:
            continue
        del adjacency[net]
        neighbours = tuple(row)
        total = sum(row.values())
        if not neighbours:  # its last neighbour went first: a floating pair of nets
            steps.append(Elimination(net, (), ()))
            continue
        steps.append(Elimination(net, neighbours, tuple(row[n] / total for n in neighbours)))
        for n in neighbours:
            del adjacency[n][net]
        for i, ni in enumerate(neighbours):  # star-mesh: g_ij = g_i g_j / sum(g)
            for nj in neighbours[i + 1:]:
                g = row[ni] * row[nj] / total
                adjacency[ni][nj] = adjacency[ni].get(nj, 0.0) + g
                adjacency[nj][ni] = adjacency[nj].get(ni, 0.0) + g
        for n in neighbours:
            if n not in kept and len(adjacency[n]) <= MAX_STAR_DEGREE:
                pending.append(n)
    floating = _floating_groups(adjacency, kept)
    for net in floating:
        adjacency.pop(net, None)
    eliminated = {step.net for step in steps}
    floating.update(n for n in capacitor_nets
                    if n not in kept and n not in adjacency and n not in eliminated)
    for step in reversed(steps):  # a stub that hangs from floating metal floats with it
        if not step.neighbours or any(n in floating for n in step.neighbours):
            floating.add(step.net)
    out = FlatCircuit(nets=circuit.nets, temperature_c=circuit.temperature_c)
    out._index = circuit._index  # same names, same numbers
    out.devices = list(others)
    original = {}
    for dev in resistors:
        a, b = dev.nodes
        original.setdefault((min(a, b), max(a, b)), []).append(dev)
    merged = 0
    for a, row in adjacency.items():
        for b, g in row.items():
            if a >= b:
                continue
            devs = original.get((a, b), [])
            if len(devs) == 1 and abs(1.0 / devs[0].value - g) <= 1e-15 * g:
                out.devices.append(devs[0])  # untouched: keeps its name and location
                continue
            merged += 1
            location = devs[0].location if devs else circuit.devices[0].location
            out.devices.append(FlatDevice(f"~r{merged}", "resistor", (a, b), location, value=1.0 / g,
                                          kind_detail="merged wire resistance"))
    return DcReduction(out, steps, floating, len(resistors))


def _floating_groups(adjacency: dict[int, dict[int, float]], kept: set[int]) -> set[int]:
    """Nets of the resistor components that hold no kept net."""
    seen: set[int] = set()
    floating: set[int] = set()
    for start in adjacency:
        if start in seen:
            continue
        group, stack, anchored = [], [start], False
        seen.add(start)
        while stack:
            n = stack.pop()
            group.append(n)
            anchored = anchored or n in kept
            for m in adjacency[n]:
                if m not in seen:
                    seen.add(m)
                    stack.append(m)
        if not anchored:
            floating.update(group)
    return floating
