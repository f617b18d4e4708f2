"""Which nets carry a signal current in, which are voltage outputs, and what loads them.

Sources, strongest first:

* pragmas: ``current-input NET``, ``voltage-output NET``, ``load ELEMENT ...``
  (in a ``.subckt`` they apply to every instance of that cell);
* the ``[ports]`` table of the configuration (name globs), else the default
  naming conventions below;
* testbench stimulus: an independent current source with an AC value or a
  waveform into a node that has capacitance (a sensor or photodiode model);
* topology: a current-mirror output, common-gate or cascode drain (collector)
  that feeds the source (emitter) of a common-gate / cascode device or a
  diode-connected mirror input -- a current interface between stages;
* hierarchy: the parent's passive elements on a cell's voltage-output port are
  that output's load;
* AC coupling: a capacitor from an output into a purely passive network that
  ends at AC ground is a load (a coupled headphone, a line input).

A passive chain (R, C, L only, ending at AC ground, touching no transistor and no
source) is what separates a load from a feedback network: a network that leads
back to a gate or into the driving cell is feedback and stays attached.
"""

from __future__ import annotations

import fnmatch
from dataclasses import dataclass, field

from lintamp.circuit.kinds import MOS, TRANSISTORS
from lintamp.engine.flat_places import local_name, net_aliases, prefix_of, view_of_path
from lintamp.engine.stages import recognise_stages
from lintamp.circuit.design import CellView, Design
from lintamp.circuit.flat import FlatCircuit, FlatDevice
from lintamp.location import Location

DEFAULT_PATTERNS = {
    "voltage-output": ("out", "out?", "vout", "vout?", "*_out"),
    "current-input": ("iin", "iin?", "iin_*", "*_iin"),
    "load": ("rload*", "cload*", "zload*", "rl_load*", "cl_load*"),
}
PASSIVE = ("resistor", "capacitor", "inductor")
MAX_PREFIXES = 10_000
MAX_CHAIN_NETS = 64
DRIVER_ROLES = ("current-mirror output", "common gate", "common base", "cascode")
RECEIVER_ROLES = ("common gate", "common base", "cascode")
CURRENT_OUTPUT_ROLES = ("current-mirror output", "current source (fixed bias)", "cascode")


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


def patterns(config, kind: str) -> tuple[str, ...]:
    ports = getattr(config, "ports", None) or {}
    return tuple(ports.get(kind, DEFAULT_PATTERNS[kind]))


def _matches(name: str, globs) -> str | None:
    for g in globs:
        if fnmatch.fnmatchcase(name.lower(), g.lower()):
            return g
    return None


def instance_prefixes(design: Design) -> list[tuple[str, CellView]]:
    """Every (flat prefix, cell view) pair below the top, the top as ``("", top)``.

    Notes
    -----
    Depth-first, O(instances), capped at ``MAX_PREFIXES``.
    """
    out = [("", design.top)]
    stack = [("", design.top, 0)]
    while stack and len(out) < MAX_PREFIXES:
        prefix, view, depth = stack.pop()
        if depth > 100:
            continue
        for dev in view.instances():
            child = prefix + dev.name + "/"
            out.append((child, dev.subcell))
            stack.append((child, dev.subcell, depth + 1))
    return out


