"""Modified nodal analysis: the unknowns and the linear stamps of a FlatCircuit.

The compiled form is shared by the DC operating point (real, with nonlinear
devices added each Newton step) and the small-signal solve (complex
``G + j*omega*C``).  Every stamp records which element it came from so that the
current into each element at a node can be read back from a solution
(:mod:`lintamp.engine.looking_into` uses that).

Unknown vector: node voltages first (every net except ground, then internal nodes
of series resistances), then branch currents of voltage-defined elements
(V, E, H, inductors, zero-ohm resistors).  Ground, and any net listed in
``grounded``, maps to -1 and its stamps are dropped.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from lintamp.circuit.kinds import MOS, NONLINEAR
from lintamp.circuit.flat import FlatCircuit, FlatDevice
from lintamp.engine.engine_kinds import EngineError

NodeKey = object  # int net index, or str "device:terminal" for an internal node

LINEAR_KINDS = {"resistor", "capacitor", "inductor", "vsource", "isource", "vcvs", "vccs", "cccs", "ccvs"}
NONLINEAR_KINDS = frozenset(NONLINEAR)
TERMINALS = {
    "nmos": ("d", "g", "s", "b"),
    "pmos": ("d", "g", "s", "b"),
    "npn": ("c", "b", "e"),
    "pnp": ("c", "b", "e"),
    "diode": ("a", "k"),
}


class CircuitError(EngineError, ValueError):
    """The circuit cannot be set up (bad value, unknown control source...)."""


@dataclass
class Stamps:
    """Triplet lists; ``owner`` is the index of the element in ``element_names``.

    Two-terminal elements (the resistors and capacitors that make up most of an
    extracted deck) are added in bulk as arrays with :meth:`add_pairs`; each pair
    stamps ``+v`` on both diagonals and ``-v`` on both off-diagonals.
    """

    rows: list[int] = field(default_factory=list)
    cols: list[int] = field(default_factory=list)
    vals: list[float] = field(default_factory=list)
    owner: list[int] = field(default_factory=list)
    pairs: list[tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]] = field(default_factory=list)
    _arrays: tuple | None = field(default=None, repr=False)

    def add(self, r: int, c: int, v: float, owner: int) -> None:
        if r >= 0 and c >= 0 and v != 0:
            self.rows.append(r)
            self.cols.append(c)
            self.vals.append(v)
            self.owner.append(owner)
            self._arrays = None

    def add_pairs(self, a, b, v, owner) -> None:
        """Stamp ``v[k]`` between unknowns ``a[k]`` and ``b[k]`` (-1 = ground, dropped)."""
        self.pairs.append((np.asarray(a, dtype=np.int64), np.asarray(b, dtype=np.int64),
                           np.asarray(v, dtype=float), np.asarray(owner, dtype=np.int64)))
        self._arrays = None

    def arrays(self):
        """(rows, cols, vals, owner) as arrays; computed once until the next add."""
        if self._arrays is None:
            rows = [np.asarray(self.rows, dtype=np.int64)]
            cols = [np.asarray(self.cols, dtype=np.int64)]
            vals = [np.asarray(self.vals, dtype=float)]
            owner = [np.asarray(self.owner, dtype=np.int64)]
            for a, b, v, o in self.pairs:
                r = np.concatenate([a, b, a, b])
                c = np.concatenate([a, b, b, a])
                w = np.concatenate([v, v, -v, -v])
                keep = (r >= 0) & (c >= 0) & (w != 0)
                rows.append(r[keep])
                cols.append(c[keep])
                vals.append(w[keep])
                owner.append(np.tile(o, 4)[keep])
            self._arrays = tuple(np.concatenate(x) for x in (rows, cols, vals, owner))
        return self._arrays


@dataclass
class CompiledCircuit:
    circuit: FlatCircuit
    size: int
    n_nodes: int
    unknown_names: list[str]
    node_index: dict  # NodeKey -> unknown index (-1 ground/grounded)
    branch_index: dict[str, int]  # element name -> unknown index of its branch current
    element_names: list[str]
    conductance: Stamps  # real, frequency independent
    capacitance: Stamps  # multiplied by j*omega (inductors: -L on the branch diagonal)
    rhs_sources: np.ndarray  # DC right-hand side of the independent sources
    nonlinear: list[tuple[FlatDevice, tuple]]  # device, node keys of its (internal) terminals
    unsupported: list[tuple[str, str]]
    anchored: np.ndarray  # unknown touches ground through a DC element (for singularity messages)
    dc_edges: list[tuple[int, int]]  # DC-conducting node pairs (for singularity messages)

    def index_of(self, key) -> int:
        return self.node_index.get(key, -1)


def _two(dev: FlatDevice) -> tuple[int, int]:
    if len(dev.nodes) < 2:
        raise CircuitError(f"{dev.name}: needs two nodes")
    return dev.nodes[0], dev.nodes[1]


def compile_circuit(
    circuit: FlatCircuit,
    detach: tuple[str, ...] | list[str] = (),
    grounded: tuple[int, ...] | list[int] = (),
    series_resistances: dict[str, dict[str, float]] | None = None,
    absent: set[int] | frozenset[int] = frozenset(),
) -> CompiledCircuit:
    """Number the unknowns and stamp every linear element.

    Parameters
    ----------
    detach : element names left out (lower case).
    grounded : net indices merged into ground (used for Thevenin impedances).
    absent : net indices no element of ``circuit`` touches (eliminated by
        :mod:`lintamp.engine.reduce`); they get no unknown (index -1).
    series_resistances : per nonlinear device, terminal -> ohm; each nonzero one
        gets an internal node between the pin and the intrinsic device.

    Notes
    -----
    O(devices + nets).
    """
    detached = {d.lower() for d in detach}
    ground_set = {0, *grounded}
    node_index: dict = {}
    names: list[str] = []
    for net, net_name in enumerate(circuit.nets):
        if net in ground_set or net in absent:
            node_index[net] = -1
        else:
            node_index[net] = len(names)
            names.append(net_name)
    series_resistances = series_resistances or {}
    devices = [d for d in circuit.devices if d.name not in detached]
    nonlinear: list[tuple[FlatDevice, tuple]] = []
    internal_resistors: list[tuple[str, object, object, float]] = []
    unsupported: list[tuple[str, str]] = []
    for dev in devices:
        if dev.kind in NONLINEAR_KINDS:
            terms = TERMINALS[dev.kind]
            if len(dev.nodes) < len(terms):  # e.g. a MOS written without its body node
                unsupported.append((dev.name, f"{len(dev.nodes)} nodes, a {dev.kind} needs "
                                              f"{len(terms)} ({' '.join(terms)})"))
                continue
            keys = []
            rs = series_resistances.get(dev.name, {})
            for t, net in zip(terms, dev.nodes[: len(terms)]):
                r = rs.get(t, 0.0)
                if r > 0:
                    key = f"{dev.name}:{t}"
                    node_index[key] = len(names)
                    names.append(f"{dev.name}#{t}")
                    internal_resistors.append((dev.name, net, key, r))
                    keys.append(key)
                else:
                    keys.append(net)
            nonlinear.append((dev, tuple(keys)))
        elif dev.kind not in LINEAR_KINDS:
            unsupported.append((dev.name, dev.kind_detail or dev.kind))
    n_nodes = len(names)
    branch_index: dict[str, int] = {}
    for dev in devices:
        if dev.kind in ("vsource", "vcvs", "ccvs", "inductor") or (dev.kind == "resistor" and dev.value == 0):
            branch_index[dev.name] = len(names)
            names.append(f"{dev.name}#branch")
    size = len(names)
    element_names = [d.name for d in devices] + [f"{n}:r{k}" for k, (n, *_r) in enumerate(internal_resistors)]
    g = Stamps()
    c = Stamps()
    rhs = np.zeros(size)
    anchored = np.zeros(size, dtype=bool)
    dc_edges: list[tuple[int, int]] = []
    idx = node_index.get

    def conductance(a, b, val, owner):
        ia, ib = idx(a, -1), idx(b, -1)
        g.add(ia, ia, val, owner)
        g.add(ib, ib, val, owner)
        g.add(ia, ib, -val, owner)
        g.add(ib, ia, -val, owner)

    def connect_dc(ia, ib):
        if ia < 0 and ib >= 0:
            anchored[ib] = True
        elif ib < 0 and ia >= 0:
            anchored[ia] = True
        elif ia >= 0 and ib >= 0:
            dc_edges.append((ia, ib))

    # resistors and capacitors, stamped in bulk after the loop
    r_a: list[int] = []
    r_b: list[int] = []
    r_g: list[float] = []
    r_o: list[int] = []
    c_a: list[int] = []
    c_b: list[int] = []
    c_v: list[float] = []
    c_o: list[int] = []
    for owner, dev in enumerate(devices):
        kind = dev.kind
        if kind in NONLINEAR_KINDS or kind not in LINEAR_KINDS:
            continue
        p, n = _two(dev)
        ip, in_ = idx(p, -1), idx(n, -1)
        if kind in ("resistor", "capacitor", "inductor", "vcvs", "vccs", "cccs", "ccvs") and dev.value is None:
            unsupported.append((dev.name, f"{kind} value could not be evaluated"))
            continue
        if kind == "resistor":
            if dev.value == 0:
                br = branch_index[dev.name]
                g.add(ip, br, 1.0, owner)
                g.add(in_, br, -1.0, owner)
                g.add(br, ip, 1.0, owner)
                g.add(br, in_, -1.0, owner)
            else:
                r_a.append(ip)
                r_b.append(in_)
                r_g.append(1.0 / dev.value)
                r_o.append(owner)
            connect_dc(ip, in_)
        elif kind == "capacitor":
            c_a.append(ip)
            c_b.append(in_)
            c_v.append(dev.value)
            c_o.append(owner)
        elif kind in ("vsource", "inductor", "vcvs", "ccvs"):
            br = branch_index[dev.name]
            g.add(ip, br, 1.0, owner)
            g.add(in_, br, -1.0, owner)
            g.add(br, ip, 1.0, owner)
            g.add(br, in_, -1.0, owner)
            connect_dc(ip, in_)
            if kind == "vsource":
                rhs[br] = dev.source.dc if dev.source is not None else (dev.value or 0.0)
                if dev.source is not None and dev.source.z0_ohm:
                    # an RF port: v_p - v_n - z0 * i = V (its impedance in series)
                    g.add(br, br, -dev.source.z0_ohm, owner)
            elif kind == "inductor":
                c.add(br, br, -dev.value, owner)
            elif kind == "vcvs":
                cp, cn = dev.nodes[2], dev.nodes[3]
                g.add(br, idx(cp, -1), -dev.value, owner)
                g.add(br, idx(cn, -1), dev.value, owner)
            else:  # ccvs
                ctrl = branch_index.get(dev.control or "")
                if ctrl is None:
                    raise CircuitError(f"{dev.name}: controlling source {dev.control!r} not found or detached")
                g.add(br, ctrl, -dev.value, owner)
        elif kind == "isource":
            i_dc = dev.source.dc if dev.source is not None else (dev.value or 0.0)
            if ip >= 0:
                rhs[ip] -= i_dc
            if in_ >= 0:
                rhs[in_] += i_dc
        elif kind == "vccs":
            cp, cn = idx(dev.nodes[2], -1), idx(dev.nodes[3], -1)
            for r, sgn in ((ip, 1.0), (in_, -1.0)):
                g.add(r, cp, sgn * dev.value, owner)
                g.add(r, cn, -sgn * dev.value, owner)
        elif kind == "cccs":
            ctrl = branch_index.get(dev.control or "")
            if ctrl is None:
                raise CircuitError(f"{dev.name}: controlling source {dev.control!r} not found or detached")
            g.add(ip, ctrl, dev.value, owner)
            g.add(in_, ctrl, -dev.value, owner)
    g.add_pairs(r_a, r_b, r_g, r_o)
    c.add_pairs(c_a, c_b, c_v, c_o)
    base = len(devices)
    for k, (_name, net, key, r) in enumerate(internal_resistors):
        conductance(net, key, 1.0 / r, base + k)
        connect_dc(idx(net, -1), idx(key, -1))
    for dev, keys in nonlinear:
        ids = [idx(k, -1) for k in keys]
        # every terminal pair of a nonlinear device conducts at DC (junction GMIN),
        # except a MOS gate
        conducting = ids if dev.kind not in MOS else [ids[0], *ids[2:4]]  # 3-pin VDMOS too
        for a in conducting[1:]:
            connect_dc(conducting[0], a)
    return CompiledCircuit(
        circuit=circuit,
        size=size,
        n_nodes=n_nodes,
        unknown_names=names,
        node_index=node_index,
        branch_index=branch_index,
        element_names=element_names,
        conductance=g,
        capacitance=c,
        rhs_sources=rhs,
        nonlinear=nonlinear,
        unsupported=unsupported,
        anchored=anchored,
        dc_edges=dc_edges,
    )


def floating_groups(cc: CompiledCircuit, include_branches: bool = False) -> list[list[str]]:
    """Groups of node unknowns with no DC-conducting path to ground.

    Notes
    -----
    Union-find over the DC edges, O(E * alpha(N)).
    """
    parent = list(range(cc.n_nodes))

    def find(a):
        while parent[a] != a:
            parent[a] = parent[parent[a]]
            a = parent[a]
        return a

    for a, b in cc.dc_edges:
        if a < cc.n_nodes and b < cc.n_nodes:
            ra, rb = find(a), find(b)
            if ra != rb:
                parent[ra] = rb
    anchored_roots = {find(i) for i in range(cc.n_nodes) if cc.anchored[i]}
    groups: dict[int, list[str]] = {}
    for i in range(cc.n_nodes):
        r = find(i)
        if r not in anchored_roots:
            groups.setdefault(r, []).append(cc.unknown_names[i])
    return sorted(groups.values())
