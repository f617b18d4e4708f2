"""Signal paths by inspection: the chain of stages from an input to an output, each
with its textbook gain form in symbols, for when there are no numbers.

Edges follow each stage's role (Razavi, Design of Analog CMOS ICs, 2nd ed., ch. 3-5;
Sedra & Smith ch. 7): a common-source, inverter or pair device from gate to drain, a
follower from gate to source, a common-gate or cascode device from source to drain,
a mirror from its reference net to each output drain; switches, MOS resistors and
R, C, L both ways at a higher cost.  A pair into a mirror load is one stage,
``g_m1 (r_o2 ∥ r_o4)`` at the output drain.  AC-ground nets carry no signal.
"""

from __future__ import annotations

import heapq
import re

from lintamp.circuit.flat import FlatCircuit
from lintamp.engine.stages import Role, Stage
from lintamp.circuit.kinds import MOS, BJT, TRANSISTORS

PASSIVE_COST = 3
GATE_TO_DRAIN = (Role.COMMON_SOURCE, Role.COMMON_SOURCE_DEGENERATED, Role.COMMON_EMITTER,
                 Role.COMMON_EMITTER_DEGENERATED, Role.DIFFERENTIAL_PAIR, Role.INVERTER,
                 Role.MIRROR_OUTPUT, Role.CROSS_COUPLED)
SOURCE_TO_DRAIN = (Role.COMMON_GATE, Role.COMMON_BASE, Role.CASCODE)
FOLLOWERS = (Role.SOURCE_FOLLOWER, Role.EMITTER_FOLLOWER)
ENTRY_WORDS = {"gd": "gate", "gs": "gate", "sd": "source", "ch": "channel", "ctl": "control", "p": "terminal"}
CHANNEL = (Role.SWITCH, Role.TRANSMISSION_GATE, Role.MOS_RESISTOR)


def tag(name: str) -> str:
    """``m1`` -> ``1``, ``xm18`` -> ``18``, ``mpass`` -> ``pass`` (the subscript)."""
    local = name.rsplit("/", 1)[-1]
    m = re.fullmatch(r"x?[mq](\d+[a-z]?)", local)
    return m.group(1) if m else (re.sub(r"^x?[mq]", "", local) or local)


def _edges(circuit: FlatCircuit, roles: dict[str, Stage], acg: set[int]):
    adj: dict[int, list[tuple[int, int, str, str]]] = {}

    def add(a, b, cost, device, how):
        if a not in acg and b not in acg and a != b:
            adj.setdefault(a, []).append((b, cost, device, how))

    for dev in circuit.devices:
        n = dev.nodes
        if dev.kind in TRANSISTORS:
            st = roles.get(dev.name)
            if st is None or (st.units and st.units[0] != dev.name):
                continue
            role = st.role
            n = st.pins or n
            if role in GATE_TO_DRAIN:
                add(n[1], n[0], 1, dev.name, "gd")
                if role == Role.CROSS_COUPLED:  # a latch half also takes its source's signal
                    add(n[2], n[0], 1, dev.name, "sd")
            elif role in FOLLOWERS:
                add(n[1], n[2], 1, dev.name, "gs")
            elif role in SOURCE_TO_DRAIN:
                add(n[2], n[0], 1, dev.name, "sd")
            elif role in CHANNEL:
                add(n[0], n[2], PASSIVE_COST, dev.name, "ch")
                add(n[2], n[0], PASSIVE_COST, dev.name, "ch")
        elif dev.kind in ("vcvs", "vccs") and len(n) >= 4:
            for c in n[2:4]:
                add(c, n[0], 1, dev.name, "ctl")
        elif dev.kind in ("resistor", "capacitor", "inductor") and len(n) >= 2:
            add(n[0], n[1], PASSIVE_COST, dev.name, "p")
            add(n[1], n[0], PASSIVE_COST, dev.name, "p")
    return adj


