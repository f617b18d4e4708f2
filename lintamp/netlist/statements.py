"""Typed statements of a netlist: what the parser hands to the circuit layer.

Values stay as the text written (``"10k"``, ``"{2*w}"``); the circuit layer
evaluates them with the parameters in scope.  Names of nets, elements, models and
cells are lower-cased (SPICE is case-insensitive); ``Element.name`` keeps the
original spelling for messages.
"""

from __future__ import annotations

from bisect import bisect_right
from collections.abc import Sequence
from dataclasses import dataclass, field
from array import array
from itertools import accumulate, islice, repeat
from operator import add
from typing import Iterable, Iterator

from lintamp.location import Location
from lintamp.pragma import Pragma  # noqa: F401 - re-exported; see lintamp.pragma


@dataclass(slots=True)
class Diagnostic:
    """Something the reader or parser could not accept, reported as a finding later."""

    rule: str  # parse-error, undefined-param, ...
    location: Location
    message: str
    subject: str = ""
    severity: str = "error"  # error | warning | info
    expected: str = ""


@dataclass(slots=True)
class Source:
    """Stimulus of an independent V or I source (values as text)."""

    dc: str | None = None
    ac_mag: str | None = None
    ac_phase: str | None = None
    waveform: str | None = None  # pulse, sin, pwl, exp, sffm, am, ...
    waveform_args: tuple[str, ...] = ()
    # an RF port (``portnum N [z0 Z]``): ngspice-39 puts Z (default 50 ohm) in series
    # with the source in every analysis, so the port is not a zero-impedance branch
    z0: str | None = None


class _NoParams(dict):
    """The ``params`` of every element written without any: one shared empty dict that
    refuses to change (a dict per element would cost 64 bytes each on a big netlist).

    Only the parser's plain-card path gives it out, and only after reading the card's
    value as a number (or finding none, on a MOS card): an element holding it names no
    parameter, which lets a whole-netlist pass skip it without reading its value again.
    """

    __slots__ = ()

    def _refuse(self, *args, **kwargs):
        raise TypeError("NO_PARAMS is shared by elements without parameters; it cannot change")

    __setitem__ = __delitem__ = __ior__ = clear = pop = popitem = setdefault = update = _refuse

    def __reduce__(self) -> str:
        return "NO_PARAMS"  # pickle and copy give back the one shared object


NO_PARAMS = _NoParams()

# Gate types of the digital primitives PSPICE and Xyce write as U cards
# ('U1 AND(2) $G_DPWR $G_DGND a b y dly io_std', 'UADD1 ADD dig_pn 0 a b ci s co dmod'),
# from memory of both references.  Their fields are logic, timing and I/O-model
# names, not analog values; a SPICE3 U card (a uniform RC line) starts with a net.
DIGITAL_PRIMITIVES = frozenset({
    "buf", "inv", "and", "nand", "or", "nor", "xor", "nxor", "not", "add",
    "bufa", "inva", "anda", "nanda", "ora", "nora", "xora", "nxora",
    "ao", "oa", "aoi", "oai", "buf3", "inv3", "and3", "nand3", "or3", "nor3", "xor3", "nxor3",
    "buf3a", "inv3a", "and3a", "nand3a", "or3a", "nor3a", "xor3a", "nxor3a",
    "dff", "jkff", "srff", "tff", "dltch", "pullup", "pulldn", "pindly", "logicexp",
    "constraint", "stim", "filestim", "rom", "ram", "nbtg", "pbtg", "pla", "ctr",
})


def is_digital_primitive(element: "Element") -> bool:
    """A PSPICE or Xyce digital gate written as a U card (see DIGITAL_PRIMITIVES)."""
    return element.letter == "u" and bool(element.nodes) and element.nodes[0] in DIGITAL_PRIMITIVES


# The element letters the parser gives ``controls`` to (K: the inductors it couples;
# F/H and their POLY forms, W: controlling V sources; E/G may too); every other has none.
CONTROL_LETTERS = frozenset("kefghw")


class Origin:
    """Where an element was written and its rarer fields: one shared object for every
    plain card of a file at one column (see :func:`new_plain_element`), so a big netlist
    does not hold five pointers per element that are almost always the same."""

    __slots__ = ("path", "column", "controls", "source", "expression")

    def __init__(self, path: str, column: int, controls: tuple[str, ...] = (),
                 source: "Source | None" = None, expression: str | None = None):
        self.path = path
        self.column = column
        self.controls = controls
        self.source = source
        self.expression = expression

    def __reduce__(self):
        return Origin, (self.path, self.column, self.controls, self.source, self.expression)


