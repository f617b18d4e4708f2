"""The review sheet of one block as a JSON-ready dict, plus the curves to plot.

Shape (INTERFACE.md, ``lintamp audit --format json``, with additions)::

    {"tool", "version", "schema": 1, "netlist", "cell", "instance",
     "operating_point": "level1" | "table" | "assumed" | "linear", "notes": [...],
     "band": {"freq_hz", "source"},
     "ports": [{"net", "circuit_net", "kind", "decided_by", "stimulus",
                "z_ohm": {"mag", "phase_deg"}, "z_band_ohm": {...}, "stage",
                "device", "formula", "formula_ohm", "approx", "approx_ohm",
                "terms", "findings": [fingerprint, ...]}],
     "stages": [{"device", "role", "related", "region", "gm_s", "ro_ohm", "gmb_s",
                 "vds_v", "vdsat_v", "margin_v", "vce_v", "id_a", "findings"}],
     "paths": [{"from", "to", "kind", "gain": {"mag", "unit", "freq_hz",
                "phase_deg", "sign"}, "gain_band": {...}, "f3db_hz", "f3db_low_hz",
                "poles_hz", "formula", "formula_value", "chain": [...],
                "interfaces": [{"net", "role", "signal", "z_out_ohm", "z_in_ohm",
                "ratio", "suits", "verdict"}], "notes"}],
     "findings": [... as in the check report ...], "waived": [...],
     "summary": {"errors", "warnings", "infos", "waived"}, "plots": {...}}

An open impedance is ``null`` (``"open": true`` beside it in ``z_ohm``).

Every textbook form carries its error against the exact number it explains:
``formula_error_pct`` and ``formula_exact`` (within 2 %) on a port's main branch, a
chain row and a path (whose ``formula`` is the product of its rows' forms, a passive
element's MNA ratio included); ``port_formula`` / ``port_formula_ohm`` (the parallel of
the port's branches) and ``port_approx`` with ``port_formula_error_pct`` /
``port_approx_error_pct``.  A short "~" form more than 10 % off is not given.  A chain
row without a form says why in ``formula_none``; a row whose form spans the next rows (a
mirror-loaded pair) lists them in ``spans``.  A stage lintamp did not evaluate has
``gm_s``/``ro_ohm`` null and ``unevaluated`` (why).  In the JSON the command writes, an
infinite or NaN number is ``null`` with ``<key>_why`` beside it and a ``non_finite`` list.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from lintamp import __version__
from lintamp.audit import forms
from lintamp.audit.chain import find_chain
from lintamp.connectivity.intent import IntentAnalysis, Port, ac_sweep_hz, band_of
from lintamp.audit.response import find_corners, log_grid, poles_hz, sweep
from lintamp.audit.solves import Solves, mag_or_none, z_json
from lintamp.engine.formulas import parallel
from lintamp.circuit.kinds import MOS, BJT, NONLINEAR, TRANSISTORS

MAX_SHEET_PORTS = 32
GAIN_UNITS = {("current", "voltage"): ("transimpedance", "ohm"),
              ("voltage", "voltage"): ("voltage gain", "V/V"),
              ("current", "current"): ("current gain", "A/A"),
              ("voltage", "current"): ("transconductance", "S")}
INTERFACE_RATIO_LIMIT = 0.1  # analog-knowledge 3: Rout <= RL/10 (voltage), Rin <= Rsrc/10 (current)
PLOT_POINTS_PER_DECADE = 20
MAX_PATHS = 24
BJT_VCE_SAT_V = 0.3  # analog-knowledge 3, common practice


class AuditError(Exception):
    """The audit cannot start (bad --top, a cell library without --top ...)."""


@dataclass
class Curve:
    """One plotted quantity over frequency."""

    title: str
    quantity: str  # "impedance" | "gain"
    unit: str
    freqs_hz: np.ndarray
    values: np.ndarray
    poles_hz: list[float] = field(default_factory=list)
    f3db_hz: float | None = None
    band_hz: float | None = None
    key: str = ""


@dataclass
class Sheet:
    data: dict
    curves: list[Curve]
    files_read: list[str] = field(default_factory=list)  # the netlist and its includes


@dataclass
class _Block:
    netlist: object
    cell: object  # the Cell under review
    circuit: object
    prefix: str
    instance: str | None
    candidates: list[str]


@dataclass
class _Audit:
    """What every port, path and stage row of one sheet reads, made once per sheet (instead
    of ten parameters handed from function to function)."""

    block: _Block
    solves: Solves
    loads: list[str]
    stage_rows: dict[str, dict]  # flat device name -> its stage row
    band_hz: float | None
    netlist: object
    curves: list[Curve]
    plots: bool
    freqs: np.ndarray | None = None

    @property
    def circuit(self):
        return self.block.circuit

    def local(self, name: str) -> str:
        return _local(self.block, name)


# ------------------------------------------------------------------ loading
def _choose_block(netlist, design_full, config, top: str | None) -> _Block:
    from lintamp.api import load_design
    from lintamp.circuit.flatten import FlattenLimit, flatten as flatten_all
    from lintamp.rulekit.impedance_numbers import MAX_ELEMENTS

    def flatten(design):  # check's element guard: a small deck of nested instances
        return flatten_all(design, limit=MAX_ELEMENTS)  # must not run for minutes

    try:
        if top is None:
            if not netlist.top.elements and netlist.top.cells:
                names = ", ".join(sorted(c.name for c in netlist.all_cells() if not c.is_top))
                raise AuditError(f"{netlist.path} is a cell library with no testbench; "
                                 f"choose a cell with --top (cells: {names})")
            circuit = flatten(design_full)
            nets = [n for n in circuit.nets[1:] if "/" not in n]
            return _Block(netlist, netlist.top, circuit, "", None, nets)
        cell = next((c for c in netlist.all_cells() if not c.is_top and c.name == top.lower()), None)
        if cell is None:
            names = ", ".join(sorted(c.name for c in netlist.all_cells() if not c.is_top)) or "none"
            raise AuditError(f"--top {top}: no subcircuit of that name in {netlist.path} (cells: {names})")
        view = design_full.view_of(cell)
        if design_full.top.devices:  # a testbench: numbers come from it, with the cell in place
            circuit = flatten(design_full)
            for path in design_full.instances(view):
                if path:
                    prefix = "/".join(path) + "/"
                    if all(circuit.find_net(prefix + p) is not None for p in cell.ports):
                        return _Block(netlist, cell, circuit, prefix, "/".join(path), list(cell.ports))
        circuit = flatten(load_design(netlist, config, top=top))
        return _Block(netlist, cell, circuit, "", None, list(cell.ports))
    except FlattenLimit as exc:
        raise AuditError(str(exc)) from None


def _untrusted_corners(data: dict, op, source: str) -> None:
    """An operating point that carries no MOS capacitances (an --op table or ngspice's,
    read without them) says nothing about the -3 dB points: each is "—" with the reason,
    never "no capacitance limits this path"."""
    mos = [d for d in op.devices.values() if d.kind in MOS]
    caps = ("cgs_f", "cgd_f", "cgb_f", "cbd_f", "cbs_f")
    if source == "level1" or not mos or any(d.values.get(k) for d in mos for k in caps):
        return
    why = (f"the operating point from {source} carries no MOS capacitances, so the -3 dB "
           "points and poles are not known")
    for row in data.get("paths", []):
        row["f3db_hz"] = None
        row["f3db_why"] = why
        row["poles_hz"] = None
        row["notes"] = [n for n in row.get("notes", []) if "no -3 dB point" not in n] + [why]


# ------------------------------------------------------------------ building
def build_sheet(netlist_path: Path, *, top: str | None = None, bandwidth: str | None = None,
                table=None, include_paths=(), config=None, plots: bool = True) -> Sheet:
    """Everything the review sheet shows, computed once.

    Raises :class:`AuditError` for a ``--top`` that names no cell, or a library
    without a testbench; ``ValueError`` for a ``bandwidth`` that is no frequency.

    Notes
    -----
    One DC solve; per port two impedance solves plus the explanation's; per path a
    bounded -3 dB search (about 140 factorisations) and, below 300 unknowns, one
    dense generalized eigenproblem for the poles.
    """
    from lintamp.api import analyse, default_config, load_design, read_options
    from lintamp.decide import decide
    from lintamp.netlist.parser import parse_file

    config = config or default_config()
    netlist = parse_file(netlist_path, read_options(netlist_path, config, include_paths))
    design_full = load_design(netlist, config)
    block = _choose_block(netlist, design_full, config, top)
    try:
        band = band_of(netlist, [block.cell] if not block.cell.is_top else [], option=bandwidth,
                       config_value=getattr(config, "bandwidth", None))
    except ValueError as exc:  # a --bandwidth that is no frequency: the user's to fix
        raise AuditError(str(exc)) from None

    # the findings reason at the sheet's operating point (--op FILE, --op-from ngspice)
    result = analyse(netlist, config, top=top,
                     options={"bandwidth": bandwidth, **({"op_table": table} if table else {})})
    report = decide(result.findings, result.pragmas, config)
    findings = [f.to_json() for f in report.findings]
    data = {
        "tool": "lintamp", "version": __version__, "schema": 1,
        "netlist": str(netlist.path), "title": netlist.title,
        "cell": block.cell.name or "top", "instance": block.instance,
        "operating_point": "assumed", "notes": [],
        "band": {"freq_hz": band.freq_hz, "source": band.source},
        "ports": [], "stages": [], "paths": [],
        "findings": findings,
        "waived": [dict(w.finding.to_json(), waiver={"path": w.waiver_location.path,
                                                     "line": w.waiver_location.line, "reason": w.reason})
                   for w in report.waived],
        "summary": {"errors": report.count(_sev("error")), "warnings": report.count(_sev("warning")),
                    "infos": report.count(_sev("info")), "waived": len(report.waived)},
        "internal_errors": list(result.internal_errors),
    }
    for diag in netlist.diagnostics:
        if diag.severity == "error":
            data["notes"].append(f"{diag.location}: {diag.message} (the numbers are computed without it)")

    intent = IntentAnalysis(netlist, block.circuit, config, {"bandwidth": bandwidth}).block(
        block.cell, block.prefix, block.candidates)
    ports, loads = intent.ports, intent.loads
    if len(ports) > MAX_SHEET_PORTS:  # a sheet is for a block's few ports, not a chip's pins
        data["notes"].append(f"{len(ports)} ports found; the sheet shows the first "
                             f"{MAX_SHEET_PORTS} (choose a block with --top CELL)")
        ports = ports[:MAX_SHEET_PORTS]
    data["rails"] = [{"net": n, "decided_by": why} for n, why in intent.rail_nets.items()]
    data["controls"] = [{"net": n, "decided_by": why} for n, why in intent.controls.items()]
    data["notes"] += intent.notes
    data["loads"] = [n[len(block.prefix):] for n in loads]
    if not ports:
        data["notes"].append("no inputs or outputs found: mark them with '* lintamp: current-input NET', "
                             "'voltage-input', 'voltage-output' or 'current-output' pragmas, or give "
                             "the testbench an AC source")

    op, source, op_notes = _operating_point(block.circuit, table)
    if op is None and not any(d.kind in NONLINEAR for d in block.circuit.devices):
        source, op_notes = "linear", []  # nothing to linearise: the small-signal solve needs no bias
    data["operating_point"] = source
    data["notes"] += op_notes
    curves: list[Curve] = []
    stages = _stages(block, op, intent)
    data["stages"] = stages
    if op is None and any(d.kind in NONLINEAR for d in block.circuit.devices):
        data["notes"].append("no numbers: the operating point could not be had, so impedances and gains "
                             "are not computed (roles are from the topology)")
        data["ports"] = [_port_stub(p) for p in ports]
        from lintamp.engine.stage_paths import block_paths
        data["paths"], path_notes = block_paths(block.circuit, intent)
        data["notes"] += path_notes
    else:
        solves = Solves(block.circuit, op)
        try:
            run = _Audit(block, solves, loads, {s["circuit_device"]: s for s in stages}, band.freq_hz,
                         netlist, curves, plots)
            _numbers(data, run, ports)
            from lintamp.engine.stage_paths import attach_inspection
            attach_inspection(data["paths"], block.circuit, intent, op)
            _untrusted_corners(data, op, source)
        except Exception as exc:  # engine trouble on odd input must not lose the rest of the sheet
            from lintamp.engine.small_signal import SmallSignalError
            if not isinstance(exc, (SmallSignalError, ArithmeticError, ValueError, RuntimeError,
                                    np.linalg.LinAlgError)):
                raise
            data["notes"].append(f"no small-signal numbers: {exc}")
            data["ports"] = data["ports"] or [_port_stub(p) for p in ports]
        data["notes"] += [n for n in solves.notes if n not in data["notes"]]
    _attach_findings(data, block)
    from lintamp.engine import shared_factor
    shared_factor.clear()  # the whole-network LUs of this sheet are not needed by the next
    return Sheet(data, curves, files_read=list(netlist.files))


def _sev(label: str):
    from lintamp.findings import Severity
    return Severity.parse(label)


def _unevaluated_devices(circuit, table) -> dict[str, str]:
    """Nonlinear devices whose numbers would be SPICE defaults, not the designer's: a PDK
    subcircuit whose library is absent, a model card that is not there (device -> why)."""
    from lintamp.engine.engine_kinds import NONLINEAR
    out = {}
    for dev in circuit.devices:
        if dev.kind in NONLINEAR and dev.model is None and not (table and dev.name in table):
            out[dev.name] = dev.kind_detail if "PDK" in (dev.kind_detail or "") else "its model card is not in the files read"
    return out


def _operating_point(circuit, table):
    from lintamp.rulekit.impedance_report import resolve_operating_point
    unevaluated = _unevaluated_devices(circuit, table)
    if unevaluated:
        shown = ", ".join(f"{n} ({why})" for n, why in list(unevaluated.items())[:6])
        more = f" and {len(unevaluated) - 6} more" if len(unevaluated) > 6 else ""
        return None, "assumed", [f"no operating point: devices lintamp cannot evaluate: {shown}{more}"]
    try:
        return resolve_operating_point(circuit, table)
    except (ValueError, RuntimeError, ArithmeticError) as exc:
        return None, "assumed", [f"no operating point: {exc}"]


def _stages(block: _Block, op, intent) -> list[dict]:
    from lintamp.engine.stages import composite_stages, recognise_stages

    out = []
    unevaluated = _unevaluated_devices(block.circuit, None)
    for st in composite_stages(recognise_stages(block.circuit, op, **intent.stage_hints())):
        if not st.device.startswith(block.prefix):
            continue
        row = {"device": st.device[len(block.prefix):], "circuit_device": st.device, "role": str(st.role),
               "label": st.label[len(block.prefix):] if st.label.startswith(block.prefix) else st.label,
               "units": [u[len(block.prefix):] for u in st.units],
               "related": [r[len(block.prefix):] if r.startswith(block.prefix) else r for r in st.related],
               "region": st.region or None, "gm_s": st.gm_s,
               "ro_ohm": st.ro_ohm if st.ro_ohm is None or math.isfinite(st.ro_ohm) else None,
               "findings": []}
        dop = op.devices.get(st.device) if op is not None else None
        if dop is None:
            row["gm_s"] = row["ro_ohm"] = None  # a number lintamp does not trust is not printed
            row["unevaluated"] = unevaluated.get(st.device) or (
                "no operating point" if op is None else "not in the operating point")
        if dop is not None:
            v = dop.values
            if dop.kind in MOS:
                row.update(gmb_s=v.get("gmb_s"), id_a=v.get("ids_a"), vgs_v=v.get("vgs_v"),
                           vds_v=v.get("vds_v"), vdsat_v=v.get("vdsat_v"))
                if v.get("vds_v") is not None and v.get("vdsat_v") is not None:
                    row["margin_v"] = abs(v["vds_v"]) - v["vdsat_v"]
            else:
                row.update(id_a=v.get("ic_a"), vbe_v=v.get("vbe_v"), vce_v=v.get("vce_v"),
                           rpi_ohm=v.get("rpi_ohm"), beta=v.get("beta_ac"))
                if v.get("vce_v") is not None:
                    row["margin_v"] = v["vce_v"] - BJT_VCE_SAT_V
                    row["margin_ref"] = "V_CE - 0.3 V"
        out.append(row)
    return out


def _port_stub(port: Port) -> dict:
    return {"net": port.net, "circuit_net": port.circuit_net, "kind": port.kind,
            "decided_by": port.decided_by, "stimulus": port.stimulus,
            "z_ohm": {"mag": None, "phase_deg": None}, "z_band_ohm": None, "stage": None,
            "findings": []}


def _input_detach(circuit, port: Port) -> list[str]:
    """The stimulus, and any voltage source that holds the input net at AC ground."""
    idx = circuit.find_net(port.circuit_net)
    out = [port.stimulus] if port.stimulus else []
    for dev in circuit.devices:
        if dev.kind == "vsource" and idx in dev.nodes[:2] and 0 in dev.nodes[:2] and dev.name not in out:
            out.append(dev.name)
    return out


def _stage_label(stage_rows: dict, device: str | None) -> str | None:
    if device is None:
        return None
    row = stage_rows.get(device)
    return f"{row['role']} ({row['device']})" if row else device


def _numbers(data, run: _Audit, ports):
    from lintamp.engine.looking_into import explain_node

    block, solves, stage_rows, band_hz, curves, plots = (run.block, run.solves, run.stage_rows, run.band_hz,
                                                         run.curves, run.plots)
    circuit = block.circuit
    detach_of = {p.net: (_input_detach(circuit, p) if p.is_input else list(run.loads)) for p in ports}
    span = _plot_span(run.netlist, band_hz)
    freqs = run.freqs = log_grid(span[0], span[1], PLOT_POINTS_PER_DECADE) if plots else None
    port_rows = []
    for port in ports:
        detach = detach_of[port.net]
        row = _port_stub(port)
        z_dc = solves.z(port.circuit_net, 0.0, detach)
        row["z_ohm"] = z_json(z_dc)
        row["detached"] = [d[len(block.prefix):] if d.startswith(block.prefix) else d for d in detach]
        if band_hz:
            row["z_band_ohm"] = z_json(solves.z(port.circuit_net, band_hz, detach))
        # the forms are read at DC, or in the band where DC sees an open (a coupling capacitor)
        f_form = band_hz if (z_dc is None and band_hz) else 0.0
        z_form = solves.z(port.circuit_net, f_form, detach) if f_form else z_dc
        row["formula_freq_hz"] = f_form
        expl = explain_node(circuit, port.circuit_net, f_form, solves.op, detach)
        best = _main_branch(circuit, expl.branches)
        if best is not None:
            dev = best.elements[0] if best.elements else None
            row["device"] = dev[len(block.prefix):] if dev and dev.startswith(block.prefix) else dev
            row["stage"] = _stage_label(stage_rows, dev) or best.via
            row["via"] = best.via
            row["formula"] = best.formula
            row["formula_ohm"] = mag_or_none(best.z_ohm) if best.z_ohm is not None else None
            row["terms"] = forms.clean_terms(best.terms)
            row["parallel"] = [{"via": b.via, "formula": b.formula, "z_ohm": mag_or_none(b.z_mna_ohm)}
                               for b in expl.branches if b is not best and mag_or_none(b.z_mna_ohm) is not None]
            share = mag_or_none(best.z_mna_ohm)
            row["branch_ohm"] = share
            err = form_error_pct(best.z_ohm, best.z_mna_ohm) if share is not None else None
            row["formula_error_pct"], row["formula_exact"] = err, err is not None and err <= FORM_EXACT_PCT
            short = forms.port_short_form(best.via, best.terms, dev or "")
            if short:
                err = form_error_pct(short[1], share)
                if err is not None and err <= forms.APPROX_SHOWN_PCT:  # a wrong "~" line is no help
                    row["approx"], row["approx_ohm"] = short
                    row["approx_error_pct"] = err
            row.update(forms.port_parallel_form(circuit, expl.branches, z_form, block.prefix))
            z_formula, z_short = row.pop("_z", None), row.pop("_z_short", None)
            err = form_error_pct(z_formula, z_form)
            row["port_formula_error_pct"] = err
            row["port_formula_exact"] = err is not None and err <= FORM_EXACT_PCT
            if row.get("port_approx") is not None:
                err = form_error_pct(z_short, z_form)
                if err is None or err > forms.APPROX_SHOWN_PCT:
                    row.pop("port_approx"), row.pop("port_approx_ohm", None)
                else:
                    row["port_approx_error_pct"] = err
        if plots:
            values = sweep(lambda f, n=port.circuit_net, d=tuple(detach): _z_or_open(solves, n, f, d), freqs)
            curve = Curve(f"|Z| at {port.net} ({port.kind})", "impedance", "Ω", freqs, values,
                          band_hz=band_hz, key=f"port-{port.net}")
            solver0 = solves.solver(0.0, detach)
            k = solver0.unknown(port.circuit_net)
            poles = poles_hz(solver0.admittance_matrix(), solves.solver(1.0, detach).admittance_matrix(),
                             k, k, lambda f, n=port.circuit_net, d=tuple(detach): _z_or_open(solves, n, f, d))
            curve.poles_hz = poles or []
            row["poles_hz"] = poles
            curves.append(curve)
        port_rows.append(row)
    data["ports"] = port_rows
    inputs = [p for p in ports if p.is_input]
    outputs = [p for p in ports if not p.is_input]
    for pin in inputs:
        for pout in outputs:
            if len(data["paths"]) >= MAX_PATHS:
                data["notes"].append(f"only the first {MAX_PATHS} input/output pairs are shown")
                return
            data["paths"].append(_path(run, pin, pout, detach_of[pin.net]))


def _z_or_open(solves, net, f, detach):
    z = solves.solver(f, detach).z(net)
    return z


def _main_branch(circuit, branches):
    """The transistor that sets the port (lowest exact share), else the lowest branch."""
    kinds = {d.name: d.kind for d in circuit.devices}
    active = [b for b in branches if b.elements and kinds.get(b.elements[0]) in TRANSISTORS]
    pool = active or [b for b in branches if b.elements]
    return pool[0] if pool else None  # the engine sorts branches by exact share


def _plot_span(netlist, band_hz):
    ac = ac_sweep_hz(netlist)
    if ac is not None:
        return max(ac[0], 1e-3), ac[1]
    if band_hz:
        return max(band_hz / 1e4, 1e-3), band_hz * 1e2
    return 1.0, 1e10


def _path_probe(solves, pin: Port, pout: Port, detach, out_current: bool):
    """H(f) for the path, in its unit (see GAIN_UNITS)."""
    def probe(f_hz: float) -> complex:
        if pin.signal == "current":
            s = solves.solver(f_hz, detach)
            v = s.transfer(pin.circuit_net, pout.circuit_net)
        else:
            s = solves.solver(f_hz, detach, driven=pin.circuit_net)
            v = s.gain_to(pout.circuit_net)
        if out_current:  # Norton: short-circuit output current = V_open / Z_out
            z = s.z(pout.circuit_net)
            return v / z if abs(z) > 0 else 0j
        return v
    return probe


def _path(run: _Audit, pin: Port, pout: Port, detach) -> dict:
    from lintamp.engine.looking_into import ac_ground_nets

    solves, band_hz, freqs, curves, plots = run.solves, run.band_hz, run.freqs, run.curves, run.plots
    circuit = run.circuit
    kind, unit = GAIN_UNITS[(pin.signal, pout.signal)]
    out_current = pout.signal == "current"
    probe = _path_probe(solves, pin, pout, tuple(detach), out_current)
    h0 = probe(0.0)
    row = {"from": pin.net, "to": pout.net, "kind": kind,
           "gain": {"mag": abs(h0), "unit": unit, "freq_hz": 0.0,
                    "phase_deg": math.degrees(math.atan2(h0.imag, h0.real)), "sign": 1 if h0.real >= 0 else -1},
           "notes": []}
    if out_current:
        row["notes"].append("output current is the short-circuit (Norton) current at the output")
    if band_hz:
        hb = probe(band_hz)
        row["gain_band"] = {"mag": abs(hb), "unit": unit, "freq_hz": band_hz,
                            "phase_deg": math.degrees(math.atan2(hb.imag, hb.real))}
    corner = find_corners(probe, h0)
    row["f3db_hz"] = corner.high_hz
    row["f3db_low_hz"] = corner.low_hz
    row["f3db_reference"] = corner.reference
    if corner.high_hz is None and corner.reference == "dc":
        h1 = probe(1.0)
        if abs(h1) < abs(h0) / math.sqrt(2) or abs(h1) > abs(h0) * math.sqrt(2):
            row["notes"].append(
                "the gain at DC and above 1 Hz differ (a coupling capacitor changes the load "
                "below 1 Hz); no -3 dB point between 1 Hz and 1 THz")
        else:
            row["notes"].append("no -3 dB point between 1 Hz and 1 THz (no capacitance limits this path)")
    # poles of the excitation the path uses
    if pin.signal == "current":
        s0, s1 = solves.solver(0.0, tuple(detach)), solves.solver(1.0, tuple(detach))
    else:
        s0 = solves.solver(0.0, tuple(detach), driven=pin.circuit_net)
        s1 = solves.solver(1.0, tuple(detach), driven=pin.circuit_net)
    poles = None
    if not out_current:
        poles = poles_hz(s0.admittance_matrix(), s1.admittance_matrix(), s0.unknown(pin.circuit_net),
                         s0.unknown(pout.circuit_net), probe)
    row["poles_hz"] = poles
    # the chain and its interfaces
    acg = ac_ground_nets(circuit, detach)
    i_in, i_out = circuit.find_net(pin.circuit_net), circuit.find_net(pout.circuit_net)
    hops = find_chain(circuit, acg, i_in, i_out)
    row["chain"], row["interfaces"] = [], []
    if hops is None:
        row["notes"].append(f"no signal chain from {pin.net} to {pout.net} through the elements "
                            "(the gain above is whatever the MNA solve finds)")
    else:
        _chain(run, row, hops, pin, pout, detach)
    if plots:
        values = sweep(probe, freqs)
        curves.append(Curve(f"{kind} {pin.net} → {pout.net}", "gain", unit, freqs, values,
                            poles_hz=poles or [], f3db_hz=corner.high_hz, band_hz=band_hz,
                            key=f"path-{pin.net}-{pout.net}"))
    return row


def _local(block, name: str) -> str:
    return name[len(block.prefix):] if name.startswith(block.prefix) else name


FORM_EXACT_PCT = 2.0  # a printed form within this of the exact number reads "="; beyond it "≈ (error)"


def _signed_real(value):
    """A real number as it is; a complex one as its magnitude with the sign of its real part."""
    if value is None or not isinstance(value, complex):
        return value
    return abs(value) if value.real >= 0 else -abs(value)


def form_error_pct(value, exact) -> float | None:
    """| |value| - |exact| | / |exact| in per cent (|value - exact| when their real parts point
    opposite ways); None when either is missing or not finite."""
    if value is None or exact is None:
        return None
    try:
        value, exact = complex(value), complex(exact)
    except (TypeError, ValueError):
        return None
    if not (math.isfinite(abs(value)) and math.isfinite(abs(exact))) or abs(exact) == 0:
        return None
    # the sheet prints a magnitude with the sign of the real part: that is what is compared,
    # unless the two point opposite ways
    if value.real * exact.real >= 0 or min(abs(value.real) / abs(value or 1), abs(exact.real) / abs(exact)) < 0.5:
        return 100.0 * abs(abs(value) - abs(exact)) / abs(exact)
    return 100.0 * abs(value - exact) / abs(exact)


@dataclass
class StageGain:
    """One row of a path's chain: the element the signal crosses, its gain (MNA) and the
    textbook form that explains it, with that form's error against the gain."""

    device: str
    role: str
    from_net: str
    to_net: str
    enters_at: str
    gain: dict
    formula: str | None = None
    formula_value: float | None = None
    formula_phase_deg: float | None = None
    formula_error_pct: float | None = None
    formula_exact: bool | None = None
    formula_none: str | None = None  # why there is no form
    terms: dict | None = None
    spans: list[str] | None = None  # a form over several rows (the mirror-loaded pair)
    spans_to: str | None = None
    span_gain: dict | None = None
    in_loop_through: str | None = None

    def set_form(self, text: str, value, exact) -> None:
        self.formula, self.formula_value = text, _signed_real(value)
        if isinstance(value, complex) and abs(value.imag) > 1e-9 * abs(value):
            self.formula_phase_deg = math.degrees(cmath.phase(value))
        self.formula_error_pct = form_error_pct(value, exact)
        self.formula_exact = self.formula_error_pct is not None and self.formula_error_pct <= FORM_EXACT_PCT

    def drop_form(self, why: str) -> None:
        self.formula = self.formula_value = self.formula_phase_deg = None
        self.formula_error_pct = self.formula_exact = self.terms = None
        self.formula_none = why

    def to_json(self) -> dict:
        out = {"device": self.device, "role": self.role, "from": self.from_net, "to": self.to_net,
               "enters_at": self.enters_at, "gain": self.gain}
        for key in ("formula", "formula_value", "formula_phase_deg", "formula_error_pct", "formula_exact",
                    "formula_none", "terms", "spans", "spans_to", "span_gain", "in_loop_through"):
            value = getattr(self, key)
            if value is not None:
                out[key] = value
        return out


