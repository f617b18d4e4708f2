"""Names the engine and its callers share, in a module that imports no numpy or scipy.

A rule can then name the engine's error and its nonlinear device kinds, and decide
that a deck gives it nothing to solve, without paying for the engine's imports.
"""

from __future__ import annotations

NONLINEAR = ("nmos", "pmos", "npn", "pnp", "diode")


class SmallSignalError(RuntimeError):
    """The small-signal system cannot be set up (message says why)."""
