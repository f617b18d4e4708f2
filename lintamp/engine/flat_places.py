"""From flat hierarchical names back to the cell that holds the element.

The engine works on the flattened circuit (``x1/m3``, ``x1/mid``); findings point
at the line inside the ``.subckt`` body and name the cell.  These helpers walk the
instance path of a flat name down from the top view.
"""

from __future__ import annotations

from lintamp.circuit.design import CellView, Device, Design
from lintamp.circuit.flat import FlatCircuit

MAX_DEPTH = 200  # matches the elaboration's recursion cut


def view_of_path(design: Design, parts: list[str]) -> CellView | None:
    """The cell view reached by the instance names ``parts`` from the top (None if not)."""
    view = design.top
    for part in parts[:MAX_DEPTH]:
        dev = view.instance_named.get(part)
        if dev is None:
            return None
        view = dev.subcell
    return view


def locate_device(design: Design, flat_name: str) -> tuple[CellView, Device | None]:
    """The view holding flat element ``flat_name`` and its :class:`Device` there."""
    parts = flat_name.split("/")
    view = view_of_path(design, parts[:-1]) or design.top
    return view, view.device_named.get(parts[-1])


def local_name(flat_name: str) -> str:
    """``x1/x2/mid`` -> ``mid``."""
    return flat_name.rsplit("/", 1)[-1]


def prefix_of(flat_name: str) -> str:
    """``x1/x2/mid`` -> ``x1/x2/`` (empty at the top)."""
    head, sep, _ = flat_name.rpartition("/")
    return head + sep


def net_aliases(circuit: FlatCircuit) -> dict[int, list[str]]:
    """Every name a net goes by, shortest (the topmost) first.

    A subcircuit port is one net seen under the parent's name and the
    ``instance/port`` name; both are kept by the flat circuit's name index.

    Notes
    -----
    O(names).
    """
    out: dict[int, list[str]] = {}
    index = getattr(circuit, "_index", None) or {n: i for i, n in enumerate(circuit.nets)}
    for name, idx in index.items():
        out.setdefault(idx, []).append(name)
    for names in out.values():
        names.sort(key=lambda n: (n.count("/"), n))
    return out