def _chain(adj, start: int, goal: int):
    best = {start: 0}
    back: dict[int, tuple[int, str, str]] = {}
    heap = [(0, 0, start)]
    k = 0
    while heap:
        cost, _, net = heapq.heappop(heap)
        if net == goal:
            break
        if cost > best.get(net, cost):
            continue
        for nxt, step, device, how in adj.get(net, ()):
            if cost + step < best.get(nxt, cost + step + 1):
                best[nxt] = cost + step
                back[nxt] = (net, device, how)
                k += 1
                heapq.heappush(heap, (cost + step, k, nxt))
    if goal not in back:
        return None
    hops, net = [], goal
    while net != start and len(hops) <= len(back):
        prev, device, how = back[net]
        hops.append((prev, net, device, how))
        net = prev
    return list(reversed(hops))


class _Impedances:
    """What each net looks like, by inspection: (symbol, ohms or None) terms."""

    def __init__(self, circuit: FlatCircuit, roles: dict[str, Stage], acg: set[int], op=None):
        self.circuit, self.roles, self.acg, self.op = circuit, roles, acg, op
        self.on: dict[int, list] = {}
        for dev in circuit.devices:
            st = roles.get(dev.name) if dev.kind in TRANSISTORS else None
            if st is not None and st.units and st.units[0] != dev.name:
                continue  # a composite is seen through its first unit, at its own ends
            nodes = (st.pins if st is not None and st.pins else dev.nodes[:3]) if dev.kind in TRANSISTORS \
                else dev.nodes[:2]
            for node in set(nodes):
                self.on.setdefault(node, []).append(dev)

    def pins(self, dev):
        st = self.roles.get(dev.name)
        return st.pins if st is not None and st.pins else dev.nodes[:3]

    def value(self, device: str, key: str) -> float | None:
        """``gm_s``, ``gmb_s`` or ``ro_ohm`` of a device at the operating point (a
        composite's units in parallel), or None."""
        if self.op is None:
            return None
        st = self.roles.get(device)
        names = st.units if st is not None and st.units else [device]
        got = [self.op.devices[n].values.get(key) if n in self.op.devices else None for n in names]
        if any(v is None for v in got):
            return None
        if key == "ro_ohm":
            return 1 / sum(1 / v for v in got) if all(v > 0 for v in got) else None
        return sum(got)

    def at(self, net: int, skip=()) -> list[tuple[str, float | None]]:
        terms = []
        for dev in self.on.get(net, ()):
            if dev.name in skip:
                continue
            st = self.roles.get(dev.name)
            if st is not None and st.units and st.units[0] != dev.name:
                continue  # a composite counts once
            t = tag(dev.name)
            if st is not None and st.role in CHANNEL + (Role.DUMMY, Role.MOS_CAPACITOR):
                continue  # off, or in series with a capacitor: no load at the operating point
            if dev.kind in TRANSISTORS:
                d, g, s = self.pins(dev)
                gm, ro = self.value(dev.name, "gm_s"), self.value(dev.name, "ro_ohm")
                if d == net and g == net:
                    terms.append((f"1/g_m{t}", 1 / gm if gm else None))
                elif d == net and st is not None and st.role == Role.CASCODE:
                    below = st.related[0] if st.related else None
                    ro_b = self.value(below, "ro_ohm") if below else None
                    sym = f"g_m{t} r_o{t} r_o{tag(below)}" if below else f"g_m{t} r_o{t}²"
                    terms.append((sym, gm * ro * ro_b if None not in (gm, ro, ro_b) else None))
                elif d == net:
                    terms.append((f"r_o{t}", ro))
                elif s == net and d != net and g != net:
                    terms.append((f"1/g_m{t}", 1 / gm if gm else None))
            elif dev.kind == "resistor":
                terms.append((f"R_{dev.name.rsplit('/', 1)[-1].removeprefix('r') or dev.name}", dev.value))
        return terms


