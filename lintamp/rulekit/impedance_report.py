"""The ``lintamp impedance`` result as a JSON-ready dict (INTERFACE.md shape).

``{"node", "freq_hz", "z_ohm": {"mag", "phase_deg", "re", "im"},
"operating_point": "level1" | "table" | "assumed", "branches": [{"via", "formula",
"z_ohm", ...}], "notes": [...]}``.  Added keys: per branch ``z_mna_ohm`` (the exact
share of that branch), ``terms``, ``elements``, ``note``; at the top ``stages``
and, for ``assumed``, ``class``.  An open is written as ``null`` with
``"open": true`` (JSON has no infinity).
"""

from __future__ import annotations

import cmath
import math

from lintamp.engine.looking_into import explain_node
from lintamp.engine.op_table import TableEntry, impedance_class_by_inspection, operating_point_from_table
from lintamp.engine.operating_point import CannotEvaluateError, OperatingPoint, OperatingPointError, solve_operating_point
from lintamp.engine.stages import recognise_stages
from lintamp.circuit.flat import FlatCircuit

from lintamp.circuit.kinds import NONLINEAR
from lintamp.engine.engine_kinds import OPEN_OHM, EngineError


def _z_json(z) -> dict:
    if z is None or (isinstance(z, float) and math.isinf(z)) or abs(z) >= OPEN_OHM:
        return {"mag": None, "phase_deg": None, "re": None, "im": None, "open": True}
    zc = complex(z)
    return {"mag": abs(zc), "phase_deg": math.degrees(cmath.phase(zc)), "re": zc.real, "im": zc.imag}


def _mag_or_none(z):
    if z is None or abs(z) >= OPEN_OHM or (isinstance(z, float) and math.isinf(z)):
        return None
    return abs(z)


def resolve_operating_point(
    circuit: FlatCircuit, table: dict[str, TableEntry] | None = None
) -> tuple[OperatingPoint | None, str, list[str]]:
    """Numbers in order of preference: table (over a level-1 solve when possible), level 1, none.

    Returns ``(op, source, notes)`` with source ``table``, ``level1`` or ``assumed``.
    """
    notes: list[str] = []
    if not any(d.kind in NONLINEAR for d in circuit.devices):
        try:
            return solve_operating_point(circuit), "level1", notes
        except OperatingPointError as exc:
            return None, "assumed", [str(exc)]
    base = None
    try:
        base = solve_operating_point(circuit)
    except CannotEvaluateError as exc:
        notes.append(str(exc))
    except OperatingPointError as exc:
        notes.append(str(exc))
    if table:
        try:
            # a table ngspice wrote says so: every rule and the sheet name where the numbers came from
            return operating_point_from_table(circuit, table, base), getattr(table, "origin", "table"), notes
        except EngineError as exc:
            notes.append(str(exc))
    if base is not None:
        return base, "level1", notes
    return None, "assumed", notes


def impedance_report(
    circuit: FlatCircuit,
    node: str,
    freq_hz: float = 0.0,
    detach=(),
    table: dict[str, TableEntry] | None = None,
) -> dict:
    """The impedance looking into ``node`` with its explanation, as a dict for JSON."""
    op, source, notes = resolve_operating_point(circuit, table)
    report = {"node": node, "freq_hz": float(freq_hz), "operating_point": source}
    if op is None:
        cls, reasons = impedance_class_by_inspection(circuit, node)
        report.update(
            z_ohm={"mag": None, "phase_deg": None, "re": None, "im": None},
            branches=[{"via": r, "formula": "by inspection", "z_ohm": None} for r in reasons],
            notes=notes + [f"no numbers: impedance class by inspection only: {cls}"],
            **{"class": cls},
        )
        return report
    expl = explain_node(circuit, node, freq_hz, op, detach)
    branches = []
    for br in expl.branches:
        branches.append({
            "via": br.via,
            "formula": br.formula,
            "z_ohm": _mag_or_none(br.z_ohm),
            "z_mna_ohm": _mag_or_none(br.z_mna_ohm),
            "open": _mag_or_none(br.z_ohm) is None,
            "terms": {k: (None if isinstance(v, float) and math.isinf(v) else v) for k, v in br.terms.items()},
            "elements": br.elements,
            **({"note": br.note} if br.note else {}),
        })
    report.update(
        z_ohm=_z_json(expl.z_ohm),
        branches=branches,
        notes=notes + expl.notes,
        stages=[{"device": s.device, "role": s.role, "related": s.related, "region": s.region}
                for s in recognise_stages(circuit, op)
                if any(circuit.find_net(node) in d.nodes for d in circuit.devices if d.name == s.device)],
    )
    return report
