"""The signal band of the block under review, and where it came from.

Precedence (INTERFACE.md, "Pragmas" and "Configuration"): ``--bandwidth``, then a
``lintamp: bandwidth F`` pragma in the cell, then the config's ``bandwidth``, then
the stop frequency of the deck's ``.ac`` card.  Temporary home: see the package
docstring.
"""

from __future__ import annotations

from dataclasses import dataclass

from lintamp.netlist.units import parse_number
from lintamp.netlist.statements import Cell, Netlist


@dataclass(frozen=True, slots=True)
class SignalBand:
    """``freq_hz`` is None when nothing says what the band is."""

    freq_hz: float | None
    source: str  # "--bandwidth", "pragma (path:line)", "config", ".ac stop (path:line)", "none"


def parse_frequency(text: str) -> float | None:
    """``"20meg"`` -> 2e7; None for text that is not a positive frequency."""
    try:
        value = parse_number(str(text).strip().lower().removesuffix("hz"))
    except (ValueError, TypeError):
        return None
    if value is None or not value > 0 or value != value or value == float("inf"):
        return None
    return float(value)


def _ac_stop_hz(netlist: Netlist) -> tuple[float | None, str]:
    for analysis in netlist.analyses:
        if analysis.kind != "ac":
            continue
        args = [a for a in analysis.args if "=" not in a]
        # .ac dec|oct|lin N fstart fstop
        if len(args) >= 4 and args[0].lower() in ("dec", "oct", "lin"):
            stop = parse_frequency(args[3])
            if stop is not None:
                loc = analysis.location
                return stop, f".ac stop ({loc.path}:{loc.line})"
    return None, ""


def ac_sweep_hz(netlist: Netlist) -> tuple[float, float] | None:
    """(start, stop) of the deck's first usable ``.ac`` card."""
    for analysis in netlist.analyses:
        args = [a for a in analysis.args if "=" not in a]
        if analysis.kind == "ac" and len(args) >= 4 and args[0].lower() in ("dec", "oct", "lin"):
            start, stop = parse_frequency(args[2]), parse_frequency(args[3])
            if start is not None and stop is not None and stop > start:
                return start, stop
    return None


def signal_band(netlist: Netlist, cell: Cell, *, option: str | None = None,
                config_value: str | None = None) -> SignalBand:
    """Choose the band: option, pragma, config, ``.ac`` stop, in that order.

    Raises ``ValueError`` for an ``option`` that is not a frequency (a usage error).
    """
    if option:
        value = parse_frequency(option)
        if value is None:
            raise ValueError(f"--bandwidth {option}: not a frequency (write e.g. 20meg, 1.5g)")
        return SignalBand(value, "--bandwidth")
    for pragma in cell.pragmas:
        if pragma.verb == "bandwidth" and pragma.args:
            value = parse_frequency(pragma.args[0])
            if value is not None:
                loc = pragma.location
                return SignalBand(value, f"pragma ({loc.path}:{loc.line})")
    if config_value:
        value = parse_frequency(config_value)
        if value is not None:
            return SignalBand(value, "config")
    stop, where = _ac_stop_hz(netlist)
    if stop is not None:
        return SignalBand(stop, where)
    return SignalBand(None, "none")
