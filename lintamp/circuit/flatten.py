"""Flatten an elaborated design into the numeric circuit the engine simulates.

Every instance binds its parameters, every value is evaluated in its scope, and
hierarchical names are joined with ``/`` (``x1/m3``, ``x1/mid``).  Ground names
map to net 0; globals keep their name at every level.
"""

from __future__ import annotations

from lintamp.circuit.design import DEFAULT_FLATTEN_LIMIT, CellView, Design, Device
from lintamp.circuit.flat import FlatCircuit, FlatDevice, ModelCard, SourceValues
from lintamp.circuit.values import Scope, cell_scope, instance_overrides, top_scope
from lintamp.text import excerpt

ENGINE_KINDS = frozenset({"resistor", "capacitor", "inductor", "vsource", "isource", "vcvs",
                          "vccs", "cccs", "ccvs", "diode", "npn", "pnp", "njf", "pjf", "nmos",
                          "pmos"})
MODEL_KINDS = frozenset({"diode", "npn", "pnp", "njf", "pjf", "nmos", "pmos"})


class FlattenLimit(Exception):
    """The design has more elements than the flattening limit allows."""


def _model_card(dev: Device, scope: Scope) -> ModelCard | None:
    model = dev.model
    if model is None:
        return None
    params = {}
    for key, text in model.params.items():
        value = scope.value(text)
        if value is not None:
            params[key] = value
    level = int(params.get("level", 1))
    return ModelCard(name=model.name, type=model.type, params=params, level=level)


_MAX_DEPTH = 100  # instances nested deeper than this are not flattened (as in walk)


def flat_element_count(root: CellView) -> int:
    """How many elements flattening ``root`` would give, without flattening it.

    Notes
    -----
    O(cells + devices): each cell's count is computed once and multiplied by its
    instances, so 10 levels of 10 instances (10^10 leaves) cost 100 steps.
    """
    memo: dict[tuple[int, int], int] = {}
    # explicit stack: a chain of hundreds of cells must not exhaust Python's recursion
    stack: list[tuple[CellView, int, bool]] = [(root, 0, False)]
    while stack:
        view, depth, ready = stack.pop()
        key = (id(view), depth)
        if key in memo and not ready:
            continue
        subs = [d.subcell for d in view.instances()]  # (found by device class)
        if not ready:
            stack.append((view, depth, True))
            if depth < _MAX_DEPTH:
                stack.extend((sub, depth + 1, False) for sub in subs
                             if (id(sub), depth + 1) not in memo)
            continue
        own = len(view.devices) - len(subs)
        below = sum(memo[(id(sub), depth + 1)] for sub in subs) if depth < _MAX_DEPTH else 0
        memo[key] = own + below
    return memo[(id(root), 0)]


def flatten(design: Design, *, root: CellView | None = None,
            limit: int = DEFAULT_FLATTEN_LIMIT) -> FlatCircuit:
    """The whole design below ``root`` (default: the top) as one flat circuit.

    Raises :class:`FlattenLimit` past ``limit`` elements, before building anything
    (the count comes from :func:`flat_element_count`).

    Notes
    -----
    O(elements after flattening); cells are visited once per instance.
    """
    netlist = design.netlist
    size = flat_element_count(root or design.top)
    if size > limit:
        raise FlattenLimit(f"the design has {size} elements after flattening, more than the "
                           f"limit of {limit}; check a sub-block with --top CELL")
    circuit = FlatCircuit()
    temp = top_scope(netlist).value(netlist.temperature_c) if netlist.temperature_c else None
    if temp is not None:
        circuit.temperature_c = temp
    scale = top_scope(netlist).value(netlist.options.get("scale")) if "scale" in netlist.options else None
    ground = design.ground
    root = root or design.top
    count = 0

    def net_index(name: str, prefix: str, mapping: dict[str, int], view: CellView) -> int:
        if name in mapping:
            return mapping[name]
        if name in ground:
            return 0
        if name in view.globals:
            return circuit.net(name)
        return circuit.net(prefix + name)

    def walk(view: CellView, prefix: str, mapping: dict[str, int], scope: Scope, depth: int):
        nonlocal count
        for dev in view.devices:
            nodes = tuple(net_index(n, prefix, mapping, view) for n in dev.nets)
            if dev.kind == "instance" and dev.subcell is not None:
                if depth >= _MAX_DEPTH:  # silently dropping the rest would mislead
                    raise FlattenLimit(f"subcircuit instances are nested more than {_MAX_DEPTH} "
                                       f"deep (at {excerpt(prefix + dev.name, 120)})")
                sub = dev.subcell
                child_map = {port: nodes[i] for i, port in enumerate(sub.ports) if i < len(nodes)}
                for port, index in child_map.items():  # 'x1/in' names the parent's net too
                    circuit.alias(prefix + dev.name + "/" + port, index)
                child_scope = cell_scope(sub.cell, scope, instance_overrides(dev.element, scope))
                walk(sub, prefix + dev.name + "/", child_map, child_scope, depth + 1)
                continue
            count += 1
            if count > limit:
                raise FlattenLimit(f"the design has more than {limit} elements after flattening")
            circuit.add(_flat_device(dev, prefix, nodes, scope, scale))

    walk(root, "", {}, cell_scope(root.cell, top_scope(netlist)) if not root.cell.is_top
         else top_scope(netlist), 0)
    return circuit


def _flat_device(dev: Device, prefix: str, nodes: tuple[int, ...], scope: Scope,
                 scale: float | None) -> FlatDevice:
    el = dev.element
    kind = dev.kind if dev.kind in ENGINE_KINDS else "other"
    flat = FlatDevice(name=prefix + dev.name, kind=kind, nodes=nodes, location=el.location,
                      display_name=prefix + el.name, kind_detail=dev.kind)
    if dev.spec is not None and dev.spec.value:
        flat.value = scope.value(el.params.get(dev.spec.value))
    else:
        flat.value = scope.value(el.value)
    if kind in ("cccs", "ccvs") and el.controls:
        flat.control = prefix + el.controls[0]
    if kind in MODEL_KINDS:
        flat.model = _model_card(dev, scope)
        if dev.spec is not None and flat.model is None:
            flat.kind_detail = f"{dev.kind} (PDK subcircuit {el.model}, model not evaluated)"
    for key, text in el.params.items():
        value = scope.value(text)
        if value is not None:
            flat.params[key] = value
    if kind in ("nmos", "pmos") and scale:
        for key in ("w", "l"):
            if key in flat.params:
                flat.params[key] *= scale
    if el.source is not None:
        src = el.source
        flat.source = SourceValues(
            dc=scope.value(src.dc) or 0.0,
            ac_mag=(scope.value(src.ac_mag) or 0.0) if src.ac_mag else 0.0,
            ac_phase_deg=(scope.value(src.ac_phase) or 0.0) if src.ac_phase else 0.0,
            time_varying=src.waveform is not None,
            z0_ohm=(scope.value(src.z0) or 0.0) if src.z0 else 0.0)
        initial = 1 if src.waveform == "pwl" else 0  # PWL: t0 v0 ...; the others: v0 ...
        if (src.dc is None and src.waveform in ("pulse", "pwl", "exp", "sin", "sine")
                and len(src.waveform_args) > initial):  # 'PWL file x.pwl' has no v0 here
            # the DC value of a waveform is its initial value (SPICE convention)
            flat.source.dc = scope.value(src.waveform_args[initial]) or 0.0
    return flat