class _ChainReading:
    """The small-signal solve a chain is read from: node phasors at one frequency."""

    def __init__(self, run: _Audit, row: dict, pin: Port, detach):
        self.run = run
        self.base = tuple(detach)
        # a voltage input is an ideal voltage source (an AC short) for every impedance the
        # chain reads; a current input is an ideal current source (open): detached
        self.seen = () if pin.signal == "voltage" else self.base
        self.current_in = pin.signal == "current"
        # read at DC, or in the band where a coupling capacitor blocks DC (the DC gain is
        # below the band's by more than 3 dB); the forms take impedances there
        band = run.band_hz
        self.f_hz = float(band) if band and row.get("gain_band") and \
            row["gain"]["mag"] < row["gain_band"]["mag"] / math.sqrt(2) else 0.0
        self.solver = run.solves.solver(self.f_hz, self.base, driven=None if self.current_in else pin.circuit_net)
        self.x = self.solver.solve_injection(pin.circuit_net) if self.current_in else None
        self._v: dict[int, complex] = {}

    def v(self, net_idx: int) -> complex:
        if net_idx not in self._v:
            net = self.run.circuit.nets[net_idx]
            self._v[net_idx] = self.solver.voltage(self.x, net) if self.x is not None else self.solver.gain_to(net)
        return self._v[net_idx]

    def ratio(self, hops, first: int, last: int) -> complex:
        """v(to of hop ``last``) over v(from of hop ``first``) (per ampere from a current input)."""
        den = 1.0 if (first == 0 and self.current_in) else self.v(hops[first].from_net)
        return self.v(hops[last].to_net) / den if abs(den) > 0 else 0j

    def z_near(self, net_idx: int, gone=()) -> complex | float:
        return _z_near(self.run.solves, net_idx, self.run.circuit.nets, self.seen + tuple(gone), self.f_hz)


