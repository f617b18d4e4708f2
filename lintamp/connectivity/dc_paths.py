"""DC conduction: which nets a DC path joins, and which of them something anchors.

At DC a capacitor is open, an inductor a short, an ideal current source an open
branch that still forces its current.  A net whose DC component contains neither
ground, nor a DC-defined global, nor a port of its cell (biased from outside) has
no defined voltage: the MNA conductance matrix is singular there.

What conducts (pins of one device joined into one DC group):

==========================  ==========================================================
R (any value), L, V         p-n (a 0-ohm R is a short)
E, H, B with ``V=``         output p-n (a voltage output); control inputs do not conduct
diode, switch S/W           a-k, p-n
BJT                         c, b, e (both junctions); the substrate pin does not conduct
MOS                         d, s and b: channel plus the two bulk junction diodes
JFET / MESFET               d, s and g (channel plus gate junction)
T/O/U lines                 each port pair (p1-n1, p2-n2): Z0 (or R) in the model
mapped PDK devices          by their kind's pins; body pins of R/C are not judged
C, MOS gate, I, G, F,       nothing (I, G, F, B with ``I=`` are *current feeds*)
B with ``I=``, K
subcircuit instance         its ports as the cell's own summary joins them
==========================  ==========================================================

Two modes.  ``FULL`` is what a simulator sees: junctions conduct, so a floating
MOS body or BJT base is still "reached" through its diodes (ngspice-39 adds GMIN
across every junction and converges).  ``BIAS`` treats a BJT base and a JFET gate as
control inputs, like a MOS gate: a base reached only through its own junctions has
no source of base current, and the device sits off (ngspice-39 settles such a base
near 0.4 V without complaint).  MOS bulk junctions conduct in both modes; a floating
body is the ``body-tie`` rule's business.

Globals (``.global``) are one net everywhere.  Inside a simulation deck a global
counts as defined only when some instantiated cell joins it to ground by a DC path
(a V source to ground, a resistor, ...); in a cell library, and in cells no deck
instantiates, every global counts as defined from outside.  Devices lintamp cannot
judge (XSPICE models, unknown subcircuits, coupled line bundles, extra pins) mark
their nets *unknown*, and a component holding an unknown net is never reported.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum
from itertools import compress
from operator import attrgetter
from typing import TYPE_CHECKING, Callable

from lintamp.circuit.design import SMALL_TABLE_TERMINALS, CellView, Device, DeviceClass
from lintamp.circuit.kinds import BJT_KINDS, JFET_KINDS, MOS_KINDS
from lintamp.netlist.statements import CONTROL_LETTERS

if TYPE_CHECKING:  # numpy is imported only where a large cell needs it
    import numpy as np

FULL = "full"
BIAS = "bias"
MAX_DEPTH = 200  # nesting bound for the bottom-up summaries

TWO_TERMINAL_SHORTS = frozenset({"resistor", "inductor", "vsource", "ccvs", "switch",
                                 "cswitch", "vcvs"})
CURRENT_KINDS = frozenset({"isource", "vccs", "cccs"})
_CONTROLS = attrgetter("element.controls")


# -- what one device does at DC ----------------------------------------------------------
@dataclass(frozen=True, slots=True)
class DevicePlan:
    """Pin positions of one device by DC role (positions index ``device.nets``)."""

    groups: tuple[tuple[int, ...], ...] = ()       # pins joined (in both modes)
    full_only: tuple[tuple[int, ...], ...] = ()    # pins joined in FULL mode only (junctions)
    controls: tuple[int, ...] = ()                 # gate / base pins (draw no DC bias current)
    currents: tuple[int, ...] = ()                 # current-source output pins
    unknown: tuple[int, ...] = ()                  # pins lintamp cannot judge
    senses: tuple[int, ...] = ()                   # control inputs of controlled sources


def is_voltage_output(dev: Device) -> bool:
    """A behavioural element whose output is a voltage (B with V=, E/H VALUE/TABLE)."""
    return writes_a_voltage(dev.element.letter, dev.element.model)


def writes_a_voltage(letter: str, model: str | None) -> bool:
    """:func:`is_voltage_output` from an element's letter and model name as written
    (what a :class:`~lintamp.circuit.design.DeviceClass` holds)."""
    return (letter == "b" and model == "v") or letter in ("e", "h")


def _pos(pin_roles: tuple[str, ...], *pins: str) -> tuple[int, ...]:
    return tuple(i for i, p in enumerate(pin_roles) if p in pins)


def device_plan(dev: Device) -> DevicePlan:
    """The DC role of each pin of ``dev`` (instances excluded: see :func:`cell_dc`).

    Examples
    --------
    A MOS joins drain, source and body; its gate is a control pin.
    """
    return class_plan(DeviceClass(dev.kind, dev.pins, dev.element.letter, dev.element.model),
                      lambda: dev)


def class_plan(key: DeviceClass, first: Callable[[], Device]) -> DevicePlan:
    """The DC role of each pin of every device of one class (see :func:`device_plan`).

    The class key decides it; ``first()`` gives a device of the class and is asked
    only for the kinds whose roles also need its model or its net count (lines, and
    kinds lintamp cannot judge), never for a plain R, C or L.
    """
    kind, pins = key.kind, key.pins
    if kind in ("vcvs", "switch"):
        return DevicePlan(groups=(_pos(pins, "p", "n"),),
                          senses=tuple(i for i, p in enumerate(pins) if p not in ("p", "n")))
    if kind in TWO_TERMINAL_SHORTS:
        extra = tuple(i for i, p in enumerate(pins) if p not in ("p", "n"))  # a mapped R's body
        return DevicePlan(groups=(_pos(pins, "p", "n"),), unknown=extra)
    if kind == "diode":
        return DevicePlan(groups=(_pos(pins, "a", "k"),))
    if kind == "behavioral":
        senses = tuple(i for i, p in enumerate(pins) if p not in ("p", "n"))
        if writes_a_voltage(key.letter, key.model):
            return DevicePlan(groups=(_pos(pins, "p", "n"),), senses=senses)
        return DevicePlan(currents=_pos(pins, "p", "n"), senses=senses)
    if kind in CURRENT_KINDS:
        return DevicePlan(currents=_pos(pins, "p", "n"),
                          senses=tuple(i for i, p in enumerate(pins) if p not in ("p", "n")))
    if kind == "capacitor":
        return DevicePlan(unknown=tuple(i for i, p in enumerate(pins) if p not in ("p", "n")))
    if kind in MOS_KINDS:
        return DevicePlan(groups=(_pos(pins, "d", "s", "b"),), controls=_pos(pins, "g"),
                          unknown=tuple(i for i, p in enumerate(pins)
                                        if p not in ("d", "g", "s", "b")))
    if kind in BJT_KINDS:
        return DevicePlan(groups=(_pos(pins, "c", "e"),), full_only=(_pos(pins, "c", "b", "e"),),
                          controls=_pos(pins, "b"),
                          unknown=tuple(i for i, p in enumerate(pins)
                                        if p not in ("c", "b", "e", "s")))
    if kind in JFET_KINDS:
        return DevicePlan(groups=(_pos(pins, "d", "s"),), full_only=(_pos(pins, "d", "g", "s"),),
                          controls=_pos(pins, "g"))
    if kind == "coupling":
        return DevicePlan()
    dev = first()
    n = min(len(dev.nets), len(dev.pins))
    letter = key.letter
    is_line = letter == "t" or (letter == "o" and (dev.model is None or dev.model.type == "ltra")) \
        or (letter == "u" and dev.model is not None and dev.model.type == "urc")
    if kind == "line" and is_line:  # a U without a URC model is a digital primitive
        return DevicePlan(groups=tuple(g for g in ((0, 1), (2, 3)) if max(g) < n)
                          + ((tuple(range(4, n)),) if n > 4 else ()))
    return DevicePlan(unknown=tuple(range(n)))


# -- a cell's summary as seen by its parent ------------------------------------------------
@dataclass(frozen=True, slots=True)
class PortGroup:
    """Ports of a cell that one DC component joins inside it, and what that component holds.

    ``ports`` are positions in the cell's port list; ``controls`` describes up to
    four gate/base terminals for messages; ``currents`` counts current feeds that
    enter the component from outside it.
    """

    ports: tuple[int, ...]
    ground: bool = False
    globals: frozenset[str] = frozenset()
    n_controls: int = 0
    controls: tuple[str, ...] = ()
    currents: int = 0
    unknown: bool = False
    controlled: int = 0   # of the current feeds, those a controlled source (G, F, B) makes
    sensed: bool = False  # a controlled source's control input observes the component


@dataclass(frozen=True, slots=True)
class CellSummary:
    groups: tuple[PortGroup, ...]
    group_of: tuple[int, ...]  # port position -> index into groups


@dataclass(eq=False)
class CellDC:
    """DC components of one cell's nets in one mode.

    ``labels[i]`` is the component of net ``nets[i]``.  Per component: ``ground``
    (holds a ground net), ``port`` (holds a port), ``unknown``, ``controls`` and
    ``currents`` counts (own terminals plus those reached through instances), and
    ``globals`` (names) where any.  Per-net and per-component values are numpy
    arrays, or plain lists for a small cell (see :class:`_Lists`).
    """

    view: CellView
    mode: str
    nets: list[str]
    index: dict[str, int]
    labels: "np.ndarray | list"
    n_components: int
    ground: "np.ndarray | list"
    port: "np.ndarray | list"
    unknown: "np.ndarray | list"
    controls: "np.ndarray | list"
    currents: "np.ndarray | list"
    globals: dict[int, set[str]] = field(default_factory=dict)
    # net index -> descriptions of gate/base terminals reached through instance ports
    inner_controls: dict[int, list[str]] = field(default_factory=dict)
    current_feeds: list[tuple[Device, int]] = field(default_factory=list)  # (device, pin pos)
    controlled: "np.ndarray | list | None" = None  # per component: controlled current feeds
    sensed: "np.ndarray | list | None" = None      # per component: observed by a control input


def _instance_groups(dev: Device, summary: CellSummary | None, memo: dict | None = None):
    """(pin positions joined, PortGroup) per group of the subcircuit's summary.

    ``memo`` (one cell's, while its summaries live) shares the answer between the
    instances of one cell with one pin count; callers only read it."""
    if summary is None:
        return None
    n = min(len(dev.nets), len(dev.pins))
    if memo is not None:
        key = (id(summary), n)
        out = memo.get(key)
        if out is not None:
            return out
    out = []
    for group in summary.groups:
        pins = tuple(p for p in group.ports if p < n)
        if pins:
            out.append((pins, group))
    if memo is not None:
        memo[key] = out
    return out


def cell_dc(view: CellView, mode: str, ground_names: frozenset[str],
            summaries: dict[int, CellSummary | None]) -> CellDC:
    """Connected components of the DC graph of one cell.

    Parameters
    ----------
    view : the cell.
    mode : ``FULL`` (junctions conduct) or ``BIAS`` (BJT base, JFET gate do not).
    ground_names : nets that are ground.
    summaries : ``id(subcell view) -> CellSummary`` for every instantiated cell
        (``None`` marks a cell that could not be summarised: its pins are unknown).

    Notes
    -----
    Devices of one class (:attr:`CellView.device_classes`) share their DC roles, so
    each class is handled as one batch of terminal-table columns, then the instances
    one by one.  O(terminals) time and memory, integer indices only.  The per-net and
    per-component values live in numpy arrays and the components come from one
    sparse connected-components call (:class:`_Arrays`); a small cell (plain-list
    terminal table) does the same steps on lists with a union-find (:class:`_Lists`),
    so a small deck never imports numpy.
    """
    table = view.terminal_table
    ops = _Lists(len(table.nets)) if table.small else _Arrays(len(table.nets), table.net_ids.dtype)
    index = table.index
    nets = table.nets
    n = len(nets)
    net_ids, dev_start = table.net_ids, table.dev_start
    controls = ops.zeros(n, int)
    unknown = ops.zeros(n, bool)
    sensed = ops.zeros(n, bool)
    currents_at: list[tuple[Device, int]] = []
    inner_controls: dict[int, list[str]] = {}
    inst_currents: list[int] = []
    inst_controlled: list[int] = []

    # devices of one plan key share their DC roles: handle each such batch at once
    # (array operations on the terminal table for a large cell) instead of a step per device
    devices = view.devices
    classes = view.device_classes
    current_plans: dict[int, tuple[int, ...]] = {}
    instance_codes: list[int] = []
    for code, (key, members) in enumerate(zip(classes.keys, ops.members_by_class(classes))):
        if key.kind == "instance":
            instance_codes.append(code)
            continue  # below, one by one (their roles come from the subcell's summary)
        plan = class_plan(key, lambda: devices[int(members[0])])
        base = ops.take(dev_start, members)

        def pin_ids(p):  # net number of pin ``p`` of every device of the batch
            return ops.take_shifted(net_ids, base, p)

        for group in plan.groups + (plan.full_only if mode == FULL else ()):
            if len(group) > 1:
                first = pin_ids(group[0])
                for other in group[1:]:
                    ops.join_columns(first, pin_ids(other))
        for p in plan.controls:
            ops.add_one_at(controls, pin_ids(p))
        for p in plan.unknown:
            ops.mark_at(unknown, pin_ids(p))
        for p in plan.senses:
            ops.mark_at(sensed, pin_ids(p))
        if plan.currents:
            current_plans[code] = plan.currents
    # current feeds in netlist order: the findings list them so
    codes = classes.codes
    for d in classes.members(current_plans):
        dev = devices[d]
        for p in current_plans[int(codes[d])]:
            currents_at.append((dev, p))
    for d in table.extra_devices:
        dev = devices[d]
        for net in dev.nets[len(dev.pins):]:
            unknown[index[net]] = True  # a pin lintamp knows no role for
    instances = [devices[d] for d in classes.members(instance_codes)]
    groups_memo: dict = {}
    for dev in instances:
        _add_instance(dev, index, summaries, ops.join, unknown, controls, inner_controls,
                      inst_currents, inst_controlled, sensed, groups_memo)
    # F, H, W and POLY forms sense the current of a V source: its nets are observed
    by_name: dict[str, Device] | None = None
    for dev in _sensing_devices(view):
        if by_name is None:
            by_name = {d.name: d for d in devices}
        for name in dev.element.controls:
            ctl = by_name.get(name)
            if ctl is not None:
                for net in ctl.nets:
                    sensed[index[net]] = True

    n_comp, labels = ops.components()

    def ids_of(dev, pos):  # noqa: E306 - a small local accessor
        return index[dev.nets[pos]]

    ground = ops.zeros(n_comp, bool)
    port = ops.zeros(n_comp, bool)
    comp_globals: dict[int, set[str]] = {}
    # ground and global nets in net order (a few names looked up, not every net)
    for i in sorted(i for i in map(index.get, ground_names | view.globals) if i is not None):
        net = nets[i]
        if net in ground_names:
            ground[labels[i]] = True
        else:
            comp_globals.setdefault(int(labels[i]), set()).add(net)
    for net in view.ports:
        port[labels[index[net]]] = True
    # instance groups that reach ground / globals inside anchor their component here
    _anchor_instances(instances, summaries, lambda dev, pin: int(labels[ids_of(dev, pin)]),
                      ground, comp_globals, groups_memo)
    comp_currents = ops.zeros(n_comp, int)
    comp_controlled = ops.zeros(n_comp, int)
    feeds = _count_feeds(currents_at, ids_of, labels, inst_currents, inst_controlled,
                         comp_currents, comp_controlled)
    return CellDC(view=view, mode=mode, nets=nets, index=index, labels=labels,
                  n_components=int(n_comp), ground=ground, port=port,
                  unknown=ops.any_per_component(labels, unknown, n_comp),
                  controls=ops.sum_per_component(labels, controls, n_comp),
                  currents=comp_currents, globals=comp_globals,
                  inner_controls=inner_controls, current_feeds=feeds,
                  controlled=comp_controlled,
                  sensed=ops.any_per_component(labels, sensed, n_comp))


class _Lists:
    """The steps of :func:`cell_dc` on plain lists, for a small cell: a union-find with
    path halving over net numbers, O(terminals x alpha(nets)); components are
    numbered in order of their first net."""

    def __init__(self, n: int):
        self.parent = list(range(n))

    @staticmethod
    def zeros(n: int, kind):
        return [kind()] * n

    @staticmethod
    def members_by_class(classes) -> list[list[int]]:
        out: list[list[int]] = [[] for _ in classes.keys]
        for d, code in enumerate(classes.codes):
            out[code].append(d)
        return out

    @staticmethod
    def take(values, positions):
        return [values[i] for i in positions]

    @staticmethod
    def take_shifted(values, positions, shift: int):
        return [values[i + shift] for i in positions]

    @staticmethod
    def add_one_at(counts, ids) -> None:
        for i in ids:
            counts[i] += 1

    @staticmethod
    def mark_at(flags, ids) -> None:
        for i in ids:
            flags[i] = True

    def _find(self, x: int) -> int:
        parent = self.parent
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    def join(self, ids) -> None:
        find, parent = self._find, self.parent
        root = find(ids[0])
        for other in ids[1:]:
            r = find(other)
            if r != root:
                parent[r] = root

    def join_columns(self, first, other) -> None:
        for a, b in zip(first, other):
            self.join((a, b))

    def components(self):
        number: dict[int, int] = {}
        find = self._find
        labels = [number.setdefault(find(i), len(number)) for i in range(len(self.parent))]
        return len(number), labels

    @staticmethod
    def any_per_component(labels, flags, n_comp: int) -> list[bool]:
        out = [False] * n_comp
        for i, flag in enumerate(flags):
            if flag:
                out[labels[i]] = True
        return out

    @staticmethod
    def sum_per_component(labels, counts, n_comp: int) -> list[int]:
        out = [0] * n_comp
        for i, count in enumerate(counts):
            if count:
                out[labels[i]] += count
        return out


class _Arrays:
    """The steps of :func:`cell_dc` on numpy arrays, for a large cell: joins are
    collected as pairs of net-number columns and the components found by one sparse
    connected-components call (scipy numbers them in order of their first net too)."""

    def __init__(self, n: int, dtype):
        import numpy as np

        self.np = np
        self.n = n
        self.dtype = dtype  # the terminal table's (int32) width
        self.row_parts: list = []
        self.col_parts: list = []
        self.rows: list[int] = []
        self.cols: list[int] = []

    def zeros(self, n: int, kind):
        return self.np.zeros(n, dtype=self.np.int64 if kind is int else bool)

    def members_by_class(self, classes) -> list:
        np = self.np
        codes = np.asarray(classes.codes, dtype=np.int64)
        batches = np.argsort(codes, kind="stable")
        bounds = np.searchsorted(codes[batches], np.arange(len(classes.keys) + 1))
        return [batches[bounds[c]:bounds[c + 1]] for c in range(len(classes.keys))]

    @staticmethod
    def take(values, positions):
        return values[positions]

    @staticmethod
    def take_shifted(values, positions, shift: int):
        return values[positions + shift]

    def add_one_at(self, counts, ids) -> None:
        self.np.add.at(counts, ids, 1)

    @staticmethod
    def mark_at(flags, ids) -> None:
        flags[ids] = True

    def join(self, ids) -> None:
        first = ids[0]
        for other in ids[1:]:
            self.rows.append(first)
            self.cols.append(other)

    def join_columns(self, first, other) -> None:
        self.row_parts.append(first)
        self.col_parts.append(other)

    def components(self):
        np = self.np
        from scipy.sparse import coo_matrix
        from scipy.sparse.csgraph import connected_components

        rows = np.concatenate(self.row_parts + [np.asarray(self.rows, dtype=self.dtype)])
        cols = np.concatenate(self.col_parts + [np.asarray(self.cols, dtype=self.dtype)])
        if not self.n:
            return 0, np.zeros(0, dtype=np.int32)
        graph = coo_matrix((np.ones(len(rows), dtype=np.int8), (rows, cols)),
                           shape=(self.n, self.n))
        return connected_components(graph, directed=False)

    def any_per_component(self, labels, flags, n_comp: int):
        out = self.np.zeros(n_comp, dtype=bool)
        if len(labels):
            out[labels[flags]] = True
        return out

    def sum_per_component(self, labels, counts, n_comp: int):
        np = self.np
        if not len(labels):
            return np.zeros(0, dtype=np.int64)
        return np.bincount(labels, weights=counts, minlength=n_comp).astype(np.int64)


def _sensing_devices(view: CellView) -> list[Device]:
    """Devices whose element names controlling V sources (F, H, W, POLY forms), in
    netlist order; a K coupling's inductors and an instance's names are not senses.
    Only the devices of classes whose letter may name controls are looked at."""
    devices = view.devices
    if len(devices) < SMALL_TABLE_TERMINALS:
        chosen = devices
    else:
        classes = view.device_classes
        chosen = list(map(devices.__getitem__, classes.members(
            [c for c, key in enumerate(classes.keys) if key.letter in CONTROL_LETTERS])))
    return [d for d in compress(chosen, map(_CONTROLS, chosen))
            if d.kind != "coupling" and d.kind != "instance"]


def _anchor_instances(instances, summaries, component_of, ground, comp_globals,
                      memo: dict | None = None) -> None:
    """Mark components that an instance joins to ground or to globals inside it
    (both cell paths); ``instances`` are the cell's devices of kind ``instance`` and
    ``component_of(dev, pin)`` gives a pin's component."""
    for dev in instances:
        if dev.subcell is None:
            continue
        groups = _instance_groups(dev, summaries.get(id(dev.subcell)), memo)
        if not groups:
            continue
        for pins, group in groups:
            comp = component_of(dev, pins[0])
            if group.ground:
                ground[comp] = True
            if group.globals:
                comp_globals.setdefault(comp, set()).update(group.globals)


def _add_instance(dev, index, summaries, join, unknown, controls, inner_controls,
                  inst_currents, inst_controlled, sensed, memo: dict | None = None) -> None:
    """Fold one instance's port summary into its cell's components (both cell paths).

    ``unknown``, ``controls`` and ``sensed`` are per-net sequences (numpy arrays or
    lists); ``join`` merges a list of net indices into one component.
    """
    ids = [index[net] for net in dev.nets[:len(dev.pins)]]
    if dev.subcell is None:
        for i in ids:
            unknown[i] = True
        return
    groups = _instance_groups(dev, summaries.get(id(dev.subcell)), memo)
    if groups is None:
        for i in ids:
            unknown[i] = True
        return
    for pins, group in groups:
        members = [ids[p] for p in pins]
        if len(members) > 1:
            join(members)
        if group.n_controls:
            controls[members[0]] += group.n_controls
            inner_controls.setdefault(members[0], []).extend(
                f"{c} inside {dev.display} ({dev.subcell.label})" for c in group.controls)
        if group.currents:
            inst_currents.append(members[0])
        if group.controlled:
            inst_controlled.append(members[0])
        if group.sensed:
            sensed[members[0]] = True
        if group.unknown:
            unknown[members[0]] = True


def _count_feeds(currents_at, ids_of, labels, inst_currents, inst_controlled,
                 comp_currents, comp_controlled) -> list[tuple[Device, int]]:
    """Count the current feeds entering each component from outside it (in place), and
    return them in netlist order as (device, pin position).

    A current element feeds a component when another of its pins lies outside it; a
    controlled one (G, F, B) also counts in ``comp_controlled``.  ``inst_currents`` and
    ``inst_controlled`` are the nets where a subcircuit instance feeds a current.
    ``labels`` and the counts are arrays or lists (see :func:`cell_dc`).
    """
    feeds: list[tuple[Device, int]] = []
    by_dev: dict[int, list[int]] = {}
    for dev, p in currents_at:
        by_dev.setdefault(id(dev), []).append(p)
    seen: set[int] = set()
    for dev, _p in currents_at:
        if id(dev) in seen:
            continue
        seen.add(id(dev))
        pins = by_dev[id(dev)]
        comps = [int(labels[ids_of(dev, q)]) for q in pins]
        for q, comp in zip(pins, comps):
            if any(other != comp for other in comps):  # a feed from outside the component
                comp_currents[comp] += 1
                if dev.kind != "isource":
                    comp_controlled[comp] += 1
                feeds.append((dev, q))
    for i in inst_currents:
        comp_currents[labels[i]] += 1
    for i in inst_controlled:
        comp_controlled[labels[i]] += 1
    return feeds


def summarise(dc: CellDC) -> CellSummary:
    """Which ports one DC component joins inside the cell, with its flags.

    Notes
    -----
    O(ports + control terminals of port components).
    """
    view = dc.view
    if not view.ports:
        return CellSummary(groups=(), group_of=())
    by_comp: dict[int, list[int]] = {}
    order: list[int] = []
    for pos, port in enumerate(view.ports):
        i = dc.index.get(port)
        if i is None:
            continue
        comp = int(dc.labels[i])
        if comp not in by_comp:
            by_comp[comp] = []
            order.append(comp)
        by_comp[comp].append(pos)
    wanted = set(order)
    descriptions: dict[int, list[str]] = {c: [] for c in order}
    table = view.terminal_table
    for i in control_nets(view, dc.inner_controls):  # only these nets add a description
        comp = int(dc.labels[i])
        if comp not in wanted or len(descriptions[comp]) >= 4:
            continue
        for dev, pin in table.terminals_of(i):
            if is_control(dev, pin):
                descriptions[comp].append(control_label(dev, pin))
        descriptions[comp].extend(dc.inner_controls.get(i, ()))
    groups = []
    group_of = [-1] * len(view.ports)
    for comp in order:
        for pos in by_comp[comp]:
            group_of[pos] = len(groups)
        groups.append(PortGroup(
            ports=tuple(by_comp[comp]), ground=bool(dc.ground[comp]),
            globals=frozenset(dc.globals.get(comp, ())), n_controls=int(dc.controls[comp]),
            controls=tuple(descriptions[comp][:4]), currents=int(dc.currents[comp]),
            unknown=bool(dc.unknown[comp]), controlled=int(dc.controlled[comp]),
            sensed=bool(dc.sensed[comp])))
    return CellSummary(groups=tuple(groups), group_of=tuple(group_of))


def control_nets(view: CellView, inner_controls: dict[int, list[str]]) -> list[int]:
    """Numbers of the nets (with a pin role) that hold a control terminal (see
    :func:`is_control`) or a control inside an instance, in net order.

    Notes
    -----
    Found from the device classes of transistors: no step per plain R/C card of an
    extracted cell (which are never controls).
    """
    table = view.terminal_table
    classes = view.device_classes
    found = set(inner_controls)
    for code, key in enumerate(classes.keys):
        if key.kind in MOS_KINDS or key.kind in JFET_KINDS:
            pin = "g"
        elif key.kind in BJT_KINDS:
            pin = "b"
        else:
            continue
        if pin not in key.pins:
            continue
        pos = key.pins.index(pin)
        start, ids = table.dev_start, table.net_ids
        for d in classes.members((code,)):
            if start[d] + pos < start[d + 1]:
                found.add(int(ids[start[d] + pos]))
    return sorted(i for i in found if i < table.n_role_nets)


def is_control(dev: Device, pin: str) -> bool:
    """A MOS or JFET gate, or a BJT base: a terminal that needs a bias from elsewhere."""
    if dev.kind in MOS_KINDS or dev.kind in JFET_KINDS:
        return pin == "g"
    if dev.kind in BJT_KINDS:
        return pin == "b"
    return False


def control_label(dev: Device, pin: str) -> str:
    """``gate of M1`` / ``base of Q3``."""
    word = "base" if dev.kind in BJT_KINDS else "gate"
    return f"{word} of {dev.display}"


def _subcells(view: CellView) -> list[CellView]:
    return [d.subcell for d in view.instances()]


def bottom_up(views: list[CellView]) -> list[CellView]:
    """Cell views children first, each once, nesting bounded by :data:`MAX_DEPTH`.

    Notes
    -----
    Iterative depth-first search: O(cells + instances); a view's instances are
    listed once per visit, not once per child it descends into.
    """
    done: set[int] = set()
    out: list[CellView] = []
    for root in views:
        if id(root) in done:
            continue
        # each frame keeps its view's instantiated cells, listed once per visit
        stack: list[tuple[CellView, list[CellView], int]] = [(root, _subcells(root), 0)]
        on_stack = {id(root)}
        while stack:
            view, subs, child = stack[-1]
            advanced = False
            while child < len(subs):
                sub = subs[child]
                child += 1
                if id(sub) not in done and id(sub) not in on_stack and len(stack) < MAX_DEPTH:
                    stack[-1] = (view, subs, child)
                    stack.append((sub, _subcells(sub), 0))
                    on_stack.add(id(sub))
                    advanced = True
                    break
            if advanced:
                continue
            stack.pop()
            on_stack.discard(id(view))
            if id(view) not in done:
                done.add(id(view))
                out.append(view)
    return out


# -- the design-wide picture, memoised on the context ---------------------------------------
@dataclass(eq=False)
class DesignDC:
    """Every cell's DC components in one mode, and the globals a deck defines."""

    mode: str
    cells: dict[int, CellDC]
    summaries: dict[int, CellSummary | None]
    defined_globals: frozenset[str]
    library: bool  # no deck: every global counts as defined from outside


def design_dc(design, mode: str) -> DesignDC:
    """Components of every cell, bottom-up, then which globals are defined.

    Notes
    -----
    O(total terminals of unique cells), independent of the instance count.
    """
    ground_names = design.ground
    summaries: dict[int, CellSummary | None] = {}
    cells: dict[int, CellDC] = {}
    for view in bottom_up(design.cells):
        dc = cell_dc(view, mode, ground_names, summaries)
        cells[id(view)] = dc
        # an empty definition is a black box (an abstract view): its ports are unknown
        summaries[id(view)] = summarise(dc) if view.devices else None
    library = not is_simulation_deck(design)
    defined: set[str] = set()
    if not library:
        # union-find over global names: a deck cell's component joins them
        parent: dict[str, str] = {}

        def find(x):
            while parent.setdefault(x, x) != x:
                parent[x] = parent[parent[x]]
                x = parent[x]
            return x

        for vid in design.deck_cells:
            dc = cells.get(vid)
            if dc is None:
                continue
            for comp, names in dc.globals.items():
                members = list(names) + (["\x00ground"] if dc.ground[comp] else [])
                for other in members[1:]:
                    parent[find(other)] = find(members[0])
        root = find("\x00ground")
        defined = {g for g in parent if g != "\x00ground" and find(g) == root}
    return DesignDC(mode=mode, cells=cells, summaries=summaries,
                    defined_globals=frozenset(defined), library=library)


def is_simulation_deck(design) -> bool:
    """The file is a simulation deck: its top level has devices, and an analysis card or
    an independent source.  Otherwise (a design netlist: top-level instances and nothing
    to drive them) the top level's nets are the design's interface and count as
    connected from outside, like a subcircuit's ports."""
    if not design.deck_cells:
        return False
    if design.netlist.analyses:
        return True
    return any(d.kind in ("vsource", "isource") for d in design.top.devices)


def interface_view(design, view: CellView) -> bool:
    """A view whose every net counts as connected from outside: the top level of a
    design netlist (see :func:`is_simulation_deck`)."""
    return view is design.top and bool(view.devices) and not is_simulation_deck(design)


def get_design_dc(ctx, mode: str = FULL) -> DesignDC:
    """The memoised :func:`design_dc` of the context's design."""
    return ctx.memo(("dc_paths", mode), lambda: design_dc(ctx.design, mode))


# -- islands: components nothing anchors ---------------------------------------------------
@dataclass(eq=False)
class Island:
    """A DC component of one cell with no path to ground, a defined global or a port."""

    view: CellView
    nets: list[str]                      # in order of first use
    terminals: list[tuple[Device, str]]  # every (device, pin) on those nets, netlist order
    controls: list[str]                  # "gate of M1", also through instances
    current_feeds: list[tuple[Device, str]]  # current sources entering from outside
    undefined_globals: list[str]
    controlled_feeds: bool = False  # a controlled source (G, F, B with I=) feeds it
    sensed: bool = False            # a control input observes it: feedback may set it

    @property
    def first_device(self) -> Device | None:
        devices = [d for d, _ in self.terminals]
        if not devices:
            return None
        return min(devices, key=lambda d: (d.location.path, d.location.line, d.location.column))


def anchored(ddc: DesignDC, design, dc: CellDC):
    """Per component: something outside the component defines its DC level."""
    if isinstance(dc.ground, list):
        anchor = [g or p or u for g, p, u in zip(dc.ground, dc.port, dc.unknown)]
    else:
        anchor = dc.ground | dc.port | dc.unknown
    if interface_view(design, dc.view):
        anchor[:] = [True] * len(anchor) if isinstance(anchor, list) else True
        return anchor
    if dc.globals:
        everything = ddc.library or not design.in_deck(dc.view)
        for comp, names in dc.globals.items():
            if everything or names & ddc.defined_globals:
                anchor[comp] = True
    netlist = design.netlist
    if dc.view is design.top and netlist.initial_conditions and netlist.transient_only():
        # the transient's initial operating point holds each '.ic' net at its value, and
        # no other operating point is solved (ngspice-39: no singular matrix then)
        for net in netlist.initial_conditions:
            number = dc.index.get(net)
            if number is not None:
                anchor[dc.labels[number]] = True
    return anchor


def islands(ctx, view: CellView, mode: str = FULL) -> list[Island]:
    """The unanchored DC components of ``view`` (memoised per cell and mode).

    Notes
    -----
    O(nets of the cell) to find them, then O(terminals on island nets).
    """
    def compute():
        ddc = get_design_dc(ctx, mode)
        dc = ddc.cells.get(id(view))
        if dc is None or dc.n_components == 0:
            return []
        anchor = anchored(ddc, ctx.design, dc)
        if all(anchor) if isinstance(anchor, list) else anchor.all():
            return []
        out: dict[int, Island] = {}
        if isinstance(anchor, list):
            loose = [i for i, comp in enumerate(dc.labels) if not anchor[comp]]
        else:  # the nets of unanchored components, in net order, without a step per net
            import numpy as np

            loose = np.flatnonzero(~anchor[dc.labels]).tolist()
        for i in loose:
            net = dc.nets[i]
            comp = int(dc.labels[i])
            isl = out.get(comp)
            if isl is None:
                isl = out[comp] = Island(view=view, nets=[], terminals=[], controls=[],
                                         current_feeds=[],
                                         undefined_globals=sorted(dc.globals.get(comp, ())))
            isl.nets.append(net)
            for dev, pin in view.net_terminals.get(net, ()):
                isl.terminals.append((dev, pin))
                if is_control(dev, pin):
                    isl.controls.append(control_label(dev, pin))
            isl.controls.extend(dc.inner_controls.get(i, ()))
        for dev, p in dc.current_feeds:
            comp = int(dc.labels[dc.index[dev.nets[p]]])
            if comp in out:
                out[comp].current_feeds.append((dev, dev.pins[p]))
        for comp, isl in out.items():
            isl.controlled_feeds = bool(dc.controlled[comp])
            isl.sensed = bool(dc.sensed[comp])
            if dc.currents[comp] and not isl.current_feeds:
                isl.current_feeds.extend(
                    (d, pin) for d, pin in isl.terminals if d.kind == "instance")
        return list(out.values())

    return ctx.memo(("islands", id(view), mode), compute)


def reaches_defined_level(ctx, view: CellView, net: str, mode: str = FULL) -> bool:
    """True when ``net`` of ``view`` has a DC path to ground, a defined global or a port."""
    ddc = get_design_dc(ctx, mode)
    dc = ddc.cells.get(id(view))
    if dc is None or net not in dc.index:
        return True
    return bool(anchored(ddc, ctx.design, dc)[dc.labels[dc.index[net]]])


# -- what kind of island it is ------------------------------------------------------------
class IslandKind(Enum):
    """What leaves an island without a DC level: the fact a rule picks its islands by."""

    CURRENT_FED = "current-fed"          # current feeds from outside set its current, not its level
    UNBIASED_CONTROL = "unbiased-control"  # a gate or base on it has no DC bias
    FLOATING = "floating"                # nothing on it sets a level
    FEEDBACK_MAY_SET = "feedback-may-set"  # a controlled feed a control input observes


def island_kind(island: Island) -> IslandKind:
    """The kind of an island: a current feed makes it current-fed, a gate or base an
    unbiased control, anything else floating.  ``FEEDBACK_MAY_SET`` when a controlled
    current source feeds an island that a control input observes: feedback through
    the controlled sources may set its level (an OTA macromodel's G output into a
    capacitor, closed by feedback), which connectivity alone cannot judge."""
    if island.controlled_feeds and island.sensed:
        return IslandKind.FEEDBACK_MAY_SET
    if island.current_feeds:
        return IslandKind.CURRENT_FED
    if island.controls:
        return IslandKind.UNBIASED_CONTROL
    return IslandKind.FLOATING


_OPEN_WHY = {
    "capacitor": "open at DC",
    "isource": "an ideal current source: it fixes a current, not a voltage",
    "vccs": "a current output: it fixes a current, not a voltage",
    "cccs": "a current output: it fixes a current, not a voltage",
}


def describe_terminal(dev: Device, pin: str) -> str:
    """``C1 (capacitor, open at DC)``, ``gate of M1 (draws no DC current)`` ..."""
    if is_control(dev, pin):
        return f"{control_label(dev, pin)} (draws no DC bias current)"
    if dev.kind == "instance" and dev.subcell is not None:
        return f"{dev.display} port {pin} of {dev.subcell.label}"
    if dev.kind == "behavioral" and not is_voltage_output(dev) and pin in ("p", "n"):
        return f"{dev.display} (a current output: it fixes a current, not a voltage)"
    if dev.kind in ("vcvs", "vccs", "switch", "behavioral") and pin not in ("p", "n"):
        return f"{dev.display} control input {pin} (draws no current)"
    why = _OPEN_WHY.get(dev.kind)
    if why:
        return f"{dev.display} ({dev.kind}, {why})"
    return f"{dev.display} ({dev.kind}, pin {pin})"


def unread_cells(ctx) -> frozenset[int]:
    """Ids of cell views holding a card lintamp could not read (a parse error).

    The nets of such a card are unknown, so a net there may look dangling or
    floating only because the card that connects it was not read.  A missing or
    refused include inside a ``.subckt`` body counts too (extracted cells include
    their parasitic networks); a missing include at the top level does not (most
    often a model library, which holds no connections).

    Notes
    -----
    O(parse errors x cells).
    """
    def compute():
        netlist = ctx.netlist
        spans = [(c, c.location, c.end_location) for c in netlist.all_cells()
                 if not c.is_top and c.end_location]
        out: set[int] = set()
        for diag in netlist.diagnostics:
            if diag.rule == "parse-error" and diag.severity == "error":
                pass
            elif diag.rule in ("missing-include", "bad-include"):
                pass  # inside a .subckt: the unread file holds part of the cell's body
            else:
                continue
            loc = diag.location
            best = netlist.top
            for cell, start, end in spans:
                if start.path == loc.path and start.line <= loc.line <= end.line:
                    if best.is_top or best.location.line <= start.line:
                        best = cell
            if best.is_top and diag.rule != "parse-error":
                continue  # a top-level include that is missing: most often model cards
            out.add(id(ctx.design.views[id(best)]) if id(best) in ctx.design.views else 0)
        return frozenset(out)

    return ctx.memo("unread_cells", compute)
