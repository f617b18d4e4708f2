"""Elaboration: from parsed cells to devices, nets and the connectivity graph.

Each cell (``.subckt`` or the top level) becomes one :class:`CellView`, built
once whatever the number of its instances: its devices with their kind and pin
roles, its nets, its terminals as integer tables.  :class:`Design` ties the views together
with the instance hierarchy, the ground and supply nets, and can flatten the
whole into a numeric :class:`~lintamp.circuit.flat.FlatCircuit` for the engine.
"""

from __future__ import annotations

import re
from collections import Counter
from dataclasses import dataclass, field
from functools import cached_property
from itertools import chain, compress
from operator import attrgetter, gt
from typing import Iterable, Iterator, Mapping, NamedTuple

from lintamp.circuit.devicemap import DeviceMap, DeviceSpec
from lintamp.circuit.kinds import BJT_KINDS
from lintamp.location import Location
from lintamp.netlist.statements import (BlockList, Cell, Diagnostic, Element, Model, Netlist,
                                        PlainRun)

GROUND_NAMES = frozenset({"0", "gnd", "gnd!"})
DEFAULT_FLATTEN_LIMIT = 2_000_000
# below this many terminals a cell's tables are plain lists and its connectivity is a
# pure-Python union-find: cheaper than importing numpy for a pre-commit run on a small deck
SMALL_TABLE_TERMINALS = 4096
_MANY_NAMES = 100_000  # above this many, a cell's names are compared by hash first

# pin roles by device kind (the order of the element's nodes)
PINS = {
    "resistor": ("p", "n"), "capacitor": ("p", "n"), "inductor": ("p", "n"),
    "vsource": ("p", "n"), "isource": ("p", "n"),
    "vcvs": ("p", "n", "cp", "cn"), "vccs": ("p", "n", "cp", "cn"),
    "cccs": ("p", "n"), "ccvs": ("p", "n"),
    "behavioral": ("p", "n"),
    "diode": ("a", "k"),
    "npn": ("c", "b", "e", "s"), "pnp": ("c", "b", "e", "s"), "bjt": ("c", "b", "e", "s"),
    "njf": ("d", "g", "s"), "pjf": ("d", "g", "s"), "jfet": ("d", "g", "s"),
    "mesfet": ("d", "g", "s"),
    "nmos": ("d", "g", "s", "b", "e", "t", "x"), "pmos": ("d", "g", "s", "b", "e", "t", "x"),
    "mos": ("d", "g", "s", "b", "e", "t", "x"),
    "switch": ("p", "n", "cp", "cn"), "cswitch": ("p", "n"),
    "line": ("p1", "n1", "p2", "n2"),
}

_LETTER_KIND = {"r": "resistor", "c": "capacitor", "l": "inductor", "k": "coupling",
                "v": "vsource", "i": "isource", "e": "vcvs", "g": "vccs", "f": "cccs",
                "h": "ccvs", "b": "behavioral", "d": "diode", "q": "bjt", "j": "jfet",
                "z": "mesfet", "m": "mos", "x": "instance", "s": "switch", "w": "cswitch",
                "t": "line", "o": "line", "u": "line", "y": "other", "p": "line",
                "a": "xspice", "n": "other"}
_N_GUESS = re.compile(r"^(n|.*(nmos|nfet|nch|_n_|nlv|nhv))", re.I)
_P_GUESS = re.compile(r"^(p|.*(pmos|pfet|pch|_p_|plv|phv))", re.I)


@dataclass(eq=False, slots=True)
class Device:
    """One element of a cell, recognised: kind, pin roles, nets.

    ``polarity_from`` says how an n/p kind was decided: ``"model"`` (its .model
    type), ``"map"`` (the device map), ``"name"`` (guessed from the model name,
    because the model is not in the files read) or ``""``.
    """

    name: str
    kind: str
    pins: tuple[str, ...]
    nets: tuple[str, ...]
    element: Element
    model: Model | None = None
    subcell: "CellView | None" = None
    spec: DeviceSpec | None = None
    polarity_from: str = ""

    @property
    def display(self) -> str:
        return self.element.name

    @property
    def location(self) -> Location:
        return self.element.location

    def net(self, pin: str) -> str | None:
        for p, n in zip(self.pins, self.nets):
            if p == pin:
                return n
        return None

    def terminals(self) -> Iterator[tuple[str, str]]:
        return zip(self.pins, self.nets)

    def __repr__(self) -> str:
        return f"<{self.kind} {self.name} {dict(zip(self.pins, self.nets))}>"


class _RunDevices:
    """The devices of a run of plain R/C/L cards (:class:`~lintamp.netlist.statements.PlainRun`):
    each made, once, when first asked for, so that a cell of a million parasitics
    holds their net numbers rather than a million Device objects.

    ``kinds`` maps each letter of the run to its recognised ``(kind, pins)``.
    """

    __slots__ = ("run", "kinds", "_made")

    def __init__(self, run: PlainRun, kinds: dict[str, tuple[str, tuple[str, ...]]]):
        self.run = run
        self.kinds = kinds
        self._made: list[Device | None] | None = None

    @property
    def count(self) -> int:
        return self.run.count

    def device(self, i: int) -> Device:
        made = self._made
        if made is None:
            made = self._made = [None] * self.run.count
        dev = made[i]
        if dev is None:
            dev = made[i] = self._device(self.run.element(i))
        return dev

    def _device(self, element: Element) -> Device:
        kind, pins = self.kinds[element.letter]
        name = element.name
        low = name.lower()
        return Device(name if low == name else low, kind, pins, element.nodes, element)

    item = device  # the BlockList protocol

    def items(self) -> list[Device]:
        """Every device of the run, in order (made now where not yet)."""
        made = self._made
        if made is None:
            made = self._made = list(map(self._device, self.run.elements()))
        elif None in made:
            for i, dev in enumerate(made):
                if dev is None:
                    made[i] = self._device(self.run.element(i))
        return made


