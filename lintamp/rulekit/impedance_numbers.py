"""Numbers for the impedance rules, computed once per netlist and shared via ``ctx.memo``.

One flat circuit, one operating point (``--op FILE`` table, else lintamp's
level-1 solve), and small-signal solvers per (frequency, detached elements).
Numbers are only handed out when they can be trusted: every nonlinear device
has a model lintamp evaluates (or a table row), no geometry stayed symbolic,
and the DC solve converged.  Otherwise the rules get a :class:`NoNumbers` with
the reason (``rules/_numbers.py`` turns it into one ``info`` finding per file).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

from lintamp.circuit.kinds import MOS, NONLINEAR, TRANSISTORS
from lintamp.engine.engine_kinds import EngineError
from lintamp.engine.flat_places import locate_device
from lintamp.engine.looking_into import NodeExplanation, ac_ground_nets, explain_node
from lintamp.circuit.flat import FlatCircuit

if TYPE_CHECKING:  # the engine (numpy, scipy) is imported only when numbers are computed
    from lintamp.engine.operating_point import OperatingPoint
    from lintamp.engine.small_signal import ImpedanceSolver

# what the engine raises on odd but legal decks (a rule then skips that node, never the
# file); anything else is a bug and reaches the internal-error exit
ENGINE_ERRORS = (EngineError, ArithmeticError)
MAX_ELEMENTS = 50_000  # flattened elements; at 200k the hostile-deck memory bounds (500 MB) broke
GEOMETRY = ("w", "l")


@dataclass
class NoNumbers:
    reason: str
    reported_elsewhere: bool = False  # another rule already explains it (unknown model, parse error)


@dataclass
class Numbers:
    """The flat circuit with its operating point and cached small-signal solvers."""

    circuit: FlatCircuit
    op: OperatingPoint
    source: str  # "table" or "level1"
    ac_ground: set[int]
    _solvers: dict = field(default_factory=dict, repr=False)

    @property
    def source_words(self) -> str:
        if self.source == "ngspice":
            return "ngspice's operating point (--op-from ngspice)"
        return "the --op table" if self.source == "table" else "lintamp's level-1 operating point"

    def solver(self, freq_hz: float, detach=()) -> ImpedanceSolver:
        key = (float(freq_hz), tuple(sorted(set(detach))))
        if key not in self._solvers:
            from lintamp.engine.small_signal import ImpedanceSolver
            if len(self._solvers) > 256:  # bounded memory on big decks with many ports
                self._solvers.clear()
            self._solvers[key] = ImpedanceSolver(self.circuit, self.op, freq_hz, detach=key[1])
        return self._solvers[key]

    def z(self, net: str, freq_hz: float, detach=()) -> complex:
        return self.solver(freq_hz, detach).z(net)

    def explain(self, net: str, freq_hz: float, detach=()) -> NodeExplanation:
        return explain_node(self.circuit, net, freq_hz, self.op, tuple(sorted(set(detach))))

    def net_name(self, idx: int) -> str:
        return self.circuit.nets[idx]


def _untrusted_devices(ctx, circuit: FlatCircuit) -> list[str]:
    """Nonlinear devices whose numbers would be SPICE defaults, not the designer's."""
    out = []
    for dev in circuit.devices:
        if dev.kind not in NONLINEAR:
            continue
        if dev.model is None:
            why = dev.kind_detail if "PDK" in dev.kind_detail else "model not found"
            out.append(f"{dev.name} ({why})")
            continue
        if dev.kind in MOS:
            _view, design_dev = locate_device(ctx.design, dev.name)
            if design_dev is not None:
                written = [k for k in GEOMETRY if k in design_dev.element.params]
                symbolic = [k for k in written if k not in dev.params]
                if symbolic:
                    out.append(f"{dev.name} (symbolic {', '.join(k.upper() for k in symbolic)})")
    return out


def _table_from_simulator(ctx):
    """``--op-from ngspice`` in check: ngspice's table, or None (the one note is printed on
    stderr and the rules reason as they do without numbers: findings and exit code unchanged)."""
    import sys
    from lintamp.engine.ngspice_op import SimulatorFailed, SimulatorSettings, operating_point_table
    options = ctx.options
    path = options.get("netlist_path")
    if not path:
        return None
    settings = options.get("simulator") or SimulatorSettings()
    from lintamp.circuit.flatten import flatten
    try:
        circuit = flatten(ctx.design, limit=MAX_ELEMENTS)
        return operating_point_table(Path(path), ctx.design, ctx.netlist, circuit,
                                     options.get("read_options"), settings)
    except SimulatorFailed as exc:
        print(f"lintamp: note: {path}: --op-from ngspice: {exc}; reasoning by inspection instead",
              file=sys.stderr)
    except ENGINE_ERRORS as exc:
        print(f"lintamp: note: {path}: --op-from ngspice: no deck for ngspice ({exc}); "
              "reasoning by inspection instead", file=sys.stderr)
    return None


