"""DC operating point: Newton-Raphson on the sparse MNA system.

Capacitors are open, inductors short, independent sources at their DC values.
Convergence aids, tried in order as ngspice-39 tries them: plain Newton with
SPICE-style step limiting of junction and gate voltages; dynamic GMIN stepping (a
shunt conductance on every node, reduced to zero with an adaptive factor that
backs off after a failed step); source stepping (all independent sources ramped
from zero with an adaptive step); pseudo-transient continuation (a capacitor on
every node, backward-Euler steps of growing length until the circuit settles).
Iterations are capped everywhere, so a netlist can never hang the solve.

A circuit with devices lintamp cannot evaluate raises :class:`CannotEvaluateError`
listing them; a singular matrix or a failed convergence raises
:class:`OperatingPointError` with the nodes involved.  No numbers are returned in
either case.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from lintamp.circuit.kinds import BJT, MOS, NONLINEAR
from lintamp.engine.devices_bjt import (
    BjtGroup,
    bjt_capacitances,
    bjt_controls,
    bjt_evaluate,
    bjt_limit,
    bjt_params,
)
from lintamp.engine.devices_diode import (
    DiodeGroup,
    diode_capacitance,
    diode_evaluate,
    diode_limit,
    diode_params,
)
from lintamp.engine.devices_mos import (
    MosGroup,
    UnsupportedModel,
    junction_capacitances,
    meyer_capacitances,
    mos_controls,
    mos_evaluate,
    mos_limit,
    mos_params,
)
from lintamp.engine.engine_kinds import EngineError
from lintamp.engine.linear import assemble, factor, to_dense
from lintamp.engine.mna import CircuitError, CompiledCircuit, compile_circuit, floating_groups
from lintamp.engine.reduce import reduce_for_dc
from lintamp.circuit.flat import FlatCircuit
from lintamp.text import excerpt


class OperatingPointError(EngineError, RuntimeError):
    """No DC operating point: singular system or no convergence (message says where)."""


class CannotEvaluateError(OperatingPointError):
    """The circuit holds devices or models lintamp does not simulate."""

    def __init__(self, devices: list[tuple[str, str]]):
        self.devices = devices
        listing = ", ".join(f"{n} ({why})" for n, why in devices)
        super().__init__(f"cannot evaluate the operating point: {listing}")


@dataclass
class DeviceOperatingPoint:
    """One nonlinear device at the operating point.

    ``terminals`` are node keys of the intrinsic device (net index or an internal
    node name); ``jacobian_s[t, u]`` is d I(into t) / d V(u), the small-signal
    conductance stamp; ``capacitances_f`` are (t, u, farad) two-terminal caps.
    """

    name: str
    kind: str
    region: str
    values: dict[str, float]
    terminals: tuple
    jacobian_s: np.ndarray
    capacitances_f: list[tuple[int, int, float]] = field(default_factory=list)


@dataclass
class OperatingPoint:
    node_voltages_v: dict[str, float]
    branch_currents_a: dict[str, float]
    devices: dict[str, DeviceOperatingPoint]
    method: str
    iterations: int
    source: str = "level1"
    series_resistances: dict[str, dict[str, float]] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)

    def v(self, net: str) -> float:
        return 0.0 if net in ("0", "gnd") else self.node_voltages_v[net.lower()]


@dataclass
class SolveOptions:
    reltol: float = 1e-6
    vntol_v: float = 1e-9
    abstol_a: float = 1e-14
    max_iterations: int = 100  # per Newton run (ngspice itl1)
    step_iterations: int = 30  # per homotopy step: a step that needs more is retried smaller
    max_total_iterations: int = 5000
    gmin_start_s: float = 1e-2
    source_steps_min: float = 1e-4


class _DeviceSet:
    """The nonlinear devices of a compiled circuit, grouped by model family."""

    def __init__(self, cc: CompiledCircuit, temp_c: float):
        self.cc = cc
        self.groups = []  # (family, group, devices, keys)
        unsupported = list(cc.unsupported)
        fam: dict[str, list] = {"mos": [], "bjt": [], "diode": []}
        for dev, keys in cc.nonlinear:
            if dev.model is None:
                # no model card at all (a PDK wrapper whose library is not read, or a
                # model name no .model defines): nothing to evaluate, never defaults
                detail = dev.kind_detail or ""
                unsupported.append((dev.name, detail if "model not evaluated" in detail
                                    else "its model card is not in the files read"))
                continue
            try:
                if dev.kind in MOS:
                    fam["mos"].append((mos_params(dev, temp_c), dev, keys))
                elif dev.kind in BJT:
                    fam["bjt"].append((bjt_params(dev, temp_c), dev, keys))
                else:
                    fam["diode"].append((diode_params(dev, temp_c), dev, keys))
            except UnsupportedModel as exc:
                unsupported.append((dev.name, str(exc)))
        if unsupported:
            raise CannotEvaluateError(unsupported)
        cls = {"mos": MosGroup, "bjt": BjtGroup, "diode": DiodeGroup}
        for family, items in fam.items():
            if not items:
                continue
            group = cls[family]([i[0] for i in items])
            term_idx = np.array([[cc.index_of(k) for k in i[2]] for i in items], dtype=np.int64)
            self.groups.append((family, group, [i[1] for i in items], [i[2] for i in items], term_idx))
        self._pattern()

    def _pattern(self):
        rows, cols = [], []
        for _f, _g, _d, _k, term in self.groups:
            k = term.shape[1]
            rows.append(np.repeat(term, k, axis=1).ravel())
            cols.append(np.tile(term, (1, k)).ravel())
        self.rows = np.concatenate(rows) if rows else np.zeros(0, np.int64)
        self.cols = np.concatenate(cols) if cols else np.zeros(0, np.int64)
        self.keep = (self.rows >= 0) & (self.cols >= 0)

    def initial_state(self):
        state = []
        for family, g, _d, _k, _t in self.groups:
            n = len(g)
            if family == "mos":
                state.append((g.vto_v.copy(), np.zeros(n), -np.ones(n)))
            elif family == "bjt":
                state.append((g.vcrit_v.copy(), np.zeros(n)))
            else:
                state.append(g.vcrit_v.copy())
        return state

    @staticmethod
    def _term_voltages(x, term):
        xv = np.concatenate([x, [0.0]])
        return xv[np.where(term >= 0, term, len(x))]

    def raw_controls(self, x):
        out = []
        for family, g, _d, _k, term in self.groups:
            v = self._term_voltages(x, term)
            if family == "mos":
                out.append(mos_controls(g, v[:, 0], v[:, 1], v[:, 2], v[:, 3]))
            elif family == "bjt":
                out.append(bjt_controls(g, v[:, 0], v[:, 1], v[:, 2]))
            else:
                out.append(v[:, 0] - v[:, 1])
        return out

    def limit(self, new, old):
        out, any_lim = [], False
        for (family, g, *_), n, o in zip(self.groups, new, old):
            if family == "mos":
                lim, flags = mos_limit(g, n, o)
            elif family == "bjt":
                lim, flags = bjt_limit(g, n, o)
            else:
                lim, flags = diode_limit(g, n, o)
            out.append(lim)
            any_lim = any_lim or bool(np.any(flags))
        return out, any_lim

    def evaluate(self, state):
        evs = []
        for (family, g, *_), st in zip(self.groups, state):
            if family == "mos":
                evs.append(mos_evaluate(g, *st))
            elif family == "bjt":
                evs.append(bjt_evaluate(g, *st))
            else:
                evs.append(diode_evaluate(g, st))
        return evs

    def linearised(self, state, evs, size):
        """Jacobian values (for the fixed pattern) and the right-hand side."""
        vals, rhs = [], np.zeros(size + 1)
        for (family, g, _d, _k, term), st, ev in zip(self.groups, state, evs):
            if family == "mos":
                vgs, vds, vbs = st
                s = g.sign
                vrel = np.stack([s * vds, s * vgs, np.zeros_like(vds), s * vbs], axis=1)
            elif family == "bjt":
                vbe, vbc = st
                s = g.sign
                vrel = np.stack([s * (vbe - vbc), s * vbe, np.zeros_like(vbe)], axis=1)
            else:
                vrel = np.stack([st, np.zeros_like(st)], axis=1)
            jac = ev.jacobian_s
            ceq = ev.current_a - np.einsum("ktu,ku->kt", jac, vrel)
            np.add.at(rhs, np.where(term >= 0, term, size), -ceq)
            vals.append(jac.ravel())
        v = np.concatenate(vals) if vals else np.zeros(0)
        return v, rhs[:size]


def _assemble(cc: CompiledCircuit, devs: _DeviceSet, dev_vals, gshunt):
    g_r, g_c, g_v, _ = cc.conductance.arrays()
    rows = [g_r, devs.rows[devs.keep]]
    cols = [g_c, devs.cols[devs.keep]]
    vals = [g_v, dev_vals[devs.keep]]
    if gshunt:
        diag = np.arange(cc.n_nodes)
        rows.append(diag)
        cols.append(diag)
        vals.append(np.full(cc.n_nodes, gshunt))
    return assemble(np.concatenate(rows), np.concatenate(cols), np.concatenate(vals), cc.size)


SVD_MAX_UNKNOWNS = 200  # above this a singular matrix is described without naming nodes


def describe_singular(cc: CompiledCircuit, matrix=None) -> str:
    """A message naming the nodes or branches that make the MNA matrix singular."""
    groups = floating_groups(cc)
    if groups:
        shown = "; ".join(", ".join(excerpt(n) for n in g[:8]) + (" ..." if len(g) > 8 else "")
                          for g in groups[:5])
        return f"singular matrix: no DC path to ground from node(s) {shown}"
    # a dense SVD costs O(size**3): 0.03 s at 150 unknowns, 34 s at 2,000 on 2 cores
    dense = to_dense(matrix) if matrix is not None and cc.size <= SVD_MAX_UNKNOWNS else None
    if dense is not None and np.isfinite(dense).all():  # an overflowed value has no SVD
        try:
            _u, s, vt = np.linalg.svd(dense)
        except np.linalg.LinAlgError:
            vt = None
        if vt is not None:
            null = np.abs(vt[-1])
            involved = [excerpt(cc.unknown_names[i]) for i in np.argsort(-null)[:6]
                        if null[i] > 0.1 * null.max()]
            return ("singular matrix: check " + ", ".join(involved)
                    + " (a loop of voltage sources/inductors, or a cut set of current sources)")
    return "singular matrix (a loop of voltage sources/inductors, or a cut set of current sources)"


def _solve(cc, matrix, rhs):
    try:
        return factor(matrix).solve(rhs)
    except RuntimeError as exc:
        raise OperatingPointError(describe_singular(cc, matrix)) from exc


class _Budget:
    def __init__(self, total):
        self.left = total
        self.used = 0


def _newton(cc, devs, x0, state0, scale, gshunt, opts, budget, first_from_state, x_ref=None,
            max_iterations=None):
    """One Newton run; returns (x, state, iterations) or None when it does not converge.

    ``gshunt`` ties every node to ground through that conductance (GMIN stepping) or,
    with ``x_ref``, to the voltage ``x_ref`` holds for it (a backward-Euler step of a
    capacitor on every node: pseudo-transient continuation).
    """
    x = x0.copy()
    state = state0
    rhs_src = cc.rhs_sources * scale
    is_node = np.arange(cc.size) < cc.n_nodes
    if x_ref is not None and gshunt:
        rhs_src = rhs_src + np.where(is_node, gshunt * x_ref, 0.0)
    for it in range(max_iterations or opts.max_iterations):
        if budget.left <= 0:
            return None
        budget.left -= 1
        budget.used += 1
        if it == 0 and first_from_state:
            limited, any_lim = state, True
        else:
            limited, any_lim = devs.limit(devs.raw_controls(x), state)
        evs = devs.evaluate(limited)
        vals, rhs_dev = devs.linearised(limited, evs, cc.size)
        matrix = _assemble(cc, devs, vals, gshunt)
        x_new = _solve(cc, matrix, rhs_src + rhs_dev)
        if not np.all(np.isfinite(x_new)):
            return None
        tol = opts.reltol * np.maximum(np.abs(x_new), np.abs(x)) + np.where(is_node, opts.vntol_v, opts.abstol_a)
        small = np.all(np.abs(x_new - x) <= tol)
        x, state = x_new, limited
        if small and not any_lim and it > 0:
            return x, state, it + 1
    return None


def solve_operating_point(circuit: FlatCircuit, options: SolveOptions | None = None) -> OperatingPoint:
    """Solve the DC operating point of ``circuit``.

    Returns
    -------
    OperatingPoint
        Node voltages by net name, branch currents of voltage-defined elements,
        and every nonlinear device's small-signal values and region.

    Raises
    ------
    CannotEvaluateError
        Devices of kind ``other`` or models outside level-1 MOS / Gummel-Poon / diode.
    OperatingPointError
        Singular matrix (message names the nodes) or no convergence.

    Notes
    -----
    Each Newton step is one sparse LU (SuperLU) of the MNA matrix: roughly linear in
    circuit size for netlist-like sparsity; iterations are capped by ``options``.
    """
    opts = options or SolveOptions()
    # capacitors are open and wire resistance reduces exactly: Newton runs on what is left
    reduction = reduce_for_dc(circuit)
    reduced = reduction.circuit
    series = _series_resistances(reduced)
    touched = {n for dev in reduced.devices for n in dev.nodes}
    absent = {n for n in range(1, len(circuit.nets)) if n not in touched}
    try:
        cc = compile_circuit(reduced, series_resistances=series, absent=absent)
    except CircuitError as exc:  # e.g. an F/H source whose controlling source is absent
        raise OperatingPointError(f"cannot set up the circuit: {exc}") from None
    if cc.unsupported:
        raise CannotEvaluateError(cc.unsupported)
    devs = _DeviceSet(cc, circuit.temperature_c)  # raises first for devices it cannot evaluate
    if floating_groups(cc):  # singular however round-off hides it: never a number from it
        raise OperatingPointError(describe_singular(cc))
    budget = _Budget(opts.max_total_iterations)
    x0 = np.zeros(cc.size)
    state0 = devs.initial_state()
    result = _newton(cc, devs, x0, state0, 1.0, 0.0, opts, budget, True)
    method = "newton"
    if result is None:
        result = _gmin_stepping(cc, devs, state0, opts, budget)
        method = "gmin stepping"
    if result is None:
        result = _source_stepping(cc, devs, state0, opts, budget)
        method = "source stepping"
    if result is None:
        result = _pseudo_transient(cc, devs, state0, opts, budget)
        method = "pseudo-transient"
    if result is None:
        raise OperatingPointError(
            f"no DC convergence after {budget.used} Newton iterations "
            "(plain Newton, GMIN stepping, source stepping and pseudo-transient all failed); "
            "look for positive feedback without a stable point, or nodes held only by devices that are off"
        )
    x, state, _ = result
    op = _build_result(cc, devs, x, method, budget.used, series)
    if reduction.eliminated:
        kept = {n: x[i] for n, i in cc.node_index.items() if isinstance(n, int) and i >= 0}
        voltages = reduction.expand(kept)
        op.node_voltages_v = {name: float(voltages[n]) for n, name in enumerate(circuit.nets)
                              if n and n in voltages}
        op.notes.append(_reduction_note(reduction))
    return op


def _reduction_note(reduction) -> str:
    words = (f"DC solve on the reduced network: {len(reduction.steps)} wire node(s) of "
             f"{reduction.resistors_before} resistor(s) eliminated exactly")
    if reduction.floating:
        words += (f"; {len(reduction.floating)} net(s) that only capacitors hold have no DC level "
                  "(floating metal)")
    return words


GMIN_FACTOR_MAX = 10.0  # ngspice's gminfactor: the largest step down per accepted solve
GMIN_FACTOR_MIN = 1.00005  # a step smaller than this: GMIN stepping gives up (as ngspice does)
GMIN_FINAL_S = 1e-12


def _gmin_stepping(cc, devs, state0, opts, budget):
    """Dynamic GMIN stepping as ngspice does it: a shunt on every node from ``gmin_start_s``
    down to nothing; after a solve that fails, back to the last good one with a smaller step
    (the factor's fourth root), after an easy one a larger step."""
    gmin = opts.gmin_start_s
    res = _newton(cc, devs, np.zeros(cc.size), state0, 1.0, gmin, opts, budget, True)
    if res is None:
        return None
    x, state, _ = res
    factor = GMIN_FACTOR_MAX
    while True:
        trial = gmin / factor
        final = trial < GMIN_FINAL_S
        res = _newton(cc, devs, x, state, 1.0, 0.0 if final else trial, opts, budget, False,
                      max_iterations=opts.step_iterations)
        if res is not None:
            x, state, its = res
            if final:
                return res
            gmin = trial
            if its < opts.step_iterations // 3:
                factor = min(factor * np.sqrt(factor), GMIN_FACTOR_MAX)
            continue
        if budget.left <= 0:
            return None
        factor = factor ** 0.25
        if factor < GMIN_FACTOR_MIN:
            return None


def _source_stepping(cc, devs, state0, opts, budget):
    """Source stepping (ngspice's gillespie variant): every independent source from zero,
    first solved with GMIN stepping when plain Newton fails there, then raised by an
    adaptive fraction, halved back after a failed step."""
    res = _newton(cc, devs, np.zeros(cc.size), state0, 0.0, 0.0, opts, budget, True)
    if res is None:
        res = _gmin_at_scale(cc, devs, state0, opts, budget, 0.0)
    if res is None:
        return None
    x, state, _ = res
    scale, step = 0.0, 1e-3
    while scale < 1.0:
        trial = min(1.0, scale + step)
        res = _newton(cc, devs, x, state, trial, 0.0, opts, budget, False,
                      max_iterations=opts.step_iterations)
        if res is None:
            step /= 10
            if step < opts.source_steps_min * 1e-3 or budget.left <= 0:
                return None
            continue
        x, state, its = res
        scale = trial
        step = min(step * (1.5 if its < opts.step_iterations // 3 else 1.0), 0.1)
    return res


def _gmin_at_scale(cc, devs, state0, opts, budget, scale):
    gmin = opts.gmin_start_s
    res = _newton(cc, devs, np.zeros(cc.size), state0, scale, gmin, opts, budget, True)
    while res is not None and gmin > 0:
        x, state, _ = res
        gmin = gmin / 10 if gmin > GMIN_FINAL_S else 0.0
        res = _newton(cc, devs, x, state, scale, gmin, opts, budget, False)
    return res


PTRAN_START_S = 1e-2  # C/h of the first pseudo-transient step, per node (a 1 nF cap, 0.1 us step)
PTRAN_END_S = 1e-13  # below this the capacitors no longer matter: a last plain Newton
PTRAN_MAX_STEPS = 400


def _pseudo_transient(cc, devs, state0, opts, budget):
    """Pseudo-transient continuation: a capacitor on every node, the sources switched on at
    t = 0, backward-Euler steps of growing length until the circuit settles, then plain
    Newton from there (what ngspice's ``optran`` does when the homotopies fail)."""
    x = np.zeros(cc.size)
    state = state0
    g = PTRAN_START_S  # C/h
    first = True
    for _ in range(PTRAN_MAX_STEPS):
        if budget.left <= 0:
            return None
        final = g < PTRAN_END_S
        res = _newton(cc, devs, x, state, 1.0, 0.0 if final else g, opts, budget, first,
                      x_ref=None if final else x, max_iterations=opts.step_iterations)
        if res is None:
            if final:
                g = PTRAN_END_S * 10  # not settled yet: keep stepping
                continue
            g *= 8.0
            if g > 1e6:
                return None
            continue
        x_new, state, its = res
        first = False
        if final:
            return res
        moved = float(np.max(np.abs(x_new[: cc.n_nodes] - x[: cc.n_nodes]))) if cc.n_nodes else 0.0
        x = x_new
        g /= 4.0 if its < 10 else 1.5
        if moved < 1e-9:
            g = min(g, PTRAN_END_S / 2)
    return None


def _series_resistances(circuit: FlatCircuit) -> dict[str, dict[str, float]]:
    out: dict[str, dict[str, float]] = {}
    for dev in circuit.devices:
        try:
            if dev.kind in BJT:
                q = bjt_params(dev, circuit.temperature_c)
                rs = {"c": q.rc_ohm, "b": q.rb_ohm, "e": q.re_ohm}
            elif dev.kind == "diode":
                rs = {"a": diode_params(dev, circuit.temperature_c).rs_ohm}
            else:
                continue
        except UnsupportedModel:
            continue
        rs = {k: v for k, v in rs.items() if v > 0}
        if rs:
            out[dev.name] = rs
    return out


def _build_result(cc, devs, x, method, iterations, series) -> OperatingPoint:
    circuit = cc.circuit
    node_v = {}
    for net, name in enumerate(circuit.nets):
        if net == 0 or cc.node_index[net] < 0:
            continue  # an eliminated net: reduce.expand gives its voltage
        node_v[name] = float(x[cc.node_index[net]])
    branch_i = {name: float(x[i]) for name, i in cc.branch_index.items()}
    # evaluate exactly at the solution (no limiting) for small-signal values
    exact = devs.raw_controls(x)
    evs = devs.evaluate(exact)
    devices: dict[str, DeviceOperatingPoint] = {}
    for (family, g, dev_list, key_list, _t), st, ev in zip(devs.groups, exact, evs):
        if family == "mos":
            cgs, cgd, cgb = meyer_capacitances(g, ev)
            cbd, cbs = junction_capacitances(g, ev)
        elif family == "bjt":
            cbe, cbc = bjt_capacitances(g, ev)
        else:
            cd = diode_capacitance(g, ev)
        for k, (dev, keys) in enumerate(zip(dev_list, key_list)):
            jac = ev.jacobian_s[k].copy()
            if family == "mos":
                gm, gds, gmb = ev.gm_s[k], ev.gds_s[k], ev.gmb_s[k]
                values = {
                    "ids_a": float(ev.ids_a[k]),
                    "gm_s": float(gm),
                    "gds_s": float(gds),
                    "gmb_s": float(gmb),
                    "ro_ohm": float(1 / gds) if gds > 0 else float("inf"),
                    "vth_v": float(ev.vth_v[k]),
                    "vdsat_v": float(ev.vdsat_v[k]),
                    "vgs_v": float(g.sign[k] * ev.vgs_v[k]),
                    "vds_v": float(g.sign[k] * ev.vds_v[k]),
                    "vbs_v": float(g.sign[k] * ev.vbs_v[k]),
                    "gbd_s": float(ev.gbd_s[k]),
                    "gbs_s": float(ev.gbs_s[k]),
                    "mode": float(ev.mode[k]),
                    "cgs_f": float(cgs[k]),
                    "cgd_f": float(cgd[k]),
                    "cgb_f": float(cgb[k]),
                    "cbd_f": float(cbd[k]),
                    "cbs_f": float(cbs[k]),
                }
                caps = [(1, 2, cgs[k]), (1, 0, cgd[k]), (1, 3, cgb[k]), (3, 0, cbd[k]), (3, 2, cbs[k])]
            elif family == "bjt":
                gm, gpi, go = ev.gm_s[k], ev.gpi_s[k], ev.go_s[k]
                values = {
                    "ic_a": float(ev.ic_a[k]),
                    "ib_a": float(ev.ib_a[k]),
                    "gm_s": float(gm),
                    "gpi_s": float(gpi),
                    "gmu_s": float(ev.gmu_s[k]),
                    "go_s": float(go),
                    "rpi_ohm": float(1 / gpi) if gpi > 0 else float("inf"),
                    "ro_ohm": float(1 / go) if go > 0 else float("inf"),
                    "beta_ac": float(gm / gpi) if gpi > 0 else float("inf"),
                    "vbe_v": float(g.sign[k] * ev.vbe_v[k]),
                    "vce_v": float(g.sign[k] * (ev.vbe_v[k] - ev.vbc_v[k])),
                    "cbe_f": float(cbe[k]),
                    "cbc_f": float(cbc[k]),
                }
                caps = [(1, 2, cbe[k]), (1, 0, cbc[k])]
            else:
                values = {
                    "id_a": float(ev.id_a[k]),
                    "gd_s": float(ev.gd_s[k]),
                    "rd_ohm": float(1 / ev.gd_s[k]),
                    "vd_v": float(ev.vd_v[k]),
                    "cd_f": float(cd[k]),
                }
                caps = [(0, 1, cd[k])]
            devices[dev.name] = DeviceOperatingPoint(
                name=dev.name,
                kind=dev.kind,
                region=ev.region[k],
                values=values,
                terminals=keys,
                jacobian_s=jac,
                capacitances_f=[(a, b, float(c)) for a, b, c in caps if c > 0],
            )
    return OperatingPoint(
        node_voltages_v=node_v,
        branch_currents_a=branch_i,
        devices=devices,
        method=method,
        iterations=iterations,
        series_resistances=series,
    )
