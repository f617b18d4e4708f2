"""Shared wording for the text, Markdown and HTML sheets (numbers via report.si)."""

from __future__ import annotations

from lintamp.report.si import si

UNIT_SYMBOL = {"ohm": "Ω", "S": "S", "V/V": "V/V", "A/A": "A/A"}
OP_SOURCE = {"level1": "lintamp's level-1 / Gummel-Poon models", "table": "the operating-point table",
             "ngspice": "ngspice (--op-from ngspice)",
             "assumed": "none (roles by inspection only)",
             "linear": "not needed (no nonlinear devices)"}


def z_text(z: dict | None) -> str:
    if not z:
        return "—"
    if z.get("open"):
        return "open"
    if z.get("mag") is None:
        return "— (" + z["mag_why"] + ")" if z.get("mag_why") else "—"
    phase = z.get("phase_deg") or 0.0
    return si(z["mag"], "Ω") + (f" ∠{phase:.0f}°" if abs(phase) >= 0.5 else "")


def ohm(value) -> str:
    return "open" if value is None else si(value, "Ω")


def gain_text(gain: dict | None) -> str:
    if not gain or gain.get("mag") is None:
        return "—"
    unit = gain["unit"]
    sign = "-" if gain.get("sign", 1) < 0 else ""
    if unit in ("V/V", "A/A"):
        return f"{sign}{gain['mag']:.4g} {unit}"
    return sign + si(gain["mag"], UNIT_SYMBOL[unit])


def freq_text(f) -> str:
    return "—" if f is None else si(f, "Hz")


def band_text(band: dict) -> str:
    if band.get("freq_hz") is None:
        return "not given (no --bandwidth, pragma, config or .ac card)"
    return f"{si(band['freq_hz'], 'Hz')} (from {band['source']})"


def margin_text(stage: dict) -> str:
    m = stage.get("margin_v")
    if m is None:
        return "—"
    if "vce_v" in stage:
        return f"V_CE {stage['vce_v']:.2f} V, {m:+.2f} V over 0.3 V"
    return f"{m:+.2f} V"


def finding_line(f: dict) -> str:
    return f"{f['path']}:{f['line']}:{f['column']}: {f['severity']} [{f['rule']}] {f['message']}"


FORM_EXACT_PCT = 2.0


def form_value(text: str, error_pct) -> str:
    """``= 4.99 kΩ`` for a form within 2 % of the exact number; an approximation says so
    and by how much; a form that could not be checked says that."""
    if error_pct is None:
        return f"= {text} (not checked against the exact value)"
    if error_pct <= FORM_EXACT_PCT:
        return f"= {text}"
    return f"≈ {text} (an approximation: {error_pct:.3g} % off the exact value)"


def number(value, unit: str) -> str:
    """``si`` for a finite number; "—" for a missing, infinite or NaN one."""
    import math
    if value is None or not isinstance(value, (int, float)) or not math.isfinite(value):
        return "—"
    return si(value, unit)


def port_form_lines(p: dict, zname: str) -> list[str]:
    """The port's textbook lines: the parallel of its branches, then the branch behind it."""
    lines = []
    at = "" if not p.get("formula_freq_hz") else f" (at {si(p['formula_freq_hz'], 'Hz')})"
    if p.get("port_formula"):
        lines.append(f"{zname}{at} = {p['port_formula']} "
                     + form_value(ohm(p.get("port_formula_ohm")), p.get("port_formula_error_pct")))
        if p.get("port_approx"):
            lines.append(f"  {zname} ~ {p['port_approx']} "
                         + form_value(ohm(p.get("port_approx_ohm")), p.get("port_approx_error_pct")))
    if p.get("formula"):
        share = p.get("branch_ohm")
        line = f"via {p.get('via') or p.get('stage')}: {p['formula']}"
        if p.get("formula_ohm") is not None:
            line += " " + form_value(ohm(p["formula_ohm"]), p.get("formula_error_pct"))
        line += f" (its exact share {ohm(share)})"
        lines.append(line)
        if p.get("approx") and p["approx"] != p["formula"]:
            value = p.get("approx_ohm")
            lines.append(f"  ~ {p['approx']} " + (form_value(ohm(value), p.get("approx_error_pct"))
                                                 if value is not None else "(no value)"))
    return lines


def hop_form_text(h: dict) -> str:
    if not h.get("formula"):
        return f"(no textbook form: {h['formula_none']})" if h.get("formula_none") else ""
    fv = h.get("formula_value")
    if fv is None and (h.get("gain") or {}).get("mag") is None:
        return f"form {h['formula']} (in symbols: no operating point)"
    if fv is None:
        return f"form {h['formula']} (no value: an open or missing term)"
    gain = dict(h["gain"], mag=abs(fv), sign=1 if fv >= 0 else -1)
    text = form_value(gain_text(gain), h.get("formula_error_pct"))
    if h.get("in_loop_through"):
        text += f" — the open-loop gain; a feedback loop closes through {h['in_loop_through']}"
    if h.get("spans"):
        span = dict(h["span_gain"])
        return (f"over {h['from']} → {h['spans_to']} ({gain_text(span)}): {h['formula']} " + text)
    return f"{h['formula']} " + text


def path_form_text(p: dict) -> str:
    if p.get("by_inspection") is True:  # a path found with no operating point at all
        return f"product of the stages, in symbols (no operating point): {p['formula']}"
    gain = dict(p["gain"], mag=p.get("formula_value"), sign=1)
    at = p.get("formula_freq_hz")
    where = "" if not at else f" (at {si(at, 'Hz')})"
    return f"product of the stages{where}: {p['formula']} " + form_value(gain_text(gain), p.get("formula_error_pct"))
