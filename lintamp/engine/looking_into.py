"""Why a node has the impedance it has: one textbook term per attached branch.

The headline number is the exact MNA driving-point impedance.  Each element
attached to the node then gets

* ``z_mna``: the node voltage over the small-signal current that element takes
  from the 1 A injection, so the branches combine in parallel to exactly the
  headline (KCL);
* a reviewer's formula (Razavi ch. 3 / Sedra & Smith ch. 7 / Gray & Meyer ch. 3
  forms, see :mod:`lintamp.engine.formulas`) evaluated with the device's
  operating-point values and with the impedance of its far terminals computed
  with the device detached (R_D, R_S, R_E, R_B);
* a note when formula and MNA disagree by more than 5 % (typically local
  feedback through another path, or capacitances the resistive form leaves out).

A two-terminal element to a node that is not AC ground is explained exactly by
``(Z_e + Z_th)/(1 - A)``: ``Z_th`` the far node's impedance with this node held at
AC ground, ``A`` the voltage gain from this node to the far node with the element
removed.  That covers a plain ``R + Z(far)`` (A ~ 0) and shunt feedback
``R_F/(1 + A)`` (inverting gain A at the far end).
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from lintamp.circuit.kinds import BJT, MOS
from lintamp.engine import formulas as fm
from lintamp.circuit.flat import FlatCircuit, FlatDevice
from lintamp.engine.engine_kinds import OPEN_OHM, UnknownNet, is_open

if TYPE_CHECKING:  # the engine (numpy, scipy) is imported only when a node is explained
    from lintamp.engine.operating_point import OperatingPoint

MISMATCH_LIMIT = 0.05
INF = math.inf


@dataclass
class Branch:
    via: str
    formula: str
    z_ohm: complex | float  # formula value (inf = open)
    z_mna_ohm: complex | float  # exact share of this branch
    terms: dict[str, float] = field(default_factory=dict)
    elements: list[str] = field(default_factory=list)
    note: str = ""


@dataclass
class NodeExplanation:
    node: str
    freq_hz: float
    z_ohm: complex
    branches: list[Branch]
    notes: list[str]


def ac_ground_nets(circuit: FlatCircuit, detach=(), signal_sources_ground: bool = True) -> set[int]:
    """Nets at AC ground: ground and nets tied to it through independent voltage sources.

    With ``signal_sources_ground=False`` a source carrying an AC value or a
    waveform counts as a signal input, not as AC ground (for naming stages).

    Notes
    -----
    Breadth-first over voltage-source edges, O(devices).
    """
    detached = set(detach)
    adj: dict[int, list[int]] = {}
    for dev in circuit.devices:
        signal = dev.source is not None and (dev.source.ac_mag != 0 or dev.source.time_varying)
        if dev.kind == "vsource" and dev.name not in detached and (signal_sources_ground or not signal):
            a, b = dev.nodes[0], dev.nodes[1]
            adj.setdefault(a, []).append(b)
            adj.setdefault(b, []).append(a)
    seen = {0}
    todo = [0]
    while todo:
        n = todo.pop()
        for m in adj.get(n, ()):
            if m not in seen:
                seen.add(m)
                todo.append(m)
    return seen


def _as_number(z):
    if isinstance(z, complex) and abs(z.imag) <= 1e-12 * max(abs(z.real), 1e-300):
        return z.real
    return z


def _mag(z) -> float:
    return abs(z) if z is not None else INF


class _Explainer:
    def __init__(self, circuit, op, freq_hz, detach):
        self.circuit = circuit
        self.op = op
        self.freq_hz = freq_hz
        self.detach = tuple(detach)
        self.omega = 2 * math.pi * freq_hz
        from lintamp.engine.small_signal import ImpedanceSolver
        self.solver = ImpedanceSolver(circuit, op, freq_hz, detach=self.detach)
        self.op = self.solver.op
        self.ac_ground = ac_ground_nets(circuit, self.detach)
        self._aux: dict = {}

    def name_of(self, net: int) -> str:
        return self.circuit.nets[net]

    def aux_solver(self, extra_detach=(), grounded=(), driven=None):
        key = (tuple(sorted(extra_detach)), tuple(sorted(grounded)), driven)
        if key not in self._aux:
            from lintamp.engine.small_signal import ImpedanceSolver
            self._aux[key] = ImpedanceSolver(
                self.circuit, self.op, self.freq_hz, detach=self.detach + tuple(extra_detach),
                grounded=grounded, driven=driven,
            )
        return self._aux[key]

    def gain(self, from_net: int, to_net: int, without: str) -> complex:
        """v(to)/v(from) with ``from`` driven by a voltage and ``without`` detached."""
        if to_net in self.ac_ground:
            return 0j
        if to_net == from_net:
            return 1 + 0j
        return self.aux_solver((without,), driven=self.name_of(from_net)).gain_to(self.name_of(to_net))

    def z_seen(self, net: int, without: str):
        """Impedance at ``net`` with element ``without`` detached (0 for AC ground)."""
        if net in self.ac_ground:
            return 0.0
        z = self.aux_solver((without,)).z(self.name_of(net))
        return INF if abs(z) >= OPEN_OHM else _as_number(z)

    # -- element kinds -------------------------------------------------------------
    def two_terminal(self, dev: FlatDevice, node: int, z_e, label: str, symbol: str) -> Branch:
        other = dev.nodes[1] if dev.nodes[0] == node else dev.nodes[0]
        if other in self.ac_ground:
            return Branch(f"{label} to AC ground", symbol, z_e, 0, {f"{symbol}_ohm": _mag(z_e)})
        far = self.name_of(other)
        here = self.name_of(node)
        gain = self.gain(node, other, dev.name)
        z_th = self.aux_solver((dev.name,), (here,)).z(far)
        z_th = INF if abs(z_th) >= OPEN_OHM else z_th
        terms = {f"{symbol}_ohm": _mag(z_e), f"Z_{far}_ohm": _mag(z_th)}
        if abs(gain) < 1e-3:
            return Branch(f"{label} to {far}", f"{symbol} + Z({far})", _as_number(z_e + z_th), 0, terms)
        terms["A_v"] = _mag(gain)
        value = fm.over_or_open(z_e + z_th, 1 - gain)
        if gain.real < 0 and abs(z_th) < 0.01 * abs(z_e):
            formula = f"{symbol}/(1 + A), A = -v({far})/v({here})"
            terms["A_v"] = -gain.real
        elif gain.real < 0:
            formula = f"({symbol} + Z_out({far}))/(1 + A), A = -v({far})/v({here})"
            terms["A_v"] = -gain.real
        else:
            formula = f"({symbol} + Z_th({far}))/(1 - A_v), A_v = v({far})/v({here})"
        return Branch(f"{label} to {far} (feedback)" if gain.real < 0 else f"{label} to {far}",
                      formula, _as_number(value), 0, terms)

    def mos(self, dev: FlatDevice, node: int) -> Branch:
        d, g, s, b = dev.nodes[:4]
        if self._reversed(dev, d, s):
            d, s = s, d  # the channel conducts the other way: its source is the netlist's drain
        v = self.op.devices[dev.name].values
        gm, gds = v["gm_s"], v["gds_s"]
        gmb = 0.0 if b == s else v["gmb_s"]
        ro = 1 / gds if gds > 0 else INF
        k = dev.name
        terms = {f"g_m_{k}_s": gm, f"g_mb_{k}_s": gmb, f"r_o_{k}_ohm": ro}
        at = {t for t, n in zip("dgs", (d, g, s)) if n == node}
        if at == {"s"}:
            rd = self.z_seen(d, k)
            terms["R_D_ohm"] = _mag(rd)
            if g == d:
                z = fm.source_with_gate_at_drain_ohm(gm, gmb, gds, rd)
                return Branch(f"source of {k} (gate tied to drain)", "(1 + (g_m+g_ds) R_D)/(g_m+g_mb+g_ds)", z, 0, terms)
            if d in self.ac_ground:
                z = fm.follower_output_ohm(gm, gmb, ro)
                return Branch(f"source of {k} (follower output)", "1/(g_m+g_mb) || r_o", z, 0, terms)
            z = fm.cg_input_ohm(gm, gmb, ro, rd)
            return Branch(f"source of {k} (common-gate input)", "(R_D + r_o)/(1 + (g_m+g_mb) r_o)", z, 0, terms)
        if at == {"d"} and s in self.ac_ground and g not in self.ac_ground:
            a_g = self.gain(node, g, k)
            if abs(a_g) > 1e-3:
                terms["A_gate"] = _mag(a_g)
                z = _as_number(fm.over_or_open(1, gds + gm * a_g))
                return Branch(f"drain of {k} (its gate follows the drain)", "r_o || 1/(g_m A_gate), A_gate = v(gate)/v(drain)",
                              z, 0, terms)
        if at == {"d"}:
            rs = self.z_seen(s, k)
            terms["R_S_ohm"] = _mag(rs)
            if rs == 0:
                return Branch(f"drain of {k}", "r_o", ro, 0, terms)
            z = fm.degenerated_drain_ohm(gm, gmb, ro, rs)
            return Branch(f"drain of {k} (degenerated by R_S)", "r_o (1 + (g_m+g_mb) R_S) + R_S", z, 0, terms)
        if at == {"d", "g"}:
            rs = self.z_seen(s, k)
            terms["R_S_ohm"] = _mag(rs)
            z = fm.diode_connected_ohm(gm, gmb, gds, rs)
            if rs == 0:
                return Branch(f"diode-connected {k}", "1/g_m || r_o", z, 0, terms)
            return Branch(f"diode-connected {k} (source sees R_S)", "(1 + (g_m+g_mb+g_ds) R_S)/(g_m+g_ds)", z, 0, terms)
        if at == {"g"}:
            cgg = v["cgs_f"] + v["cgd_f"] + v["cgb_f"]
            if self.omega == 0 or cgg == 0:
                return Branch(f"gate of {k}", "open (no gate current)", INF, 0, {})
            return Branch(f"gate of {k}", "1/(j w (C_gs + C_gd + C_gb)), Miller effect not included",
                          1 / (1j * self.omega * cgg), 0, {"C_gg_f": cgg})
        return Branch(f"{'+'.join(sorted(at))} of {k}", "MNA (no textbook form for this connection)", None, 0, terms)

    def _reversed(self, dev: FlatDevice, d: int, s: int) -> bool:
        """Whether a MOS conducts from its netlist source to its netlist drain at the
        operating point (an NMOS whose 'drain' sits below its 'source'): a symmetric
        device, as an extractor writes every other finger.  ngspice-39 and lintamp's
        level-1 solve swap the pins there, and the small-signal values are for the
        pins as swapped."""
        try:
            vd = self.op.v(self.circuit.nets[d])
            vs = self.op.v(self.circuit.nets[s])
        except (KeyError, IndexError):
            return False  # a table without node voltages: the pins as written
        return vd < vs if dev.kind == "nmos" else vd > vs

    def bjt(self, dev: FlatDevice, node: int) -> Branch:
        c, b, e = dev.nodes[:3]
        v = self.op.devices[dev.name].values
        gm, rpi, ro = v["gm_s"], v["rpi_ohm"], v["ro_ohm"]
        k = dev.name
        terms = {f"g_m_{k}_s": gm, f"r_pi_{k}_ohm": rpi, f"r_o_{k}_ohm": ro, f"beta_{k}": gm * rpi}
        at = {t for t, n in zip("cbe", (c, b, e)) if n == node}
        if at == {"b"}:
            re = self.z_seen(e, k)
            terms["R_E_ohm"] = _mag(re)
            return Branch(f"base of {k}", "r_pi + (beta+1)(R_E || r_o)", fm.bjt_base_ohm(gm, rpi, ro, re), 0, terms)
        if at == {"e"}:
            rb = self.z_seen(b, k)
            rc = self.z_seen(c, k)
            terms["R_B_ohm"] = _mag(rb)
            terms["R_C_ohm"] = _mag(rc)
            via = f"emitter of {k}" + (" (emitter-follower output)" if c in self.ac_ground else "")
            if _mag(rb) == 0:
                form = "(r_o + R_C)/(1 + g_m r_o) || r_pi"
            else:
                form = "(r_o + R_C)/(1 + g_m r_o r_pi/(r_pi + R_B)) || (r_pi + R_B)"
            return Branch(via, form, fm.bjt_emitter_exact_ohm(gm, rpi, ro, rb, rc), 0, terms)
        if at == {"c"}:
            re = self.z_seen(e, k)
            terms["R_E_ohm"] = _mag(re)
            return Branch(f"collector of {k}", "r_o [1 + g_m (R_E || r_pi)] + R_E || r_pi",
                          fm.bjt_collector_ohm(gm, rpi, ro, re), 0, terms)
        if at == {"b", "c"} and e in self.ac_ground:
            return Branch(f"diode-connected {k}", "1/g_m || r_pi || r_o", fm.bjt_diode_ohm(gm, rpi, ro), 0, terms)
        return Branch(f"{'+'.join(sorted(at))} of {k}", "MNA (no textbook form for this connection)", None, 0, terms)

    def element(self, dev: FlatDevice, node: int) -> Branch | None:
        kind = dev.kind
        n = dev.name
        if kind == "resistor":
            return self.two_terminal(dev, node, dev.value, f"resistor {n}", f"R_{n}")
        if kind == "capacitor":
            z = 1 / (1j * self.omega * dev.value) if self.omega else INF
            if z == INF:
                return Branch(f"capacitor {n}", "open at DC", INF, 0, {})
            return self.two_terminal(dev, node, z, f"capacitor {n}", f"1/(j w C_{n})")
        if kind == "inductor":
            return self.two_terminal(dev, node, 1j * self.omega * dev.value, f"inductor {n}", f"j w L_{n}")
        if kind == "diode":
            v = self.op.devices[n].values
            z = 1 / (v["gd_s"] + 1j * self.omega * v["cd_f"])
            br = self.two_terminal(dev, node, z, f"diode {n}", f"r_d_{n}")
            br.terms.update({f"r_d_{n}_ohm": v["rd_ohm"]})
            return br
        if kind == "vsource":
            return self.two_terminal(dev, node, 0.0, f"voltage source {n} (AC short)", "0")
        if kind == "isource":
            return Branch(f"current source {n}", "open (ideal current source)", INF, 0, {})
        if kind in ("vcvs", "ccvs"):
            if node in dev.nodes[:2]:
                return self.two_terminal(dev, node, 0.0, f"output of {n} (ideal voltage output)", "0")
            return None  # a control input draws no current
        if kind in ("vccs", "cccs"):
            if node not in dev.nodes[:2]:
                return None
            if kind == "vccs" and node in dev.nodes[2:4]:
                gain = dev.value
                return Branch(f"{n} controlled by its own node", f"1/g_{n}", 1 / gain if gain else INF, 0,
                              {f"g_{n}_s": gain})
            return Branch(f"output of {n}", "open (ideal current output)", INF, 0, {})
        if kind in MOS:
            return self.mos(dev, node)
        if kind in BJT:
            return self.bjt(dev, node)
        return Branch(f"{dev.kind} {n}", "not simulated", None, 0, {})

    def explain(self, node_name: str) -> NodeExplanation:
        node = self.circuit.find_net(node_name)
        if node is None:
            raise UnknownNet(f"no net named {node_name!r}")
        solver = self.solver
        z = solver.z(node_name)
        notes = list(solver.notes)
        if node in self.ac_ground:
            notes.append(f"{node_name} is AC ground (ground or tied to it by a voltage source)")
            return NodeExplanation(node_name, self.freq_hz, 0j, [], notes)
        x = solver.solve_injection(node_name)
        v_node = solver.voltage(x, node_name)
        branches = []
        for dev in self.circuit.devices:
            if dev.name in self.detach or node not in dev.nodes:
                continue
            br = self.element(dev, node)
            if br is None:
                continue
            current = solver.element_current(x, dev.name, node_name)
            br.z_mna_ohm = _as_number(v_node / current) if abs(current) > 1e-12 else INF
            if br.z_ohm is None:
                br.z_ohm = br.z_mna_ohm
            br.elements = [dev.name]
            zf, zm = br.z_ohm, br.z_mna_ohm
            if min(_mag(zm), _mag(zf)) < 1e10:
                if _mag(zm) >= OPEN_OHM or _mag(zf) >= OPEN_OHM:
                    diff = INF
                else:
                    diff = abs(zf - zm) / max(abs(zm), 1e-300)
                if diff > MISMATCH_LIMIT:
                    br.note = (
                        f"formula gives {_fmt(zf)}, the exact share of this branch is {_fmt(zm)}"
                        + (f" ({diff * 100:.0f} % apart)" if math.isfinite(diff) else "")
                        + "; another path couples its terminals (feedback), or capacitances matter here"
                    )
                    notes.append(f"{br.via}: {br.note}")
            branches.append(br)
        branches.sort(key=lambda br: _mag(br.z_mna_ohm))
        return NodeExplanation(node_name, self.freq_hz, _as_number(z) if isinstance(z, complex) else z, branches, notes)


def _fmt(z) -> str:
    if is_open(z):
        return "open"
    m = _mag(z)
    for unit, scale in (("Gohm", 1e9), ("Mohm", 1e6), ("kohm", 1e3)):
        if m >= scale:
            return f"{m / scale:.4g} {unit}"
    return f"{m:.4g} ohm"


def explain_node(
    circuit: FlatCircuit,
    node: str,
    freq_hz: float = 0.0,
    op: OperatingPoint | None = None,
    detach=(),
) -> NodeExplanation:
    """Exact impedance of ``node`` and what each attached branch contributes.

    Notes
    -----
    One LU for the headline; each branch whose far terminal is not AC ground
    costs one or two more (device or element detached, node grounded).
    """
    return _Explainer(circuit, op, freq_hz, detach).explain(node)


def phase_deg(z) -> float:
    return math.degrees(cmath.phase(complex(z)))
