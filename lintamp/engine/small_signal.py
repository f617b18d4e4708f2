"""Small-signal (AC) solve: complex admittance matrix at the operating point.

``Y(f) = G + j*2*pi*f*C`` where G holds the linear conductances, controlled
sources and every nonlinear device's conductance stamp at the operating point,
and C the capacitors, the inductors (``-L`` on their branch row) and the device
capacitances the models define (MOS Meyer caps when TOX is given, overlap caps,
bulk junction caps; BJT CJE/CJC/TF/TR; diode CJO/TT).  Independent sources are
zeroed: a voltage source becomes a short, a current source an open.

One sparse LU factorisation of Y serves any number of nodes:
``ImpedanceSolver(circuit, op, freq_hz).z(node)``.
"""

from __future__ import annotations

import math

import numpy as np

from lintamp.engine.engine_kinds import NONLINEAR, SmallSignalError  # noqa: F401 - re-exported
from lintamp.engine.linear import add_to_diagonal, assemble, factor, to_sparse
from lintamp.engine.mna import CircuitError, CompiledCircuit, compile_circuit, floating_groups
from lintamp.engine.operating_point import OperatingPoint, solve_operating_point
from lintamp.circuit.flat import FlatCircuit

OPEN_SHUNT_S = 1e-12  # added per node only when Y is singular (a node with no AC path)
# minimum degree on A^T + A suits MNA matrices (structurally near-symmetric):
# less fill than COLAMD on netlist-like circuits
PERMC_SPEC = "COLAMD"
SELECTED_MIN = 24  # nets; below this, one solve per net is cheaper than a second LU
SELECTED_GROUP = 1000  # nets per reordered LU; the dense trailing step grows as m^3
SHARED_FACTOR_MIN = 2000  # nets; from here the variants of one frequency share one LU


