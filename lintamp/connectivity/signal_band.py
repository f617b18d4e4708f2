"""The signal band the impedance rules compare poles against, and where it came from.

Order of precedence, most specific first:

1. ``--bandwidth FREQ`` on the command line (the user asked for it now);
2. a ``* lintamp: bandwidth FREQ`` pragma in the cell being judged;
3. the same pragma at the top level (the whole deck);
4. ``bandwidth`` in the project configuration;
5. the stop frequency of the netlist's ``.ac`` sweep -- a weak hint, since a
   sweep usually runs past the band; the explanation says so.

With none of these the band is unknown and the rules use their frequency-free
limits only.
"""

from __future__ import annotations

from dataclasses import dataclass

from lintamp.circuit.design import CellView
from lintamp.netlist.expr import parse_number


@dataclass(frozen=True, slots=True)
class SignalBand:
    hz: float
    source: str  # words for the explanation: where the number came from
    weak: bool = False  # True for the .ac stop frequency


def parse_frequency_text(text: str | None) -> float | None:
    """``"20meg"``, ``"1.5GHz"``, ``"2e7"`` -> hertz; None when not a positive frequency."""
    if not text:
        return None
    word = str(text).strip().lower()
    if word.endswith("hz"):
        word = word[:-2]
    value = parse_number(word)
    return value if value is not None and value > 0 else None


def _pragma_band(view: CellView) -> SignalBand | None:
    for pragma in view.cell.pragmas:
        if pragma.verb == "bandwidth" and pragma.args:
            hz = parse_frequency_text(pragma.args[0])
            if hz is not None:
                where = "top level" if view.cell.is_top else f"cell {view.label}"
                return SignalBand(hz, f"bandwidth pragma of the {where} ({pragma.location})")
    return None


def _ac_stop(ctx) -> SignalBand | None:
    for analysis in ctx.netlist.analyses:
        if analysis.kind != "ac" or len(analysis.args) < 3:
            continue
        hz = parse_frequency_text(analysis.args[-1])
        if hz is not None:
            return SignalBand(hz, f"stop frequency of the .ac sweep ({analysis.location}); "
                                  "set a bandwidth pragma if the band is narrower", weak=True)
    return None


def signal_band(ctx, view: CellView | None = None, also=()) -> SignalBand | None:
    """The band for findings in ``view`` (the top level when None), or None.

    ``also``: further cells the judged net belongs to (the cells whose ports it
    is, deepest first); the first of them with a bandwidth pragma wins over the
    top level, so a cell's own band applies to its input port however it is fed.

    Notes
    -----
    O(pragmas of the cells and the top level + analysis cards).
    """
    cli = parse_frequency_text((ctx.options or {}).get("bandwidth"))
    if cli is not None:
        return SignalBand(cli, f"--bandwidth {ctx.options['bandwidth']}")
    for cell_view in (view, *also):
        if cell_view is not None and not cell_view.cell.is_top:
            band = _pragma_band(cell_view)
            if band is not None:
                return band
    band = _pragma_band(ctx.design.top)
    if band is not None:
        return band
    configured = getattr(ctx.config, "bandwidth", None)
    hz = parse_frequency_text(configured)
    if hz is not None:
        return SignalBand(hz, f"bandwidth = {configured!r} in the configuration")
    return _ac_stop(ctx)
