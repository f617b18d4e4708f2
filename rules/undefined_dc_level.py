"""A high-impedance node whose DC level only opposing current sources set, with no DC feedback.

What it finds
    A node where every element that conducts DC is current-source-like -- the
    drain of an NMOS pulling down and of a PMOS pulling up (or bipolar collectors,
    ideal or controlled current sources) -- with no resistor, diode-connected
    device, follower output or voltage source to set the level, and with no DC
    feedback path from the node back to a gate or base that controls one of the
    currents into it.  The classic case is an active-load gain stage biased open
    loop: an NMOS common source whose PMOS current-source load takes its gate
    from a bias net.

    The topology test (see :mod:`lintamp.engine.dc_feedback`): the controllers
    are the gates/bases of every device in the current paths from the node to the
    rails (the input device under a cascode included); DC feedback exists when a
    breadth-first search on the directed DC influence graph (resistors, sources
    and junctions both ways; gate -> drain/source; source -> drain; a drain moves
    nothing) reaches a controller from the node.  A follower or unity-feedback
    op amp, a divider back to the inverting input, and common-mode feedback all
    reach one; a diode-connected or resistive load is not a current-defined node
    at all.  A complementary pair on one gate (a logic inverter), a device
    that is cut off (a switch), and a load biased from a replica of its driver (the
    current-mirror load of a differential pair: the diode side's twin of the driver
    shares its tail, so the mirror sets the output) are not judged.

Why it matters
    Two current sources in series agree on one current only at one exact
    voltage; the node's small-signal resistance is r_o1 || r_o2, so a current
    mismatch dI moves it by dI (r_o1 || r_o2) (analog-knowledge 4.6; Baker,
    *CMOS Circuit Design*, 3rd ed., pp. 867-871, "dueling current sources").
    With 1 % of 100 uA into 50 kOhm that is 50 mV; real mismatch between an
    NMOS and a PMOS biased from separate references is several per cent, so one
    device leaves saturation and the node sits near a rail.  A simulation at
    nominal values can hide this.  The finding quantifies it: the shift for a
    ``dc-level-mismatch`` (default 0.01 = 1 %, Baker's example) current error,
    each device's headroom V_DS - V_DSAT (|V_CE| - ``bjt-vce-min-v`` for a
    bipolar), and which device leaves saturation first and at what mismatch.

Example
    ::

        vbp vbp 0 2.3
        m2 ifout vbp vdd vdd pch w=20u l=1u   <- a current source set by a bias voltage
        m1 ifout ifin 0 0 nch w=10u l=1u      <- a second one, set by the input's DC level

Fix
    Give the node a DC feedback path: close the loop around the amplifier
    (follower / unity or resistive feedback), add common-mode feedback for a
    differential output, make one side a diode-connected or resistive load, or
    derive the load's bias from a replica of the driver that tracks it.
"""

import math

from lintamp.circuit.kinds import BJT, MOS, TRANSISTORS
from lintamp.engine.dc_feedback import current_defined_nodes, feedback_path, influence_graph
from lintamp.rulekit.explain_steps import looking_into_steps
from lintamp.engine.flat_places import local_name
from lintamp.rulekit.impedance_numbers import Numbers, impedance_numbers, safely
from lintamp.rules._numbers import no_numbers_findings
from lintamp.rulekit.ports import port_finder
from lintamp.config import register_threshold
from lintamp.findings import Related, Severity
from lintamp.text import si

NAME = "undefined-dc-level"
CATEGORY = "impedance"
SEVERITY = Severity.WARNING
SUMMARY = "a high-impedance node whose DC level only opposing current sources set, with no DC feedback"

MISMATCH = register_threshold(
    "dc-level-mismatch", 0.01, "fraction",
    "current mismatch assumed when estimating how far a current-defined node moves")
VCE_MIN = register_threshold(
    "bjt-vce-min-v", 0.3, "V",
    "smallest V_CE of a bipolar transistor that must stay forward-active")


