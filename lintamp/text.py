"""Words and numbers for messages: a leaf module every layer may import.

``si`` writes a number the way engineers do (1.30 kΩ, 676 µS, 20 MHz), ``excerpt``
cuts untrusted netlist text down to a short printable piece, ``plural`` counts
things.  Nothing here imports the rest of lintamp, so analysis and rules format
their words without importing a reporter or the reader.
"""

from __future__ import annotations

import math

EXCERPT_CHARS = 60
_PREFIXES = [(1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"),
             (1e-6, "µ"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f")]
UNIT_SUFFIXES = {"_ohm": "Ω", "_s": "S", "_hz": "Hz", "_a": "A", "_v": "V", "_f": "F",
                 "_farad": "F", "_h": "H"}


def si(value: float | None, unit: str = "", digits: int = 3) -> str:
    """A number with an SI prefix and ``digits`` significant digits; None and
    infinities read as words ("open" for an impedance).

    >>> si(1301.1, "Ω")
    '1.30 kΩ'
    >>> si(6.76e-4, "S")
    '676 µS'
    >>> si(None, "Ω"), si(float("inf"), "Hz")
    ('open', '∞')
    """
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
    """A ``values`` entry formatted by the unit suffix of its key.

    >>> si_for_key("z_ohm", 2.2e6), si_for_key("ratio", 0.5), si_for_key("count", 3)
    ('2.20 MΩ', '0.5', '3')
    """
    if not isinstance(value, (int, float)):
        return str(value)
    for suffix, unit in UNIT_SUFFIXES.items():
        if key.endswith(suffix):
            return si(float(value), unit)
    return f"{value:.4g}" if isinstance(value, float) else str(value)


def excerpt(text: str, limit: int = EXCERPT_CHARS) -> str:
    """A short, printable piece of untrusted text for messages.

    >>> excerpt("r1 a b" + chr(7) + "1k"), excerpt("x" * 70, 8)
    ('r1 a b?1k', 'xxxxxxxx...')
    """
    text = "".join(ch if ch.isprintable() else "?" for ch in text[: limit + 1])
    return text if len(text) <= limit else text[:limit] + "..."


def plural(count: int, word: str) -> str:
    """``plural(1, "file") == "1 file"``, ``plural(3, "file") == "3 files"``.

    >>> plural(1, "error"), plural(0, "warning")
    ('1 error', '0 warnings')
    """
    return f"{count} {word}" + ("" if count == 1 else "s")


def edit_distance(a: str, b: str, limit: int) -> int:
    """Edits from ``a`` to ``b`` (case-insensitive; an insertion, deletion, change or
    swap of two neighbours counts one), or ``limit + 1`` once it must exceed ``limit``.

    >>> edit_distance("vbias", "vbais", 3), edit_distance("dig", "ana", 2)
    (1, 3)
    """
    a, b = a.lower(), b.lower()
    if abs(len(a) - len(b)) > limit:
        return limit + 1
    before, previous = None, list(range(len(b) + 1))
    for i, ca in enumerate(a, 1):
        current = [i]
        for j, cb in enumerate(b, 1):
            d = min(previous[j] + 1, current[j - 1] + 1, previous[j - 1] + (ca != cb))
            if before is not None and j > 1 and ca == b[j - 2] and a[i - 2] == cb:
                d = min(d, before[j - 2] + 1)
            current.append(d)
        if min(current) > limit:
            return limit + 1
        before, previous = previous, current
    return min(previous[-1], limit + 1)


def near_miss(name: str, candidates) -> str | None:
    """The candidate ``name`` is most likely a slip of: at most one edit per five
    characters (at least one), closest first; None when nothing is that close.  A
    name that differs in a whole word ('brownout_dig' for 'brownout_ana') is another
    name, not a slip.

    >>> near_miss("brownout_dig", ["brownout_ana"]), near_miss("vbais", ["vbias", "vb"])
    (None, 'vbias')
    """
    if len(name) > 60:
        return None  # a name longer than any real one has no match worth the search
    limit = max(1, len(name) // 5)
    best, best_d = None, limit + 1
    for cand in candidates:
        if cand.lower() == name.lower():
            continue
        d = edit_distance(name, cand, limit)
        if d < best_d:
            best, best_d = cand, d
    return best
