"""Stage recognition: what role each transistor plays, from topology, rails and AC grounds.

Roles follow the textbook vocabulary (Razavi, Design of Analog CMOS ICs, 2nd ed., ch. 3,
5 and 9; Sedra & Smith ch. 7; Weste & Harris ch. 1 for the logic shapes): common
source / emitter, common gate / base, source / emitter follower, cascode, mirror
reference and output, differential pair, cross-coupled pair, diode-connected load,
current source, inverter, switch, transmission gate, MOS resistor, MOS capacitor,
dummy.

What the roles stand on:

* AC ground: ground, the nets V sources without a signal hold, and the rails of
  :func:`lintamp.connectivity.intent.flat_rails` (supply and ground names, ``.global``
  nets, nets only bodies tie to), so a cell without a testbench still has its rails;
* quiet gates: a gate at AC ground, on a diode-connected net (a mirror's bias), on a
  bias line (named so, or declared by pin direction), or held by a bypass capacitor
  and resistors only: such a gate does not take the signal, so its device is a
  current source, a cascode or a common-gate stage by where the signal enters;
* logic nets: nets named like enables and clocks, and the nets inverters drive and
  take: a device whose gate sits on one is a switch;
* units: parallel devices (one drain, gate and source) and series stacks (one gate, a
  middle net nothing else touches) are one composite stage, reported once.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from enum import Enum
from typing import TYPE_CHECKING

from lintamp.engine.looking_into import ac_ground_nets

if TYPE_CHECKING:
    from lintamp.engine.operating_point import OperatingPoint
from lintamp.circuit.flat import FlatCircuit, FlatDevice
from lintamp.circuit.kinds import MOS, BJT

MAX_RELATED = 64  # related devices listed per stage (a shared line may reach thousands)


class Role(str, Enum):
    """A transistor's role; the value is the words reports print."""

    COMMON_SOURCE = "common source"
    COMMON_SOURCE_DEGENERATED = "common source with degeneration"
    COMMON_EMITTER = "common emitter"
    COMMON_EMITTER_DEGENERATED = "common emitter with degeneration"
    COMMON_GATE = "common gate"
    COMMON_BASE = "common base"
    SOURCE_FOLLOWER = "common drain (source follower)"
    EMITTER_FOLLOWER = "emitter follower"
    CASCODE = "cascode"
    MIRROR_REFERENCE = "current-mirror reference (diode-connected)"
    MIRROR_OUTPUT = "current-mirror output"
    DIFFERENTIAL_PAIR = "differential pair"
    CROSS_COUPLED = "cross-coupled pair"
    DIODE_LOAD = "diode-connected load"
    CURRENT_SOURCE = "current source (fixed bias)"
    INVERTER = "inverter"
    SWITCH = "switch"
    TRANSMISSION_GATE = "transmission gate"
    MOS_RESISTOR = "MOS resistor"
    MOS_CAPACITOR = "MOS capacitor"
    DUMMY = "dummy"
    SHORTED = "shorted (output tied to common terminal)"

    def __str__(self) -> str:
        return self.value

    __format__ = str.__format__


# roles whose device carries the signal from its control terminal
AMPLIFYING = (Role.COMMON_SOURCE, Role.COMMON_SOURCE_DEGENERATED, Role.COMMON_EMITTER,
              Role.COMMON_EMITTER_DEGENERATED, Role.DIFFERENTIAL_PAIR, Role.SOURCE_FOLLOWER,
              Role.EMITTER_FOLLOWER, Role.INVERTER)


@dataclass
class Stage:
    device: str
    role: Role
    related: list[str] = field(default_factory=list)
    region: str = ""
    gm_s: float | None = None
    ro_ohm: float | None = None
    units: list[str] = field(default_factory=list)  # the composite's devices, this one first
    pins: tuple = ()  # (out, control, common) nets as the stage conducts (a composite's ends)

    @property
    def label(self) -> str:
        """``xm18`` or ``xm18..xm29 (12 units)``."""
        if len(self.units) <= 1:
            return self.device
        return f"{self.units[0]}..{self.units[-1]} ({len(self.units)} units)"


def _pins(dev: FlatDevice):
    """(out, control, common) = drain/gate/source or collector/base/emitter."""
    return dev.nodes[0], dev.nodes[1], dev.nodes[2]


