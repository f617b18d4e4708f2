"""Small-signal solves shared by the whole sheet, cached by (frequency, detached, driven)."""

from __future__ import annotations

import math

from lintamp.engine.small_signal import ImpedanceSolver

from lintamp.engine.engine_kinds import OPEN_OHM  # at or above: open
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


def finite_for_json(obj, where: str = "", notes: list | None = None):
    """A copy of ``obj`` where every infinite or NaN float is ``null``, with its reason.

    In a dict the key ``K`` becomes ``null`` and ``K_why`` says why ("infinite" for an
    open or an unbounded value, "not a number" for a quantity the models gave no value
    for); ``notes`` (when given) collects ``{"where", "why"}`` for every such value.

    >>> finite_for_json({"z_ohm": float("inf")})
    {'z_ohm': None, 'z_ohm_why': 'infinite (an open, or a value without bound)'}
    """
    if isinstance(obj, float) and not math.isfinite(obj):
        if notes is not None:
            notes.append({"where": where, "why": _why(obj)})
        return None
    if isinstance(obj, complex):
        return finite_for_json(abs(obj), where, notes)
    if isinstance(obj, dict):
        out = {}
        for key, value in obj.items():
            clean = finite_for_json(value, f"{where}.{key}" if where else str(key), notes)
            out[key] = clean
            if isinstance(value, float) and not math.isfinite(value):
                out[f"{key}_why"] = _why(value)
        return out
    if isinstance(obj, (list, tuple)):
        return [finite_for_json(v, f"{where}[{k}]", notes) for k, v in enumerate(obj)]
    if hasattr(obj, "item") and callable(obj.item) and getattr(obj, "shape", None) == ():
        return finite_for_json(obj.item(), where, notes)  # a numpy scalar
    return obj


def _why(value: float) -> str:
    return "not a number (the models gave no value here)" if math.isnan(value) else \
        "infinite (an open, or a value without bound)"
