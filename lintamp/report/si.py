"""Numbers as engineers write them: 1.30 kΩ, 676 µS, 20 MHz."""

from __future__ import annotations

import math

_PREFIXES = [(1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"),
             (1e-6, "µ"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f")]
UNIT_SUFFIXES = {"_ohm": "Ω", "_s": "S", "_hz": "Hz", "_a": "A", "_v": "V", "_f": "F",
                 "_farad": "F", "_h": "H"}


def si(value: float | None, unit: str = "", digits: int = 3) -> str:
    """``si(1301.1, "Ω") == "1.30 kΩ"``; None and infinities read as words."""
    if value is None:
        return "open" if unit == "Ω" else "n/a"
    if isinstance(value, float) and math.isinf(value):
        return "open" if unit == "Ω" else ("∞" if value > 0 else "-∞")
    if value == 0:
        return f"0 {unit}".strip()
    mag = abs(value)
    for scale, prefix in _PREFIXES:
        if mag >= scale * 0.9995:
            break
    else:
        scale, prefix = _PREFIXES[-1]
    scaled = value / scale
    if abs(scaled) >= 1000 or abs(scaled) < 0.9995e-3:  # beyond the largest or smallest prefix
        return f"{value:.{digits}g} {unit}".strip()
    decimals = max(0, digits - 1 - int(math.floor(math.log10(abs(scaled)))))
    return f"{scaled:.{decimals}f} {prefix}{unit}".strip()


def si_for_key(key: str, value) -> str:
    """Format ``values`` entries by their unit suffix (``z_ohm`` -> Ω)."""
    if not isinstance(value, (int, float)):
        return str(value)
    for suffix, unit in UNIT_SUFFIXES.items():
        if key.endswith(suffix):
            return si(float(value), unit)
    return f"{value:.4g}" if isinstance(value, float) else str(value)