class _Unit:
    """One composite: its devices and the pins it shows the circuit."""

    __slots__ = ("devices", "out", "ctl", "com", "kind", "name")

    def __init__(self, devices: list[FlatDevice], out: int, ctl: int, com: int):
        self.devices, self.out, self.ctl, self.com = devices, out, ctl, com
        self.kind = devices[0].kind
        self.name = devices[0].name


def _oriented(dev: FlatDevice, levels: dict[int, str]):
    """(drain, gate, source) with a MOS channel read the way it conducts: a schematic
    export writes a symmetric device's channel pins as drawn, so the source is the pin on
    its polarity's rail (ground side for NMOS, supply side for PMOS), else the pin the
    body ties to, and a gate tied to one channel pin marks that pin the drain."""
    out, ctl, com = _pins(dev)
    if dev.kind not in MOS or out == com:
        return out, ctl, com
    source_level = "low" if dev.kind == "nmos" else "high"
    body = dev.nodes[3] if len(dev.nodes) > 3 else None
    if levels.get(out) == source_level and levels.get(com) != source_level:
        return com, ctl, out
    if levels.get(com) == source_level or levels.get(out) in ("high", "low"):
        return out, ctl, com
    if ctl == com and ctl != out:
        return com, ctl, out  # a diode drawn with its source on the gate
    if body is not None and body == out and body != com:
        return com, ctl, out
    return out, ctl, com


def _composites(trans: list[FlatDevice], terminals: Counter, levels: dict[int, str]) -> list[_Unit]:
    """Parallel devices as one; then series stacks with one gate through a middle net
    that only the two devices touch (a long device drawn as units)."""
    parallel: dict[tuple, _Unit] = {}
    for d in trans:
        out, ctl, com = _oriented(d, levels)
        key = (d.kind, ctl, frozenset((out, com)) if d.kind in MOS else (out, com))
        unit = parallel.get(key)
        if unit is None:
            parallel[key] = _Unit([d], out, ctl, com)
        else:
            unit.devices.append(d)
    units = list(parallel.values())
    # series: a unit whose common net is another unit's output, same kind and gate, and
    # the middle net has no other terminal
    by_out: dict[tuple, list[_Unit]] = {}
    for u in units:
        by_out.setdefault((u.kind, u.ctl, u.out), []).append(u)
    merged: set[int] = set()
    for u in units:
        if id(u) in merged or u.kind not in MOS:
            continue
        while True:
            below = [b for b in by_out.get((u.kind, u.ctl, u.com), ()) if b is not u and id(b) not in merged]
            mid = u.com
            if len(below) != 1 or mid == u.ctl or terminals[mid] != len(u.devices) + len(below[0].devices) \
                    or len(below[0].devices) != len(u.devices):
                break
            b = below[0]
            merged.add(id(b))
            u.devices = u.devices + b.devices
            u.com = b.com
    return [u for u in units if id(u) not in merged]