def _par(terms: list[tuple[str, float | None]]) -> tuple[str, float | None]:
    sym = terms[0][0] if len(terms) == 1 else "(" + " ∥ ".join(t[0] for t in terms) + ")"
    values = [t[1] for t in terms]
    if any(v is None for v in values) or not values:
        return sym, None
    if any(v == 0 for v in values):
        return sym, 0.0
    return sym, 1 / sum(1 / v for v in values)


def paths_by_inspection(circuit: FlatCircuit, stages: list[Stage], acg: set[int], inputs, outputs,
                        limit: int = 24, op=None) -> tuple[list[dict], list[str]]:
    """Rows ``{"from", "to", "chain": [{"device", "role", "from", "to", "form",
    "form_value"}], "formula", "formula_value"}`` for each (input, output) pair of flat
    nets, values from ``op`` when it is given (None where a number is missing); and
    notes for the pairs with no chain.  ``inputs``/``outputs``: (name, flat net) pairs."""
    roles = {s.device: s for s in stages}
    for s in stages:
        for u in s.units:
            roles.setdefault(u, s)
    adj = _edges(circuit, roles, acg)
    z = _Impedances(circuit, roles, acg, op)
    rows, notes = [], []
    for in_name, i_in in inputs:
        for out_name, i_out in outputs:
            if len(rows) >= limit:
                return rows, notes
            hops = _chain(adj, i_in, i_out) if i_in is not None and i_out is not None else None
            if not hops:
                notes.append(f"no signal path from {in_name} to {out_name} by inspection: no chain of "
                             "stages joins them off AC ground")
                continue
            chain = _forms(circuit, roles, z, hops)
            product = 1.0
            for h in chain:
                if h["form"]:
                    product = None if product is None or h["form_value"] is None else product * h["form_value"]
            rows.append({"from": in_name, "to": out_name, "chain": chain,
                         "formula": ", then ".join(h["form"] for h in chain if h["form"]),
                         "formula_value": product if op is not None else None})
    return rows, notes


def _forms(circuit, roles, z: _Impedances, hops) -> list[dict]:
    names = circuit.nets
    out = []
    k = 0
    while k < len(hops):
        a, b, device, how = hops[k]
        st = roles.get(device)
        dev = circuit.device(device)
        t = tag(device)
        role = str(st.role) if st else dev.kind
        label = st.label if st else device
        gm, gmb, ro = z.value(device, "gm_s"), z.value(device, "gmb_s") or 0.0, z.value(device, "ro_ohm")
        value = None
        if how == "gd":
            nxt = hops[k + 1] if k + 1 < len(hops) else None
            partner = st.related[0] if st and st.role == Role.DIFFERENTIAL_PAIR and st.related else None
            pdev = circuit.device(partner) if partner else None
            if nxt and pdev is not None and nxt[3] == "gd" and roles.get(nxt[2]) is not None \
                    and roles[nxt[2]].role == Role.MIRROR_OUTPUT and nxt[1] == z.pins(pdev)[0]:
                sym, r = _par([(f"r_o{tag(partner)}", z.value(partner, "ro_ohm")),
                               (f"r_o{tag(nxt[2])}", z.value(nxt[2], "ro_ohm"))])
                out.append({"device": label, "role": "differential pair into a mirror load",
                            "from": names[a], "to": names[nxt[1]], "form": f"g_m{t} {sym}",
                            "form_value": gm * r if None not in (gm, r) else None, "enters_at": "gate"})
                k += 2
                continue
            load = [(f"r_o{t}", ro)] + z.at(b, skip=(device,))
            if st and st.role in (Role.COMMON_SOURCE_DEGENERATED, Role.COMMON_EMITTER_DEGENERATED):
                rd_sym, rd = _par(load[1:] or load)
                rs_sym, rs = _par(z.at(z.pins(dev)[2], skip=(device,)) or [("Z_S", None)])
                form = f"g_m{t} {rd_sym}/(1 + g_m{t} {rs_sym})"
                value = gm * rd / (1 + gm * rs) if None not in (gm, rd, rs) else None
            else:
                sym, r = _par(load)
                form = f"g_m{t} {sym}"
                value = gm * r if None not in (gm, r) else None
        elif how == "gs":
            sym, r = _par(z.at(b, skip=(device,)) or [("Z_S", None)])
            form = f"g_m{t} {sym}/(1 + g_m{t} {sym}) ≈ 1"
            value = gm * r / (1 + (gm + gmb) * r) if None not in (gm, r) else None
        elif how == "sd":
            sym, r = _par([(f"r_o{t}", ro)] + z.at(b, skip=(device,)))
            form = f"(g_m{t} + g_mb{t}) {sym}"
            value = (gm + gmb) * r if None not in (gm, r) else None
        elif how == "ch":
            form = f"R_on{t} in series"
        elif how == "ctl":
            form = f"gain of {device}"
        else:
            form = ""  # a passive element: part of the next stage's load
        entry = ENTRY_WORDS.get(how, "")
        if dev is not None and dev.kind in BJT:
            entry = {"gate": "base", "source": "emitter"}.get(entry, entry)
        out.append({"device": label, "role": role, "from": names[a], "to": names[b], "form": form,
                    "form_value": value, "enters_at": entry})
        k += 1
    return out