def _stage_gain(run: _Audit, reading: _ChainReading, hops, k: int):
    """The chain row of hop ``k`` and its factor in the path's product: (text, value), or
    None when the stage has no form."""
    hop = hops[k]
    circuit = run.circuit
    dev = circuit.device(hop.device)
    first_current = k == 0 and reading.current_in
    gain = reading.ratio(hops, k, k)
    stage = StageGain(run.local(hop.device), run.stage_rows.get(hop.device, {}).get("role", dev.kind),
                      run.local(circuit.nets[hop.from_net]), run.local(circuit.nets[hop.to_net]), hop.entry_word,
                      {"mag": abs(gain), "unit": "ohm" if first_current else "V/V",
                       "sign": 1 if gain.real >= 0 else -1, "freq_hz": reading.f_hz})
    op = run.solves.op
    dop = op.devices.get(hop.device) if op is not None else None
    active = hop.kind in TRANSISTORS
    if not active:
        # a passive element on the way (source resistance, coupling capacitor, divider):
        # its share is the MNA ratio of the two nets, shown as such
        return stage, (f"v({stage.to_net})/v({stage.from_net}) across {stage.device} (MNA)", gain)
    if dop is None:
        return stage, None
    near = {"out": reading.z_near(dev.nodes[0], (hop.device,)),
            "common": reading.z_near(dev.nodes[2], (hop.device,))}
    if dev.kind in BJT:
        near["control"] = reading.z_near(dev.nodes[1], (hop.device,))
    if first_current:
        near["source"] = reading.z_near(hop.from_net, (hop.device,))
        if hop.entry in ("g", "b") and hop.exit in ("d", "c"):
            near.update(_feedback_resistor(circuit, run.solves, dev, circuit.nets, reading.seen, reading.f_hz))
    body_at_source = hop.kind in MOS and len(dev.nodes) > 3 and dev.nodes[3] == dev.nodes[2]
    form = forms.hop_form(hop, dop.values, near, first_current, body_at_source=body_at_source)
    if form is None:
        return stage, None
    text, value, terms = form
    if value is not None and hop.exit in ("d", "c") and hop.entry in ("s", "e") \
            and dev.nodes[1] != 0 and abs(reading.v(dev.nodes[1])) > 1e-3 * abs(reading.v(hop.from_net)):
        stage.drop_form("its gate/base carries signal too (not a common-gate/base stage)")
        return stage, None
    stage.set_form(text, value, gain)
    stage.terms = forms.clean_terms(terms)
    return stage, ((text, value) if value is not None else None)