class Element:
    """One element card.  ``letter`` is the lower-case first letter of the name.

    ``nodes`` are the positional nets; ``model`` the model or subcircuit name (or
    None); ``value`` the main value token (resistance, capacitance, gain ...);
    ``params`` the ``key=value`` pairs, keys lower-cased, values as text (read-only
    :data:`NO_PARAMS` for many elements without any);
    ``controls`` the controlling V-source names of F/H/W elements and POLY forms.
    ``path``, ``line`` and ``column`` are where the card starts (``location``).
    ``path``, ``column``, ``controls``, ``source`` and ``expression`` are read-only.
    """

    __slots__ = ("name", "letter", "nodes", "line", "model", "value", "params", "raw_nodes",
                 "_origin")

    def __init__(self, name: str, letter: str, nodes: tuple[str, ...], path: str, line: int,
                 column: int, model: str | None = None, value: str | None = None,
                 params: dict[str, str] | None = None, controls: tuple[str, ...] = (),
                 source: Source | None = None, expression: str | None = None,
                 raw_nodes: tuple[str, ...] = ()):
        self.name = name
        self.letter = letter
        self.nodes = nodes
        self.line = line
        self.model = model
        self.value = value
        self.params = {} if params is None else params
        self.raw_nodes = raw_nodes
        self._origin = Origin(path, column, controls, source, expression)

    path = property(lambda self: self._origin.path)
    column = property(lambda self: self._origin.column)
    controls = property(lambda self: self._origin.controls)
    source = property(lambda self: self._origin.source)
    expression = property(lambda self: self._origin.expression)

    def _fields(self) -> tuple:
        return (self.name, self.letter, self.nodes, self.path, self.line, self.column, self.model,
                self.value, self.params, self.controls, self.source, self.expression, self.raw_nodes)

    def __eq__(self, other):
        if other.__class__ is not Element:
            return NotImplemented
        return self._fields() == other._fields()

    __hash__ = None  # mutable, compared by value (as a dataclass with eq would be)

    def __repr__(self) -> str:
        names = ("name", "letter", "nodes", "path", "line", "column", "model", "value", "params",
                 "controls", "source", "expression", "raw_nodes")
        return "Element(" + ", ".join(f"{n}={v!r}" for n, v in zip(names, self._fields())) + ")"

    def __reduce__(self):
        return _rebuild_element, (self.name, self.letter, self.nodes, self.line, self.model,
                                  self.value, self.params, self.raw_nodes, self._origin)

    @property
    def key(self) -> str:
        return self.name.lower()

    @property
    def location(self) -> Location:
        """Where the card starts; built when asked for (a big netlist holds millions of
        elements, and few of them are ever reported)."""
        return Location(self._origin.path, self.line, self._origin.column)


_new_element = object.__new__


def new_plain_element(name: str, letter: str, nodes: tuple[str, ...], line: int, model: str | None,
                  value: str | None, params: dict[str, str], raw_nodes: tuple[str, ...],
                  origin: Origin) -> Element:
    """An element with no controls, source or expression, at the place ``origin`` (one
    shared :class:`Origin` per file and column): the parser's plain-card path."""
    element = _new_element(Element)
    element.name = name
    element.letter = letter
    element.nodes = nodes
    element.line = line
    element.model = model
    element.value = value
    element.params = params
    element.raw_nodes = raw_nodes
    element._origin = origin
    return element


def new_plain_elements(names: list[str], nodes: list[tuple[str, ...]], first_line: int,
                       values: list[str], raw_nodes: list[tuple[str, ...]], origin: Origin
                       ) -> list[Element]:
    """:func:`new_plain_element` for a run of R/C/L cards on consecutive lines from
    ``first_line`` (no model, no parameters), in one loop."""
    out = []
    append = out.append
    new = _new_element
    line = first_line
    for name, node_pair, value, raw in zip(names, nodes, values, raw_nodes):
        element = new(Element)
        element.name = name
        element.letter = name[0].lower()
        element.nodes = node_pair
        element.line = line
        element.model = None
        element.value = value
        element.params = NO_PARAMS
        element.raw_nodes = raw
        element._origin = origin
        append(element)
        line += 1
    return out


