"""Operating-point tables and the by-inspection fallback.

When lintamp cannot evaluate a device's model (BSIM-class PDK models, levels
other than 1, symbolic sizes) the user may give the small-signal values from
their own simulator run in a small table.

Table format (our own), CSV with a header row, one device per row; columns in any
order, names case-insensitive, missing numbers taken as 0:

    name,gm,gds,gmb,ids,region            MOS (siemens, ampere)
    name,gm,gpi,go,gmu,ic,region          BJT
    name,gd,id                            diode

The same as JSON: ``{"devices": [{"name": "m1", "gm": 6.8e-4, "gds": 8.7e-6,
"gmb": 1.5e-4, "ids": 1e-4, "region": "saturation"}, ...]}`` or a plain mapping
``{"m1": {...}}``.  Names are the flat hierarchical names (``x1/m3``), lower case.
Capacitances may be given as ``cgs cgd cgb cbd cbs`` (MOS) and ``cbe cbc`` (BJT),
in farad.  A MOS row describes the device in its normal orientation (drain is
the netlist's drain).

The fallback when neither a solve nor a table gives numbers is
:func:`impedance_class_by_inspection`: it names the impedance *class* of a node
("low ~ 1/gm", "high ~ r_o", "open") from topology alone, and says so.
"""

from __future__ import annotations

import csv
import io
import json
from dataclasses import dataclass, field

import numpy as np

from lintamp.circuit.kinds import BJT, MOS, NONLINEAR, TRANSISTORS
from lintamp.engine.looking_into import ac_ground_nets
from lintamp.engine.operating_point import DeviceOperatingPoint, OperatingPoint
from lintamp.circuit.flat import FlatCircuit
from lintamp.engine.engine_kinds import EngineError, UnknownNet

NUMERIC = ("gm", "gds", "gmb", "ids", "gpi", "go", "gmu", "ic", "gd", "id",
           "cgs", "cgd", "cgb", "cbd", "cbs", "cbe", "cbc",
           "vgs", "vds", "vth", "vdsat", "vbe", "vce")  # bias voltages: device-region's margins


class OpTableError(EngineError, ValueError):
    """A table that cannot be read (message says where)."""


@dataclass
class TableEntry:
    name: str
    values: dict[str, float] = field(default_factory=dict)
    region: str = ""


def load_op_table(text: str, path: str = "<op table>") -> dict[str, TableEntry]:
    """Read a CSV or JSON table (JSON when the text starts with ``{`` or ``[``)."""
    stripped = text.lstrip()
    rows: list[dict]
    if stripped.startswith(("{", "[")):
        try:
            data = json.loads(text)
        except json.JSONDecodeError as exc:
            raise OpTableError(f"{path}:{exc.lineno}:{exc.colno}: {exc.msg}") from exc
        if isinstance(data, dict) and "devices" in data:
            data = data["devices"]
        if isinstance(data, dict):
            rows = [dict(v, name=k) for k, v in data.items() if isinstance(v, dict)]
        elif isinstance(data, list):
            rows = [r for r in data if isinstance(r, dict)]
        else:
            raise OpTableError(f"{path}:1:1: expected a list or mapping of devices")
        line_of = {id(r): 1 for r in rows}
    else:
        reader = csv.DictReader(io.StringIO(text))
        rows = []
        line_of = {}
        for r in reader:
            row = {(k or "").strip().lower(): (v or "").strip() for k, v in r.items()}
            rows.append(row)
            line_of[id(row)] = reader.line_num
    table: dict[str, TableEntry] = {}
    for r in rows:
        r = {str(k).lower(): v for k, v in r.items()}
        name = str(r.get("name", "")).strip().lower()
        if not name:
            raise OpTableError(f"{path}:{line_of.get(id(r), 1)}:1: row without a device name")
        entry = TableEntry(name=name, region=str(r.get("region", "") or ""))
        for key in NUMERIC:
            raw = r.get(key, "")
            if raw in ("", None):
                continue
            try:
                entry.values[key] = float(raw)
            except (TypeError, ValueError) as exc:
                raise OpTableError(f"{path}:{line_of.get(id(r), 1)}:1: {key} of {name} is not a number: {raw!r}") from exc
        table[name] = entry
    return table