def _chain(run: _Audit, row: dict, hops, pin: Port, pout: Port, detach):
    block, loads, solves, band_hz = run.block, run.loads, run.solves, run.band_hz
    circuit = block.circuit
    base = tuple(detach)
    name = circuit.nets
    reading = _ChainReading(run, row, pin, detach)
    seen = reading.seen
    row["chain_freq_hz"] = reading.f_hz
    stages, factors = [], []  # factors: (text, value), "inside" (a pair's inner row), None (no form)
    for k in range(len(hops)):
        stage, factor = _stage_gain(run, reading, hops, k)
        stages.append(stage)
        factors.append(factor)
    for k in range(len(hops)):
        pair = _mirror_loaded_pair(circuit, hops, k, solves.op, run.stage_rows, reading.z_near)
        if pair is None:
            continue
        end, text, value, devices, other_gate = pair
        exact = reading.ratio(hops, k, end)
        stage = stages[k]
        stage.terms = None
        stage.set_form(text, value, exact)
        stage.spans, stage.spans_to = [run.local(d) for d in devices], run.local(name[hops[end].to_net])
        stage.span_gain = {"mag": abs(exact), "unit": "V/V", "sign": 1 if exact.real >= 0 else -1}
        factors[k] = (text, value)
        if other_gate != 0 and abs(reading.v(other_gate)) > 1e-3 * abs(reading.v(hops[k].from_net)):
            # the pair's other gate carries signal: a feedback loop closes through it, and the
            # textbook form is the open-loop gain, not this node ratio
            stage.in_loop_through = run.local(name[other_gate])
            factors[k] = None
        for m in range(k + 1, end + 1):
            stages[m].drop_form(f"inside the mirror-loaded pair (the form at {stage.device})")
            factors[m] = "inside"
        break
    row["chain"] = [st.to_json() for st in stages]
    loops = [st.in_loop_through for st in stages if st.in_loop_through]
    if loops:
        row["notes"].append(f"the chain sits inside a feedback loop closed through {', '.join(loops)}: "
                            "a stage's textbook form is its open-loop gain, the gains above are in the loop")
    _product_form(row, factors, reading.ratio(hops, 0, len(hops) - 1) if hops else None, reading.f_hz)
    # interfaces: the input net, every net between two stages, the output net
    nets = [hops[0].from_net] + [h.to_net for h in hops] if hops else []
    for k, net_idx in enumerate(nets):
        receiver = [hops[k].device] if k < len(hops) else list(loads)
        role = "input" if k == 0 else ("output" if k == len(hops) else "internal")
        if role == "input":
            signal = pin.signal
        elif role == "output":
            signal = pout.signal
        else:
            signal = "current" if hops[k].entry in ("s", "e") else "voltage"
        net = name[net_idx]
        if role == "input":
            # the testbench source (ideal: open for a current, a short for a voltage) drives
            # the whole block as the port sees it
            entry = {"net": _local(block, net), "role": role, "signal": signal,
                     "driver": [_local(block, pin.stimulus)] if pin.stimulus else ["ideal source (assumed)"],
                     "receiver": ["the block (Z_in of the port)"],
                     "z_out_ohm": None if signal == "current" else 0.0,
                     "z_in_ohm": mag_or_none(solves.z(net, 0.0, base))}
            if band_hz:
                entry["z_out_band_ohm"] = entry["z_out_ohm"]
                entry["z_in_band_ohm"] = mag_or_none(solves.z(net, band_hz, base))
            entry.update(_verdict(signal, entry["z_out_ohm"], entry["z_in_ohm"]))
            row["interfaces"].append(entry)
            continue
        if role == "output" and receiver:
            # a load reached through a coupling element (cout into an earpiece) is received
            # through that element: it belongs to the receiving side
            load_nets = {n for d in circuit.devices if d.name in receiver for n in d.nodes} - {0}
            receiver = receiver + [d.name for d in circuit.devices
                                   if net_idx in d.nodes and d.name not in receiver
                                   and d.name not in seen and len(d.nodes) == 2
                                   and d.kind in ("capacitor", "resistor", "inductor")
                                   and (set(d.nodes) - {net_idx}) & load_nets]
        others = [d.name for d in circuit.devices if net_idx in d.nodes and d.name not in receiver
                  and d.name not in seen]
        z_out = solves.z(net, 0.0, seen + tuple(receiver))
        z_in = solves.z(net, 0.0, seen + tuple(others)) if receiver else None
        entry = {"net": _local(block, net), "role": role, "signal": signal,
                 "driver": [_local(block, o) for o in others],
                 "receiver": [_local(block, r) for r in receiver],
                 "z_out_ohm": mag_or_none(z_out), "z_in_ohm": mag_or_none(z_in)}
        if band_hz:
            entry["z_out_band_ohm"] = mag_or_none(solves.z(net, band_hz, seen + tuple(receiver)))
            entry["z_in_band_ohm"] = (mag_or_none(solves.z(net, band_hz, seen + tuple(others)))
                                      if receiver else None)
            # judged in the signal band, where an AC-coupled load is connected
            entry.update(_verdict(signal, entry["z_out_band_ohm"], entry["z_in_band_ohm"]))
        else:
            entry.update(_verdict(signal, entry["z_out_ohm"], entry["z_in_ohm"]))
        row["interfaces"].append(entry)


