"""Names, limits and errors the engine and its callers share, in a module that imports no
numpy or scipy.

A rule can then name the engine's errors and its nonlinear device kinds, and decide
that a deck gives it nothing to solve, without paying for the engine's imports.

Every error the engine raises on input it cannot give a number for is an
:class:`EngineError`; a caller that skips a node or a file on engine trouble catches
that (and ``ArithmeticError`` for numeric overflow), never ``KeyError`` or
``IndexError``, so a programming error reaches the command's internal-error exit.
Some subclasses keep the built-in base they had before the family existed
(``ValueError`` or ``RuntimeError``): front ends still catch those by that name.
"""

from __future__ import annotations

from lintamp.circuit.kinds import NONLINEAR  # noqa: F401 - the engine's callers import it here

# An impedance magnitude at or above this reads as open (the engine shunts every node
# with 1e-12 S, which reads as 1e12 ohm; real high-impedance nodes stay far below).
OPEN_OHM = 1e11


def is_open(z_ohm) -> bool:
    """An impedance (a number or None) that reads as open: None, not finite, or at or
    above :data:`OPEN_OHM`.

    >>> is_open(None), is_open(float("inf")), is_open(1e11), is_open(2.2e6 + 1e6j)
    (True, True, True, False)
    """
    if z_ohm is None:
        return True
    magnitude = abs(z_ohm)
    return magnitude != magnitude or magnitude == float("inf") or magnitude >= OPEN_OHM


class EngineError(Exception):
    """The engine cannot give a number for this input (the message says why)."""


class SmallSignalError(EngineError, RuntimeError):
    """The small-signal system cannot be set up (message says why)."""


class UnknownNet(EngineError, ValueError):
    """A net name the flat circuit does not hold."""
