"""Nodes whose DC level only opposing current sources set, and the DC-feedback test.

A node is *current-defined* when every element that conducts DC into it is
current-source-like: an ideal current source, a controlled-current output, a MOS
drain whose gate and source are elsewhere, a bipolar collector whose base is
elsewhere -- and at least one of them pulls up while another pulls down
("dueling current sources", Baker, *CMOS Circuit Design*, 3rd ed., pp. 867-871).
A resistor, diode, inductor, voltage source, diode-connected device, or a
source/emitter on the node sets the level; such nodes are not current-defined.

Such a node still has a defined level when *DC feedback* reaches one of the
control terminals that set the currents into it.  The controllers are the gates
(bases) of the devices in the current paths from the node towards the rails (for
a cascode stack, the input device below the cascode too).  Feedback exists when
the node's voltage can move a controller, found on a directed *influence graph*
of the DC circuit:

* R, L, diodes, voltage sources, VCVS outputs: both ways;
* MOS: gate -> drain, gate -> source, source -> drain, bulk -> drain/source;
  BJT: base <-> emitter, base -> collector, emitter -> collector.  A drain or
  collector moves nothing (only through r_o, which is what makes the node
  ill-defined in the first place);
* controlled sources: control nets -> output nets;
* capacitors and current sources: nothing (open at DC);
* nets held by voltage sources to ground are fixed: the search stops there.

A follower or unity-feedback connection (the node is a gate of its own input
device), a resistive divider back to the inverting input, and common-mode
feedback (sense -> CMFB amplifier -> load gates) all reach a controller; the
open-loop CS stage with a bias-gated current-source load does not.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from lintamp.circuit.kinds import BJT, MOS
from lintamp.circuit.flat import FlatCircuit, FlatDevice

MAX_NETS_SEARCHED = 20_000
MAX_STACK_DEPTH = 8


@dataclass
class CurrentDefinedNode:
    net: int
    pull_up: list[FlatDevice] = field(default_factory=list)
    pull_down: list[FlatDevice] = field(default_factory=list)
    controllers: set[int] = field(default_factory=set)

    @property
    def devices(self) -> list[FlatDevice]:
        return self.pull_up + self.pull_down


def influence_graph(circuit: FlatCircuit) -> dict[int, set[int]]:
    """Directed DC influence edges between nets (see the module docstring).

    Notes
    -----
    O(devices).
    """
    g: dict[int, set[int]] = {}
    by_name = {d.name: d for d in circuit.devices}

    def edge(a, b):
        if a != b:
            g.setdefault(a, set()).add(b)

    for dev in circuit.devices:
        k, n = dev.kind, dev.nodes
        if k in ("resistor", "inductor", "vsource", "diode", "other") and len(n) >= 2:
            edge(n[0], n[1])
            edge(n[1], n[0])
            for extra in n[2:]:  # unknown elements: assume they couple everything
                for m in n[:2]:
                    edge(extra, m)
                    edge(m, extra)
        elif k in MOS:
            d, gt, s = n[0], n[1], n[2]
            b = n[3] if len(n) > 3 else s
            for t in (d, s):
                edge(gt, t)
                edge(b, t)
            edge(s, d)
        elif k in BJT:
            c, b, e = n[0], n[1], n[2]
            edge(b, e)
            edge(e, b)
            edge(b, c)
            edge(e, c)
        elif k in ("vcvs", "vccs") and len(n) >= 4:
            for ctl in n[2:4]:
                for out in n[:2]:
                    edge(ctl, out)
            if k == "vcvs":
                edge(n[0], n[1])
                edge(n[1], n[0])
        elif k in ("cccs", "ccvs") and dev.control in by_name:
            ctl_nodes = by_name[dev.control].nodes[:2]
            for ctl in ctl_nodes:
                for out in n[:2]:
                    edge(ctl, out)
            if k == "ccvs":
                edge(n[0], n[1])
                edge(n[1], n[0])
    return g


def _on_net(circuit: FlatCircuit) -> dict[int, list[FlatDevice]]:
    out: dict[int, list[FlatDevice]] = {}
    for dev in circuit.devices:
        for n in set(dev.nodes):
            out.setdefault(n, []).append(dev)
    return out


def _classify(dev: FlatDevice, net: int) -> str:
    """'up', 'down', 'open' (no DC current at this terminal) or 'sets' (sets the level)."""
    k, n = dev.kind, dev.nodes
    at = [i for i, x in enumerate(n) if x == net]
    if k == "capacitor":
        return "open"
    if k in MOS:
        if at == [1]:
            return "open"  # a gate
        if at == [0]:
            return "down" if k == "nmos" else "up"
        return "sets"  # source, bulk, or diode-connected
    if k in BJT:
        if at == [0]:
            return "down" if k == "npn" else "up"
        return "sets"
    if k == "isource":
        if set(at) & {0, 1} == {0} or set(at) & {0, 1} == {1}:
            value = dev.source.dc if dev.source is not None else (dev.value or 0.0)
            flows_out = (at[0] == 0) == (value >= 0)  # current runs p -> n inside the source
            return "down" if flows_out else "up"
        return "open"
    if k in ("vccs", "cccs"):
        if not set(at) & {0, 1}:
            return "open"  # a control input
        return "down" if 0 in at else "up"  # direction set by the signal; either way current-like
    if k in ("vcvs",) and not set(at) & {0, 1}:
        return "open"
    return "sets"


def current_defined_nodes(circuit: FlatCircuit, fixed: set[int]) -> list[CurrentDefinedNode]:
    """Nets whose DC-conducting terminals are all current-source-like, both directions.

    Nets driven by a complementary pair on one gate (a CMOS inverter or
    push-pull logic stage) are left out: their level is a logic state.

    Notes
    -----
    O(terminals).
    """
    on_net = _on_net(circuit)
    out = []
    for net, devs in on_net.items():
        if net in fixed:
            continue
        up, down, ok = [], [], True
        for dev in devs:
            how = _classify(dev, net)
            if how == "sets":
                ok = False
                break
            if how == "up":
                up.append(dev)
            elif how == "down":
                down.append(dev)
        if not ok or not up or not down:
            continue
        if not any(d.kind in MOS + BJT for d in up + down):
            continue  # only ideal sources: the current-cutset rule's case
        gates_up = {d.nodes[1] for d in up if d.kind in MOS + BJT}
        gates_down = {d.nodes[1] for d in down if d.kind in MOS + BJT}
        if gates_up & gates_down:
            continue  # complementary pair on one input: a logic stage
        node = CurrentDefinedNode(net, up, down)
        node.controllers = controllers_of(node, on_net, fixed, circuit)
        out.append(node)
    return out


def controllers_of(node: CurrentDefinedNode, on_net, fixed: set[int], circuit: FlatCircuit) -> set[int]:
    """Control nets of every device in the current paths from the node to fixed nets."""
    ctrls: set[int] = set()
    by_name = {d.name: d for d in circuit.devices}
    frontier = [node.net]
    seen = {node.net}
    for _depth in range(MAX_STACK_DEPTH):
        nxt = []
        for net in frontier:
            for dev in on_net.get(net, []):
                k, n = dev.kind, dev.nodes
                if k in MOS + BJT:
                    if net not in (n[0], n[2]):
                        continue
                    ctrls.add(n[1])
                    other = n[2] if n[0] == net else n[0]
                    if k in MOS and len(n) > 3:
                        ctrls.add(n[3])
                    if other not in fixed and other not in seen:
                        seen.add(other)
                        nxt.append(other)
                elif k in ("vccs",) and len(n) >= 4 and net in n[:2]:
                    ctrls.update(n[2:4])
                elif k == "cccs" and net in n[:2] and dev.control in by_name:
                    ctrls.update(by_name[dev.control].nodes[:2])
        frontier = nxt
        if not frontier:
            break
    return {c for c in ctrls if c not in fixed}


def feedback_path(graph: dict[int, set[int]], start: int, targets: set[int], fixed: set[int]) -> list[int] | None:
    """Nets from ``start`` to the first target reached on the influence graph, or None.

    Notes
    -----
    Breadth-first, O(nets + edges), capped at ``MAX_NETS_SEARCHED`` nets.
    """
    if start in targets:
        return [start]
    parent = {start: None}
    todo = [start]
    while todo and len(parent) < MAX_NETS_SEARCHED:
        nxt = []
        for net in todo:
            for m in graph.get(net, ()):
                if m in parent or m in fixed:
                    continue
                parent[m] = net
                if m in targets:
                    path = [m]
                    while parent[path[-1]] is not None:
                        path.append(parent[path[-1]])
                    return list(reversed(path))
                nxt.append(m)
        todo = nxt
    return None
