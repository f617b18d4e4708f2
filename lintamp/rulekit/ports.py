"""Which nets the impedance rules judge: current inputs, voltage outputs and their loads.

The declared ports come from the one intent analysis every command shares
(:mod:`lintamp.connectivity.intent`: pragma > config > pin directions > testbench >
names), per cell of the hierarchy.  On top of them the rules look at:

* topology: a current-mirror output, common-gate or cascode drain (collector)
  that feeds the source (emitter) of a common-gate / cascode device or a
  diode-connected mirror input -- a current interface between stages;
* hierarchy: the parent's passive elements on a cell's voltage-output port are
  that output's load;
* AC coupling: a capacitor from an output into a purely passive network that
  ends at AC ground is a load (a coupled headphone, a line input); an output
  taken after the coupling capacitor is judged with the stage behind it.

A passive chain (R, C, L only, ending at AC ground, touching no transistor and no
source) is what separates a load from a feedback network: a network that leads
back to a gate or into the driving cell is feedback and stays attached.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from lintamp.circuit.kinds import MOS, TRANSISTORS
from lintamp.connectivity.intent import (DEFAULT_PATTERNS, SOURCES, instance_prefixes, intent_analysis,  # noqa: F401
                                         matches as _matches, patterns)
from lintamp.engine.flat_places import local_name, net_aliases, prefix_of, view_of_path
from lintamp.engine.stages import Role, recognise_stages
from lintamp.circuit.design import CellView, Design
from lintamp.circuit.flat import FlatCircuit, FlatDevice
from lintamp.location import Location

PASSIVE = ("resistor", "capacitor", "inductor")
MAX_CHAIN_NETS = 64
DRIVER_ROLES = (Role.MIRROR_OUTPUT, Role.COMMON_GATE, Role.COMMON_BASE, Role.CASCODE)
RECEIVER_ROLES = (Role.COMMON_GATE, Role.COMMON_BASE, Role.CASCODE)
CURRENT_OUTPUT_ROLES = (Role.MIRROR_OUTPUT, Role.CURRENT_SOURCE, Role.CASCODE)


@dataclass
class PortNet:
    """A net the rules judge: why it was chosen, where to point, what to detach."""

    net: int
    name: str  # flat name
    why: str
    location: Location
    view: CellView
    detach: list[str] = field(default_factory=list)  # flat element names
    load_why: str = ""

    @property
    def local(self) -> str:
        return local_name(self.name)


class PortFinder:
    """Port discovery over one flat circuit (build once per netlist)."""

    def __init__(self, ctx, circuit: FlatCircuit, ac_ground: set[int], op=None):
        self.ctx = ctx
        self.design: Design = ctx.design
        self.circuit = circuit
        self.ac_ground = ac_ground
        self.intent = intent_analysis(ctx, circuit)
        self.op = op
        self.prefixes = instance_prefixes(self.design)
        self.aliases = net_aliases(circuit)
        self.on_net: dict[int, list[FlatDevice]] = {}
        for dev in circuit.devices:
            for n in set(dev.nodes):
                self.on_net.setdefault(n, []).append(dev)
        self.by_name = {d.name: d for d in circuit.devices}
        self.roles = {s.device: s for s in recognise_stages(circuit, op, rails=self.intent.rails())}
        self._declared = None

    def declared(self) -> list[tuple[str, CellView, object]]:
        """(prefix, view, intent port) for every port the intent analysis finds in every
        cell placement, the top first."""
        if self._declared is None:
            out = []
            for prefix, view in self.prefixes:
                for port in self.intent.block(view.cell, prefix).ports:
                    out.append((prefix, view, port))
            # strongest source first, so a cell's pragma names the net its parent drives
            out.sort(key=lambda item: SOURCES.index(item[2].source))
            self._declared = out
        return self._declared

    # -- helpers -----------------------------------------------------------------
    def view_of(self, flat_name: str) -> CellView:
        return view_of_path(self.design, prefix_of(flat_name).rstrip("/").split("/")
                            if "/" in flat_name else []) or self.design.top

    def views_of_net(self, net: int) -> list[CellView]:
        """The cells whose port (or internal net) this is, deepest first."""
        names = sorted(self.aliases.get(net, []), key=lambda n: -n.count("/"))
        out = []
        for name in names:
            if "/" in name:
                view = self.view_of(name)
                if view not in out:
                    out.append(view)
        return out

    def first_location(self, net: int, prefix: str) -> Location:
        for dev in self.on_net.get(net, []):
            if prefix_of(dev.name) == prefix:
                return dev.location
        devs = self.on_net.get(net, [])
        return devs[0].location if devs else self.design.top.cell.location

    def net_capacitance_f(self, net: int) -> tuple[float, list[str]]:
        """Explicit capacitors from ``net`` to AC ground: total farad and their names."""
        total, names = 0.0, []
        for dev in self.on_net.get(net, []):
            if dev.kind == "capacitor" and dev.value and len(dev.nodes) >= 2:
                a, b = dev.nodes[0], dev.nodes[1]
                other = b if a == net else a
                if other in self.ac_ground and other != net:
                    total += dev.value
                    names.append(dev.name)
        return total, names

    def passive_chain(self, start: int, first: FlatDevice) -> set[int] | None:
        """Nets reached from ``first``'s far end through R/C/L only, or None when the
        network touches anything else (a transistor, a source, ``start`` again)."""
        far = [n for n in first.nodes[:2] if n != start]
        if not far:
            return None
        if far[0] in self.ac_ground:
            return set()
        seen = {far[0]}
        todo = [far[0]]
        while todo:
            if len(seen) > MAX_CHAIN_NETS:
                return None
            net = todo.pop()
            for dev in self.on_net.get(net, []):
                if dev is first:
                    continue
                if dev.kind not in PASSIVE:
                    return None
                for n in dev.nodes[:2]:
                    if n == start:
                        return None
                    if n in self.ac_ground or n in seen:
                        continue
                    seen.add(n)
                    todo.append(n)
        return seen

    def _add(self, found: dict[int, PortNet], port: PortNet) -> None:
        if port.net in self.ac_ground:
            return
        known = found.get(port.net)
        if known is None:
            found[port.net] = port
        else:
            known.detach = sorted(set(known.detach) | set(port.detach))

    # -- current inputs ----------------------------------------------------------
    def current_inputs(self) -> list[PortNet]:
        found: dict[int, PortNet] = {}
        for prefix, view, port in self.declared():
            if port.kind != "current-input":
                continue
            net = self.circuit.find_net(port.circuit_net)
            if net is None:
                continue
            if port.source == "testbench" and port.stimulus:
                dev = self.by_name.get(port.stimulus)
                self._add(found, PortNet(net, self.circuit.nets[net], port.decided_by,
                                         dev.location if dev else self.first_location(net, prefix),
                                         self.view_of(port.stimulus), [port.stimulus]))
                continue
            location = port.location or self.first_location(net, prefix)
            self._add(found, PortNet(net, port.circuit_net, port.decided_by, location, view,
                                     self.current_drivers(net, prefix)))
        for port in self.current_interfaces():
            if port.net not in found:
                self._add(found, port)
        return sorted(found.values(), key=lambda p: p.name)

    def current_drivers(self, net: int, prefix: str) -> list[str]:
        """What feeds the net from outside the stage: current sources, and drains or
        collectors outside the cell that declares the port."""
        out = []
        for dev in self.on_net.get(net, []):
            if dev.kind in ("isource", "vccs", "cccs") and net in dev.nodes[:2]:
                out.append(dev.name)
            elif prefix and not dev.name.startswith(prefix) and dev.kind in TRANSISTORS \
                    and dev.nodes[0] == net:
                out.append(dev.name)
        return out

    def current_interfaces(self) -> list[PortNet]:
        out = []
        for dev in self.circuit.devices:
            if dev.kind not in TRANSISTORS:
                continue
            role = self.roles.get(dev.name)
            if role is None or role.role not in DRIVER_ROLES:
                continue
            # pins as the stage conducts: an extractor writes a device's fingers with
            # drain and source swapped in turn, and they are one composite, not a stage
            # driving the next one's source
            net = role.pins[0] if role.pins else dev.nodes[0]
            if net in self.ac_ground:
                continue
            own = set(role.units)
            for other in self.on_net.get(net, []):
                if other is dev or other.kind not in TRANSISTORS or other.name in own:
                    continue
                orole = self.roles.get(other.name)
                opins = orole.pins if orole is not None and orole.pins else tuple(other.nodes[:3])
                into_source = opins[2] == net and orole is not None and orole.role in RECEIVER_ROLES
                into_diode = opins[0] == net and opins[1] == net
                if into_source or into_diode:
                    what = "source" if other.kind in MOS else "emitter"
                    where = f"{what} of {other.name}" if into_source else f"diode-connected {other.name}"
                    out.append(PortNet(net, self.circuit.nets[net],
                                       f"{role.role} {dev.name} drives a current into the {where}",
                                       dev.location, self.view_of(dev.name), [dev.name]))
                    break
        return out

    # -- voltage outputs and loads ---------------------------------------------------
    def voltage_outputs(self) -> list[PortNet]:
        found: dict[int, PortNet] = {}
        load_globs = patterns(self.ctx.config, "load")
        pragma_loads = self._pragma_loads()
        for prefix, view, port in self.declared():
            if port.kind != "voltage-output":
                continue
            net = self.circuit.find_net(port.circuit_net)
            if net is None or net in self.ac_ground or net in found:
                continue
            if port.source != "pragma" and self.is_current_output(net):
                continue  # named like an output, but only current sources drive it
            location = port.location or self.first_location(net, prefix)
            loads, load_why = self.loads_of(net, port.circuit_net, load_globs, pragma_loads)
            if not loads:
                loads, load_why = self.behind_coupling(net)
            if loads:
                found[net] = PortNet(net, port.circuit_net, port.decided_by, location, view, sorted(loads),
                                     "; ".join(load_why))
        for net, cap in self.coupled_loads():
            if net in found or any(n in found for n in cap.nodes[:2]):
                continue  # the output is already judged after its coupling capacitor
            loads, load_why = self.loads_of(net, self.circuit.nets[net], load_globs, pragma_loads)
            if loads:
                found[net] = PortNet(net, self.circuit.nets[net],
                                     f"testbench: it drives a load through coupling capacitor {cap.name}",
                                     cap.location, self.view_of(cap.name), sorted(loads), "; ".join(load_why))
        return sorted(found.values(), key=lambda p: p.name)

    def path_words(self, net: int, toward_output: bool = True) -> str | None:
        """The signal path by inspection that reaches ``net`` from an input (or leaves it
        for an output), in words for a finding's reasoning; None without one."""
        from lintamp.engine.stage_paths import paths_by_inspection

        ports: dict[tuple, tuple[str, str]] = {}
        for _, _, p in self.declared():
            idx = self.circuit.find_net(p.circuit_net)
            if idx is not None and idx != net:
                ports.setdefault((p.is_input, idx), (p.circuit_net, p.kind))
        here = [(self.circuit.nets[net], net)]
        ends = [(name, idx) for (is_input, idx), (name, _) in ports.items() if is_input == toward_output]
        if not ends:
            return None
        inputs, outputs = (ends, here) if toward_output else (here, ends)
        acg = self.intent.acg | set(self.intent.rails())  # a signal source is no AC ground here
        rows, _ = paths_by_inspection(self.circuit, list(self.roles.values()), acg, inputs[:4], outputs[:4],
                                      limit=1, op=self.op)
        if not rows:
            return None
        row = rows[0]
        kinds = {name: kind for name, kind in ports.values()}
        current_in = kinds.get(row["from"], "current-input" if not toward_output else "") == "current-input"
        steps = " → ".join(f"{h['device']} ({h['role']}) → {h['to']}" for h in row["chain"])
        value = row.get("formula_value")
        if not row["formula"]:
            return f"signal path: {row['from']} → {steps}"
        unit = "" if current_in else " V/V"  # a current input's first form is no voltage gain
        shown = f" ≈ {value:.4g}{unit}" if value is not None and not current_in else ""
        return f"signal path: {row['from']} → {steps}; by inspection {row['formula']}{shown}"

    def coupled_loads(self) -> list[tuple[int, FlatDevice]]:
        """(drain or collector net, capacitor) where a capacitor couples a transistor's
        output into a passive network that ends at AC ground with a resistor in it (a
        line or an earpiece): that transistor output is a voltage output."""
        out = []
        for dev in self.circuit.devices:
            if dev.kind != "capacitor" or len(dev.nodes) < 2:
                continue
            for near in dev.nodes[:2]:
                if near in self.ac_ground:
                    continue
                if not any(d.kind in TRANSISTORS and d.nodes[0] == near
                           for d in self.on_net.get(near, ())):
                    continue
                chain = self.passive_chain(near, dev)
                if chain and any(d.kind == "resistor" for n in chain for d in self.on_net.get(n, ())):
                    out.append((near, dev))
        return out

    def behind_coupling(self, net: int) -> tuple[set[str], list[str]]:
        """An output taken after a coupling capacitor: the passive elements from it to AC
        ground are the load, and the stage behind the capacitor drives it."""
        caps = [d for d in self.on_net.get(net, ()) if d.kind == "capacitor"
                and any(n not in self.ac_ground and n != net for n in d.nodes[:2])]
        if not caps or self._driven_here(net):
            # a stage that drives the net itself (a Miller capacitor on an amplifier's
            # output is no coupling capacitor): its own resistors are no load
            return set(), []
        loads, why, kinds = set(), [], set()
        for dev in self.on_net.get(net, ()):
            if dev in caps or dev.kind not in PASSIVE:
                continue
            if self.passive_chain(net, dev) is not None:
                loads.add(dev.name)
                kinds.add(dev.kind)
                why.append(f"{dev.name}: to AC ground behind coupling capacitor {caps[0].name}")
        if "resistor" not in kinds:
            # only L and C behind the capacitor: a tank or a filter of the circuit itself
            # (an oscillator's LC tank), not a load that takes signal power
            return set(), []
        return loads, why

    def _driven_here(self, net: int) -> bool:
        """A transistor's drain, collector, source or emitter, or a controlled source's
        output, on the net itself."""
        for d in self.on_net.get(net, ()):
            if d.kind in TRANSISTORS and net in (d.nodes[0], d.nodes[2]):
                return True
            if d.kind in ("vccs", "vcvs", "cccs", "ccvs") and net in d.nodes[:2]:
                return True
        return False

    def is_current_output(self, net: int) -> bool:
        """Only mirror outputs, fixed-bias current sources or cascodes drive the net:
        a current output by design (a bias-current port), not a voltage output."""
        drivers = [d for d in self.on_net.get(net, [])
                   if d.kind in TRANSISTORS and d.nodes[0] == net and d.nodes[1] != net]
        if not drivers:
            return False
        others = [d for d in self.on_net.get(net, []) if d not in drivers and d.kind not in PASSIVE
                  and not (d.kind in TRANSISTORS and d.nodes[1] == net
                           and d.nodes[0] != net)]
        roles = [self.roles.get(d.name) for d in drivers]
        return not others and all(r is not None and r.role in CURRENT_OUTPUT_ROLES for r in roles)

    def has_active_driver(self, port: PortNet, hops: int = 2, any_terminal: bool = False,
                          voltage_mode: bool = False) -> bool:
        """A transistor or controlled source on the net, or a resistor or two away
        (an op amp's output resistor), not counting the load elements.  With
        ``any_terminal`` a gate, base or control input counts too (a stage input); with
        ``voltage_mode`` a controlled current source does not (a sensor's signal
        current, such as a photodiode model's G source, is no voltage stage)."""
        controlled = ("vcvs", "ccvs") if voltage_mode else ("vcvs", "vccs", "cccs", "ccvs")
        skip = set(port.detach)
        frontier, seen = {port.net}, {port.net}
        for _ in range(hops + 1):
            nxt = set()
            for net in frontier:
                for dev in self.on_net.get(net, []):
                    if dev.name in skip:
                        continue
                    if dev.kind in TRANSISTORS and (
                            any_terminal or net in (dev.nodes[0], dev.nodes[2])):
                        return True
                    if dev.kind in controlled and (any_terminal or net in dev.nodes[:2]):
                        return True
                    if dev.kind in ("resistor", "inductor", "capacitor"):  # a coupling capacitor too
                        nxt.update(n for n in dev.nodes[:2] if n not in seen and n not in self.ac_ground)
            seen |= nxt
            frontier = nxt
        return False

    def _pragma_loads(self) -> set[str]:
        out = set()
        for prefix, view in self.prefixes:
            for pragma in view.cell.pragmas:
                if pragma.verb == "load":
                    out.update(prefix + a for a in pragma.args)
        return out

    def loads_of(self, net: int, name: str, load_globs, pragma_loads: set[str]) -> tuple[set[str], list[str]]:
        """Elements on (or behind a passive chain from) ``net`` that are its load."""
        loads: set[str] = set()
        why: list[str] = []
        prefix = prefix_of(name)
        for dev in self.on_net.get(net, []):
            if dev.kind not in PASSIVE:
                continue
            chain = self.passive_chain(net, dev)
            g = _matches(local_name(dev.name), load_globs)
            if dev.name in pragma_loads:
                loads.add(dev.name)
                why.append(f"{dev.name}: load pragma")
            elif g:
                loads.add(dev.name)
                why.append(f"{dev.name}: name matches the load pattern {g!r}")
            elif chain is not None and prefix and not dev.name.startswith(prefix):
                loads.add(dev.name)
                why.append(f"{dev.name}: the parent's element on output port {local_name(name)} of "
                           f"{prefix.rstrip('/')}")
            elif chain and any(d.name in pragma_loads or _matches(local_name(d.name), load_globs)
                               for n in chain for d in self.on_net.get(n, [])):
                loads.add(dev.name)
                why.append(f"{dev.name}: leads to an element named as the load")
            elif chain and dev.kind == "capacitor" and any(
                    d.kind == "resistor" for n in chain for d in self.on_net.get(n, [])):
                loads.add(dev.name)
                why.append(f"{dev.name}: AC coupling into a passive network to AC ground")
        return loads, why


def port_finder(ctx, numbers) -> PortFinder:
    """The netlist's one :class:`PortFinder`, built on first use (memoised on ``ctx``)."""
    return ctx.memo("impedance-ports",
                    lambda: PortFinder(ctx, numbers.circuit, numbers.ac_ground, numbers.op))