def _rebuild_element(*fields) -> Element:
    return new_plain_element(*fields)


@dataclass(slots=True)
class Model:
    """A ``.model`` card: type (nmos, npn, d, r, sw ...) and parameters as text."""

    name: str
    type: str
    params: dict[str, str]
    location: Location


@dataclass(slots=True)
class ParamDef:
    """One ``name=value`` of a ``.param`` card or a ``.subckt`` default."""

    name: str
    text: str
    location: Location


@dataclass(slots=True)
class FuncDef:
    """A ``.func name(args) {body}`` definition."""

    name: str
    args: tuple[str, ...]
    body: str
    location: Location


@dataclass(slots=True)
class Analysis:
    """An analysis card, recorded not interpreted (``.ac`` gives a bandwidth hint)."""

    kind: str  # op, dc, ac, tran, noise, ...
    args: tuple[str, ...]
    location: Location


class PlainRun:
    """``count`` consecutive plain R/C/L cards of one file, from line ``first_line``
    at column 1 (name, two nodes, a number; see :meth:`ParseContext.take_run`), kept
    as their text and the numbers of their nets rather than as Element objects: an
    extracted netlist holds millions of them, and few are ever looked at one by one.

    ``a`` and ``b`` number the first and second node of each card in ``net_names``
    (the netlist's, 32-bit arrays); ``letters`` holds the lower-case first letter of
    each name, ``maybe_zero`` the cards whose value is a literal with no nonzero digit
    (``0``, ``0.0k``, ``-0e3``: every other value of a run is a nonzero number whatever
    the scope), ``name_hashes`` the ``hash()`` of each lower-case name (this process's,
    a 64-bit array: a run is never pickled).  :meth:`element` and :meth:`elements` make
    the Elements, equal to what the line-by-line path makes of the same lines.
    """

    __slots__ = ("text", "first_line", "count", "origin", "a", "b", "letters", "net_names",
                 "maybe_zero", "name_hashes", "_lines")

    def __init__(self, text: str, first_line: int, count: int, origin: Origin, a, b,
                 letters: str, net_names: list[str], maybe_zero: tuple[int, ...], name_hashes):
        self.text = text
        self.maybe_zero = maybe_zero
        self.name_hashes = name_hashes
        self.first_line = first_line
        self.count = count
        self.origin = origin
        self.a = a
        self.b = b
        self.letters = letters
        self.net_names = net_names
        self._lines = None  # line starts, made by element()

    def __repr__(self) -> str:
        return f"<PlainRun {self.count} cards from {self.origin.path}:{self.first_line}>"

    def element(self, i: int) -> Element:
        """The element of card ``i`` (a new object each time, equal to the others)."""
        starts = self._lines
        if starts is None:
            # where each line starts (8 bytes a line), not the lines themselves: a rule
            # that looks at a few cards of each run would otherwise keep a string per
            # card of the deck (about 50 MB on a 1M extracted deck)
            starts = self._lines = array("q", accumulate(
                map(add, map(len, self.text.split("\n")), repeat(1)), initial=0))
        name, raw_a, raw_b, value = self.text[starts[i]:starts[i + 1] - 1].split()
        names = self.net_names
        nodes = (names[self.a[i]], names[self.b[i]])
        return new_plain_element(name, self.letters[i], nodes, self.first_line + i, None, value,
                                 NO_PARAMS, nodes if (raw_a, raw_b) == nodes else (raw_a, raw_b),
                                 self.origin)

    def elements(self) -> list[Element]:
        """The elements of every card, in order, made in one loop."""
        fields = self.text.split()
        names = self.net_names
        nodes = list(zip(map(names.__getitem__, self.a), map(names.__getitem__, self.b)))
        raw = list(zip(fields[1::4], fields[2::4]))
        if raw == nodes:
            raw = nodes
        return new_plain_elements(fields[0::4], nodes, self.first_line, fields[3::4], raw,
                                  self.origin)

    item = element  # the BlockList protocol
    items = elements

    def split(self, i: int) -> tuple["PlainRun", "PlainRun"]:
        """The cards before ``i`` and from ``i`` on, as two runs."""
        lines = self.text.split("\n")
        head = PlainRun("".join(line + "\n" for line in lines[:i]), self.first_line, i,
                        self.origin, self.a[:i], self.b[:i], self.letters[:i], self.net_names,
                        tuple(z for z in self.maybe_zero if z < i), self.name_hashes[:i])
        tail = PlainRun("".join(line + "\n" for line in lines[i:self.count]), self.first_line + i,
                        self.count - i, self.origin, self.a[i:], self.b[i:], self.letters[i:],
                        self.net_names, tuple(z - i for z in self.maybe_zero if z >= i),
                        self.name_hashes[i:])
        return head, tail


