"""The audit deck family against ngspice-39: the numbers each deck's sheet prints and
what ngspice-39 computes for the same deck text (``op`` and ``ac`` analyses).

Used by ``tests/test_audit_family.py`` and, for the table in a report, by
``python3 tests/family_reference.py`` (run from the repository root).
"""

from __future__ import annotations

import math
import re
import sys
from dataclasses import dataclass, field
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

import ngspice_harness as ng  # noqa: E402

FAMILY_DIR = HERE / "fixtures" / "audit_family"
DC_PROBE_HZ = 1e-9  # ngspice AC "at DC": a 1 uF capacitor is 1.6e14 ohm there
OPEN_OHM = 1e10


def family() -> list[Path]:
    return sorted(FAMILY_DIR.glob("*.sp"))


def element_lines_without(deck: str, names) -> str:
    """The deck without the element cards named in ``names``."""
    drop = {n.lower() for n in names}
    keep = [line for line in deck.splitlines()
            if not (line.strip() and line.split()[0].lower() in drop)]
    return "\n".join(keep)


def ac_off(deck: str) -> str:
    """Every independent source's AC spec removed (the probe brings its own)."""
    out = []
    for line in deck.splitlines():
        if line[:1].lower() in "vi" and not line.startswith("."):
            line = re.sub(r"(?i)\s+ac\s+[-+0-9.eE]+\s*$", "", line)
        out.append(line)
    return "\n".join(out)


DETACH_HENRY = 1e20  # in series with a detached element: a DC short, an AC open (6e11 ohm at 1 nHz)


def detached_for_ac(deck: str, names) -> str:
    """Each element in ``names`` behind a huge series inductor: the DC operating point
    keeps it (bias, supply, load), the small-signal circuit does not (lintamp's detach)."""
    drop = {n.lower() for n in names}
    out = []
    for line in deck.splitlines():
        parts = line.split()
        if parts and parts[0].lower() in drop and parts[0][:1].lower() in "rclvi":
            name, first = parts[0], parts[1]
            out.append(" ".join([name, f"{first}_ldetach_{name}"] + parts[2:]))
            out.append(f"ldetach_{name} {first}_ldetach_{name} {first} {DETACH_HENRY:g}")
        else:
            out.append(line)
    return "\n".join(out)


def ngspice_z(deck: str, node: str, detached, freq_hz: float) -> complex:
    """ngspice-39: driving-point impedance at ``node`` with ``detached`` out of the AC circuit."""
    text = ac_off(detached_for_ac(deck, detached))
    return ng.impedance(text, node, (max(freq_hz, DC_PROBE_HZ),))[0]


def ngspice_node_phasors(deck: str, nets, freq_hz: float) -> dict[str, complex]:
    """ngspice-39 AC analysis with the deck's own stimulus: every net's phasor."""
    f = max(freq_hz, DC_PROBE_HZ)
    cmds = [f"ac lin 1 {f:.12g} {f:.12g}"]
    for k, n in enumerate(nets):
        cmds += [f"let r{k} = vr({n})", f"let i{k} = vi({n})", f"print r{k}", f"print i{k}"]
    raw = ng.run_deck(deck, cmds)
    return {n: complex(raw[f"r{k}"], raw[f"i{k}"]) for k, n in enumerate(nets)}


def ngspice_op(deck: str, nets) -> dict[str, float] | None:
    """ngspice-39 ``op`` node voltages, None when ngspice finds no operating point."""
    try:
        raw = ng.operating_point(deck, nets)
    except RuntimeError:
        return None
    return {n: raw[n] for n in nets if n in raw}


def lintamp_op(path: Path):
    from lintamp.api import default_config, load_design, read_options
    from lintamp.circuit.flatten import flatten
    from lintamp.engine.operating_point import solve_operating_point
    from lintamp.netlist.parser import parse_file

    config = default_config()
    netlist = parse_file(path, read_options(path, config, []))
    circuit = flatten(load_design(netlist, config))
    return circuit, solve_operating_point(circuit)