def _product_form(row: dict, factors, exact, f_hz: float) -> None:
    """The path's form: the product of every stage's form (a passive element's MNA ratio
    included), when every stage has one, with its error against the path's gain."""
    if not factors or any(f is None for f in factors):
        return
    used = [f for f in factors if f != "inside"]
    value = 1.0
    for _text, factor in used:
        value *= factor
    row["formula"] = " × ".join(f"[{text}]" for text, _ in used)
    row["formula_value"] = abs(value)
    row["formula_freq_hz"] = f_hz
    err = form_error_pct(value, exact)
    row["formula_error_pct"] = err
    row["formula_exact"] = err is not None and err <= FORM_EXACT_PCT


def _mirror_loaded_pair(circuit, hops, k, op, stage_rows, z_load_of):
    """The mirror-loaded differential pair entered at hop ``k`` (Razavi sec. 5.3.3):
    (last hop index, form, value, devices) or None.

    The input device's gate is the hop's from-net; its partner shares the tail; one
    side's drain is diode-connected and gates a mirror output device on the other
    side's drain, which is where the chain leaves the pair (one or two hops later).
    The gain is g_m1 (r_o2 || r_o4), positive from the diode side's gate; ``z_load_of(net,
    devices)`` gives what else loads the output net (Z_L, an open at DC as a rule).
    """
    hop = hops[k]
    if op is None or hop.entry != "g" or hop.kind not in MOS:
        return None
    a = circuit.device(hop.device)
    row = stage_rows.get(hop.device) or {}
    if row.get("role") != "differential pair" or not row.get("related"):
        return None
    b = circuit.device(row["circuit_related"][0] if row.get("circuit_related") else row["related"][0])
    if b is None or b.nodes[2] != a.nodes[2]:
        return None
    for out_dev, diode_side in ((b, a), (a, b)):
        node_out, node_diode = out_dev.nodes[0], diode_side.nodes[0]
        diode = [d for d in circuit.devices if d.kind in MOS and d.nodes[0] == node_diode
                 and d.nodes[1] == node_diode and d.name not in (a.name, b.name)]
        mirror = [d for d in circuit.devices if d.kind in MOS and d.nodes[0] == node_out
                  and d.nodes[1] == node_diode and d.name not in (a.name, b.name)]
        if not diode or not mirror:
            continue
        end = next((m for m in range(k, min(k + 2, len(hops))) if hops[m].to_net == node_out), None)
        if end is None:
            return None
        values = {n: op.devices[n].values for n in (a.name, out_dev.name, mirror[0].name) if n in op.devices}
        if len(values) < len({a.name, out_dev.name, mirror[0].name}):
            return None
        gm1 = values[a.name]["gm_s"]
        ro2, ro4 = values[out_dev.name]["ro_ohm"], values[mirror[0].name]["ro_ohm"]
        sign = 1.0 if out_dev is b else -1.0
        names = (a.name, out_dev.name, mirror[0].name)
        z_load = z_load_of(node_out, (out_dev.name, mirror[0].name))
        text = ("g_m1 (r_o2 || r_o4" if sign > 0 else "-g_m1 (r_o2 || r_o4")
        value = sign * gm1 * parallel(ro2, ro4, z_load)
        text += (")" if z_load == math.inf else " || Z_L)") + \
            f", mirror-loaded pair: 1 = {names[0]} (input), 2 = {names[1]} (output side), 4 = {names[2]} (mirror)"
        if z_load != math.inf:
            text += f", Z_L = the rest of {circuit.nets[node_out]}"
        other_gate = b.nodes[1] if out_dev is b or True else a.nodes[1]
        return end, text, value, [a.name, out_dev.name, mirror[0].name, diode[0].name], other_gate
    return None


