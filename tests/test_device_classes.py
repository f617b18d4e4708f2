"""Per-class and one-pass connectivity paths agree with the plain per-device ones.

Large cells are handled by device class (devices sharing kind, pins, letter and
model) and their terminal tables are numbered in one pass; each of those paths is
held here to a plain per-device definition of the same thing, on every rule
fixture, the samples and a slice of the real corpus, with every cell forced onto
the list path and onto the array path (common practice: two implementations of
one function are held to each other).
"""

from __future__ import annotations

import random
from pathlib import Path

import pytest

import lintamp.circuit.design as design_module
from lintamp.connectivity.dc_paths import MAX_DEPTH, bottom_up
from lintamp.connectivity.loops import _LazyScope, _plainly_nonzero, rigid_devices, rigid_pins
from lintamp.connectivity.rails import _named_nets, _of_kind
from lintamp.api import load_design
from lintamp.circuit.values import top_scope
from lintamp.netlist.parser import parse_text
from lintamp.netlist.reader import ReadOptions
from lintamp.netlist.units import parse_number

REPO = Path(__file__).resolve().parent.parent
CORPUS = REPO.parent / "shared" / "corpus"
DECKS = sorted((REPO / "tests" / "fixtures" / "rules").glob("*/*.sp")) + sorted((REPO / "samples").glob("*.sp"))