def _mos_entry(e: TableEntry, dev) -> DeviceOperatingPoint:
    v = e.values
    gm, gds, gmb = v.get("gm", 0.0), v.get("gds", 0.0), v.get("gmb", 0.0)
    row_d = np.array([gds, gm, -(gm + gds + gmb), gmb])
    jac = np.zeros((4, 4))
    jac[0] = row_d
    jac[2] = -row_d
    caps = [(1, 2, v.get("cgs", 0.0)), (1, 0, v.get("cgd", 0.0)), (1, 3, v.get("cgb", 0.0)),
            (3, 0, v.get("cbd", 0.0)), (3, 2, v.get("cbs", 0.0))]
    values = {"gm_s": gm, "gds_s": gds, "gmb_s": gmb, "ids_a": v.get("ids", 0.0),
              "ro_ohm": 1 / gds if gds else float("inf"),
              "cgs_f": caps[0][2], "cgd_f": caps[1][2], "cgb_f": caps[2][2]}
    values.update({f"{k}_v": v[k] for k in ("vgs", "vds", "vth", "vdsat") if k in v})
    return DeviceOperatingPoint(dev.name, dev.kind, e.region or "from table", values, tuple(dev.nodes[:4]),
                                jac, [c for c in caps if c[2] > 0])


def _bjt_entry(e: TableEntry, dev) -> DeviceOperatingPoint:
    v = e.values
    gm, gpi, go, gmu = v.get("gm", 0.0), v.get("gpi", 0.0), v.get("go", 0.0), v.get("gmu", 0.0)
    jac = np.zeros((3, 3))
    jac[0] = [go + gmu, gm - gmu, -(gm + go)]
    jac[1] = [-gmu, gpi + gmu, -gpi]
    jac[2] = -(jac[0] + jac[1])
    values = {"gm_s": gm, "gpi_s": gpi, "go_s": go, "gmu_s": gmu, "ic_a": v.get("ic", 0.0),
              "rpi_ohm": 1 / gpi if gpi else float("inf"), "ro_ohm": 1 / go if go else float("inf")}
    values.update({f"{k}_v": v[k] for k in ("vbe", "vce") if k in v})
    caps = [(1, 2, v.get("cbe", 0.0)), (1, 0, v.get("cbc", 0.0))]
    return DeviceOperatingPoint(dev.name, dev.kind, e.region or "from table", values, tuple(dev.nodes[:3]),
                                jac, [c for c in caps if c[2] > 0])


def _diode_entry(e: TableEntry, dev) -> DeviceOperatingPoint:
    gd = e.values.get("gd", 0.0)
    jac = np.array([[gd, -gd], [-gd, gd]])
    values = {"gd_s": gd, "id_a": e.values.get("id", 0.0), "rd_ohm": 1 / gd if gd else float("inf"), "cd_f": 0.0}
    return DeviceOperatingPoint(dev.name, dev.kind, e.region or "from table", values, tuple(dev.nodes[:2]), jac)


def operating_point_from_table(circuit: FlatCircuit, table: dict[str, TableEntry],
                               base: OperatingPoint | None = None) -> OperatingPoint:
    """Small-signal device data from ``table`` (over ``base`` when given).

    Raises
    ------
    OpTableError
        A nonlinear device with neither a table row nor a solved operating point.
    """
    devices = dict(base.devices) if base is not None else {}
    missing = []
    for dev in circuit.devices:
        if dev.kind not in NONLINEAR:
            continue
        entry = table.get(dev.name)
        if entry is None:
            if dev.name not in devices:
                missing.append(dev.name)
            continue
        if dev.kind in MOS:
            devices[dev.name] = _mos_entry(entry, dev)
        elif dev.kind in BJT:
            devices[dev.name] = _bjt_entry(entry, dev)
        else:
            devices[dev.name] = _diode_entry(entry, dev)
    if missing:
        raise OpTableError("no operating-point values for " + ", ".join(missing) + " (not in the table, not solvable)")
    return OperatingPoint(
        node_voltages_v=dict(base.node_voltages_v) if base else {},
        branch_currents_a=dict(base.branch_currents_a) if base else {},
        devices=devices,
        method="table" if base is None else base.method + " + table",
        iterations=base.iterations if base else 0,
        source="table",
        series_resistances={} if base is None else base.series_resistances,
    )


