"""Shared building of island findings for no-dc-path, unbiased-gate and current-cutset.

Each DC island (a component with no path to ground, a defined global or a port) is
reported exactly once, by the rule its kind (:func:`lintamp.connectivity.dc_paths.island_kind`)
names in :data:`RULE_OF_KIND`; bases and JFET gates that only their own junctions reach are added
to unbiased-gate from the BIAS-mode analysis.
"""

from __future__ import annotations

from lintamp.connectivity.dc_paths import (BIAS, FULL, IslandKind, describe_terminal, island_kind,
                                           islands, reaches_defined_level, unread_cells)
from lintamp.findings import Related
from lintamp.rules._supply import declared_pins
from lintamp.rules._pin_order import touches_swapped

MAX_LISTED = 8
# the rule that reports each kind of island (one the feedback may set is not reported)
RULE_OF_KIND = {IslandKind.CURRENT_FED: "current-cutset", IslandKind.UNBIASED_CONTROL: "unbiased-gate",
                IslandKind.FLOATING: "no-dc-path"}


def sealed_cells(ctx) -> dict[int, object]:
    """The cells whose ports reach nothing inside: no ports at all (a layout extraction
    that found no pin labels) or every port unconnected.  Every island inside such a
    cell follows from that one cause, so the island rules leave them to one finding
    per cell (no-dc-path for a cell with no ports, unused-port for unconnected ports)."""
    def build():
        sealed = {}
        for view in ctx.cells():
            if view.cell.is_top or not view.devices:
                continue
            if not any(view.net_terminals.degree(port) for port in view.ports):
                sealed[id(view)] = view
        return sealed
    return ctx.memo("sealed-cells", build)


def only_unused_pins(terminals) -> bool:
    """Whether every terminal is an instance pin whose port nothing inside the cell
    touches: the net is open because of that cell (unused-port says it once)."""
    for dev, pin in terminals:  # an instance's pins are named after its cell's ports
        sub = dev.subcell if dev.kind == "instance" else None
        if sub is None or not sub.devices or pin not in sub.ports:
            return False  # (an empty .subckt is a black box, not a cell with unused ports)
        if sub.net_terminals.degree(pin):
            return False
    return bool(terminals)


def implicit_rail(ctx, view, island) -> str | None:
    """The rail net of a library cell that the island holds without it being a port:
    a standard-cell CDL that takes ``VDD``/``VSS`` as global by name (LVS tools join
    power nets so) leaves them local to the cell as SPICE reads it, and the tie cell's
    diode-connected device then floats with them.  Only for cells the deck does not
    use: where a deck instantiates the cell, the local rail is a real open."""
    if view.cell.is_top or ctx.design.in_deck(view):
        return None
    from lintamp.connectivity.intent import matches, patterns
    rails = patterns(ctx.config, "supply") + patterns(ctx.config, "ground")
    for net in island.nets:
        if net not in view.ports and net not in ctx.netlist.globals and matches(net, rails):
            return net
    return None


def island_findings(ctx, rule: str):
    """(view, island, bias_only) for every island the named rule reports."""
    skip = unread_cells(ctx)
    sealed = sealed_cells(ctx)
    pins = declared_pins(ctx)  # a schematic export's own pins: biased by its user
    for view in ctx.cells():
        if id(view) in skip or id(view) in sealed:
            continue
        for island in islands(ctx, view, FULL):
            if view.cell.is_top and pins and any(n in pins for n in island.nets):
                continue
            if touches_swapped(ctx, view, island.terminals):
                continue  # an instance in another pin order left it: swapped-pins says so
            if only_unused_pins(island.terminals):
                continue  # open because the cell leaves those ports unused: unused-port
            if implicit_rail(ctx, view, island):
                if rule == "no-dc-path":
                    yield view, island, False  # one info per cell there
                continue
            if RULE_OF_KIND.get(island_kind(island)) == rule:
                yield view, island, False
        if rule != "unbiased-gate":
            continue
        for island in islands(ctx, view, BIAS):
            if island.current_feeds or not island.controls:
                continue
            if view.cell.is_top and pins and any(n in pins for n in island.nets):
                continue
            if touches_swapped(ctx, view, island.terminals):
                continue
            if not reaches_defined_level(ctx, view, island.nets[0], FULL):
                continue  # already reported as a FULL island
            yield view, island, True


def listing(items, limit: int = MAX_LISTED) -> str:
    items = list(items)
    shown = ", ".join(items[:limit])
    return shown + (f" and {len(items) - limit} more" if len(items) > limit else "")


def net_phrase(island) -> str:
    nets = island.nets
    if len(nets) == 1:
        return nets[0]
    return f"{nets[0]} (with {listing(nets[1:], 5)})"


def context_steps(view, island) -> list[str]:
    steps = []
    if not view.cell.is_top:
        steps.append(f"ports of {view.label} count as biased from outside; "
                     f"{'this net reaches' if len(island.nets) == 1 else 'these nets reach'} "
                     "no port")
    for name in island.undefined_globals:
        steps.append(f"the global {name} is here, but no instantiated cell ties it to ground "
                     "by a DC path")
    return steps


def terminal_lines(island, limit: int = MAX_LISTED) -> str:
    # (a dict keeps the first-seen order: one island can hold 100k gates)
    seen = dict.fromkeys(describe_terminal(dev, pin) for dev, pin in island.terminals)
    return listing(seen, limit)


def related(island, skip=None) -> list[Related]:
    out = []
    seen = set()
    for dev, pin in island.terminals:
        if dev is skip or id(dev) in seen:
            continue
        seen.add(id(dev))
        out.append(Related(dev.location, describe_terminal(dev, pin)))
        if len(out) >= MAX_LISTED:
            break
    return out


def elements(island) -> list[str]:
    return list(dict.fromkeys(dev.name for dev, _ in island.terminals))