class DeviceList(BlockList):
    """A cell view's devices in netlist order: Device objects, and the devices of
    runs of plain cards (:class:`_RunDevices`), made once each when asked for (see
    :class:`~lintamp.netlist.statements.BlockList`: iterating makes every device)."""

    __slots__ = ()
    block = _RunDevices

    add_run = BlockList.add_block
    beyond_runs = BlockList.beyond_blocks

    def name_hashes(self):
        """``hash()`` of every device's name, as a numpy int64 array in no particular
        order (the runs' first, from the parser), without making the run devices."""
        import numpy as np

        runs = b"".join([item.run.name_hashes for item in self._items
                         if item.__class__ is _RunDevices])
        singles = [item.name for item in self._items if item.__class__ is not _RunDevices]
        return np.concatenate([np.frombuffer(runs, dtype=np.int64),
                               np.fromiter(map(hash, singles), dtype=np.int64, count=len(singles))])

    def names(self) -> list[str]:
        """Every device's name (lower case), in order, without making the run devices."""
        out: list[str] = []
        for item in self._items:
            if item.__class__ is _RunDevices:
                out.extend(item.run.text.lower().split()[0::4])
            else:
                out.append(item.name)
        return out

    def __repr__(self) -> str:
        return f"<DeviceList of {self._size}>"


