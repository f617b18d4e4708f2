"""Frequency response of a port or a path: sweeps, the -3 dB search and the poles.

A *probe* is a function of frequency returning one complex number (an impedance
or a gain) from a fresh small-signal solve at that frequency.  Everything here is
bounded: fixed grids, a fixed number of bisection steps, and pole extraction only
for systems small enough for a dense eigen-solve.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

SEARCH_LOW_HZ = 1.0
SEARCH_HIGH_HZ = 1e12
SEARCH_POINTS_PER_DECADE = 8
BISECTION_STEPS = 40  # ratio of the bracket shrinks to 10^(1/8)^(2^-40): far below 0.1 %
POLE_MAX_UNKNOWNS = 300
POLE_MAX_HZ = 1e13
POLE_SIGNIFICANCE = 1e-3
MAX_POLES = 8

Probe = Callable[[float], complex]


def log_grid(low_hz: float, high_hz: float, per_decade: int) -> np.ndarray:
    """Logarithmic frequency grid including both ends."""
    n = max(2, int(math.ceil(math.log10(high_hz / low_hz) * per_decade)) + 1)
    return np.logspace(math.log10(low_hz), math.log10(high_hz), n)


def sweep(probe: Probe, freqs_hz) -> np.ndarray:
    """``probe`` at every frequency (one small-signal factorisation each).

    Notes
    -----
    O(len(freqs) * LU).
    """
    return np.array([probe(float(f)) for f in freqs_hz], dtype=complex)


@dataclass(slots=True)
class Corner:
    """-3 dB points relative to ``reference_mag`` (DC value, or the peak when DC is 0)."""

    reference_mag: float
    reference: str  # "dc" | "peak"
    high_hz: float | None
    low_hz: float | None


def _bisect(probe: Probe, lo_hz: float, hi_hz: float, target: float, falling: bool) -> float:
    a, b = math.log10(lo_hz), math.log10(hi_hz)
    for _ in range(BISECTION_STEPS):
        mid = 0.5 * (a + b)
        below = abs(probe(10 ** mid)) < target
        if below == falling:
            b = mid
        else:
            a = mid
    return 10 ** (0.5 * (a + b))


def find_corners(probe: Probe, dc_value: complex) -> Corner:
    """Search for the -3 dB frequencies between 1 Hz and 1 THz.

    The reference is |H(DC)|; for a response that is zero at DC (AC coupling) it is
    the peak of the coarse sweep, and a lower corner is searched as well.

    Notes
    -----
    97 coarse points and 40 bisection steps per corner: O(140 * LU), whatever the
    circuit does.
    """
    grid = log_grid(SEARCH_LOW_HZ, SEARCH_HIGH_HZ, SEARCH_POINTS_PER_DECADE)
    mags = np.abs(sweep(probe, grid))
    dc_mag = abs(dc_value)
    if dc_mag > 1e-30 and dc_mag >= 1e-6 * float(mags.max(initial=0.0)):
        ref, kind, start = dc_mag, "dc", 0
    else:
        start = int(np.argmax(mags))
        ref, kind = float(mags[start]), "peak"
        if ref <= 1e-30:
            return Corner(0.0, "peak", None, None)
    target = ref / math.sqrt(2.0)
    high = low = None
    for k in range(start, len(grid) - 1):
        if mags[k + 1] < target <= mags[k] or (k == start and mags[k] < target):
            if k == start and mags[k] < target:
                break  # already below at the start of the sweep: no clean corner
            high = _bisect(probe, grid[k], grid[k + 1], target, falling=True)
            break
    if kind == "peak":
        for k in range(start, 0, -1):
            if mags[k - 1] < target <= mags[k]:
                low = _bisect(probe, grid[k - 1], grid[k], target, falling=False)
                break
    return Corner(ref, kind, high, low)


def poles_hz(y_dc, y_at_one_hz, excite: int, observe: int, probe: Probe) -> list[float] | None:
    """Natural frequencies that show in one transfer function, in Hz (|s|/2 pi).

    ``y_dc`` and ``y_at_one_hz`` are the assembled matrices at 0 and 1 Hz (so
    ``C = (Y(1 Hz) - G)/(j 2 pi)``); the transfer function is ``x[observe]`` for a unit
    right-hand side at ``excite``.  A pole is kept when its residue term is at least
    1e-3 of |H| at that frequency, so poles the path cannot see (cancelled, or
    elsewhere in the circuit) are left out.  Returns None for systems above 300
    unknowns (dense generalized eigenproblem).

    Notes
    -----
    O(n^3) for n unknowns (scipy's QZ), plus one factorisation per candidate pole.
    """
    import scipy.linalg as sla

    n = y_dc.shape[0]
    if n > POLE_MAX_UNKNOWNS or excite < 0 or observe < 0:
        return None
    g = y_dc.toarray()
    c = (y_at_one_hz.toarray() - g) / (2j * math.pi)
    if not np.any(np.abs(c) > 0):
        return []
    b_mat = -c
    try:
        (alpha, beta), vl, vr = sla.eig(g, b_mat, left=True, right=True, homogeneous_eigvals=True)
    except (np.linalg.LinAlgError, ValueError):
        return None
    scale = max(np.abs(g).max(), 1e-300)
    found = []
    for i in range(n):
        if abs(beta[i]) <= 1e-12 * abs(alpha[i]) or abs(beta[i]) == 0:
            continue  # infinite eigenvalue: a node without capacitance
        lam = alpha[i] / beta[i]
        f_hz = abs(lam) / (2 * math.pi)
        if not (0 < f_hz < POLE_MAX_HZ) or abs(lam) < 1e-9 * scale:
            continue
        w, v = vl[:, i], vr[:, i]
        den = np.conj(w) @ b_mat @ v
        if abs(den) == 0:
            continue
        residue = v[observe] * np.conj(w[excite]) / den
        h = probe(f_hz)
        if abs(h) > 0 and abs(residue / lam) >= POLE_SIGNIFICANCE * abs(h):
            found.append(f_hz)
    found.sort()
    merged: list[float] = []
    for f in found:  # a complex pair shows once
        if not merged or abs(f - merged[-1]) > 1e-6 * f:
            merged.append(f)
    return merged[:MAX_POLES]