class BlockList(Sequence):
    """A sequence held as single items and blocks of items made when asked for (a
    block has ``count``, ``item(i)`` and ``items()``; subclasses name its class as
    ``block``).

    Reads as a list (index, slice, iterate: iterating makes every item of every
    block; compare with a list); grows by :meth:`append` and :meth:`add_block`.
    :meth:`blocks` gives the pieces as held, for a pass that takes a block at a time.
    """

    __slots__ = ("_items", "_ends", "_size")
    block: type = type(None)

    def __init__(self, items: Iterable = ()):
        self._items: list = list(items)
        self._ends: list[int] | None = None
        self._size = len(self._items)

    def append(self, item) -> None:
        self._items.append(item)
        self._size += 1
        self._ends = None

    def extend(self, items: Iterable) -> None:
        for item in items:
            self.append(item)

    def add_block(self, block) -> None:
        self._items.append(block)
        self._size += block.count
        self._ends = None

    def _locate(self, index: int) -> tuple[int, int]:
        """(position in ``_items``, index of that piece's first item) for ``index``."""
        ends = self._ends
        if ends is None:
            block = self.block
            ends = self._ends = list(accumulate(
                item.count if item.__class__ is block else 1 for item in self._items))
        position = bisect_right(ends, index)
        return position, (ends[position - 1] if position else 0)

    def __len__(self) -> int:
        return self._size

    def __iter__(self) -> Iterator:
        block = self.block
        for item in self._items:
            if item.__class__ is block:
                yield from item.items()
            else:
                yield item

    def __getitem__(self, index):
        if isinstance(index, slice):
            start, stop, step = index.indices(self._size)
            if step != 1:
                return list(self)[index]
            return list(islice(iter(self), start, stop)) if stop > start else []
        if index < 0:
            index += self._size
        if not 0 <= index < self._size:
            raise IndexError(f"{type(self).__name__} index out of range")
        position, start = self._locate(index)
        item = self._items[position]
        return item.item(index - start) if item.__class__ is self.block else item

    def blocks(self) -> Iterator[tuple[int, object]]:
        """``(index of its first item, piece)`` for each single item and each block."""
        block = self.block
        index = 0
        for item in self._items:
            yield index, item
            index += item.count if item.__class__ is block else 1

    def beyond_blocks(self) -> list:
        """The single items, in order (nothing of a block is made)."""
        block = self.block
        return [item for item in self._items if item.__class__ is not block]

    def __eq__(self, other) -> bool:
        if isinstance(other, (list, tuple, BlockList)):
            return len(self) == len(other) and list(self) == list(other)
        return NotImplemented

    __hash__ = None

    def __reduce__(self):
        return type(self), (list(self),)


class ElementList(BlockList):
    """A cell's elements in netlist order: Element objects, and runs of plain cards
    (:class:`PlainRun`) whose Elements are made when asked for (see :class:`BlockList`);
    :meth:`insert` and :meth:`pop` cut a run where needed."""

    __slots__ = ()
    block = PlainRun

    add_run = BlockList.add_block

    def insert(self, index: int, element: Element) -> None:
        """Put ``element`` at ``index`` (a run it falls inside is cut in two)."""
        index = max(0, min(index, self._size)) if index >= 0 else max(0, self._size + index)
        position, start = self._locate(index) if index < self._size else (len(self._items), index)
        item = self._items[position] if position < len(self._items) else None
        if item.__class__ is PlainRun and index > start:
            head, tail = item.split(index - start)
            self._items[position:position + 1] = [head, element, tail]
        else:
            self._items.insert(position, element)
        self._size += 1
        self._ends = None

    def pop(self, index: int = -1) -> Element:
        element = self[index]
        index = index % self._size
        position, start = self._locate(index)
        item = self._items[position]
        if item.__class__ is PlainRun:
            head, tail = item.split(index - start)
            rest = tail.split(1)[1]
            self._items[position:position + 1] = [r for r in (head, rest) if r.count]
        else:
            del self._items[position]
        self._size -= 1
        self._ends = None
        return element

    def runs(self) -> list[PlainRun]:
        return [item for item in self._items if item.__class__ is PlainRun]

    beyond_runs = BlockList.beyond_blocks

    def __repr__(self) -> str:
        return repr(list(self))