@dataclass(eq=False)
class CellView:
    """A cell's devices and nets, graphed once.

    Nets are lower-case names.  ``ports`` connect to the parent; ``globals`` to
    the whole design (ground included).
    """

    cell: Cell
    devices: DeviceList = field(default_factory=DeviceList)
    parent: "CellView | None" = None
    ports: tuple[str, ...] = ()
    globals: frozenset[str] = frozenset()
    netlist: Netlist | None = field(default=None, repr=False)  # for the net numbers of plain runs

    def __post_init__(self):
        if self.devices.__class__ is not DeviceList:
            self.devices = DeviceList(self.devices)

    @property
    def name(self) -> str:
        return self.cell.name

    @property
    def label(self) -> str:
        return self.cell.label

    @cached_property
    def terminal_table(self) -> "TerminalTable":
        """The cell's terminals as integer arrays (see :class:`TerminalTable`)."""
        return TerminalTable(self, self.netlist)

    @cached_property
    def in_plain_run(self):
        """Which devices come from a run of plain R/C/L cards (see :class:`_RunDevices`):
        a numpy bool array, or None for a small cell or a cell without runs."""
        devices = self.devices
        if len(devices) < SMALL_TABLE_TERMINALS:
            return None
        spans = [(start, item.run.count) for start, item in devices.blocks()
                 if item.__class__ is _RunDevices]
        if not spans:
            return None
        import numpy as np

        spans = np.array(spans, dtype=np.int64).reshape(-1, 2)
        steps = np.zeros(len(devices) + 1, dtype=np.int64)
        np.add.at(steps, spans[:, 0], 1)
        np.add.at(steps, spans[:, 0] + spans[:, 1], -1)
        return np.cumsum(steps[:-1]) > 0

    @cached_property
    def device_classes(self) -> "DeviceClasses":
        """The devices grouped by (kind, pins, letter, model) (see :class:`DeviceClasses`)."""
        return DeviceClasses(self.devices)

    @cached_property
    def device_named(self) -> dict[str, Device]:
        """The first device of each (lower-case) name, as a walk in netlist order finds it."""
        return {dev.name: dev for dev in reversed(self.devices)}

    @cached_property
    def instance_named(self) -> dict[str, Device]:
        """The first device of each name that instantiates a cell view."""
        return {dev.name: dev for dev in reversed(self.devices) if dev.subcell is not None}

    # -- named queries: what rules and analyses ask of a cell ----------------------
    # Each answers from the device classes or the terminal table, so a cell of a
    # million plain R/C cards makes no Device for the cards the answer leaves out.
    def devices_of(self, *, kinds: Iterable[str] | None = None,
                   letters: Iterable[str] | None = None, with_model: bool = False) -> list[Device]:
        r"""The devices of the given ``kinds`` and element ``letters`` (None: any), and
        with ``with_model`` only those whose element names a model, in netlist order.

        Found by device class: no step per device of the classes left out.

        >>> from lintamp.netlist.parser import parse_text
        >>> view = elaborate(parse_text("* title line\nM1 d g 0 0 nch\nR1 d 0 1k\nX1 d sub\n")).top
        >>> [d.name for d in view.devices_of(letters="mx")], [d.name for d in view.devices_of(kinds=("resistor",))]
        (['m1', 'x1'], ['r1'])
        """
        kinds = None if kinds is None else frozenset(kinds)
        letters = None if letters is None else frozenset(letters)
        classes = self.device_classes
        wanted = [c for c, key in enumerate(classes.keys)
                  if (kinds is None or key.kind in kinds) and (letters is None or key.letter in letters)
                  and (not with_model or key.model)]
        return list(map(self.devices.__getitem__, classes.members(wanted)))

    def devices_sharing_names(self) -> dict[str, list[Device]]:
        r"""Each name two or more devices share, with those devices in netlist order
        (names in order of first use); empty, the usual answer, when all differ.

        A big cell's names are told apart by their hashes first (one 8-byte integer
        each, sorted; the parser hashed the names of the runs of plain cards as it read
        them), so that the usual answer needs no list or set of a million strings;
        equal hashes fall back to the names, and only the devices that share a name
        are made.

        >>> from lintamp.netlist.parser import parse_text
        >>> view = elaborate(parse_text("* title line\nR1 a 0 1k\nC1 a 0 1p\nr1 a b 2k\n")).top
        >>> {name: [d.display for d in devs] for name, devs in view.devices_sharing_names().items()}
        {'r1': ['R1', 'r1']}
        """
        devices = self.devices
        if len(devices) > _MANY_NAMES:
            hashes = devices.name_hashes()
            hashes.sort()
            if not (hashes[1:] == hashes[:-1]).any():
                return {}
        names = devices.names()
        if len(set(names)) == len(names):
            return {}
        counts = Counter(names)
        out: dict[str, list[Device]] = {}
        for d, name in enumerate(names):
            if counts[name] > 1:
                out.setdefault(name, []).append(devices[d])
        return out

    def devices_with_repeated_nets(self) -> list[Device]:
        """The devices with one net on two or more of their terminals (and those with
        more than 8 terminals, not compared), in netlist order: found with array
        operations on the terminal table."""
        devices = self.devices
        return [devices[d] for d in self.terminal_table.repeated_net_devices()]

    def roleless_nets(self) -> set[str]:
        """The nets on pins without a role (an instance with more nets than its cell has
        ports), which lintamp cannot judge."""
        devices = self.devices
        return {net for dev in map(devices.__getitem__, self.terminal_table.extra_devices)
                for net in dev.nets[len(dev.pins):]}

    def devices_but_nonzero_plain_resistors(self, wanted: Iterable[int],
                                            resistor_classes: Iterable[int]) -> list[int]:
        """Numbers of the devices of the ``wanted`` classes, in netlist order, less the
        resistors (of ``resistor_classes``) from runs of plain cards whose value has a
        nonzero digit: a literal number, as the parser's run pattern guarantees, so
        never a zero-ohm branch whatever the scope (the parser lists a run's other
        resistors as possibly zero).  No run device is made."""
        classes = self.device_classes
        wanted = set(wanted)
        resistor_classes = set(resistor_classes)
        in_run = self.in_plain_run
        if in_run is None or not resistor_classes:
            return classes.members(wanted)
        import numpy as np

        chosen = np.zeros(len(classes.keys), dtype=bool)
        chosen[list(wanted)] = True
        resistor = np.zeros(len(classes.keys), dtype=bool)
        resistor[list(resistor_classes)] = True
        in_run_resistor = in_run & resistor[classes.codes]
        keep = chosen[classes.codes] & ~in_run_resistor
        for start, item in self.devices.blocks():  # the run resistors that may be zero
            if item.__class__ is _RunDevices:
                for i in item.run.maybe_zero:
                    if in_run_resistor[start + i]:
                        keep[start + i] = True
        return np.flatnonzero(keep).tolist()

    def instances(self) -> list[Device]:
        """The devices that instantiate a cell view (``subcell`` set), in netlist order;
        found by device class, without a step per device."""
        classes = self.device_classes
        devices = self.devices
        wanted = [c for c, key in enumerate(classes.keys) if key.kind == "instance"]
        return [dev for dev in map(devices.__getitem__, classes.members(wanted))
                if dev.subcell is not None]

    @cached_property
    def net_terminals(self) -> "NetTerminals":
        """Each net with the (device, pin) terminals on it, in netlist order.

        A read-only mapping net -> list of (device, pin); the lists are made on
        lookup from :attr:`terminal_table`, so a million-element cell holds integers,
        not a tuple per terminal.  Ports come first (with ``[]`` when unused).
        """
        return NetTerminals(self.terminal_table)

    @property
    def nets(self) -> list[str]:
        return list(self.net_terminals)

    def is_external(self, net: str) -> bool:
        """A port, a global or ground: connected from outside this cell."""
        return net in self.ports or net in self.globals


def _index_dtype(count: int):
    import numpy as np

    return np.int32 if count < 2 ** 31 - 1 else np.int64


class DeviceClass(NamedTuple):
    """What every device of one class shares: an analysis derives a role from these."""

    kind: str
    pins: tuple[str, ...]
    letter: str            # the element letter as written
    model: str | None      # the element's model (or subcircuit) name as written


class DeviceClasses:
    """A cell's devices numbered by class: devices of one (kind, pins, element letter,
    element model) share every role an analysis derives from those four.

    ``keys[c]`` is class ``c``'s :class:`DeviceClass` and ``codes[d]`` the class of device ``d`` (a
    numpy int64 array, or a list for fewer than :data:`SMALL_TABLE_TERMINALS`
    devices).  :meth:`members` lists the devices of chosen classes in netlist order,
    so an analysis visits only the devices it can act on.

    Notes
    -----
    O(devices) time, one integer per device.
    """

    __slots__ = ("keys", "codes", "small")

    def __init__(self, devices: list["Device"], known: tuple[list[int], list[tuple]] | None = None):
        """``known``: (codes, keys) already numbered the same way (by :func:`elaborate`,
        which meets every device's key as it recognises it)."""
        self.small = len(devices) < SMALL_TABLE_TERMINALS
        if known is not None:
            codes, keys = known
            self.keys = [DeviceClass(*key) for key in keys]
            if self.small:
                self.codes = codes
            else:
                import numpy as np

                self.codes = np.array(codes, dtype=np.int64)
            return
        numbering = _Numbering()
        keys = zip(map(_KIND, devices), map(_PINS, devices), map(_LETTER, devices),
                   map(_MODEL, devices))
        if self.small:
            self.codes = list(map(numbering.__getitem__, keys))
        else:
            import numpy as np

            self.codes = np.fromiter(map(numbering.__getitem__, keys), dtype=np.int64,
                                     count=len(devices))
        self.keys: list[DeviceClass] = [DeviceClass(*key) for key in numbering]

    def members(self, wanted) -> list[int]:
        """Numbers of the devices whose class is in ``wanted``, in netlist order."""
        wanted = set(wanted)
        if not wanted:
            return []
        if len(wanted) == len(self.keys):
            return list(range(len(self.codes)))
        if self.small:
            return [d for d, code in enumerate(self.codes) if code in wanted]
        import numpy as np

        chosen = np.zeros(len(self.keys), dtype=bool)
        chosen[list(wanted)] = True
        return np.flatnonzero(chosen[self.codes]).tolist()


