"""Per-cell connectivity facts on a ``CellView``: DC-conduction components, islands,
zero-impedance loops, rails, the signal band.  Facts only: no rule names, no numbers
from an operating point."""
