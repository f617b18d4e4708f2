"""Loops of zero-impedance DC branches: V sources, inductors, E/H outputs, 0-ohm R.

At DC each such branch forces the voltage between its ends (an inductor and a 0-ohm
resistor force 0 V).  A loop of them over-constrains Kirchhoff's voltage law: the
branch currents are undetermined and the MNA matrix is singular (ngspice-39 prints
``singular matrix: check node v1#branch``).  All ground names are one node.  A
subcircuit passes its ports' rigid joins up to the parent, so a supply doubled
across the hierarchy is found in the parent; loops that close only through globals
across sibling cells are not followed.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field

from lintamp.connectivity.dc_paths import bottom_up, is_voltage_output
from lintamp.circuit.design import CellView, Device
from lintamp.circuit.values import cell_scope, top_scope
from lintamp.netlist.expr import parse_number

GROUND_KEY = "\x00ground"
MAX_LOOPS_PER_CELL = 100
RIGID_KINDS = frozenset({"vsource", "inductor", "vcvs", "ccvs"})


@dataclass(frozen=True, slots=True)
class Branch:
    """One zero-impedance branch: a device, or a join a subcircuit instance makes."""

    a: str
    b: str
    device: Device
    note: str  # "V1", "L2", "X1: ports p and n joined inside amp by V3"


@dataclass(frozen=True, slots=True)
class Loop:
    view: CellView
    closing: Branch
    path: tuple[Branch, ...]  # the other branches, from closing.b back round to closing.a
    nodes: tuple[str, ...]    # nodes in loop order


@dataclass(eq=False)
class RigidSummary:
    """Per port group joined by rigid branches inside a cell: endpoints and the note."""

    joins: list[tuple[object, object, str]] = field(default_factory=list)


def is_zero_ohm(dev: Device, scope) -> bool:
    text = dev.element.value
    if text is None:
        return False
    number = parse_number(text)
    if number is None and scope is not None:
        number = scope.value(text)
    return number == 0.0


def is_port_source(dev: Device) -> bool:
    """A V source written as an RF port (``portnum``): it has an impedance in series."""
    src = dev.element.source
    return dev.kind == "vsource" and src is not None and src.z0 is not None \
        and parse_number(src.z0) != 0.0


def rigid_pins(dev: Device, scope) -> tuple[int, int] | None:
    """Positions of the two pins a zero-impedance branch joins, or None."""
    kind = dev.kind
    if kind == "vsource" and is_port_source(dev):
        return None
    if kind in RIGID_KINDS or (kind == "behavioral" and is_voltage_output(dev)):
        pass
    elif kind == "resistor" and dev.spec is None and is_zero_ohm(dev, scope):
        pass
    else:
        return None
    return _pn(dev)


def rigid_devices(view: CellView, scope) -> list[tuple[Device, tuple[int, int] | None]]:
    """In netlist order: each device with a zero-impedance branch and its
    :func:`rigid_pins`, and each instance of a known cell with ``None``.

    The same devices as ``rigid_pins`` asked of every device, but decided once per
    device class (:attr:`CellView.device_classes`): only resistors are looked at
    one by one, for their value.

    Notes
    -----
    O(devices) array work plus O(resistors + rigid devices + instances) Python steps.
    """
    devices = view.devices
    classes = view.device_classes
    always: dict[int, tuple[int, int] | None] = {}    # the class alone decides
    by_value: dict[int, tuple[int, int] | None] = {}  # resistors: the value decides
    wanted: set[int] = set()
    for code, (key, first) in enumerate(zip(classes.keys, classes.first_members())):
        kind = key.kind
        dev = devices[first]
        if kind == "instance":
            wanted.add(code)
        elif kind in RIGID_KINDS or (kind == "behavioral" and is_voltage_output(dev)):
            always[code] = _pn(dev)
            wanted.add(code)
        elif kind == "resistor":
            by_value[code] = _pn(dev)
            wanted.add(code)
    codes = classes.codes
    zero_text: dict[str, bool] = {}
    out: list[tuple[Device, tuple[int, int] | None]] = []
    for d in view.devices_but_nonzero_plain_resistors(wanted, by_value):
        dev = devices[d]
        code = int(codes[d])
        if code in always:
            if dev.kind == "vsource" and is_port_source(dev):
                continue
            pins = always[code]
        elif code in by_value:
            if dev.spec is not None:
                continue
            text = dev.element.value
            if text is None or _plainly_nonzero(text):
                continue
            zero = zero_text.get(text)
            if zero is None:
                zero = zero_text[text] = is_zero_ohm(dev, scope)
            pins = by_value[code] if zero else None
        elif dev.subcell is not None:  # an instance of a known cell
            out.append((dev, None))
            continue
        else:
            continue
        if pins is not None:
            out.append((dev, pins))
    return out


def _pn(dev: Device) -> tuple[int, int] | None:
    try:
        return dev.pins.index("p"), dev.pins.index("n")
    except ValueError:
        return None


def _plainly_nonzero(text: str) -> bool:
    """A plain decimal (digits, at most one point, up to 15 characters) with a nonzero
    digit: a nonzero number whatever the scope, so no parse is needed (most values
    of a large extracted netlist look like this)."""
    return (len(text) <= 15 and text.isascii() and text.replace(".", "", 1).isdigit()
            and text.strip("0.") != "")


class _Forest:
    """Union-find plus the spanning forest's adjacency, to name a loop's members."""

    def __init__(self):
        self.parent: dict[str, str] = {}
        self.adj: dict[str, list[tuple[str, Branch]]] = {}

    def find(self, x: str) -> str:
        parent = self.parent
        while parent.setdefault(x, x) != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    def add(self, br: Branch) -> tuple[Branch, ...] | None:
        """Add a branch; when it closes a loop return the forest path b -> a instead."""
        ra, rb = self.find(br.a), self.find(br.b)
        if ra == rb:
            return self.path(br.b, br.a)
        self.parent[ra] = rb
        self.adj.setdefault(br.a, []).append((br.b, br))
        self.adj.setdefault(br.b, []).append((br.a, br))
        return None

    def path(self, start: str, goal: str) -> tuple[Branch, ...]:
        if start == goal:
            return ()
        back: dict[str, tuple[str, Branch]] = {start: (start, None)}
        queue = deque([start])
        while queue:
            node = queue.popleft()
            if node == goal:
                break
            for nxt, br in self.adj.get(node, ()):
                if nxt not in back:
                    back[nxt] = (node, br)
                    queue.append(nxt)
        if goal not in back:
            return ()
        out = []
        node = goal
        while node != start:
            prev, br = back[node]
            out.append(br)
            node = prev
        out.reverse()
        return tuple(out)


def _key(net: str, ground: frozenset[str]) -> str:
    return GROUND_KEY if net in ground else net


def cell_loops(view: CellView, ground: frozenset[str], summaries: dict[int, RigidSummary],
               scope) -> tuple[list[Loop], RigidSummary]:
    """Loops closed inside ``view`` and the rigid joins it passes to its parent.

    Notes
    -----
    Union-find over the rigid branches, O(branches * alpha); naming a loop walks the
    spanning forest, O(branches) per loop, at most :data:`MAX_LOOPS_PER_CELL` loops.
    """
    forest = _Forest()
    loops: list[Loop] = []
    for dev, pins in rigid_devices(view, scope):
        branches: list[Branch] = []
        if pins is None:  # an instance: the rigid joins its cell passes up
            summary = summaries.get(id(dev.subcell))
            if summary is None:
                continue
            for end_a, end_b, note in summary.joins:
                a = _end_net(end_a, dev, ground)
                b = _end_net(end_b, dev, ground)
                if a is None or b is None:
                    continue
                branches.append(Branch(a, b, dev, f"{dev.display}: {note}"))
        else:
            a, b = dev.nets[pins[0]], dev.nets[pins[1]]
            if a == b:
                continue  # one net at both ends: the shorted-device rule's business
            branches.append(Branch(_key(a, ground), _key(b, ground), dev, dev.display))
        for br in branches:
            if br.a == br.b:
                if br.device.kind != "instance":
                    loops.append(Loop(view, br, (), (br.a,)))  # gnd to 0: one node
                continue
            path = forest.add(br)
            if path is not None and len(loops) < MAX_LOOPS_PER_CELL:
                nodes = [br.a, br.b]
                for step in path:
                    nxt = step.b if step.a == nodes[-1] else step.a
                    nodes.append(nxt)
                loops.append(Loop(view, br, path, tuple(nodes[:-1])))
    return loops, _summary(view, forest, ground)


def _end_net(end, dev: Device, ground: frozenset[str]) -> str | None:
    kind, value = end
    if kind == "port":
        if value >= min(len(dev.nets), len(dev.pins)):
            return None
        return _key(dev.nets[value], ground)
    return value  # ground key or a global's name


def _summary(view: CellView, forest: _Forest, ground: frozenset[str]) -> RigidSummary:
    ends: dict[str, list[tuple[object, str]]] = {}
    for pos, port in enumerate(view.ports):
        key = _key(port, ground)
        if key in forest.parent:
            ends.setdefault(forest.find(key), []).append((("port", pos), key))
    for node in list(forest.parent):
        if node == GROUND_KEY or (node in view.globals and node not in view.ports):
            ends.setdefault(forest.find(node), []).append((("node", node), node))
    summary = RigidSummary()
    for members in ends.values():
        unique: dict[str, tuple[object, str]] = {}
        for end, key in members:  # a port called gnd is ground itself: one end, not two
            unique.setdefault(key, (end, key))
        members = list(unique.values())
        first_end, first_key = members[0]
        for end, key in members[1:]:
            if first_key == key:
                continue
            inside = forest.path(first_key, key)
            names = ", ".join(b.note for b in inside[:6])
            summary.joins.append((first_end, end,
                                  f"{_end_label(first_end, view)} and {_end_label(end, view)} "
                                  f"joined inside {view.label} by {names}"))
    return summary


def _end_label(end, view: CellView) -> str:
    kind, value = end
    if kind == "port":
        return f"port {view.ports[value]}"
    return "ground" if value == GROUND_KEY else f"global {value}"


def design_loops(ctx) -> dict[int, list[Loop]]:
    """Loops per cell view id, computed bottom-up once (memoised on ``ctx``).

    Notes
    -----
    O(rigid branches of unique cells).
    """
    def compute():
        design = ctx.design
        outer = top_scope(ctx.netlist)
        summaries: dict[int, RigidSummary] = {}
        out: dict[int, list[Loop]] = {}
        for view in bottom_up(design.cells):
            scope = outer if view.cell.is_top else _LazyScope(view.cell, outer)
            loops, summary = cell_loops(view, design.ground, summaries, scope)
            summaries[id(view)] = summary
            out[id(view)] = loops
        return out

    return ctx.memo("loops", compute)


class _LazyScope:
    """A cell's default parameter scope, evaluated on the first value asked for."""

    def __init__(self, cell, outer):
        self._cell, self._outer, self._scope = cell, outer, None

    def value(self, text):
        if self._scope is None:
            self._scope = cell_scope(self._cell, self._outer)
        return self._scope.value(text)


def node_label(key: str) -> str:
    return "ground" if key == GROUND_KEY else key
