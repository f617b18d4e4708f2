"""Physical constants, thermal voltage, Newton step limiting and junction capacitance.

The constants follow the values ngspice compiles in (``const.h``) so that
operating points agree with it to many digits.
"""

from __future__ import annotations

import numpy as np

CHARGE_C = 1.6021766208e-19
BOLTZMANN_J_PER_K = 1.38064852e-23
CELSIUS_TO_KELVIN = 273.15
EPS0_F_PER_M = 8.854214871e-12
EPS_OX_F_PER_M = 3.9 * EPS0_F_PER_M
EPS_SI_F_PER_M = 11.7 * EPS0_F_PER_M
GMIN_S = 1e-12  # conductance SPICE puts across every junction
MAX_EXP_ARG = 709.0


def thermal_voltage(temp_c: float = 27.0) -> float:
    """kT/q in volt at ``temp_c`` (25.865 mV at 27 C = 300.15 K)."""
    return BOLTZMANN_J_PER_K * (temp_c + CELSIUS_TO_KELVIN) / CHARGE_C


def critical_voltage(vt_v: np.ndarray, is_a: np.ndarray) -> np.ndarray:
    """Junction voltage above which Newton steps are limited logarithmically."""
    return vt_v * np.log(vt_v / (np.sqrt(2.0) * np.maximum(is_a, 1e-300)))


def limit_junction(v_new, v_old, vt_v, v_crit):
    """Limit a junction voltage step as SPICE's pnjlim does.

    Returns ``(v_limited, limited_mask)``.  Forward steps above ``v_crit`` are cut to
    a logarithmic increment so the exponential cannot overflow; large reverse steps
    are cut as well.  Elementwise on arrays.
    """
    v_new = np.asarray(v_new, dtype=float)
    v_old = np.asarray(v_old, dtype=float)
    out = v_new.copy()
    big_fwd = (v_new > v_crit) & (np.abs(v_new - v_old) > 2 * vt_v)
    arg = 1 + (v_new - v_old) / vt_v
    with np.errstate(divide="ignore", invalid="ignore"):
        from_on = np.where(arg > 0, v_old + vt_v * np.log(np.maximum(arg, 1e-300)), v_crit)
        from_off = vt_v * np.log(np.maximum(v_new / vt_v, 1e-300))
    fwd_value = np.where(v_old > 0, from_on, from_off)
    out = np.where(big_fwd, fwd_value, out)
    rev_floor = np.where(v_old > 0, -v_old - 1, 2 * v_old - 1)
    big_rev = (~big_fwd) & (v_new < 0) & (v_new < rev_floor)
    out = np.where(big_rev, rev_floor, out)
    return out, big_fwd | big_rev


def limit_fet_gate(v_new, v_old, vto_v):
    """Limit a gate-source step around threshold (SPICE fetlim), elementwise."""
    v_new = np.asarray(v_new, dtype=float)
    v_old = np.asarray(v_old, dtype=float)
    vto_v = np.asarray(vto_v, dtype=float)
    vtsthi = np.abs(2 * (v_old - vto_v)) + 2
    vtstlo = vtsthi / 2 + 2
    vtox = vto_v + 3.5
    delv = v_new - v_old
    out = v_new.copy()
    on = v_old >= vto_v
    strong = on & (v_old >= vtox)
    # strongly on, going off
    m = strong & (delv <= 0) & (v_new >= vtox) & (-delv > vtstlo)
    out = np.where(m, v_old - vtstlo, out)
    m = strong & (delv <= 0) & (v_new < vtox)
    out = np.where(m, np.maximum(v_new, vto_v + 2), out)
    m = strong & (delv > 0) & (delv >= vtsthi)
    out = np.where(m, v_old + vtsthi, out)
    middle = on & ~strong
    out = np.where(middle & (delv <= 0), np.maximum(v_new, vto_v - 0.5), out)
    out = np.where(middle & (delv > 0), np.minimum(v_new, vto_v + 4), out)
    off = ~on
    out = np.where(off & (delv <= 0) & (-delv > vtsthi), v_old - vtsthi, out)
    vtemp = vto_v + 0.5
    m = off & (delv > 0)
    out = np.where(m & (v_new <= vtemp) & (delv > vtstlo), v_old + vtstlo, out)
    out = np.where(m & (v_new > vtemp), vtemp, out)
    return out


def limit_drain_source(v_new, v_old):
    """Limit a drain-source step (SPICE limvds), elementwise."""
    v_new = np.asarray(v_new, dtype=float)
    v_old = np.asarray(v_old, dtype=float)
    hi = v_old >= 3.5
    up = v_new > v_old
    out = np.where(hi & up, np.minimum(v_new, 3 * v_old + 2), v_new)
    out = np.where(hi & ~up & (v_new < 3.5), np.maximum(v_new, 2), out)
    out = np.where(~hi & up, np.minimum(v_new, 4), out)
    out = np.where(~hi & ~up, np.maximum(v_new, -0.5), out)
    return out


def depletion_capacitance(v, c0_f, vj_v, m, fc=0.5):
    """Depletion capacitance of a junction at forward voltage ``v`` (F), elementwise.

    ``c0 / (1 - v/vj)^m`` below ``fc*vj``; above it the SPICE linear extension
    ``c0/(1-fc)^(1+m) * (1 - fc*(1+m) + m*v/vj)``.
    """
    v = np.asarray(v, dtype=float)
    c0_f = np.asarray(c0_f, dtype=float)
    below = v < fc * vj_v
    with np.errstate(invalid="ignore", divide="ignore"):
        c_low = c0_f * np.power(np.maximum(1 - v / vj_v, 1e-12), -m)
        c_high = c0_f / np.power(1 - fc, 1 + m) * (1 - fc * (1 + m) + m * v / vj_v)
    return np.where(below, c_low, c_high)


def safe_exp(x):
    return np.exp(np.minimum(x, MAX_EXP_ARG))


def field_arrays(target, record_type, params: list) -> None:
    """Set on ``target`` one float array per field of ``record_type`` (a dataclass
    with slots) over the records ``params``, skipping ``name``: a device group's columns."""
    import numpy as np
    for field in record_type.__slots__:
        if field != "name":
            setattr(target, field, np.array([getattr(q, field) for q in params], dtype=float))