def rel_err(value, exact) -> float:
    """Relative error of a printed value (a magnitude with the sign of its real part)
    against the exact phasor: magnitudes compared, or the full difference when the
    two point opposite ways."""
    value, exact = complex(value), complex(exact)
    if exact == 0:
        return 0.0 if value == 0 else math.inf
    if value.real * exact.real >= 0 or abs(exact.real) < 0.5 * abs(exact):
        return abs(abs(value) - abs(exact)) / abs(exact)
    return abs(value - exact) / abs(exact)


@dataclass
class DeckResult:
    deck: str
    op_max_dev_mv: float | None = None
    op_method: str = ""
    ngspice_solves: bool = True
    checks: list[tuple[str, float, float, float]] = field(default_factory=list)  # what, lintamp, ngspice, err
    forms: list[tuple[str, float, float, float, bool]] = field(default_factory=list)  # what, value, exact, err, exact?
    open_checks: list[tuple[str, float]] = field(default_factory=list)  # what, |Z| ngspice for an open
    signs: list[tuple[str, int, int]] = field(default_factory=list)  # what, lintamp's sign, ngspice's

    def worst(self) -> float:
        return max((c[3] for c in self.checks), default=0.0)


def _signed(gain: dict) -> float:
    return gain["mag"] * (gain.get("sign", 1) or 1)


def compare_deck(path: Path) -> tuple[DeckResult, dict]:
    """The sheet of ``path`` and, beside each number, what ngspice-39 gives."""
    from lintamp.audit.sheet import build_sheet
    from lintamp.config import Config

    deck = path.read_text()
    res = DeckResult(path.stem)
    circuit, op = lintamp_op(path)
    nets = [n for n in circuit.nets[1:]]
    res.op_method = op.method
    ref = ngspice_op(deck, nets)
    if ref is None:
        res.ngspice_solves = False
    else:  # ngspice-39 .op against lintamp's own DC solve
        res.op_max_dev_mv = 1e3 * max(abs(op.node_voltages_v[n] - v) for n, v in ref.items())
    data = build_sheet(path, config=Config(root=path.parent), plots=False).data
    band = data["band"]["freq_hz"] or 0.0
    for port in data["ports"]:
        for key, f in (("z_ohm", 0.0), ("z_band_ohm", band)):
            z = port.get(key)
            if not z or (key == "z_band_ohm" and not band):
                continue
            z_ng = ngspice_z(deck, port["circuit_net"], port.get("detached", []), f)
            what = f"Z {port['net']} at {'DC' if f == 0 else f'{f:g} Hz'}"
            if z.get("open"):
                res.open_checks.append((what, abs(z_ng)))
                continue
            res.checks.append((what, z["mag"], abs(z_ng), rel_err(z["mag"], abs(z_ng))))
            if port.get("formula_freq_hz", 0.0) == f and port.get("port_formula_ohm") is not None:
                for name in ("port_formula", "port_approx"):
                    value = port.get(f"{name}_ohm")
                    if value is None:
                        continue
                    res.forms.append((f"{port['net']}: {port[name]}", value, abs(z_ng),
                                      rel_err(value, abs(z_ng)),
                                      (port.get(f"{name}_error_pct") or 0) <= 2.0
                                      if name == "port_approx" else bool(port.get("port_formula_exact"))))
    phasors: dict[float, dict[str, complex]] = {}

    def at(f):
        if f not in phasors:
            phasors[f] = ngspice_node_phasors(deck, nets, f)
        return phasors[f]

    for p in data["paths"]:
        pin = next(q for q in data["ports"] if q["net"] == p["from"])
        pout = next(q for q in data["ports"] if q["net"] == p["to"])
        current_in = pin["kind"] == "current-input"
        for key, f in (("gain", 0.0), ("gain_band", band)):
            g = p.get(key)
            if not g or g.get("mag") is None:
                continue
            v = at(f)
            exact = v[pout["circuit_net"]] / (1.0 if current_in else v[pin["circuit_net"]])
            what = f"{p['kind']} {p['from']}->{p['to']} at {'DC' if f == 0 else f'{f:g} Hz'}"
            scale = abs(at(band)[pout["circuit_net"]]) if band else 1.0
            if abs(exact) < 1e-6 * scale:  # a blocked path (coupling capacitor at DC): both ~0
                res.checks.append((what, g["mag"], abs(exact), 0.0 if g["mag"] < 1e-6 * scale else math.inf))
                continue
            res.checks.append((what, g["mag"], abs(exact), rel_err(g["mag"], abs(exact))))
        f_chain = p.get("chain_freq_hz", 0.0)
        v = at(f_chain)
        for k, h in enumerate(p.get("chain", [])):
            first_current = k == 0 and current_in
            num = v[_circuit(data, h["to"])]
            den = 1.0 if first_current else v[_circuit(data, h["from"])]
            exact = num / den if abs(den) > 0 else 0
            what = f"stage {h['device']} {h['from']}->{h['to']}"
            # lintamp keeps a stage gain's magnitude and the sign of its real part
            res.checks.append((what, h["gain"]["mag"], abs(exact), rel_err(h["gain"]["mag"], abs(exact))))
            if abs(exact.imag) < 0.05 * abs(exact) and abs(exact) > 0:
                res.signs.append((what, h["gain"]["sign"], 1 if exact.real >= 0 else -1))
            if h.get("spans"):
                exact = v[_circuit(data, h["spans_to"])] / den
            if h.get("formula_value") is not None:
                res.forms.append((f"{h['device']}: {h['formula']}", h["formula_value"], exact,
                                  rel_err(h["formula_value"], exact), bool(h.get("formula_exact"))))
        if p.get("formula_value") is not None:
            exact = v[pout["circuit_net"]] / (1.0 if current_in else v[pin["circuit_net"]])
            res.forms.append((f"path {p['from']}->{p['to']}: product", p["formula_value"], abs(exact),
                              rel_err(p["formula_value"], abs(exact)), bool(p.get("formula_exact"))))
    return res, data