def block_paths(circuit: FlatCircuit, intent, op=None) -> tuple[list[dict], list[str]]:
    """Paths by inspection between a block's input and output ports (``intent``: a
    :class:`lintamp.connectivity.intent.Intent`)."""
    from lintamp.engine.looking_into import ac_ground_nets
    from lintamp.engine.stages import recognise_stages

    stages = recognise_stages(circuit, op, **intent.stage_hints())
    acg = ac_ground_nets(circuit, signal_sources_ground=False) | set(intent.rails)
    inputs = [(p.net, circuit.find_net(p.circuit_net)) for p in intent.ports if p.is_input]
    outputs = [(p.net, circuit.find_net(p.circuit_net)) for p in intent.ports if not p.is_input]
    if not inputs or not outputs:
        missing = "inputs" if not inputs else "outputs"
        return [], [f"no signal path: no {missing} found (mark them with pragmas, *.PININFO pin "
                    "directions or a testbench source)"]
    rows, notes = paths_by_inspection(circuit, stages, acg, inputs, outputs, op=op)
    signal = {p.net: p.signal for p in intent.ports}
    for row in rows:  # the shape of a path with numbers, the numbers left out
        kind, unit = GAIN_UNITS[(signal[row["from"]], signal[row["to"]])]
        row.update(kind=kind, gain={"mag": None, "unit": unit, "freq_hz": 0.0}, f3db_hz=None,
                   poles_hz=None, interfaces=[], by_inspection=True,
                   notes=["by inspection: no operating point, so the forms are in symbols"])
        for hop in row["chain"]:
            hop.update(gain={"mag": None, "unit": "V/V"}, formula=hop.get("form"),
                       formula_value=hop.get("form_value"))
    return rows, notes


GAIN_UNITS = {("current", "voltage"): ("transimpedance", "ohm"),
              ("voltage", "voltage"): ("voltage gain", "V/V"),
              ("current", "current"): ("current gain", "A/A"),
              ("voltage", "current"): ("transconductance", "S")}


def attach_inspection(path_rows: list[dict], circuit: FlatCircuit, intent, op) -> None:
    """Give each path row of the sheet (numbers from the MNA solve) its chain of stages by
    inspection, with the forms' values at the operating point: ``row["by_inspection"]``."""
    rows, _ = block_paths(circuit, intent, op)
    by_pair = {(r["from"], r["to"]): r for r in rows}
    for row in path_rows:
        got = by_pair.get((row.get("from"), row.get("to")))
        if got is not None:
            row["by_inspection"] = {"formula": got["formula"], "value": got["formula_value"],
                                    "chain": [{k: h[k] for k in ("device", "role", "from", "to", "form",
                                                                 "form_value")} for h in got["chain"]]}