class _Numbering(dict):
    """Names to 0, 1, 2 ... in order of first lookup (a missing name gets the next number)."""

    __slots__ = ()

    def __missing__(self, key: str) -> int:
        number = self[key] = len(self)
        return number


_NETS = attrgetter("nets")
_PINS = attrgetter("pins")
_KIND = attrgetter("kind")
_LETTER = attrgetter("element.letter")
_MODEL = attrgetter("element.model")


class TerminalTable:
    """A cell's connectivity as small integers, built once per cell.

    ``nets``: every net name, ports first, then in order of first use (nets on
    pins that have a role), then nets only on pins without a role (an instance with
    more nets than its cell has ports); ``index`` maps a name to its position and
    ``n_role_nets`` counts the nets before those last; ``extra_devices`` lists the
    devices with such nets, in netlist order.  Per device ``d``, its
    terminals (the nets with a pin role, ``min(len(nets), len(pins))`` of them) are
    ``net_ids[dev_start[d]:dev_start[d + 1]]``.  ``term_order`` lists terminal
    numbers grouped by net (netlist order inside a net) and ``net_start`` delimits
    each net's group, so a net's terminals are found without a Python list per net.
    These are numpy int32 arrays (int64 past 2**31 terminals), or plain lists when
    ``small`` (fewer than :data:`SMALL_TABLE_TERMINALS` terminals); the methods
    below accept both.  A small table also lists ``term_dev``, each terminal's device.

    Notes
    -----
    O(terminals) time; 3 four-byte integers per terminal and 1 per device and per
    net of memory (O(terminals log terminals) for the stable sort of a small table).
    """

    __slots__ = ("devices", "nets", "index", "n_role_nets", "net_ids", "dev_start",
                 "term_dev", "term_order", "net_start", "small", "extra_devices")

    def __init__(self, view: "CellView", netlist: Netlist | None = None):
        devices = view.devices
        self.devices = devices
        if netlist is not None and self._from_runs(view, netlist):
            return
        # one numbering pass over the terminals: looking a million net names up is
        # bound by memory latency, so each name is looked up once, in netlist order
        numbering = _Numbering()
        for port in view.ports:
            numbering[port]
        n_nets = list(map(len, map(_NETS, devices)))
        n_pins = list(map(len, map(_PINS, devices)))
        extra = list(compress(range(len(devices)), map(gt, n_nets, n_pins)))
        if extra:  # nets on pins without a role are numbered after all the others
            counts = list(map(min, n_nets, n_pins))
            stream = chain.from_iterable(dev.nets if len(dev.nets) <= len(dev.pins)
                                         else dev.nets[:len(dev.pins)] for dev in devices)
        else:
            counts = n_nets
            stream = chain.from_iterable(map(_NETS, devices))
        n_terms = sum(counts)
        # a small cell keeps plain lists: importing numpy would cost more than the work
        self.small = n_terms < SMALL_TABLE_TERMINALS
        if self.small:
            net_ids = list(map(numbering.__getitem__, stream))
        else:
            import numpy as np

            net_ids = np.fromiter(map(numbering.__getitem__, stream), dtype=_index_dtype(n_terms),
                                  count=n_terms)
        self.n_role_nets = len(numbering)
        self.extra_devices = extra
        for d in extra:
            dev = devices[d]
            for net in dev.nets[len(dev.pins):]:
                numbering[net]
        self.nets = list(numbering)
        self.index = dict(numbering)  # a plain dict: an unknown name is a KeyError
        self.net_ids = net_ids
        if self.small:
            self._build_lists(counts)
        else:
            self._build_arrays(counts)

    def _from_runs(self, view: "CellView", netlist: Netlist) -> bool:
        """Build the table from the net numbers the parser kept for the cell's runs of
        plain R/C/L cards (:class:`_RunDevices`): the same table as the general path,
        with names looked up only for the devices outside the runs, and array steps
        for the rest (no run device is made).  False (nothing set) where the cell has
        no runs or is small."""
        runs = [item.run for _, item in self.devices.blocks() if item.__class__ is _RunDevices]
        if sum(run.count for run in runs) * 2 < SMALL_TABLE_TERMINALS:
            return False
        import numpy as np

        devices = self.devices
        n_dev = len(devices)
        in_run = view.in_plain_run
        if in_run is None:
            return False
        # the others, one by one: their nets (those with a pin role) and their extras
        known = netlist.net_numbers
        base = len(known)
        more: dict[str, int] = {}  # names the runs never used: numbered from base on

        def number(net: str) -> int:
            found = known.get(net)
            if found is None:
                found = more.get(net)
                if found is None:
                    found = more[net] = base + len(more)
            return found

        outside_nets: list[int] = []
        outside_counts: list[int] = []
        extra: list[int] = []
        extra_nets: list[int] = []
        outside = []
        for d, dev in devices.blocks():
            if dev.__class__ is _RunDevices:
                continue
            outside.append(d)
            nets, n_pins = dev.nets, len(dev.pins)
            if len(nets) > n_pins:
                extra.append(d)
                extra_nets.extend(map(number, nets[n_pins:]))
                nets = nets[:n_pins]
            outside_nets.extend(map(number, nets))
            outside_counts.append(len(nets))
        ports = [number(p) for p in view.ports]
        n_terms = 2 * (n_dev - len(outside)) + sum(outside_counts)
        dtype = _index_dtype(max(n_terms, base + len(more)))
        counts = np.full(n_dev, 2, dtype=dtype)
        counts[outside] = outside_counts
        dev_start = np.zeros(n_dev + 1, dtype=dtype)
        np.cumsum(counts, out=dev_start[1:])
        # the role terminals' net numbers: the runs' from their arrays, the others' after
        role = np.empty(n_terms, dtype=dtype)
        first_terminal = dev_start[:-1][in_run]
        del in_run
        role[first_terminal] = np.concatenate([np.frombuffer(run.a, dtype=np.int32) for run in runs])
        role[first_terminal + 1] = np.concatenate([np.frombuffer(run.b, dtype=np.int32)
                                                   for run in runs])
        if outside_nets:
            from_runs = np.zeros(n_terms, dtype=bool)
            from_runs[first_terminal] = True
            from_runs[first_terminal + 1] = True
            role[~from_runs] = outside_nets
            del from_runs
        del first_terminal, outside_nets
        # number the nets by first appearance: ports, then the role terminals, then the rest
        n_numbers = base + len(more)
        first = np.full(n_numbers, np.iinfo(np.int64).max, dtype=np.int64)
        np.minimum.at(first, role, np.arange(len(ports), len(ports) + n_terms))
        if ports:
            np.minimum.at(first, np.array(ports, dtype=np.int64), np.arange(len(ports)))
        if extra_nets:
            np.minimum.at(first, np.array(extra_nets, dtype=np.int64),
                          np.arange(len(ports) + n_terms, len(ports) + n_terms + len(extra_nets)))
        used = np.flatnonzero(first < np.iinfo(np.int64).max)
        by_appearance = used[np.argsort(first[used], kind="stable")]
        local = np.empty(n_numbers, dtype=dtype)
        local[by_appearance] = np.arange(len(by_appearance), dtype=dtype)
        names = netlist.net_names
        later = list(more)  # names of the numbers from base on, in order
        self.nets = [names[g] if g < base else later[g - base] for g in by_appearance.tolist()]
        self.index = dict(zip(self.nets, range(len(self.nets))))
        self.n_role_nets = int(np.count_nonzero(first[by_appearance] < len(ports) + n_terms))
        del first, used, by_appearance
        self.extra_devices = extra
        self.small = False
        self.net_ids = local[role]
        del role, local
        self._build_arrays(counts)
        return True

    def _build_lists(self, counts) -> None:
        start = [0] * (len(counts) + 1)
        total = 0
        for d, count in enumerate(counts):
            total += count
            start[d + 1] = total
        self.dev_start = start
        self.term_dev = [d for d, count in enumerate(counts) for _ in range(count)]
        self.term_order = sorted(range(total), key=self.net_ids.__getitem__)  # stable
        per_net = [0] * len(self.nets)
        for i in self.net_ids:
            per_net[i] += 1
        net_start = [0] * (len(self.nets) + 1)
        total = 0
        for i, count in enumerate(per_net):
            total += count
            net_start[i + 1] = total
        self.net_start = net_start

    def _build_arrays(self, counts) -> None:
        import numpy as np

        dtype = self.net_ids.dtype
        self.dev_start = np.zeros(len(counts) + 1, dtype=dtype)
        np.cumsum(np.array(counts, dtype=dtype), out=self.dev_start[1:])
        self.term_dev = None  # found from dev_start when asked (see terminals_of)
        # terminals grouped by net, netlist order inside a net: a stable sort by net,
        # done as a plain sort of (net, position) pairs packed in one int64 (the same
        # order, about a third of the time of a stable argsort)
        if len(self.net_ids) < 2 ** 32:
            packed = (self.net_ids.astype(np.int64) << 32) | np.arange(len(self.net_ids),
                                                                       dtype=np.int64)
            packed.sort()
            self.term_order = (packed & 0xFFFFFFFF).astype(dtype)
        else:
            self.term_order = np.argsort(self.net_ids, kind="stable").astype(dtype, copy=False)
        per_net = np.bincount(self.net_ids, minlength=len(self.nets))
        self.net_start = np.zeros(len(self.nets) + 1, dtype=dtype)
        np.cumsum(per_net, out=self.net_start[1:])

    def repeated_net_devices(self) -> list[int]:
        """Numbers of the devices with one net on two or more of their terminals.

        Notes
        -----
        O(terminals) array work; devices with more than 8 terminals are listed
        without being compared.
        """
        start, ids = self.dev_start, self.net_ids
        if self.small:
            out = []
            for d in range(len(start) - 1):
                a, b = start[d], start[d + 1]
                if b - a > 8 or len(set(ids[a:b])) < b - a:
                    out.append(d)
            return out
        import numpy as np

        counts = np.diff(start)
        repeated = counts > 8
        for a in range(8):
            for b in range(a + 1, 8):
                has = np.flatnonzero(counts > b)
                if not len(has):
                    break
                base = start[has]
                repeated[has] |= ids[base + a] == ids[base + b]
        return np.flatnonzero(repeated).tolist()

    def terminals_of(self, i: int) -> list[tuple["Device", str]]:
        """(device, pin) terminals on net number ``i``, in netlist order."""
        terms = self.term_order[self.net_start[i]:self.net_start[i + 1]]
        dev_start = self.dev_start
        if self.small:
            owners = [self.term_dev[t] for t in terms]
            offsets = [t - dev_start[d] for t, d in zip(terms, owners)]
        else:
            import numpy as np

            # a terminal's device is the last whose first terminal is not after it
            found = np.searchsorted(dev_start, terms, side="right") - 1
            offsets = (terms - dev_start[found]).tolist()
            owners = found.tolist()
        devices = self.devices
        out = []
        for d, offset in zip(owners, offsets):
            dev = devices[d]
            out.append((dev, dev.pins[offset]))
        return out