def check(ctx):
    numbers = impedance_numbers(ctx)
    if not isinstance(numbers, Numbers):
        yield from no_numbers_findings(ctx, numbers)
        return
    mismatch = ctx.threshold(MISMATCH.name, MISMATCH.default)
    vce_min = ctx.threshold(VCE_MIN.name, VCE_MIN.default)
    circuit = numbers.circuit
    fixed = numbers.ac_ground
    graph = influence_graph(circuit)
    finder = port_finder(ctx, numbers)
    seen = set()
    replica = _ReplicaLoads(circuit)
    for node in current_defined_nodes(circuit, fixed):
        if feedback_path(graph, node.net, node.controllers, fixed) is not None:
            continue
        if replica.sets(node):
            continue
        finding = safely(_judge, ctx, numbers, finder, node, mismatch, vce_min)
        if finding is None:
            continue
        key = (finding.cell, finding.subject, finding.location)
        if key not in seen:
            seen.add(key)
            yield finding


class _ReplicaLoads:
    """Nodes whose load is biased from a replica of their driver: a current-mirror load.

    The load's gate (base) net is diode-connected by a device of the load's kind, and
    the same net is the drain (collector) of a twin of the driver that shares the
    driver's source (emitter), as in a mirror-loaded differential pair: the mirror
    copies the twin's current onto the node, so the node sits where the two sides
    match (Razavi sec. 5.3: the output follows the diode side, v_out = v_d1 at balance).
    """

    def __init__(self, circuit):
        self.by_drain: dict[int, list] = {}
        for dev in circuit.devices:
            if dev.kind in ("nmos", "pmos", "npn", "pnp"):
                self.by_drain.setdefault(dev.nodes[0], []).append(dev)

    def sets(self, node) -> bool:
        transistors = [d for d in node.devices if d.kind in ("nmos", "pmos", "npn", "pnp")]
        for load in transistors:
            gate = load.nodes[1]
            at_gate = self.by_drain.get(gate, [])
            diode = [d for d in at_gate if d.kind == load.kind and d.nodes[1] == gate and d is not load]
            if not diode:
                continue
            for driver in transistors:
                if driver is load or driver.kind == load.kind:
                    continue
                if any(t.kind == driver.kind and t is not driver and t.nodes[2] == driver.nodes[2]
                       for t in at_gate):
                    return True
        return False


def _headroom(numbers, dev, vce_min):
    """(headroom V, V_DS or V_CE, V_DSAT or V_CE,min, region) of a device, or None."""
    dop = numbers.op.devices.get(dev.name)
    if dop is None:
        return None
    v = dop.values
    if dev.kind in MOS:
        if "vds_v" not in v or "vdsat_v" not in v:
            return None
        vds = abs(v["vds_v"])
        return vds - v["vdsat_v"], vds, v["vdsat_v"], dop.region, "mos"
    if "vce_v" not in v:
        return None
    vce = abs(v["vce_v"])
    return vce - vce_min, vce, vce_min, dop.region, "bjt"


def _current(numbers, dev):
    dop = numbers.op.devices.get(dev.name)
    if dop is not None:
        return abs(dop.values.get("ids_a", dop.values.get("ic_a", 0.0)))
    if dev.kind == "isource" and dev.source is not None:
        return abs(dev.source.dc)
    return 0.0