def _load_table(ctx):
    if (ctx.options or {}).get("op_table") is not None:  # a table already read (audit)
        return ctx.options["op_table"], ""
    op_file = (ctx.options or {}).get("op_file")
    if not op_file and (ctx.options or {}).get("op_from"):
        return _table_from_simulator(ctx), ""
    if not op_file:
        return None, ""
    from lintamp import safe_paths
    from lintamp.engine.op_table import load_op_table
    try:  # a regular file only: a pipe or /dev/zero is refused without blocking
        from lintamp.engine.ngspice_op import looks_like_raw, table_from_designer_raw
        data = safe_paths.read_regular(op_file, limit=safe_paths.MAX_TABLE_BYTES)
        if looks_like_raw(data):  # a raw file of the designer's own ngspice run
            return table_from_designer_raw(data, str(op_file)), ""
        return load_op_table(safe_paths.read_text(op_file), str(op_file)), ""
    except (OSError, ValueError) as exc:
        return None, f"--op {op_file}: {exc}"


def _compute(ctx) -> Numbers | NoNumbers | None:
    from lintamp.circuit.flatten import FlattenLimit, flatten

    if not ctx.design.top.devices:
        return None  # a cell library: nothing is simulated without a deck
    try:
        circuit = flatten(ctx.design, limit=MAX_ELEMENTS)
    except FlattenLimit:
        return NoNumbers(f"more than {MAX_ELEMENTS:,} elements after flattening: lintamp's own "
                         "solves would take minutes on a deck this size; check a block with --top CELL")
    except ENGINE_ERRORS as exc:
        return NoNumbers(f"the deck could not be flattened ({type(exc).__name__}: {exc})")
    if not circuit.devices:
        return None
    if not any(d.kind in TRANSISTORS or "PDK" in d.kind_detail for d in circuit.devices):
        quiet = True  # no stages to judge: say nothing when numbers are missing
    else:
        quiet = False
    result = _numbers_for(ctx, circuit)
    if isinstance(result, NoNumbers) and quiet:
        result.reported_elsewhere = True
    return result


def _numbers_for(ctx, circuit):
    table, table_error = _load_table(ctx)
    if table_error:
        return NoNumbers(table_error)
    untrusted = [u for u in _untrusted_devices(ctx, circuit) if table is None or u.split(" ")[0] not in table]
    if untrusted:
        shown = ", ".join(untrusted[:6]) + (f" and {len(untrusted) - 6} more" if len(untrusted) > 6 else "")
        missing_models = all(u.endswith("(model not found)") for u in untrusted)
        return NoNumbers(f"devices lintamp cannot evaluate: {shown}", reported_elsewhere=missing_models)
    others = [d.name for d in circuit.devices if d.kind == "other"]
    if others:
        shown = ", ".join(others[:6]) + (" ..." if len(others) > 6 else "")
        return NoNumbers(f"elements lintamp does not simulate: {shown}")
    # the engine (numpy, scipy) is imported here, once there is something to solve
    from lintamp.rulekit.impedance_report import resolve_operating_point
    try:
        op, source, notes = resolve_operating_point(circuit, table)
    except ENGINE_ERRORS as exc:
        return NoNumbers(f"no operating point: {exc}")
    if op is None:
        return NoNumbers("no operating point: " + ("; ".join(notes) or "the DC solve failed"))
    if source == "level1" and any(not math.isfinite(v) for v in op.node_voltages_v.values()):
        return NoNumbers("the DC solve returned non-finite node voltages")
    return Numbers(circuit, op, source, ac_ground_nets(circuit))


def impedance_numbers(ctx) -> Numbers | NoNumbers | None:
    """The shared numbers, or why there are none (None: no deck to simulate)."""
    return ctx.memo("impedance-numbers", lambda: _compute(ctx))


def device_capacitance_at(numbers: Numbers, net: int) -> tuple[float, list[str]]:
    """Model capacitances (gate, junction) from ``net`` to AC ground at the operating point."""
    total, names = 0.0, []
    for name, dop in numbers.op.devices.items():
        keys = dop.terminals
        for a, b, c_f in dop.capacitances_f:
            ka, kb = keys[a], keys[b]
            if (ka == net and kb in numbers.ac_ground) or (kb == net and ka in numbers.ac_ground):
                total += c_f
                if name not in names:
                    names.append(name)
    return total, names


def safely(judge, *args):
    """``judge(*args)``, or None when the engine cannot solve that case."""
    try:
        return judge(*args)
    except ENGINE_ERRORS:
        return None