class NetTerminals(Mapping):
    """Read-only mapping net -> [(device, pin), ...] over a :class:`TerminalTable`."""

    __slots__ = ("table",)

    def __init__(self, table: TerminalTable):
        self.table = table

    def __getitem__(self, net: str) -> list[tuple["Device", str]]:
        i = self.table.index[net]
        if i >= self.table.n_role_nets:
            raise KeyError(net)
        return self.table.terminals_of(i)

    def __contains__(self, net) -> bool:
        i = self.table.index.get(net)
        return i is not None and i < self.table.n_role_nets

    def __iter__(self) -> Iterator[str]:
        return iter(self.table.nets[:self.table.n_role_nets])

    def __len__(self) -> int:
        return self.table.n_role_nets

    def degree(self, net: str) -> int:
        """How many terminals ``net`` has (0 for a net the cell does not have), without
        making the list (a rail of an extracted cell holds a terminal per device)."""
        table = self.table
        i = table.index.get(net)
        if i is None or i >= table.n_role_nets:
            return 0
        return int(table.net_start[i + 1] - table.net_start[i])

    def with_degree(self, count: int) -> list[str]:
        """The nets with exactly ``count`` terminals, in net order."""
        table = self.table
        start = table.net_start
        if table.small:
            return [table.nets[i] for i in range(table.n_role_nets)
                    if start[i + 1] - start[i] == count]
        import numpy as np

        per_net = np.diff(start[:table.n_role_nets + 1])
        return [table.nets[i] for i in np.flatnonzero(per_net == count).tolist()]