class PortFinder:
    """Port discovery over one flat circuit (build once per netlist)."""

    def __init__(self, ctx, circuit: FlatCircuit, ac_ground: set[int], op=None):
        self.ctx = ctx
        self.design: Design = ctx.design
        self.circuit = circuit
        self.ac_ground = ac_ground
        self.prefixes = instance_prefixes(self.design)
        self.aliases = net_aliases(circuit)
        self.on_net: dict[int, list[FlatDevice]] = {}
        for dev in circuit.devices:
            for n in set(dev.nodes):
                self.on_net.setdefault(n, []).append(dev)
        self.by_name = {d.name: d for d in circuit.devices}
        self.roles = {s.device: s for s in recognise_stages(circuit, op)}

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
        for prefix, view in self.prefixes:
            for pragma in view.cell.pragmas:
                if pragma.verb != "current-input":
                    continue
                for name in pragma.args:
                    net = self.circuit.find_net(prefix + name)
                    if net is not None:
                        self._add(found, PortNet(net, prefix + name, f"declared current-input ({pragma.location})",
                                                 pragma.location, view, self.current_drivers(net, prefix)))
        for dev in self.circuit.devices:
            src = dev.source
            if dev.kind != "isource" or src is None or not (src.ac_mag or src.time_varying):
                continue
            a, b = dev.nodes[0], dev.nodes[1]
            if (a in self.ac_ground) == (b in self.ac_ground):
                continue
            net = b if a in self.ac_ground else a
            c_f, _ = self.net_capacitance_f(net)
            if c_f <= 0 and net not in found:
                continue  # a bare AC current is usually an impedance probe, not a sensor
            stim = "AC" if src.ac_mag else "time-varying"
            self._add(found, PortNet(net, self.circuit.nets[net],
                                     f"driven by {stim} current source {dev.display_name or dev.name}",
                                     dev.location, self.view_of(dev.name), [dev.name]))
        globs = patterns(self.ctx.config, "current-input")
        for net, names in self.aliases.items():
            for name in names:
                g = _matches(local_name(name), globs)
                if g and net not in found:
                    prefix = prefix_of(name)
                    self._add(found, PortNet(net, name, f"name matches the current-input pattern {g!r}",
                                             self.first_location(net, prefix), self.view_of(name),
                                             self.current_drivers(net, prefix)))
                    break
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
            net = dev.nodes[0]
            if net in self.ac_ground:
                continue
            for other in self.on_net.get(net, []):
                if other is dev or other.kind not in TRANSISTORS:
                    continue
                orole = self.roles.get(other.name)
                into_source = other.nodes[2] == net and orole is not None and orole.role in RECEIVER_ROLES
                into_diode = other.nodes[0] == net and other.nodes[1] == net
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
        globs = patterns(self.ctx.config, "voltage-output")
        load_globs = patterns(self.ctx.config, "load")
        declared: list[tuple[int, str, str, Location, CellView]] = []
        for prefix, view in self.prefixes:
            for pragma in view.cell.pragmas:
                if pragma.verb == "voltage-output":
                    for name in pragma.args:
                        net = self.circuit.find_net(prefix + name)
                        if net is not None:
                            declared.append((net, prefix + name, f"declared voltage-output ({pragma.location})",
                                             pragma.location, view))
        for net, names in self.aliases.items():
            for name in names:
                prefix = prefix_of(name)
                view = self.view_of(name)
                local = local_name(name)
                if prefix and local not in view.ports:
                    continue  # inside a cell only its ports are outputs by name
                g = _matches(local, globs)
                if g:
                    declared.append((net, name, f"name matches the voltage-output pattern {g!r}",
                                     self.first_location(net, prefix), view))
        pragma_loads = self._pragma_loads()
        for net, name, why, location, view in declared:
            if net in self.ac_ground or net in found:
                continue
            if not why.startswith("declared") and self.is_current_output(net):
                continue  # named like an output, but only current sources drive it
            loads, load_why = self.loads_of(net, name, load_globs, pragma_loads)
            if loads:
                found[net] = PortNet(net, name, why, location, view, sorted(loads), "; ".join(load_why))
        return sorted(found.values(), key=lambda p: p.name)

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

    def has_active_driver(self, port: PortNet, hops: int = 2, any_terminal: bool = False) -> bool:
        """A transistor or controlled source on the net, or a resistor or two away
        (an op amp's output resistor), not counting the load elements.  With
        ``any_terminal`` a gate, base or control input counts too (a stage input)."""
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
                    if dev.kind in ("vcvs", "vccs", "cccs", "ccvs") and (any_terminal or net in dev.nodes[:2]):
                        return True
                    if dev.kind in ("resistor", "inductor"):
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
