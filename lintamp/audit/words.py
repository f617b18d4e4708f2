"""Shared wording for the text, Markdown and HTML sheets (numbers via report.si)."""

from __future__ import annotations

from lintamp.report.si import si

UNIT_SYMBOL = {"ohm": "Ω", "S": "S", "V/V": "V/V", "A/A": "A/A"}
OP_SOURCE = {"level1": "lintamp's level-1 / Gummel-Poon models", "table": "the operating-point table",
             "assumed": "none (roles by inspection only)",
             "linear": "not needed (no nonlinear devices)"}


def z_text(z: dict | None) -> str:
    if not z:
        return "—"
    if z.get("open"):
        return "open"
    if z.get("mag") is None:
        return "n/a"
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