@dataclass
class Design:
    """The elaborated netlist: cell views, hierarchy, ground and supplies."""

    netlist: Netlist
    views: dict[int, CellView]  # id(Cell) -> view
    top: CellView
    roots: list[CellView]
    diagnostics: list[Diagnostic] = field(default_factory=list)
    ground: frozenset[str] = GROUND_NAMES

    @cached_property
    def deck_cells(self) -> frozenset[int]:
        """Ids of the views a simulation deck instantiates: the top level (when it has
        devices of its own) and every cell reached from it.  Empty for a cell library."""
        if not self.top.devices:
            return frozenset()
        seen = {id(self.top)}
        stack = [self.top]
        while stack:
            view = stack.pop()
            for dev in view.instances():
                sub = dev.subcell
                if id(sub) not in seen:
                    seen.add(id(sub))
                    stack.append(sub)
        return frozenset(seen)

    def in_deck(self, view: CellView) -> bool:
        return id(view) in self.deck_cells

    def view_of(self, cell: Cell) -> CellView:
        return self.views[id(cell)]

    @property
    def cells(self) -> list[CellView]:
        return list(self.views.values())

    def instances(self, view: CellView) -> list[tuple[str, ...]]:
        """Instance paths reaching ``view`` from the roots (at most 20 listed)."""
        return self._paths.get(id(view), [])[:20]

    def instance_count(self, view: CellView) -> int:
        return self._counts.get(id(view), 0)

    @cached_property
    def _counts(self) -> dict[int, int]:
        counts: dict[int, int] = {}
        order = self._topological()
        for root in self.roots:
            counts[id(root)] = counts.get(id(root), 0) + 1
        for view in order:
            n = counts.get(id(view), 0)
            for dev in view.instances():
                counts[id(dev.subcell)] = counts.get(id(dev.subcell), 0) + n
        return counts

    @cached_property
    def _paths(self) -> dict[int, list[tuple[str, ...]]]:
        paths: dict[int, list[tuple[str, ...]]] = {id(r): [()] for r in self.roots}
        for view in self._topological():
            mine = paths.get(id(view), [])
            for dev in view.instances():
                bucket = paths.setdefault(id(dev.subcell), [])
                for p in mine:
                    if len(bucket) >= 20:
                        break
                    bucket.append(p + (dev.name,))
        return paths

    def _topological(self) -> list[CellView]:
        """Views parents-first (cycles were cut during elaboration)."""
        seen: set[int] = set()
        out: list[CellView] = []

        def visit(v: CellView, depth: int = 0):
            if id(v) in seen or depth > 200:
                return
            seen.add(id(v))
            for d in v.instances():
                visit(d.subcell, depth + 1)
            out.append(v)

        for v in self.views.values():
            visit(v)
        out.reverse()
        return out


# -- scope lookups --------------------------------------------------------------
def scopes(cell: Cell) -> Iterator[Cell]:
    """The cell and its enclosing cells, innermost first."""
    while cell is not None:
        yield cell
        cell = cell.parent


