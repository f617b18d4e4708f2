"""Junction diode as ngspice evaluates it (``dioload.c`` / ``diosetup.c``).

IS, N, RS (series resistor on an internal node), BV/IBV (breakdown with the plain
exponential, without ngspice's IBV-matching adjustment of BV), CJO/VJ/M/FC, TT,
AREA, M.  Left out: sidewall and tunnelling parameters, temperature scaling
away from TNOM.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lintamp.engine.devices_common import (
    field_arrays,
    GMIN_S,
    critical_voltage,
    depletion_capacitance,
    limit_junction,
    safe_exp,
    thermal_voltage,
)
from lintamp.engine.devices_mos import UnsupportedModel, _area_factor, _model_value
from lintamp.circuit.flat import FlatDevice


@dataclass(slots=True)
class DiodeParams:
    name: str
    is_a: float
    n: float
    vt_v: float
    rs_ohm: float
    bv_v: float  # inf when not given
    cjo_f: float
    vj_v: float
    m: float
    fc: float
    tt_s: float


def diode_params(dev: FlatDevice, temp_c: float = 27.0) -> DiodeParams:
    p = dict(dev.model.params) if dev.model is not None else {}
    level = int(p.get("level", 1))
    if level != 1:
        raise UnsupportedModel(f"diode model level {level} (only the level-1 junction diode is evaluated)")
    for key in ("n", "is"):
        if key in p and not p[key] > 0:
            raise UnsupportedModel(f"model parameter {key.upper()} = {p[key]:g} is not positive")
    area = _area_factor(dev)
    bv = _model_value(p, "bv")
    return DiodeParams(
        name=dev.name,
        is_a=_model_value(p, "is", default=1e-14) * area,
        n=_model_value(p, "n", default=1.0),
        vt_v=thermal_voltage(temp_c),
        rs_ohm=_model_value(p, "rs", default=0.0) / area,
        bv_v=float(bv) if bv else float("inf"),
        cjo_f=_model_value(p, "cjo", "cj0", "cj", default=0.0) * area,
        vj_v=_model_value(p, "vj", "pb", default=1.0),
        m=_model_value(p, "m", "mj", default=0.5),
        fc=_model_value(p, "fc", default=0.5),
        tt_s=_model_value(p, "tt", default=0.0),
    )


class DiodeGroup:
    def __init__(self, params: list[DiodeParams]):
        self.params = params
        self.names = [q.name for q in params]
        field_arrays(self, DiodeParams, params)
        self.vte_v = self.vt_v * self.n
        self.vcrit_v = critical_voltage(self.vte_v, self.is_a)

    def __len__(self) -> int:
        return len(self.params)


@dataclass(slots=True)
class DiodeEvaluation:
    current_a: np.ndarray  # (n, 2): into anode, into cathode
    jacobian_s: np.ndarray
    id_a: np.ndarray
    gd_s: np.ndarray
    vd_v: np.ndarray
    region: list[str]


def diode_evaluate(g: DiodeGroup, vd) -> DiodeEvaluation:
    """Evaluate at junction voltage ``vd`` (anode - cathode). O(n)."""
    vd = np.asarray(vd, float)
    vte = g.vte_v
    ex = safe_exp(vd / vte)
    fwd = vd >= -3 * vte
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        arg = (3 * vte / (vd * np.e)) ** 3
        cd = np.where(fwd, g.is_a * (ex - 1), -g.is_a * (1 + arg))
        gd = np.where(fwd, g.is_a * ex / vte, g.is_a * 3 * arg / vd)
        brk = np.isfinite(g.bv_v) & (vd < -g.bv_v)
        evrev = safe_exp(-(g.bv_v + vd) / vte)
        cd = np.where(brk, -g.is_a * evrev, cd)
        gd = np.where(brk, g.is_a * evrev / vte, gd)
    cd = cd + GMIN_S * vd
    gd = gd + GMIN_S
    n = len(g)
    cur = np.stack([cd, -cd], axis=1)
    jac = np.zeros((n, 2, 2))
    jac[:, 0, 0] = gd
    jac[:, 0, 1] = -gd
    jac[:, 1, 0] = -gd
    jac[:, 1, 1] = gd
    region = ["breakdown" if b else ("forward" if v > 0 else "reverse") for b, v in zip(brk, vd)]
    return DiodeEvaluation(current_a=cur, jacobian_s=jac, id_a=cd, gd_s=gd, vd_v=vd, region=region)


def diode_limit(g: DiodeGroup, new, old):
    return limit_junction(new, old, g.vte_v, g.vcrit_v)


def diode_capacitance(g: DiodeGroup, ev: DiodeEvaluation):
    """Depletion (CJO) plus diffusion (TT * gd) capacitance in farad."""
    return depletion_capacitance(ev.vd_v, g.cjo_f, g.vj_v, g.m, g.fc) + g.tt_s * (ev.gd_s - GMIN_S)