class ImpedanceSolver:
    """Driving-point and transfer impedances of one circuit at one frequency.

    Parameters
    ----------
    circuit : the flat circuit.
    op : operating point (level-1 solve or an op table); solved here when None
        and the circuit has nonlinear devices.
    freq_hz : analysis frequency (0 = DC small signal).
    detach : element names removed before solving.
    grounded : net names held at AC ground (used for Thevenin impedances).
    driven : a net held at 1 V by an ideal source instead of fed by a current;
        :meth:`gain_to` then reads voltage gains from it.

    Notes
    -----
    Building Y is O(elements); the factorisation is one SuperLU call; each
    :meth:`z` is one forward/back substitution, O(nnz(L+U)).
    """

    def __init__(
        self,
        circuit: FlatCircuit,
        op: OperatingPoint | None = None,
        freq_hz: float = 0.0,
        detach=(),
        grounded=(),
        driven: str | None = None,
    ):
        self.circuit = circuit
        self.freq_hz = float(freq_hz)
        self.detach = tuple(d.lower() for d in detach)
        if op is None and any(d.kind in NONLINEAR for d in circuit.devices):
            op = solve_operating_point(circuit)
        self.op = op
        grounded_nets = []
        for name in grounded:
            idx = circuit.find_net(name)
            if idx is None:
                raise SmallSignalError(f"no net named {name!r}")
            grounded_nets.append(idx)
        series = op.series_resistances if op is not None else {}
        self.notes: list[str] = []
        self._cache: dict = {}
        self._grounded: set[int] = set()
        self._variant = None
        if len(circuit.nets) >= SHARED_FACTOR_MIN and self._from_shared_base(grounded_nets, driven, series):
            return
        try:
            self.compiled: CompiledCircuit = compile_circuit(
                circuit, detach=self.detach, grounded=grounded_nets, series_resistances=series
            )
        except CircuitError as exc:  # e.g. the controlling source of an F/H was detached
            raise SmallSignalError(f"cannot build the small-signal model: {exc}") from None
        cc = self.compiled
        if cc.unsupported:
            missing = [n for n, _ in cc.unsupported]
            raise SmallSignalError("cannot build the small-signal model: " + ", ".join(
                f"{n} ({why})" for n, why in cc.unsupported) if missing else "")
        omega = 2 * math.pi * self.freq_hz
        rows, cols, vals, owner = self._triplets(omega)
        self._driven = -1
        if driven is not None:
            k = self.unknown(driven)
            if k >= 0:
                keep = rows != k
                rows = np.concatenate([rows[keep], [k]])
                cols = np.concatenate([cols[keep], [k]])
                vals = np.concatenate([vals[keep], [1.0 + 0j]])
                owner = np.concatenate([owner[keep], [-1]])
                self._driven = k
        self._rows, self._cols, self._vals, self._owner = rows, cols, vals, owner
        matrix = assemble(rows, cols, vals, cc.size, dtype=complex)
        self._matrix, self._lu = self._factor_own(matrix)

    def _factor_own(self, matrix, singular: bool = False):
        """(matrix factored, its factor); a singular one gets a shunt on every node and a note."""
        cc = self.compiled
        try:
            if singular:
                raise RuntimeError("singular")
            return matrix, factor(matrix, PERMC_SPEC, eager=True)
        except RuntimeError:
            groups = floating_groups(cc)
            try:
                shunted = add_to_diagonal(matrix, cc.n_nodes, OPEN_SHUNT_S)
                lu = factor(shunted, PERMC_SPEC, eager=True)
            except RuntimeError as exc:
                raise SmallSignalError(
                    "singular small-signal matrix even with a shunt on every node "
                    "(a loop of voltage sources/inductors?)"
                ) from exc
            where = "; ".join(", ".join(g[:6]) for g in groups[:4]) or "some node"
            self.notes.append(
                f"the small-signal matrix is singular (no AC path at {where}); a {OPEN_SHUNT_S:g} S shunt "
                "was added to every node, so an impedance near 1e12 ohm means open"
            )
            return shunted, lu

    # -- one factorisation per frequency (lintamp/engine/shared_factor.py) ---------
    def _from_shared_base(self, grounded_nets, driven, series) -> bool:
        """Set this solver up as a variant of the whole network's factor; False when
        the whole network cannot serve (it does not compile or is singular)."""
        from lintamp.engine import shared_factor

        circuit = self.circuit
        # the lengths catch a circuit that grew since (tests build circuits step by step)
        key = (id(circuit), len(circuit.devices), len(circuit.nets), id(self.op), self.freq_hz)
        base = shared_factor.base_for(key, lambda: self._build_base(series))
        if base is None:
            return False
        cc = base.compiled
        self.compiled = cc
        self.notes = list(base.notes)
        self._device_owner = base.device_owner
        removed = set()
        for name in self.detach:
            removed.update(base.owners_of.get(name, ()))
        cleared = {cc.index_of(n) for n in grounded_nets} - {-1}
        self._grounded = cleared.copy()
        self._driven = -1
        if driven is not None:
            k = cc.index_of(circuit.find_net(driven)) if circuit.find_net(driven) is not None else -1
            if k >= 0 and k not in cleared:
                self._driven = k
                cleared.add(k)
        rows, cols, vals, owner = base.rows, base.cols, base.vals, base.owner
        if not removed and not cleared:
            self._rows, self._cols, self._vals, self._owner = rows, cols, vals, owner
            self._matrix = base.matrix
            self._lu = shared_factor.VariantFactor(base, None,
                                                   lambda singular=False: self._factor_own(base.matrix, singular)[1])
            return True
        drop = np.isin(owner, np.fromiter(removed, dtype=np.int64, count=len(removed)))
        drop |= np.isin(rows, np.fromiter(cleared, dtype=np.int64, count=len(cleared)))
        keep = ~drop
        emptied = np.setdiff1d(np.unique(rows[drop]), rows[keep])  # a detached branch, an internal node
        identity = np.union1d(np.fromiter(cleared, dtype=np.int64, count=len(cleared)), emptied)
        self._variant = (base, keep, identity)  # the triplets are the base's, masked: no copy
        import scipy.sparse as sp
        size = cc.size
        delta = sp.csr_matrix((np.concatenate([-vals[drop], np.ones(len(identity), dtype=complex)]),
                               (np.concatenate([rows[drop], identity]), np.concatenate([cols[drop], identity]))),
                              shape=(size, size))
        delta.sum_duplicates()
        delta.eliminate_zeros()
        self._matrix = None  # z_many solves net by net (a reordered LU would factor again)

        def own_factor(singular=False):
            self._matrix, lu = self._factor_own((base.matrix + delta).tocsc(), singular)
            return lu

        self._lu = shared_factor.VariantFactor(base, delta, own_factor)
        return True

    def _build_base(self, series):
        from lintamp.engine.shared_factor import SharedBase

        try:
            cc = compile_circuit(self.circuit, series_resistances=series)
        except CircuitError:
            return None
        if cc.unsupported:
            return None
        detach, self.detach, self.compiled = self.detach, (), cc
        try:
            rows, cols, vals, owner = self._triplets(2 * math.pi * self.freq_hz)
        finally:
            self.detach = detach
        matrix = assemble(rows, cols, vals, cc.size, dtype=complex)
        if isinstance(matrix, np.ndarray):
            return None
        self.notes = []
        try:  # singular as a whole (floating metal at DC): shunted once, with the note
            matrix, lu = self._factor_own(matrix)
        except SmallSignalError:
            return None
        base = SharedBase(self.circuit, self.op, cc, rows, cols, vals, owner, dict(self._device_owner),
                          matrix, lu)
        base.notes = list(self.notes)
        owners_of: dict[str, list[int]] = {}
        for k, name in enumerate(cc.element_names):
            head, _, tail = name.rpartition(":r")
            if head in series and tail.isdigit():  # a series resistance inside a device
                name = head
            owners_of.setdefault(name, []).append(k)
        for name, k in self._device_owner.items():
            owners_of.setdefault(name, []).append(k)
        base.owners_of = owners_of
        return base

    def _triplets(self, omega: float):
        cc = self.compiled
        g_r, g_c, g_v, g_o = cc.conductance.arrays()
        c_r, c_c, c_v, c_o = cc.capacitance.arrays()
        rows = [g_r, c_r]
        cols = [g_c, c_c]
        vals = [g_v.astype(complex), 1j * omega * c_v]
        owners = [g_o, c_o]
        if self.op is not None:
            names = {d.name for d in self.circuit.devices if d.kind in NONLINEAR} - set(self.detach)
            self._device_owner = {}
            for name in sorted(names):
                dop = self.op.devices.get(name)
                if dop is None:
                    raise SmallSignalError(f"no operating point for {name}")
                owner = len(cc.element_names) + len(self._device_owner)
                self._device_owner[name] = owner
                idx = np.array([cc.index_of(k) for k in dop.terminals])
                k = len(idx)
                r = np.repeat(idx, k)
                c = np.tile(idx, k)
                v = dop.jacobian_s.ravel().astype(complex)
                caps = [(a, b, cf) for a, b, cf in dop.capacitances_f]
                for a, b, cf in caps:
                    y = 1j * omega * cf
                    ia, ib = idx[a], idx[b]
                    r = np.concatenate([r, [ia, ib, ia, ib]])
                    c = np.concatenate([c, [ia, ib, ib, ia]])
                    v = np.concatenate([v, [y, y, -y, -y]])
                keep = (r >= 0) & (c >= 0) & (v != 0)
                rows.append(r[keep])
                cols.append(c[keep])
                vals.append(v[keep])
                owners.append(np.full(int(keep.sum()), owner))
        else:
            self._device_owner = {}
        return (np.concatenate(rows), np.concatenate(cols), np.concatenate(vals), np.concatenate(owners))

    def admittance_matrix(self):
        """The assembled small-signal matrix Y at this frequency (sparse CSC, complex).

        Without the 1e-12 S shunt a singular Y receives for factorisation; with
        ``driven`` its row is the driven net's ``v = 1`` constraint.
        """
        size = self.compiled.size
        if self._variant is not None:
            base, keep, identity = self._variant
            rows = np.concatenate([base.rows[keep], identity])
            cols = np.concatenate([base.cols[keep], identity])
            vals = np.concatenate([base.vals[keep], np.ones(len(identity), dtype=complex)])
            return to_sparse(assemble(rows, cols, vals, size, dtype=complex))
        return to_sparse(assemble(self._rows, self._cols, self._vals, size, dtype=complex))

    # -- lookups -----------------------------------------------------------
    def unknown(self, node: str) -> int:
        """Unknown index of a net (-1 for ground or a grounded net)."""
        net = self.circuit.find_net(node)
        if net is None:
            raise SmallSignalError(f"no net named {node!r}")
        k = self.compiled.index_of(net)
        return -1 if k in self._grounded else k

    def solve_injection(self, node: str) -> np.ndarray:
        """Solution vector for 1 A injected into ``node`` (zeros if it is AC ground)."""
        k = self.unknown(node)
        if k < 0:
            return np.zeros(self.compiled.size, dtype=complex)
        if k not in self._cache:
            rhs = np.zeros(self.compiled.size, dtype=complex)
            rhs[k] = 1.0
            self._cache[k] = self._lu.solve(rhs)
        return self._cache[k]

    def voltage(self, solution: np.ndarray, node: str) -> complex:
        k = self.unknown(node)
        return complex(solution[k]) if k >= 0 else 0j

    def z(self, node: str) -> complex:
        """Driving-point impedance of ``node`` in ohm (V per 1 A injected)."""
        return self.voltage(self.solve_injection(node), node)

    def z_many(self, nodes, block: int = 8) -> np.ndarray:
        """Driving-point impedances of many nodes.

        On a sparse matrix, from :data:`SELECTED_MIN` nets on, the nets are ordered
        last and one more LU gives all of them at once (the diagonal of the
        inverse, :mod:`lintamp.engine.inverse_diagonal`); otherwise, and for a
        net whose error bound that path refuses, blocks of right-hand sides share
        the LU.  Either way each value is the one :meth:`z` gives.

        Notes
        -----
        Selected: one reordered LU plus O(m^3) for ``m <= SELECTED_GROUP`` nets per
        group.  Solves: O(len(nodes) * nnz(L+U)); memory O(block * unknowns).
        """
        idx = np.array([self.unknown(n) for n in nodes], dtype=np.int64)
        out = np.zeros(len(idx), dtype=complex)
        wanted = np.unique(idx[idx >= 0])
        z_of = {}
        if (len(wanted) >= SELECTED_MIN and self._matrix is not None
                and not isinstance(self._matrix, np.ndarray)):
            from lintamp.engine.inverse_diagonal import inverse_diagonal

            for start in range(0, len(wanted), SELECTED_GROUP):
                group = wanted[start : start + SELECTED_GROUP]
                try:
                    values, found = inverse_diagonal(self._matrix, group)
                except RuntimeError:  # singular in the new order: solve these one by one
                    continue
                z_of.update(zip(group[found].tolist(), values[found].tolist()))
        rest = np.array([k for k in wanted.tolist() if k not in z_of], dtype=np.int64)
        size = self.compiled.size
        for start in range(0, len(rest), block):
            sel = rest[start : start + block]
            rhs = np.zeros((size, len(sel)), dtype=complex)
            rhs[sel, np.arange(len(sel))] = 1.0
            sol = self._lu.solve(rhs)
            z_of.update(zip(sel.tolist(), sol[sel, np.arange(len(sel))].tolist()))
        for i, k in enumerate(idx.tolist()):
            if k >= 0:
                out[i] = z_of[k]
        return out

    def gain_to(self, node: str) -> complex:
        """Voltage at ``node`` per volt on the ``driven`` net (needs ``driven``)."""
        if self._driven < 0:
            return 0j
        if "driven" not in self._cache:
            rhs = np.zeros(self.compiled.size, dtype=complex)
            rhs[self._driven] = 1.0
            self._cache["driven"] = self._lu.solve(rhs)
        return self.voltage(self._cache["driven"], node)

    def transfer(self, from_node: str, to_node: str) -> complex:
        """V(to_node) per 1 A injected at ``from_node`` (ohm); a transimpedance."""
        return self.voltage(self.solve_injection(from_node), to_node)

    def element_current(self, solution: np.ndarray, element: str, node: str) -> complex:
        """Small-signal current flowing from ``node`` into ``element`` in ``solution``."""
        k = self.unknown(node)
        if k < 0:
            return 0j
        cc = self.compiled
        owner = self._device_owner.get(element)
        if owner is None:
            if element not in cc.element_names:
                return 0j
            owner = cc.element_names.index(element)
        if self._variant is not None:  # the base's triplets that this variant keeps
            base, keep, _identity = self._variant
            mask = (base.owner == owner) & (base.rows == k) & keep
            return complex(np.sum(base.vals[mask] * solution[base.cols[mask]]))
        mask = (self._owner == owner) & (self._rows == k)
        return complex(np.sum(self._vals[mask] * solution[self._cols[mask]]))


def impedance(
    circuit: FlatCircuit,
    node: str,
    freq_hz: float = 0.0,
    op: OperatingPoint | None = None,
    detach=(),
) -> complex:
    """Driving-point impedance looking into ``node`` (1 A injection), in ohm."""
    return ImpedanceSolver(circuit, op, freq_hz, detach=detach).z(node)
