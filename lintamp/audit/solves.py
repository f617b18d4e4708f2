"""Small-signal solves shared by the whole sheet, cached by (frequency, detached, driven)."""

from __future__ import annotations

import math

from lintamp.engine.small_signal import ImpedanceSolver

OPEN_OHM = 1e11  # at or above: open (the engine's 1e-12 S shunt reads as 1e12 ohm)
MAX_CACHED = 256


class Solves:
    """One operating point, many small-signal systems.

    Notes
    -----
    Each distinct key costs one sparse LU; the cache is bounded (oldest dropped).
    """

    def __init__(self, circuit, op):
        self.circuit = circuit
        self.op = op
        self._cache: dict = {}
        self.notes: list[str] = []

    def solver(self, freq_hz: float, detach=(), driven: str | None = None) -> ImpedanceSolver:
        key = (float(freq_hz), tuple(sorted(set(detach))), driven)
        hit = self._cache.get(key)
        if hit is None:
            if len(self._cache) >= MAX_CACHED:
                self._cache.pop(next(iter(self._cache)))
            hit = ImpedanceSolver(self.circuit, self.op, freq_hz, detach=key[1], driven=driven)
            # a solve with elements detached on purpose (interfaces) is singular by design
            for note in hit.notes if not key[1] else ():
                if note not in self.notes:
                    self.notes.append(note)
            self._cache[key] = hit
        return hit

    def z(self, net: str, freq_hz: float = 0.0, detach=()) -> complex | None:
        """Driving-point impedance, None for an open (>= 1e11 ohm)."""
        z = self.solver(freq_hz, detach).z(net)
        return None if abs(z) >= OPEN_OHM or not math.isfinite(abs(z)) else z

    def ac_ground(self, net: str) -> bool:
        return self.solver(0.0).unknown(net) < 0


def z_json(z: complex | None) -> dict:
    """``{"mag", "phase_deg"}``; an open is ``{"mag": null, "phase_deg": null, "open": true}``."""
    if z is None:
        return {"mag": None, "phase_deg": None, "open": True}
    return {"mag": abs(z), "phase_deg": math.degrees(math.atan2(z.imag, z.real)) if z else 0.0}


def mag_or_none(z) -> float | None:
    if z is None:
        return None
    m = abs(z)
    return None if m >= OPEN_OHM or not math.isfinite(m) else m
