"""Deck text -> FlatCircuit for the engine tests: the project's own parser, so that
the same text goes to ngspice and to lintamp."""

from __future__ import annotations

from lintamp.api import flat_circuit_from_text
from lintamp.circuit.flat import FlatCircuit


def flat_from_text(text: str, path: str = "<text>") -> FlatCircuit:
    return flat_circuit_from_text(text, path)