def _feedback_resistor(circuit, solves, dev, names, base, f_hz) -> dict:
    """R_F and the two nets' impedances without the device and R_F, for a stage with one
    resistor from its output to its control terminal (shunt feedback); {} otherwise."""
    out, ctl = dev.nodes[0], dev.nodes[1]
    rf = [d for d in circuit.devices if d.kind == "resistor" and d.name not in base
          and set(d.nodes[:2]) == {out, ctl} and out != ctl]
    if len(rf) != 1:
        return {}
    gone = base + (dev.name, rf[0].name)
    return {"R_F": float(rf[0].value), "R_F_name": rf[0].name,
            "out_nf": _z_near(solves, out, names, gone, f_hz),
            "control_nf": _z_near(solves, ctl, names, gone, f_hz)}


def _z_near(solves, net_idx: int, names, detach, freq_hz: float = 0.0):
    """The impedance a terminal sees (0 at AC ground, inf for an open); real at DC,
    complex in the band when it is not (a capacitance matters there)."""
    if net_idx == 0 or solves.solver(freq_hz, detach).unknown(names[net_idx]) < 0:
        return 0.0
    z = solves.z(names[net_idx], freq_hz, detach)
    if z is None:
        return math.inf
    z = complex(z)
    return z.real if abs(z.imag) <= 1e-9 * abs(z.real) else z