def _judge(ctx, numbers, finder, node, mismatch, vce_min):
    transistors = [d for d in node.devices if d.kind in TRANSISTORS]
    rooms = {}
    for dev in transistors:
        room = _headroom(numbers, dev, vce_min)
        if room is None:
            return None  # a table without terminal voltages: no trusted headroom
        if room[3] == "cutoff":
            return None  # a device that is off is a switch, not a current source
        rooms[dev.name] = room
    net_name = numbers.net_name(node.net)
    current_a = max(sum(_current(numbers, d) for d in node.pull_down),
                    sum(_current(numbers, d) for d in node.pull_up))
    if current_a <= 0:
        return None
    z_dc = abs(numbers.z(net_name, 0.0))
    delta_i = mismatch * current_a
    delta_v = delta_i * z_dc
    first = min(rooms, key=lambda n: rooms[n][0])
    first_local = local_name(first)
    room_v = rooms[first][0]
    out_of_sat = [n for n, r in rooms.items() if r[0] <= 0]
    v_node = numbers.op.node_voltages_v.get(net_name)
    owner = transistors[0]
    view = finder.view_of(owner.name)
    local = local_name(net_name)
    names = ", ".join(local_name(d.name) for d in node.devices)
    values = {"v_node_v": v_node, "current_a": current_a, "z_ohm": z_dc, "mismatch": mismatch,
              "delta_v": delta_v, "headroom_v": room_v, "device": first_local}
    if out_of_sat:
        r = rooms[out_of_sat[0]]
        dev = local_name(out_of_sat[0])
        message = (f"{local} has no DC feedback and only the opposing currents of {names} set its level; "
                   f"at the operating point {dev} is already out of saturation "
                   f"({_vds_words(dev, r)}), so the node sits where the mismatch pushed it"
                   + (f" ({v_node:.3g} V)" if v_node is not None else ""))
    else:
        to_leave = room_v / (current_a * z_dc) if z_dc > 0 else math.inf
        values["mismatch_to_leave"] = to_leave
        message = (f"{local} has no DC feedback and only the opposing currents of {names} set its level: "
                   f"a {mismatch * 100:g} % mismatch moves it {si(delta_v, 'V')} "
                   f"(dI x |Z| = {si(delta_i, 'A')} x {si(z_dc, 'Ω')}, |Z| ~ r_o1 || r_o2); {first_local} leaves saturation "
                   f"at {to_leave * 100:.2g} % (headroom {si(room_v, 'V')})")
    steps = [f"{local} connects, at DC, only to current-source-like terminals: "
             + "; ".join(_terminal_words(d) for d in node.devices)]
    gates = sorted({local_name(numbers.net_name(d.nodes[1])) for d in transistors})
    free = sorted(local_name(numbers.net_name(c)) for c in node.controllers)
    steps.append(f"the currents are set by {', '.join(gates)}"
                 + (f" (and, through the stack, {', '.join(sorted(set(free) - set(gates)))})"
                    if set(free) - set(gates) else "")
                 + f"; a search of the DC influence graph from {local} reaches none of "
                 + (f"the ones that can move ({', '.join(free)})" if free else
                    "them: they are held by sources") + ", so there is no DC feedback")
    steps += looking_into_steps(numbers.explain(net_name, 0.0), local)
    steps.append(f"a {mismatch * 100:g} % mismatch (threshold dc-level-mismatch) of {si(current_a, 'A')} is "
                 f"dI = {si(delta_i, 'A')}; the node moves dI x |Z| = {si(delta_v, 'V')}")
    steps.append("headroom before leaving saturation: " + "; ".join(
        f"{local_name(n)}: {_vds_words(n, r)}, {si(r[0], 'V')}" for n, r in rooms.items()))
    steps.append(f"numbers from {numbers.source_words}")
    related = [Related(d.location, _terminal_words(d)) for d in node.devices]
    return ctx.finding(
        location=owner.location, subject=local, view=view, message=message, nets=[local],
        elements=[local_name(d.name) for d in node.devices], explanation=steps,
        values={k: v for k, v in values.items() if v is not None and not (isinstance(v, float) and math.isinf(v))},
        related=related,
        fix="give the node a DC feedback path: close the loop around the amplifier (follower, unity or "
            "resistive feedback), add common-mode feedback for a differential output, make one side a "
            "diode-connected or resistive load, or bias the load from a replica that tracks the driver")


def _vds_words(name, room):
    _headroom_v, v, vsat, region, family = room
    if family == "mos":
        return f"|V_DS| = {si(v, 'V')} vs V_DSAT = {si(vsat, 'V')}, {region}"
    return f"|V_CE| = {si(v, 'V')} vs the {si(vsat, 'V')} minimum, {region}"


def _terminal_words(dev):
    if dev.kind in MOS:
        return f"drain of {local_name(dev.name)} ({dev.kind.upper()}, gate on another net)"
    if dev.kind in BJT:
        return f"collector of {local_name(dev.name)} ({dev.kind.upper()})"
    return f"{dev.kind} {local_name(dev.name)}"