def _corpus_slice(count: int = 40) -> list[Path]:
    if not CORPUS.is_dir():
        return []
    files = sorted(p for p in CORPUS.rglob("*") if p.suffix.lower() in (".sp", ".cir", ".spice")
                   and p.is_file() and p.stat().st_size < 200_000)
    return files[::max(1, len(files) // count)][:count]


def _design(path: Path):
    text = path.read_text(encoding="utf-8", errors="replace")
    netlist = parse_text(text, str(path), ReadOptions(root=path.parent, display_root=path.parent))
    return netlist, load_design(netlist)


def _plain_table(view):
    """The terminal table by its definition, one device and one net at a time."""
    names: dict[str, None] = dict.fromkeys(view.ports)
    role_nets = [dev.nets[:len(dev.pins)] for dev in view.devices]
    for nets in role_nets:
        names.update(dict.fromkeys(nets))
    n_role = len(names)
    for dev in view.devices:
        names.update(dict.fromkeys(dev.nets[len(dev.pins):]))
    index = {net: i for i, net in enumerate(names)}
    net_ids = [index[net] for nets in role_nets for net in nets]
    dev_start = [0]
    for nets in role_nets:
        dev_start.append(dev_start[-1] + len(nets))
    extra = [d for d, dev in enumerate(view.devices) if len(dev.nets) > len(dev.pins)]
    return list(names), index, n_role, net_ids, dev_start, extra


def _check_view(netlist, design, view):
    table = view.terminal_table
    nets, index, n_role, net_ids, dev_start, extra = _plain_table(view)
    assert table.nets == nets
    assert table.index == index and type(table.index) is dict
    assert table.n_role_nets == n_role
    assert list(table.net_ids) == net_ids
    assert list(table.dev_start) == dev_start
    assert table.extra_devices == extra
    per_net: dict[int, list[int]] = {}
    for t, i in enumerate(net_ids):
        per_net.setdefault(i, []).append(t)
    assert list(table.term_order) == [t for i in range(len(nets)) for t in per_net.get(i, [])]
    owner = [(dev, pin) for dev in view.devices for pin in dev.pins[:len(dev.nets)]]
    for i in range(min(len(nets), 300)):
        assert table.terminals_of(i) == [owner[t] for t in per_net.get(i, [])]

    classes = view.device_classes
    keys: dict[tuple, int] = {}
    codes = [keys.setdefault((d.kind, d.pins, d.element.letter, d.element.model), len(keys))
             for d in view.devices]
    assert list(classes.codes) == codes and classes.keys == list(keys)
    some = set(range(0, len(keys), 2))
    assert classes.members(some) == [d for d, c in enumerate(codes) if c in some]

    outer = top_scope(netlist)
    scope = outer if view.cell.is_top else _LazyScope(view.cell, outer)
    plain = []
    for dev in view.devices:
        if dev.kind == "instance" and dev.subcell is not None:
            plain.append((dev, None))
        else:
            pins = rigid_pins(dev, scope)
            if pins is not None:
                plain.append((dev, pins))
    assert rigid_devices(view, scope) == plain

    assert view.instances() == [d for d in view.devices if d.subcell is not None]
    for kind in ("vsource", "instance"):
        assert _of_kind(view, kind) == [d for d in view.devices if d.kind == kind]
    names = design.ground | view.globals
    assert _named_nets(view, names) == [net for net in view.net_terminals if net in names]


def _plain_bottom_up(views):
    """Children first by depth-first search, a view's instances listed at every step."""
    done, out = set(), []
    for root in views:
        if id(root) in done:
            continue
        stack, on_stack = [(root, 0)], {id(root)}
        while stack:
            view, child = stack[-1]
            subs = [d.subcell for d in view.devices if d.subcell is not None]
            advanced = False
            while child < len(subs):
                sub = subs[child]
                child += 1
                if id(sub) not in done and id(sub) not in on_stack and len(stack) < MAX_DEPTH:
                    stack[-1] = (view, child)
                    stack.append((sub, 0))
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


def _check_design(netlist, design):
    for view in design.cells:
        _check_view(netlist, design, view)
    assert bottom_up(design.cells) == _plain_bottom_up(design.cells)


@pytest.mark.parametrize("threshold", [0, 10 ** 9], ids=["arrays", "lists"])
def test_fixtures_agree_with_plain_definitions(threshold, monkeypatch):
    monkeypatch.setattr(design_module, "SMALL_TABLE_TERMINALS", threshold)
    for path in DECKS:
        netlist, design = _design(path)
        _check_design(netlist, design)


@pytest.mark.parametrize("threshold", [0, 10 ** 9], ids=["arrays", "lists"])
def test_corpus_agrees_with_plain_definitions(threshold, monkeypatch):
    files = _corpus_slice()
    if not files:
        pytest.skip(f"corpus not found at {CORPUS} (checked out beside the repo as ../shared/corpus)")
    monkeypatch.setattr(design_module, "SMALL_TABLE_TERMINALS", threshold)
    for path in files:
        netlist, design = _design(path)
        _check_design(netlist, design)


def test_extra_nets_and_recursion_keep_their_roles(monkeypatch):
    # an instance with more nets than its cell has ports, a cell that instantiates
    # itself (its instance becomes a recursive-instance: not an instance any more),
    # and resistors whose bare value is a parameter name (read as the value)
    text = ("* extra nets\n.subckt inv a y\nr1 a y 1k\nx1 a y inv\n.ends\n"
            "x2 in out spare inv\nv1 in 0 1\nr0 out 0 0\nr9 spare 0 1e-400\n"
            ".param rval=0\nr7 in out rval\nr8 out in rval\nr6 in 0 {rval}\n.end\n")
    for threshold in (0, 10 ** 9):
        monkeypatch.setattr(design_module, "SMALL_TABLE_TERMINALS", threshold)
        netlist = parse_text(text, "extra.sp", ReadOptions(root=Path.cwd(), display_root=Path.cwd()))
        design = load_design(netlist)
        _check_design(netlist, design)
        kinds = [d.kind for d in design.view_of(netlist.top.cells["inv"]).devices]
        assert kinds == ["resistor", "recursive-instance"]


def test_plainly_nonzero_only_for_nonzero_numbers():
    # the shortcut must never skip a value parse_number reads as zero or cannot read
    # (ngspice-39 manual, section 2.4: a number is digits with an optional point,
    # exponent and scale factor)
    samples = ["326.145", "0", "0.0", "00", ".0", "0.", "1", "1.", ".5", "007", "1e-400",
               "0.000000000001", "0.0000000000001", "10k", "1.2.3", ".", "", "1_0", "²",
               "٣", "0" * 20 + "1", "1" * 16, "-1", "+1", " 1"]
    rng = random.Random(7)
    for _ in range(2000):
        samples.append("".join(rng.choice("0000123.") for _ in range(rng.randint(1, 17))))
    for text in samples:
        if _plainly_nonzero(text):
            number = parse_number(text)
            assert number is not None and number != 0.0, text


def test_tables_from_plain_runs_agree_with_plain_definitions(monkeypatch):
    # cells whose R/C/L cards came in runs (the parser kept their nets' numbers): the
    # table built from those numbers is the table by definition, with ports the runs
    # never touch, an instance with more nets than ports between two runs, mixed-case
    # names, zero-ohm resistors inside a run (rigid branches: rigid_devices must see
    # them), and a cell where a card parsed late was inserted among the runs (a diode
    # whose model name reads as a number, known only from a later .model), and an
    # element put into the middle of a run afterwards (the run is cut in two)
    def run(prefix, count, a="n", b="m"):
        return "".join(f"{prefix}{i} {a}{i % 7} {b}{i % 5} {i + 1}.5k\n" for i in range(count))

    text = ("* plain runs\n.subckt cell p q unused\n" + run("r", 30, "P", "x") + "x9 p q s1 s2 leaf\n"
            + run("C", 20, "q", "Y") + "m1 d g p 0 nch w=1u l=1u\n" + run("l", 10) + ".ends\n"
            ".subckt leaf a b\nr1 a b 1\n.ends\n"
            ".subckt late a b\n" + run("r", 12) + "d1 a b 1n4148\n" + run("c", 12, "a", "b")
            + ".ends\n.model 1n4148 d\n.model nch nmos\n"
            "x1 in out z cell\n" + run("R", 40, "In", "out") + "v1 in 0 1\n" + run("c", 25)
            + "".join(f"r{v} in z{k} {v}\n" for k, v in enumerate(
                ["1", "0", "0.000", "0e3", "00.0k", "0.5", "10", "-0", "1e-99", "r"]))
            + ".end\n")
    built = []
    original = design_module.TerminalTable._from_runs

    def spy(self, view, netlist):
        done = original(self, view, netlist)
        built.append((view.name, done))
        return done

    monkeypatch.setattr(design_module.TerminalTable, "_from_runs", spy)
    monkeypatch.setattr(design_module, "SMALL_TABLE_TERMINALS", 0)
    netlist = parse_text(text, "runs.sp", ReadOptions(root=Path.cwd(), display_root=Path.cwd()))
    assert all(c.elements.runs() for c in netlist.all_cells() if c.name != "leaf")
    late = netlist.top.cells["late"]
    assert [e.name for e in late.elements].index("d1") == 12
    _check_design(netlist, load_design(netlist))
    assert sorted(built) == [("", True), ("cell", True), ("late", True), ("leaf", False)]
    late.elements.insert(18, late.elements[12])
    assert [run.count for run in late.elements.runs()] == [12, 5, 7]
    built.clear()
    _check_design(netlist, load_design(netlist))
    assert sorted(built) == [("", True), ("cell", True), ("late", True), ("leaf", False)]