def find_model(cell: Cell, name: str) -> Model | None:
    """A model visible from ``cell``; binned names (``nch.1``) match ``nch``."""
    for scope in scopes(cell):
        model = scope.models.get(name)
        if model is not None:
            return model
    for scope in scopes(cell):
        for key, model in scope.models.items():
            base, dot, suffix = key.rpartition(".")
            if dot and base == name and suffix.isdigit():
                return model
    return None


def find_cell(cell: Cell, name: str) -> Cell | None:
    for scope in scopes(cell):
        found = scope.cells.get(name)
        if found is not None:
            return found
    return None


def visible_params(cell: Cell) -> set[str]:
    names: set[str] = set()
    for scope in scopes(cell):
        names.update(p.name for p in scope.params)
        names.update(scope.defaults)
    return names


# -- recognising devices ---------------------------------------------------------
def _guess_polarity(model_name: str, n_kind: str, p_kind: str) -> str | None:
    if _P_GUESS.match(model_name) and not _N_GUESS.match(model_name):
        return p_kind
    if _N_GUESS.match(model_name) and not _P_GUESS.match(model_name):
        return n_kind
    return None


def recognise(element: Element, cell: Cell, devmap: DeviceMap,
              subcell: Cell | None) -> tuple[str, tuple[str, ...], Model | None, DeviceSpec | None, str]:
    """Kind, pin roles, model, device-map entry and polarity source of an element."""
    letter = element.letter
    kind = _LETTER_KIND.get(letter, "other")
    model = find_model(cell, element.model) if element.model and letter not in "xkve" else None
    spec = None
    polarity_from = ""
    if letter == "x":
        spec = devmap.lookup(element.model or "") if element.model else None
        if spec is not None and getattr(spec, "builtin", False) and subcell is not None:
            spec = None  # a cell read is that cell; only a project's own [devices] entry overrides it
        if spec is not None:  # the map wins even where the subcircuit is defined
            kind = spec.kind
            pins = spec.pins
            polarity_from = "map"
            return kind, pins[: len(element.nodes)] + tuple(
                f"x{i}" for i in range(len(pins), len(element.nodes))), None, spec, polarity_from
        # one pin per net given, named after the subcircuit's ports where it has them,
        # so that an unknown cell's or a mismatched instance's nets keep their terminals
        ports = subcell.ports if subcell is not None else ()
        pins = tuple(ports[i] if i < len(ports) else f"x{i}" for i in range(len(element.nodes)))
        return "instance", pins, None, None, ""
    if letter in "eg" and element.model in ("value", "table", "laplace", "freq", "poly"):
        kind = "behavioral"
    if letter in "fh" and element.model == "poly":
        kind = "behavioral"
    if (letter in "rcl" and element.model and model is None and element.value is None
            and element.model in visible_params(cell)):
        element.value, element.model = element.model, None  # 'R1 a b rval': a bare parameter
    if letter == "q":
        mtype = model.type if model else ""
        if mtype in ("npn", "pnp"):
            kind, polarity_from = mtype, "model"
        elif mtype == "lpnp":
            kind, polarity_from = "pnp", "model"
        elif model is None and element.model:
            guess = _guess_polarity(element.model, "npn", "pnp")
            if guess:
                kind, polarity_from = guess, "name"
    elif letter == "m":
        mtype = model.type if model else ""
        if mtype in ("nmos", "pmos"):
            kind, polarity_from = mtype, "model"
        elif mtype in ("nmf", "pmf"):
            kind, polarity_from = ("nmos" if mtype == "nmf" else "pmos"), "model"
        elif mtype == "vdmos":
            pchan = model.params.get("pchan") is not None if model else False
            kind, polarity_from = ("pmos" if pchan else "nmos"), "model"
        elif model is None and element.model:
            guess = _guess_polarity(element.model, "nmos", "pmos")
            if guess:
                kind, polarity_from = guess, "name"
    elif letter == "j":
        mtype = model.type if model else ""
        if mtype in ("njf", "pjf"):
            kind, polarity_from = mtype, "model"
    if letter == "u" and (model is None or model.type != "urc"):
        kind = "other"  # a PSPICE digital primitive (U ... LOGICEXP ...), not an RC line
    pins = PINS.get(kind, ())
    n = len(element.nodes)
    if kind in BJT_KINDS and n == 3:
        pins = ("c", "b", "e")
    if kind in ("vcvs", "vccs", "switch") and n > 4:
        pins = pins + tuple(f"c{i}" for i in range(n - 4))
    if kind == "behavioral" and n > 2:
        pins = ("p", "n") + tuple(f"c{i}" for i in range(n - 2))
    if len(pins) < n:
        pins = tuple(pins) + tuple(f"t{i}" for i in range(len(pins), n))
    return kind, tuple(pins[:n]), model, spec, polarity_from