@dataclass(slots=True)
class Cell:
    """A ``.subckt`` definition, or the top level of a file (``name == ""``).

    ``cells`` are subcircuits defined inside this one (local scope).
    ``optional_ports`` are the PSPICE ``OPTIONAL: port=default`` ports, last in
    ``ports``, each with the default net it names (digital power pins such as
    ``DPWR=$G_DPWR``).  An instance may leave them out; the ports it leaves out stay
    unconnected in lintamp's model, as if the cell's power came from elsewhere.
    ``repeated_ports`` maps the placeholder name of a port listed a second time on the
    ``.subckt`` line to that port's name: ngspice binds the body's net to the first
    listing, and the later pin connects to nothing inside.
    """

    name: str
    ports: tuple[str, ...]
    location: Location
    params: list[ParamDef] = field(default_factory=list)  # .subckt defaults, then .param cards
    defaults: dict[str, str] = field(default_factory=dict)  # .subckt header defaults
    elements: ElementList = field(default_factory=ElementList)
    models: dict[str, Model] = field(default_factory=dict)
    funcs: dict[str, FuncDef] = field(default_factory=dict)
    cells: dict[str, "Cell"] = field(default_factory=dict)
    pragmas: list[Pragma] = field(default_factory=list)
    display_name: str = ""
    end_location: Location | None = None
    parent: "Cell | None" = field(default=None, repr=False)
    optional_ports: dict[str, str] = field(default_factory=dict)
    repeated_ports: dict[str, str] = field(default_factory=dict)  # placeholder -> port name
    # pin directions a schematic export writes (``*.PININFO net:I|O|B``): net -> "i" | "o" | "b"
    pin_info: dict[str, str] = field(default_factory=dict)

    def __post_init__(self):
        if self.elements.__class__ is not ElementList:
            self.elements = ElementList(self.elements)

    @property
    def is_top(self) -> bool:
        return self.name == ""

    def elements_beyond_runs(self) -> list["Element"]:
        """The elements that are not in a run of plain R/C/L cards (see
        :class:`PlainRun`: no model, no parameters, a number for value), in order."""
        return self.elements.beyond_runs()

    @property
    def label(self) -> str:
        return self.display_name or self.name or "(top)"


@dataclass(slots=True)
class Netlist:
    """Everything read from one top-level file and what it included."""

    path: str
    title: str
    top: Cell
    globals: set[str] = field(default_factory=set)
    options: dict[str, str] = field(default_factory=dict)
    temperature_c: str | None = None
    analyses: list[Analysis] = field(default_factory=list)
    diagnostics: list[Diagnostic] = field(default_factory=list)
    files: list[str] = field(default_factory=list)  # every file read, the top one first
    cdl: dict[str, list[str]] = field(default_factory=dict)  # *.PININFO, *.GLOBAL, ... metadata
    observed: set[str] = field(default_factory=set)  # nets .print/.plot/.save/.control look at
    # top-level nets a '.ic v(net)=value' card sets: a transient's initial operating
    # point holds them there (ngspice-39 manual, .IC)
    initial_conditions: dict[str, str] = field(default_factory=dict)
    # the nets of plain runs (see PlainRun), numbered: name -> number, number -> name
    net_numbers: dict[str, int] = field(default_factory=dict, repr=False, compare=False)
    net_names: list[str] = field(default_factory=list, repr=False, compare=False)

    def transient_only(self) -> bool:
        """Every analysis card is a .tran (and there is one): the only operating point
        solved is the transient's initial one, where .ic values hold their nets."""
        return bool(self.analyses) and all(a.kind == "tran" for a in self.analyses)

    def all_cells(self):
        """Every cell, depth first: the top level, then each subcircuit definition."""
        stack = [self.top]
        while stack:
            cell = stack.pop()
            yield cell
            stack.extend(reversed(list(cell.cells.values())))
