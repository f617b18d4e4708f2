"""SPICE numbers with engineering suffixes: ``10k``, ``1.5MEG``, ``10uF``, ``2.2e-3m``.

The rules follow what ngspice-39 does with a plain number field (checked by running
it, see ``tests/test_expr.py``):

- scale suffixes are case-insensitive: ``t g meg k m mil u n p f`` and ``µ`` (U+00B5);
  ``M`` is milli, ``MEG`` is mega, ``MIL`` is 25.4e-6, ``F`` is femto;
- letters (and digits) after the number or suffix are ignored: ``10V``, ``5kohm``,
  ``1MEGohm``, ``3k3`` (= 3000, not 3300), ``1x`` (= 1; there is no ``x``/``a`` suffix);
- an exponent and a suffix both apply: ``1E3k`` is 1e6;
- ``d``/``D`` also marks an exponent (``1d3`` is 1000), as the ngspice number reader has it;
- the Greek small letter mu (U+03BC) is *not* micro: ngspice reads ``1μ`` as 1.

Deliberate differences: a token that is only partly a number (``1.5.3``, ``1e+``,
``2*3``) is not a number here (ngspice would silently read its leading part), nor is a
value that overflows a float (``1e400``), so that the caller can report it.
"""

from __future__ import annotations

import re

__all__ = ["SUFFIXES", "parse_number"]

#: Scale factor of each suffix, lower-case keys.  ``meg`` and ``mil`` are matched before
#: ``m``; any letters after a suffix are ignored.
SUFFIXES: dict[str, float] = {
    "t": 1e12,
    "g": 1e9,
    "meg": 1e6,
    "k": 1e3,
    "m": 1e-3,
    "mil": 25.4e-6,
    "u": 1e-6,
    "\u00b5": 1e-6,  # micro sign, as ngspice reads it
    "n": 1e-9,
    "p": 1e-12,
    "f": 1e-15,
}

# Decimal exponent of each power-of-ten suffix, so that ``1.1u`` becomes the float of
# "1.1e-6" (correctly rounded) rather than 1.1 * 1e-6 (one rounding more).
_DECIMAL_EXPONENT: dict[str, int] = {
    "t": 12, "g": 9, "k": 3, "m": -3, "u": -6, "\u00b5": -6, "n": -9, "p": -12, "f": -15,
}

# mantissa, optional exponent (e or d), then an optional tail that starts with a letter
# and runs over letters, digits and underscores ([^\W\d] is "a letter or _").
# The mantissa is written \d+(?:\.\d*)? rather than \d+\.?\d*: the same language, but
# without two adjacent digit runs, whose backtracking made a failed match of a long
# digit string quadratic (20 000 digits then a '=' took 15 s).
_NUMBER_RE = re.compile(
    r"([+-]?(?:\d+(?:\.\d*)?|\.\d+))(?:[eEdD]([+-]?\d+))?([^\W\d]\w*)?"
)
# Characters of a token the fast paths of parse_number hand to float() directly: ASCII
# only (float() would also take other scripts' digits, blanks, '_', 'inf' and 'nan').
_DECIMAL_CHARS = "0123456789."
_PLAIN_CHARS = "0123456789.eE+-"
# A token's last letter when it is the whole tail: the power-of-ten suffixes of one
# letter, either case ('m' alone is milli; 'meg' and 'mil' end in other letters).
_LAST_LETTER_EXPONENT: dict[str, int] = {
    **_DECIMAL_EXPONENT, **{k.upper(): v for k, v in _DECIMAL_EXPONENT.items() if k.isascii()}}
# An exponent with more digits than this is out of range whatever its mantissa (and
# int() refuses strings past 4300 digits).
_MAX_EXPONENT_DIGITS = 12


def parse_number(text: str) -> float | None:
    """Read a SPICE number such as ``"10k"``, ``"-2.5u"``, ``".5"``, ``"1MEGohm"``.

    Parameters
    ----------
    text : str
        One token, without surrounding blanks.

    Returns
    -------
    float or None
        The value, or None when the token is not a (finite) SPICE number: a name
        (``"w"``, ``"nch"``), an expression (``"{a}"``, ``"2*3"``), or an overflow.

    Notes
    -----
    O(len(text)): for plain decimals (``326.1``, ``1.2e-15``, ``4.7f``) a character
    check and ``float()``; otherwise one compiled-regex match and a dict lookup; no
    allocation beyond one small string when a suffix or exponent is present.

    Examples
    --------
    >>> parse_number("10M"), parse_number("1MEG"), parse_number("1F")
    (0.01, 1000000.0, 1e-15)
    >>> parse_number("5kohm"), parse_number("1E3k"), parse_number("nch")
    (5000.0, 1000000.0, None)
    """
    # Fast paths for the commonest tokens, '326.145', '1.2e-15', '4.7f': the same
    # value as the general reading below, which they fall through to when in doubt.
    if not text.strip(_PLAIN_CHARS):
        try:
            value = float(text)
        except ValueError:
            pass  # '1e', '1.5.3', '1e+': the general reading decides
        else:
            # float() took a token of digits, '.', 'e', 'E' and signs only, so it is
            # [sign] mantissa [e [sign] digits]: what the pattern reads as mantissa and
            # exponent, with no tail; the pattern's reading refuses a long exponent
            if value - value != 0.0:
                return None
            if ("e" in text or "E" in text) and (
                    len(text) - 1 - max(text.rfind("e"), text.rfind("E")) > _MAX_EXPONENT_DIGITS):
                return None
            return value
    else:
        exp10 = _LAST_LETTER_EXPONENT.get(text[-1])
        if exp10 is not None:
            body = text[:-1]
            if not body.strip(_DECIMAL_CHARS):
                # digits and '.' then one suffix letter: the pattern's mantissa and tail
                try:
                    value = float(f"{body}e{exp10}")
                except ValueError:
                    pass  # 'k', '.k', '1..2k'
                else:
                    return value if value - value == 0.0 else None
    return _read_by_pattern(text)


def _read_by_pattern(text: str) -> float | None:
    """:func:`parse_number` without its fast paths: the general reading."""
    match = _NUMBER_RE.fullmatch(text)
    if match is None:
        return None
    mantissa, exponent, tail = match.groups()
    if exponent is not None and len(exponent) > _MAX_EXPONENT_DIGITS:
        return None
    exp10 = 0
    if tail is not None:
        first = tail[0].lower()
        if first == "m":
            after = tail[1:3].lower()
            if after == "eg":
                exp10 = 6
            elif after == "il":
                value = float(mantissa if exponent is None else f"{mantissa}e{exponent}")
                value *= 25.4e-6
                return value if value - value == 0.0 else None
            else:
                exp10 = -3
        else:
            exp10 = _DECIMAL_EXPONENT.get(first, 0)
    if exponent is not None:
        value = float(f"{mantissa}e{int(exponent) + exp10}")
    elif exp10:
        value = float(f"{mantissa}e{exp10}")
    else:
        value = float(mantissa)
    # inf - inf is nan, the one value unequal to 0.0 here; cheaper than math.isfinite
    return value if value - value == 0.0 else None
