"""Supply rails: nets whose DC voltage independent V sources fix, per cell.

A net's voltage is *known* when a chain of V sources with a numeric DC value ties
it to ground (``V1 vdd 0 1.8``; ``V2 vcc vdd 1`` gives vcc = 2.8 V).  Values are
evaluated with the cell's parameter scope (:mod:`lintamp.circuit.values`); a source
with only a waveform (PULSE, SIN ...) is a signal, not a rail.  A subcircuit's port
inherits a value only when every instance in the deck connects it to a net of one
and the same known value; a global takes the value some cell gives it, if all agree.
Nothing is taken from net names.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field

from lintamp.connectivity.dc_paths import bottom_up
from lintamp.connectivity.loops import is_port_source
from lintamp.circuit.design import CellView
from lintamp.circuit.values import cell_scope, top_scope

MAX_PASSES = 2  # the second pass seeds globals found anywhere in the first


@dataclass(eq=False)
class CellRails:
    """Known DC voltages of one cell's nets and where each came from."""

    volts: dict[str, float] = field(default_factory=dict)
    source: dict[str, str] = field(default_factory=dict)  # net -> "V1", "ground", "port of x1"


@dataclass(eq=False)
class Rails:
    cells: dict[int, CellRails]
    lowest_v: float | None   # over every known rail of the deck (ground included)
    highest_v: float | None

    def of(self, view: CellView) -> CellRails:
        return self.cells.get(id(view)) or CellRails()


def _dc_value(dev, scope) -> float | None:
    src = dev.element.source
    if src is None:
        return None
    if src.dc is None:
        return None  # a waveform only: a signal, not a rail
    if is_port_source(dev):
        return None  # an RF port: its z0 in series, so the net's voltage depends on the load
    return scope.value(src.dc)


def _propagate(view: CellView, seed: dict[str, tuple[float, str]], scope) -> CellRails:
    """Spread known voltages across the cell's V sources (breadth first)."""
    adj: dict[str, list[tuple[str, float, str]]] = {}
    for dev in _of_kind(view, "vsource"):
        if len(dev.nets) < 2:
            continue
        value = _dc_value(dev, scope)
        if value is None:
            continue
        p, n = dev.nets[0], dev.nets[1]
        if p == n:
            continue
        adj.setdefault(p, []).append((n, -value, dev.display))
        adj.setdefault(n, []).append((p, value, dev.display))
    rails = CellRails()
    queue = deque()
    for net, (volts, why) in seed.items():
        rails.volts[net] = volts
        rails.source[net] = why
        queue.append(net)
    while queue:
        net = queue.popleft()
        for other, delta, name in adj.get(net, ()):
            if other in rails.volts:
                continue  # a second, possibly contradicting path: source-loop's business
            rails.volts[other] = rails.volts[net] + delta
            rails.source[other] = name
            queue.append(other)
    return rails


def _of_kind(view: CellView, kind: str) -> list:
    """The view's devices of one kind, in netlist order (chosen by device class)."""
    return view.devices_of(kinds=(kind,))


def _named_nets(view: CellView, names) -> list[str]:
    """Those of ``names`` that are nets of the view (with a terminal or a port), in net
    order: the order a walk over ``view.net_terminals`` meets them."""
    index = view.terminal_table.index
    limit = view.terminal_table.n_role_nets
    found = [(i, net) for net, i in ((net, index.get(net)) for net in names)
             if i is not None and i < limit]
    return [net for _, net in sorted(found)]


def compute_rails(ctx) -> Rails:
    """Known DC voltages for every cell, parents first.

    Notes
    -----
    Two passes over the cells; each pass O(V sources + instance pins).
    """
    design = ctx.design
    outer = top_scope(ctx.netlist)
    parents_first = list(reversed(bottom_up(design.cells)))
    global_volts: dict[str, tuple[float, str]] = {}
    cells: dict[int, CellRails] = {}
    for _ in range(MAX_PASSES):
        port_votes: dict[int, dict[int, list[float | None]]] = {}
        cells = {}
        found_globals: dict[str, set[float]] = {}
        for view in parents_first:
            scope = outer if view.cell.is_top else cell_scope(view.cell, outer)
            seed: dict[str, tuple[float, str]] = {}
            for net in _named_nets(view, design.ground | view.globals):
                if net in design.ground:
                    seed[net] = (0.0, "ground")
                elif net in view.globals and net in global_volts and net not in view.ports:
                    seed[net] = global_volts[net]
            if design.in_deck(view) and not view.cell.is_top:
                votes = port_votes.get(id(view), {})
                count = design.instance_count(view)
                for pos, port in enumerate(view.ports):
                    got = votes.get(pos, [])
                    known = {round(v, 9) for v in got if v is not None}
                    if (len(known) == 1 and None not in got and got and port not in seed
                            and len(got) >= 1 and count):
                        seed[port] = (got[0], "the nets every instance connects to it")
            rails = _propagate(view, seed, scope)
            cells[id(view)] = rails
            for net, volts in rails.volts.items():
                if net in view.globals and net not in design.ground:
                    found_globals.setdefault(net, set()).add(round(volts, 9))
            if not design.in_deck(view):
                continue
            for dev in view.instances():
                sub = dev.subcell
                bucket = port_votes.setdefault(id(sub), {})
                for pos in range(min(len(sub.ports), len(dev.nets))):
                    bucket.setdefault(pos, []).append(rails.volts.get(dev.nets[pos]))
        global_volts = {g: (next(iter(v)), "the global's source") for g, v in found_globals.items()
                        if len(v) == 1}
    known = [v for view_id, r in cells.items() if view_id in design.deck_cells
             for v in r.volts.values()]
    return Rails(cells=cells, lowest_v=min(known) if known else None,
                 highest_v=max(known) if known else None)


def get_rails(ctx) -> Rails:
    return ctx.memo("rails", lambda: compute_rails(ctx))