def _circuit(data: dict, local: str) -> str:
    prefix = ""
    return prefix + local


def table(results) -> str:
    lines = ["| deck | path gain in the band: lintamp / ngspice-39 | error % | worst of all gain/Z checks | checks | "
             "forms exact / marked approx. | OP max dev (mV) | OP method |",
             "|---|---|---|---|---|---|---|---|"]
    for r in results:
        gains = [c for c in r.checks if c[0].split(" ")[0] in ("voltage", "transimpedance", "current",
                                                               "transconductance") and "Hz" in c[0]]
        head = gains[-1] if gains else None
        shown = "—" if head is None else f"{head[0].split(' at ')[0]}: {head[1]:.5g} / {head[2]:.5g}"
        herr = "—" if head is None else f"{100 * head[3]:.4f}"
        worst = max(r.checks, key=lambda c: c[3], default=None)
        wtxt = "—" if worst is None else f"{100 * worst[3]:.4f} % ({worst[0]})"
        exact = sum(1 for f in r.forms if f[3] <= 0.02)
        marked = sum(1 for f in r.forms if f[3] > 0.02)
        op = "ngspice: no OP" if not r.ngspice_solves else f"{r.op_max_dev_mv:.1e}"
        lines.append(f"| {r.deck} | {shown} | {herr} | {wtxt} | {len(r.checks)} | {exact} / {marked} | {op} | "
                     f"{r.op_method} |")
    return "\n".join(lines)


if __name__ == "__main__":
    out = []
    for path in family():
        r, _ = compare_deck(path)
        out.append(r)
        if "-v" in sys.argv:
            for c in r.checks:
                print(r.deck, c)
            for f in r.forms:
                print(r.deck, "FORM", f)
    print(table(out))
