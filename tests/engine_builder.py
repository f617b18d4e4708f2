"""Deck text -> FlatCircuit for engine tests, through the project's own parser.

The tests hand the very same text to ngspice and to lintamp.
"""

from __future__ import annotations

from lintamp.api import flat_circuit_from_text
from lintamp.circuit.flat import FlatCircuit


def flat_from_text(text: str, path: str = "<text>") -> FlatCircuit:
    return flat_circuit_from_text(text, path)
