"""The chain of stages a signal passes from an input net to an output net.

Signal-flow edges between nets, directed the way a small signal travels through
each element (Razavi ch. 3; Sedra & Smith ch. 7):

* MOS: gate -> drain (common source), gate -> source (follower), source -> drain
  (common gate); BJT alike with base / emitter / collector;
* VCVS / VCCS: control nets -> output net;
* R, C, L, diode, and voltage sources between two nets: both ways, at a higher
  cost, so an active path wins over a feedback resistor that bridges it.

AC-ground nets (ground, supplies) never carry the signal.
"""

from __future__ import annotations

import heapq
from dataclasses import dataclass

from lintamp.circuit.flat import FlatCircuit
from lintamp.circuit.kinds import MOS, BJT, TRANSISTORS

ACTIVE_COST = 1
PASSIVE_COST = 3
_ENTRY_NAMES = {"nmos": "dgsb", "pmos": "dgsb", "npn": "cbe", "pnp": "cbe"}
_TERMINAL_WORDS = {"d": "drain", "g": "gate", "s": "source", "c": "collector", "b": "base",
                   "e": "emitter", "p": "+", "n": "-", "cp": "control +", "cn": "control -"}


@dataclass(frozen=True, slots=True)
class Hop:
    """One element the signal crosses: from ``from_net`` (entering at ``entry``) to ``to_net``."""

    device: str
    kind: str
    from_net: int
    to_net: int
    entry: str  # d g s b c e p n cp cn
    exit: str

    @property
    def entry_word(self) -> str:
        return _TERMINAL_WORDS.get(self.entry, self.entry)


def _edges(circuit: FlatCircuit, ac_ground: set[int]):
    adj: dict[int, list[tuple[int, int, Hop]]] = {}

    def add(a: int, b: int, cost: int, hop: Hop) -> None:
        if a in ac_ground or b in ac_ground or a == b:
            return
        adj.setdefault(a, []).append((b, cost, hop))

    for dev in circuit.devices:
        k, n = dev.kind, dev.nodes
        if k in TRANSISTORS:
            out, ctl, com = n[0], n[1], n[2]
            o, c, m = ("d", "g", "s") if k in MOS else ("c", "b", "e")
            add(ctl, out, ACTIVE_COST, Hop(dev.name, k, ctl, out, c, o))
            add(ctl, com, ACTIVE_COST, Hop(dev.name, k, ctl, com, c, m))
            add(com, out, ACTIVE_COST, Hop(dev.name, k, com, out, m, o))
        elif k in ("vcvs", "vccs") and len(n) >= 4:
            for ctl, pin in ((n[2], "cp"), (n[3], "cn")):
                for outn, opin in ((n[0], "p"), (n[1], "n")):
                    add(ctl, outn, ACTIVE_COST, Hop(dev.name, k, ctl, outn, pin, opin))
        elif k in ("resistor", "capacitor", "inductor", "diode", "vsource") and len(n) >= 2:
            add(n[0], n[1], PASSIVE_COST, Hop(dev.name, k, n[0], n[1], "p", "n"))
            add(n[1], n[0], PASSIVE_COST, Hop(dev.name, k, n[1], n[0], "n", "p"))
    return adj


def find_chain(circuit: FlatCircuit, ac_ground: set[int], from_net: int, to_net: int) -> list[Hop] | None:
    """Cheapest signal chain from ``from_net`` to ``to_net``; None when there is none.

    Notes
    -----
    Dijkstra over nets, O((N + E) log N); ties broken by device order, so the
    answer is deterministic.
    """
    if from_net == to_net:
        return []
    adj = _edges(circuit, ac_ground)
    best = {from_net: 0}
    back: dict[int, Hop] = {}
    heap = [(0, 0, from_net)]
    counter = 0
    while heap:
        cost, _, net = heapq.heappop(heap)
        if net == to_net:
            break
        if cost > best.get(net, cost):
            continue
        for nxt, step, hop in adj.get(net, ()):
            total = cost + step
            if total < best.get(nxt, total + 1):
                best[nxt] = total
                back[nxt] = hop
                counter += 1
                heapq.heappush(heap, (total, counter, nxt))
    if to_net not in back:
        return None
    hops = []
    net = to_net
    while net != from_net:
        hop = back[net]
        hops.append(hop)
        net = hop.from_net
        if len(hops) > len(circuit.nets):
            return None
    return list(reversed(hops))