def recognise_stages(circuit: FlatCircuit, op: OperatingPoint | None = None, rails=None,
                     bias_nets=(), logic_nets=()) -> list[Stage]:
    """One :class:`Stage` per MOS/BJT device, in netlist order.

    ``rails``: flat net -> why (see :func:`lintamp.connectivity.intent.flat_rails`);
    found from the circuit alone when None.  ``bias_nets`` / ``logic_nets``: nets the
    block's intent calls bias or logic lines.

    Notes
    -----
    Near-linear: every related list comes from an index by net; the pair scan of a
    shared common net is skipped when counts show it finds nothing.
    """
    from lintamp.connectivity.intent import flat_rails, is_control_name, local_name, rail_levels

    if rails is None:
        rails = flat_rails(circuit)
    levels = rail_levels(circuit, rails)
    acg = ac_ground_nets(circuit, signal_sources_ground=False) | set(rails)
    trans = [d for d in circuit.devices if d.kind in MOS + BJT]
    terminals: Counter = Counter()
    caps_to_acg: set[int] = set()
    driven: set[int] = set()  # nets a transistor output/common terminal or a source reaches
    for d in circuit.devices:
        nodes = d.nodes[:3] if d.kind in MOS + BJT else d.nodes[:2]
        terminals.update(nodes)
        if d.kind in MOS + BJT:
            driven.update((d.nodes[0], d.nodes[2]))
        elif d.kind in ("vsource", "isource", "vcvs", "vccs", "ccvs", "cccs", "inductor", "diode"):
            driven.update(d.nodes[:2])
        elif d.kind == "capacitor" and len(d.nodes) >= 2:
            a, b = d.nodes[0], d.nodes[1]
            if a in acg and b not in acg:
                caps_to_acg.add(b)
            elif b in acg and a not in acg:
                caps_to_acg.add(a)
    units = _composites(trans, terminals, levels)
    diode_nets = {u.out for u in units if u.out == u.ctl}
    # a mirror reference through its cascode: the gate is the drain of a device that
    # stands on this device's drain (a cascode or wide-swing mirror)
    by_com_out: dict[tuple, list[_Unit]] = {}
    for u in units:
        by_com_out.setdefault((u.com, u.out), []).append(u)
    def stands(c: _Unit) -> bool:  # a device that conducts: no diode, no dummy
        return c.out != c.ctl and c.out != c.com and levels.get(c.ctl) != (
            "low" if c.kind in ("nmos", "npn") else "high")

    cascoded_refs = {id(u) for u in units if u.out != u.ctl and u.com in acg
                     and any(c is not u and stands(c) for c in by_com_out.get((u.out, u.ctl), ()))}
    diode_nets |= {u.ctl for u in units if id(u) in cascoded_refs}
    cascoded_by_pins: dict[tuple, list[str]] = {}
    for u in units:
        if id(u) in cascoded_refs:
            cascoded_by_pins.setdefault((u.kind, u.ctl, u.com), []).append(u.name)
    # a diode net carries the signal when an amplifying device drives it (a preamp's diode
    # load); it is a quiet bias line when only sources, mirrors and bias devices do
    signal_gates = {u.ctl for u in units if u.ctl not in acg and u.ctl not in diode_nets
                    and u.out != u.ctl}
    loud = {u.out for u in units if u.out != u.ctl and u.ctl in signal_gates}
    # one gate line shared by devices on different, non-rail sources, touching nothing
    # else: a cascode bias line (a signal input drives one device or one pair)
    gate_users: dict[int, set[int]] = {}
    for u in units:
        if u.com not in acg and u.out != u.ctl:
            gate_users.setdefault(u.ctl, set()).add(u.com)
    gate_terminals = Counter(u.ctl for u in units for _ in u.devices)
    shared_lines = {n for n, coms in gate_users.items()
                    if len(coms) >= 2 and terminals[n] == gate_terminals[n] and n not in acg}
    bias = set(bias_nets) | (diode_nets - loud) | (caps_to_acg - driven) | shared_lines
    # a source or emitter bypassed to AC ground by a capacitor, with only resistors and
    # capacitors besides: AC ground for the stage's role
    passive_only: Counter = Counter()
    for d in circuit.devices:
        if d.kind not in ("resistor", "capacitor"):
            passive_only.update(set(d.nodes[:3] if d.kind in MOS + BJT else d.nodes[:2]))
    bypassed = {n for n in caps_to_acg if passive_only[n] == 1}
    logic = set(logic_nets)
    index = getattr(circuit, "_index", None) or {}
    for name, idx in index.items():
        what = is_control_name(local_name(name))
        if what == "bias" and idx not in acg:
            bias.add(idx)
        elif what == "logic":
            logic.add(idx)
    # inverters: an n and a p unit with one gate and one drain; their nets are logic,
    # unless two inverters drive each other (a latch: a cross-coupled pair)
    by_ctl_out: dict[tuple, list[_Unit]] = {}
    for u in units:
        if u.kind in MOS and u.ctl not in acg and u.out not in acg and u.out != u.com:
            by_ctl_out.setdefault((u.ctl, u.out), []).append(u)
    shaped = {id(u) for group in by_ctl_out.values() if {x.kind for x in group} == set(MOS)
              for u in group if u.out != u.ctl}
    # an inverter proper has each device's source on its own rail (NMOS low, PMOS high);
    # a complementary pair of switches on one gate and one drain is no inverter
    def on_own_rail(u: _Unit) -> bool:
        return levels.get(u.com) == ("low" if u.kind == "nmos" else "high")

    inverters = set()
    for group in by_ctl_out.values():
        members = [u for u in group if id(u) in shaped and on_own_rail(u)]
        if {u.kind for u in members} == set(MOS):
            inverters.update(id(u) for u in members)
    inverter_io = {(u.ctl, u.out) for u in units if id(u) in shaped}
    drivers_of: Counter = Counter(out for _, out in inverter_io)
    # two inverter shapes driving each other, each the only one on its output: a latch
    latched = {id(u) for u in units if id(u) in shaped and (u.out, u.ctl) in inverter_io
               and drivers_of[u.out] == 1 and drivers_of[u.ctl] == 1}
    inverters -= latched
    for u in units:
        if id(u) in inverters:
            logic.update((u.ctl, u.out))
    logic -= acg
    quiet = acg | bias
    by_common: dict[tuple, list[_Unit]] = {}
    by_out: dict[int, list[_Unit]] = {}
    diodes: dict[tuple, list[_Unit]] = {}
    not_diodes: dict[tuple, list[_Unit]] = {}
    by_channel: dict[frozenset, list[_Unit]] = {}
    counts: Counter = Counter()
    channel_kinds: dict[frozenset, set[str]] = {}
    for u in units:
        fam = u.kind
        by_common.setdefault((fam, u.com), []).append(u)
        by_out.setdefault(u.out, []).append(u)
        (diodes if u.out == u.ctl else not_diodes).setdefault((fam, u.ctl, u.com), []).append(u)
        if fam in MOS:
            by_channel.setdefault(frozenset((u.out, u.com)), []).append(u)
            channel_kinds.setdefault(frozenset((u.out, u.com)), set()).add(fam)
        counts.update((("ctl", fam, u.com, u.ctl), ("out", fam, u.com, u.out),
                       ("both", fam, u.com, u.ctl, u.out)))
    pairs: dict[tuple, list[_Unit]] = {}
    # a mirror whose devices stand on resistors or ports rather than on one rail (a
    # degenerated or beta-multiplier mirror): same gate, sources no transistor drives
    fed = {c.out for c in units if stands(c)}
    loose_diodes: dict[tuple, list[_Unit]] = {}
    loose_outputs: dict[tuple, list[_Unit]] = {}
    for u in units:
        if u.com not in fed and u.com != u.ctl:
            (loose_diodes if u.out == u.ctl else loose_outputs).setdefault((u.kind, u.ctl), []).append(u)
    # two devices on one common net, each gate on the other's drain: positive feedback
    by_pins = {(u.kind, u.com, u.ctl, u.out): u for u in units if u.out != u.ctl}
    crossed = {id(u) for u in by_pins.values() if (u.kind, u.com, u.out, u.ctl) in by_pins}

    def partners(u: _Unit) -> list[_Unit]:
        """Units on the same common net with another control and another output net."""
        fam, com, ctl, out = u.kind, u.com, u.ctl, u.out
        key = (fam, com, ctl, out)
        got = pairs.get(key)
        if got is None:
            group = by_common[(fam, com)]
            others = (len(group) - counts[("ctl", fam, com, ctl)] - counts[("out", fam, com, out)]
                      + counts[("both", fam, com, ctl, out)])
            got = pairs[key] = [o for o in group if o.ctl != ctl and o.out != out and o.out != o.ctl] \
                if others and len(group) <= 64 else []
        return got

    def on_rail(net: int, level: str) -> bool:
        return levels.get(net) == level

    def pair_candidates(u: _Unit) -> list[_Unit]:
        if u.com in acg or not pair_gate(u.ctl):
            return []
        return [o for o in partners(u) if pair_gate(o.ctl) and (u.ctl not in quiet or o.ctl not in quiet)]

    def pair_of(u: _Unit) -> list[_Unit]:
        """The other half, when the common net holds exactly two halves (a tail with
        more devices on it is no pair)."""
        got = pair_candidates(u)
        return got if len(got) == 1 and len(pair_candidates(got[0])) == 1 else []

    def pair_gate(net: int) -> bool:
        """A gate that may carry an input: not a bias line, not a supply or ground (a net
        a testbench holds at the common mode may: the pair is used single-ended)."""
        return net not in bias and levels.get(net) not in ("high", "low") and net not in logic

    roles: dict[int, tuple[Role, list[str]]] = {}
    for u in units:
        out, ctl, com = u.out, u.ctl, u.com
        mos = u.kind in MOS
        on_level = "high" if u.kind in ("nmos", "npn") else "low"
        off_level = "low" if on_level == "high" else "high"
        related: list[str] = []
        if out == com:
            if ctl == out or (mos and on_rail(ctl, off_level)):
                role = Role.DUMMY  # every pin on one net, or a gate that keeps it off
            elif not mos:
                role = Role.SHORTED
            else:
                role = Role.MOS_CAPACITOR if mos else Role.SHORTED
        elif out == ctl:
            outs = [o.name for o in not_diodes.get((u.kind, ctl, com), ()) if id(o) not in crossed]
            if not outs and com not in fed:
                outs = [o.name for o in loose_outputs.get((u.kind, ctl), ()) if o.com != com
                        and id(o) not in crossed]
            role = Role.MIRROR_REFERENCE if outs else Role.DIODE_LOAD
            related = outs
        elif mos and ctl == com and com in acg:
            role = Role.DUMMY  # V_GS = 0 on a rail: never on
        elif mos and on_rail(ctl, off_level):
            role = Role.DUMMY  # gate at the rail that keeps it off
        elif id(u) in latched:
            role = Role.CROSS_COUPLED
            related = [o.name for o in by_ctl_out.get((out, ctl), ())[:MAX_RELATED] if id(o) in latched]
        elif mos and id(u) in inverters:
            role = Role.INVERTER
            related = [o.name for o in by_ctl_out[(ctl, out)][:MAX_RELATED] if o is not u and id(o) in inverters]
        elif mos and len(channel_kinds.get(frozenset((out, com)), ())) == 2:
            role = Role.TRANSMISSION_GATE
            related = [o.name for o in by_channel[frozenset((out, com))][:MAX_RELATED] if o.kind != u.kind]
        elif mos and ctl in logic:
            role = Role.SWITCH
        elif mos and on_rail(ctl, on_level):
            role = Role.MOS_RESISTOR  # gate on the rail that keeps it on: a triode resistance
        else:
            refs = [o.name for o in diodes.get((u.kind, ctl, com), ())]
            if not refs and com not in fed and com not in acg:
                refs = [o.name for o in loose_diodes.get((u.kind, ctl), ()) if o.com != com]
            pair = pair_of(u)
            if id(u) in crossed:
                role = Role.CROSS_COUPLED
                related = [by_pins[(u.kind, com, out, ctl)].name]
            elif id(u) in cascoded_refs:
                role = Role.MIRROR_REFERENCE
                related = [o.name for o in not_diodes.get((u.kind, ctl, com), ()) if o is not u]
            elif refs or (u.kind, ctl, com) in cascoded_by_pins:
                role = Role.MIRROR_OUTPUT
                related = refs or cascoded_by_pins[(u.kind, ctl, com)]
            elif pair and any(by_com_out.get((o.out, ctl)) and by_com_out.get((out, o.ctl)) for o in pair):
                # each gate driven from the other half's drain through a device stacked on
                # it: positive feedback, a latch's lower pair
                role = Role.CROSS_COUPLED
                related = [o.name for o in pair if by_com_out.get((o.out, ctl))]
            elif pair:
                role, related = Role.DIFFERENTIAL_PAIR, [o.name for o in pair]
            elif ctl in quiet and com in acg:
                role = Role.CURRENT_SOURCE
            elif ctl in quiet:
                # the signal enters at the source: from another device's output, a cascode;
                # from anywhere else (an input, a resistor), a common-gate stage
                under = [o.name for o in by_out.get(com, ()) if o is not u and o.kind in MOS + BJT]
                if under:
                    role, related = Role.CASCODE, under
                else:
                    role = Role.COMMON_GATE if mos else Role.COMMON_BASE
            elif out in acg and com not in acg:
                role = Role.SOURCE_FOLLOWER if mos else Role.EMITTER_FOLLOWER
            else:
                if com in acg or com in bypassed:
                    role = Role.COMMON_SOURCE if mos else Role.COMMON_EMITTER
                else:
                    role = Role.COMMON_SOURCE_DEGENERATED if mos else Role.COMMON_EMITTER_DEGENERATED
        roles[id(u)] = (role, related)
    unit_of = {id(d): u for u in units for d in u.devices}
    position = {id(d): k for k, d in enumerate(trans)}
    stages = []
    for d in trans:
        u = unit_of[id(d)]
        role, related = roles[id(u)]
        names = [x.name for x in sorted(u.devices, key=lambda x: position[id(x)])]
        st = Stage(d.name, role, list(related), units=names if len(names) > 1 else [],
                   pins=(u.out, u.ctl, u.com))
        if op is not None and d.name in op.devices:
            dop = op.devices[d.name]
            st.region = dop.region
            st.gm_s = dop.values.get("gm_s")
            st.ro_ohm = dop.values.get("ro_ohm")
        stages.append(st)
    return stages


def composite_stages(stages: list[Stage]) -> list[Stage]:
    """One stage per composite (its first unit stands for it), in netlist order."""
    out = []
    for st in stages:
        if st.units and st.units[0] != st.device:
            continue
        out.append(st)
    return out