# -- elaboration ---------------------------------------------------------------------
def elaborate(netlist: Netlist, *, devmap: DeviceMap | None = None, top: str | None = None,
              ground: Iterable[str] = GROUND_NAMES) -> Design:
    """Build every cell's view once and link instances to their cell views."""
    devmap = devmap or DeviceMap()
    ground = frozenset(g.lower() for g in ground)
    globals_ = frozenset(netlist.globals) | ground
    views: dict[int, CellView] = {}
    diagnostics: list[Diagnostic] = []
    cells = list(netlist.all_cells())
    for cell in cells:
        view = CellView(cell=cell, ports=cell.ports, globals=globals_, netlist=netlist)
        views[id(cell)] = view
    classes: dict[int, tuple[CellView, list[int], list[tuple]]] = {}
    for cell in cells:
        view = views[id(cell)]
        devices = view.devices
        # recognise() depends only on (letter, model, node count) within one cell for
        # every letter but X, and for R/C/L only when no model name is written (a
        # model name there may be a parameter): remember those answers, and the
        # number of the device class (kind, pins, letter, model) they make
        known: dict[tuple, list] = {}
        class_of = _Numbering()
        codes: list[int] = []
        for _, element in cell.elements.blocks():
            if element.__class__ is PlainRun:
                devices.add_run(_run_devices(element, cell, devmap, known, class_of, codes))
                continue
            letter = element.letter
            if letter == "x":
                subcell = find_cell(cell, element.model) if element.model else None
                recognised = recognise(element, cell, devmap, subcell)
                code = class_of[(recognised[0], recognised[1], letter, element.model)]
            else:
                subcell = None
                key = (letter, element.model, len(element.nodes))
                hit = known.get(key)
                if hit is None:
                    recognised = recognise(element, cell, devmap, None)
                    # after recognise(): it may turn a bare parameter name into the value
                    code = class_of[(recognised[0], recognised[1], letter, element.model)]
                    if letter not in "rcl" or key[1] is None:
                        # (key[1], the model name as written: recognise() may have moved a
                        # bare parameter name from model to value, and the next R with that
                        # name must be recognised afresh to get its own value)
                        known[key] = [recognised, code]
                else:
                    recognised, code = hit
                    if code is None:
                        code = hit[1] = class_of[(recognised[0], recognised[1], letter, key[1])]
            codes.append(code)
            kind, pins, model, spec, polarity_from = recognised
            name = element.name
            low = name.lower()
            dev = Device(name if low == name else low, kind, pins, element.nodes, element, model,
                         None, spec, polarity_from)
            if kind == "instance" and subcell is not None:
                dev.subcell = views[id(subcell)]
            devices.append(dev)
        classes[id(view)] = (view, codes, list(class_of))
    for view_id in _cut_recursion(views, diagnostics):
        del classes[view_id]  # a cut instance changed kind: number that cell afresh
    for view, codes, keys in classes.values():
        view.device_classes = DeviceClasses(view.devices, (codes, keys))
    top_view, roots = _choose_top(netlist, views, top, diagnostics)
    design = Design(netlist=netlist, views=views, top=top_view, roots=roots,
                    diagnostics=diagnostics, ground=ground)
    return design


def _run_devices(run: PlainRun, cell: Cell, devmap: DeviceMap, known: dict,
                 class_of: "_Numbering", codes: list[int]) -> _RunDevices:
    """The devices of a run of plain R/C/L cards, recognised as the loop of
    :func:`elaborate` recognises them (each letter's ``known`` entry, keyed
    ``(letter, None, 2)``), with their class numbers appended to ``codes``."""
    kinds: dict[str, tuple[str, tuple[str, ...]]] = {}
    code_of: dict[str, int] = {}
    for letter in sorted(set(run.letters), key=run.letters.index):
        key = (letter, None, 2)
        entry = known.get(key)
        if entry is None:
            recognised = recognise(run.element(run.letters.index(letter)), cell, devmap, None)
            entry = known[key] = [recognised, class_of[(recognised[0], recognised[1], letter, None)]]
        elif entry[1] is None:
            entry[1] = class_of[(entry[0][0], entry[0][1], letter, None)]
        kinds[letter] = entry[0][:2]
        code_of[letter] = entry[1]
    if len(code_of) == 1:
        codes.extend([code_of[run.letters[0]]] * run.count)
    else:
        codes.extend(map(code_of.__getitem__, run.letters))
    return _RunDevices(run, kinds)


def _cut_recursion(views: dict[int, CellView], diagnostics: list[Diagnostic]) -> set[int]:
    """A cell that instantiates itself (directly or not) cannot be elaborated.

    Returns the ids of the views whose instances were cut."""
    state: dict[int, int] = {}
    cut: set[int] = set()

    def visit(view: CellView, stack: list[CellView]):
        state[id(view)] = 1
        stack.append(view)
        for dev in view.devices.beyond_runs():  # (a run holds no instance)
            sub = dev.subcell
            if sub is None:
                continue
            if state.get(id(sub)) == 1:
                cycle = stack[stack.index(sub):] + [sub]
                diagnostics.append(Diagnostic(
                    "unknown-cell", dev.location,
                    "recursive subcircuit: " + " -> ".join(v.label for v in cycle)
                    + f"; instance {dev.display} is not elaborated",
                    subject=dev.name))
                dev.subcell = None
                dev.kind = "recursive-instance"
                cut.add(id(view))
            elif state.get(id(sub)) is None:
                if len(stack) > 500:
                    continue
                visit(sub, stack)
        stack.pop()
        state[id(view)] = 2

    for view in list(views.values()):
        if id(view) not in state:
            visit(view, [])
    return cut


def _choose_top(netlist: Netlist, views: dict[int, CellView], top: str | None,
                diagnostics: list[Diagnostic]) -> tuple[CellView, list[CellView]]:
    top_view = views[id(netlist.top)]
    if top:
        for cell in netlist.all_cells():
            if cell.name == top.lower():
                return views[id(cell)], [views[id(cell)]]
        diagnostics.append(Diagnostic("unknown-cell", netlist.top.location,
                                      f"--top {top}: no such subcircuit in {netlist.path}",
                                      subject=top.lower()))
    if top_view.devices or not netlist.top.cells:
        return top_view, [top_view]
    # a cell library: every cell that nobody instantiates is a root
    used = {id(d.subcell) for v in views.values() for d in v.instances()}
    roots = [v for v in views.values() if id(v) not in used and not v.cell.is_top]
    return top_view, [top_view] + roots