CLASS_ORDER = ("ac-ground", "low", "resistive", "high", "open")


def impedance_class_by_inspection(circuit: FlatCircuit, node: str) -> tuple[str, list[str]]:
    """Impedance class of ``node`` from topology alone (no numbers), with the reasons.

    Classes: ``ac-ground``; ``low`` (~1/gm: a source/emitter, a diode-connected
    device, a diode); ``resistive`` (a resistor to AC ground); ``high`` (~r_o or
    more: only drains/collectors); ``open`` (only gates, capacitors, current
    sources: no conductive path); ``unknown`` (only drains/collectors, but the node
    also reaches a gate or base: feedback may set it).  The lowest class present wins.

    Notes
    -----
    O(devices).  A heuristic by inspection: it ignores what the far terminals see.
    """
    net = circuit.find_net(node)
    if net is None:
        raise UnknownNet(f"no net named {node!r}")
    acg = ac_ground_nets(circuit)
    if net in acg:
        return "ac-ground", [f"{node} is ground or tied to it by a voltage source"]
    found: list[tuple[str, str]] = []
    for d in circuit.devices:
        if net not in d.nodes:
            continue
        at = {i for i, n in enumerate(d.nodes) if n == net}
        k = d.kind
        if k in TRANSISTORS:
            out, ctl, com = 0, 1, 2
            if {out, ctl} <= at:
                found.append(("low", f"diode-connected {d.name}: ~1/gm"))
            elif com in at:
                found.append(("low", f"{'source' if k in ('nmos', 'pmos') else 'emitter'} of {d.name}: ~1/gm"))
            elif out in at:
                found.append(("high", f"{'drain' if k in ('nmos', 'pmos') else 'collector'} of {d.name}: ~r_o or more"))
            elif ctl in at and k in BJT:
                found.append(("high", f"base of {d.name}: ~r_pi + (beta+1) R_E"))
            else:
                found.append(("open", f"gate of {d.name}: open"))
        elif k == "diode":
            found.append(("low", f"diode {d.name}: ~n VT/I"))
        elif k == "resistor":
            other = d.nodes[1] if d.nodes[0] == net else d.nodes[0]
            found.append(("resistive", f"resistor {d.name}" + (" to AC ground" if other in acg else f" to {circuit.nets[other]}")))
        elif k in ("vsource", "vcvs", "ccvs", "inductor") and (at & {0, 1}):
            found.append(("low", f"{k} {d.name}: a voltage-defined branch"))
        elif k in ("capacitor", "isource", "vccs", "cccs") or k == "vcvs":
            found.append(("open", f"{k} {d.name}: no DC conduction"))
        else:
            found.append(("open", f"{k} {d.name}: not analysed"))
    if not found:
        return "open", [f"nothing is connected to {node}"]
    best = min(found, key=lambda f: CLASS_ORDER.index(f[0]))[0]
    reasons = [why for cls, why in found if cls == best] + [why for cls, why in found if cls != best]
    if best == "high":
        loop = _drives_a_control(circuit, net, acg)
        if loop is not None:
            # a drain that also reaches a gate or base may sit inside a feedback loop (a
            # unity-gain buffer's output is ohms, not r_o): by inspection alone it is unknown
            return "unknown", [f"{node} also reaches the {loop}: feedback may lower it far below r_o; "
                               "only numbers can tell"] + reasons
    return best, reasons


def _drives_a_control(circuit: FlatCircuit, net: int, acg: set[int]) -> str | None:
    """The first gate/base that ``net`` reaches directly or through R, C, L (not AC ground)."""
    seen, todo = {net}, [net]
    while todo:
        n = todo.pop()
        for d in circuit.devices:
            if n not in d.nodes:
                continue
            if d.kind in TRANSISTORS and d.nodes[1] == n and d.nodes[0] != n:
                return f"{'gate' if d.kind in ('nmos', 'pmos') else 'base'} of {d.name}"
            if d.kind in ("resistor", "capacitor", "inductor"):
                for m in d.nodes[:2]:
                    if m not in seen and m not in acg:
                        seen.add(m)
                        todo.append(m)
    return None