def _verdict(signal: str, z_out, z_in) -> dict:
    """Voltage wants Z_out << Z_in, current wants Z_in << Z_out (analog-knowledge 3)."""
    inf = math.inf
    zo = inf if z_out is None else z_out
    zi = inf if z_in is None else z_in
    if signal == "voltage":
        ratio = 0.0 if zi == inf and zo < inf else (zo / zi if zi > 0 else inf)
        kept = 1.0 if zi == inf and zo < inf else (zi / (zi + zo) if zo < inf and zi < inf else 0.0)
        want = "Z_out << Z_in"
    else:
        ratio = 0.0 if zo == inf and zi < inf else (zi / zo if zo > 0 else inf)
        kept = 1.0 if zo == inf and zi < inf else (zo / (zi + zo) if zo < inf and zi < inf else 0.0)
        want = "Z_in << Z_out"
    if zo == inf and zi == inf:
        return {"ratio": None, "kept": None, "suits": want, "verdict": "both open: the level is undefined"}
    ok = ratio <= INTERFACE_RATIO_LIMIT
    return {"ratio": ratio if math.isfinite(ratio) else None, "kept": kept, "suits": want,
            "verdict": "suits a " + signal + " signal" if ok else
            f"loses {100 * (1 - kept):.0f} % of the {signal} signal ({want} not met)"}


def _attach_findings(data: dict, block: _Block) -> None:
    """Each finding's fingerprint next to the port or stage it names."""
    by_net: dict[str, list[str]] = {}
    by_dev: dict[str, list[str]] = {}
    cell = block.cell.name
    for f in data["findings"]:
        if (f.get("cell") or "") != (cell if not block.cell.is_top else ""):
            continue
        for net in {f["subject"], *f["nets"]}:
            by_net.setdefault(net.lower(), []).append(f["fingerprint"])
        for dev in {f["subject"], *f["elements"]}:
            by_dev.setdefault(dev.lower(), []).append(f["fingerprint"])
    for port in data["ports"]:
        port["findings"] = sorted(set(by_net.get(port["net"], [])))
    for stage in data["stages"]:
        stage["findings"] = sorted(set(by_dev.get(stage["device"], [])))
