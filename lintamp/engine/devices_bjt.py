"""Bipolar transistor: SPICE Gummel-Poon without high-level injection.

Equations and defaults of ngspice ``bjtload.c`` / ``bjtsetup.c`` with IKF, IKR
unset (high injection is reported as unsupported rather than approximated).
Included: IS, BF, BR, NF, NR, VAF, VAR, ISE/NE, ISC/NC, RB/RE/RC (as constant
series resistors; RBM/IRB base-resistance modulation is left out), AREA, M,
CJE/VJE/MJE, CJC/VJC/MJC, TF, TR, FC.  Left out: excess phase (PTF), XTF/VTF/ITF
transit-time bias dependence, XCJC split, substrate junction, temperature
scaling away from TNOM.
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

NEPER_E = np.e


@dataclass(slots=True)
class BjtParams:
    name: str
    sign: float  # +1 NPN, -1 PNP
    is_a: float  # IS * area * m
    bf: float
    br: float
    nf: float
    nr: float
    inv_vaf: float
    inv_var: float
    ise_a: float
    ne: float
    isc_a: float
    nc: float
    vt_v: float
    rb_ohm: float
    re_ohm: float
    rc_ohm: float
    cje_f: float
    vje_v: float
    mje: float
    cjc_f: float
    vjc_v: float
    mjc: float
    tf_s: float
    tr_s: float
    fc: float


def bjt_params(dev: FlatDevice, temp_c: float = 27.0) -> BjtParams:
    """Resolve a transistor's Gummel-Poon parameters with ngspice defaults."""
    p = dict(dev.model.params) if dev.model is not None else {}
    for key in ("ikf", "ik", "ikr", "irb", "ptf", "xtf", "itf", "vtf"):
        if p.get(key, 0.0):
            raise UnsupportedModel(f"model parameter {key.upper()} (high-level/transit-time effect) is not evaluated")
    level = int(p.get("level", 1))
    if level != 1:
        raise UnsupportedModel(f"BJT model level {level} (only the level-1 Gummel-Poon model is evaluated)")
    for key in ("nf", "nr", "bf", "br", "is"):
        if key in p and not p[key] > 0:
            raise UnsupportedModel(f"model parameter {key.upper()} = {p[key]:g} is not positive")
    area = _area_factor(dev)
    vaf = _model_value(p, "vaf", "va", default=0.0)
    var = _model_value(p, "var", "vb", default=0.0)
    sign = -1.0 if dev.kind == "pnp" else 1.0
    return BjtParams(
        name=dev.name,
        sign=sign,
        is_a=_model_value(p, "is", default=1e-16) * area,
        bf=_model_value(p, "bf", default=100.0),
        br=_model_value(p, "br", default=1.0),
        nf=_model_value(p, "nf", default=1.0),
        nr=_model_value(p, "nr", default=1.0),
        inv_vaf=1.0 / vaf if vaf else 0.0,
        inv_var=1.0 / var if var else 0.0,
        ise_a=_model_value(p, "ise", default=0.0) * area,
        ne=_model_value(p, "ne", default=1.5),
        isc_a=_model_value(p, "isc", default=0.0) * area,
        nc=_model_value(p, "nc", default=2.0),
        vt_v=thermal_voltage(temp_c),
        rb_ohm=_model_value(p, "rb", default=0.0) / area,
        re_ohm=_model_value(p, "re", default=0.0) / area,
        rc_ohm=_model_value(p, "rc", default=0.0) / area,
        cje_f=_model_value(p, "cje", default=0.0) * area,
        vje_v=_model_value(p, "vje", "pe", default=0.75),
        mje=_model_value(p, "mje", "me", default=0.33),
        cjc_f=_model_value(p, "cjc", default=0.0) * area,
        vjc_v=_model_value(p, "vjc", "pc", default=0.75),
        mjc=_model_value(p, "mjc", "mc", default=0.33),
        tf_s=_model_value(p, "tf", default=0.0),
        tr_s=_model_value(p, "tr", default=0.0),
        fc=_model_value(p, "fc", default=0.5),
    )


class BjtGroup:
    def __init__(self, params: list[BjtParams]):
        self.params = params
        self.names = [q.name for q in params]
        field_arrays(self, BjtParams, params)
        self.vcrit_v = critical_voltage(self.vt_v, self.is_a)

    def __len__(self) -> int:
        return len(self.params)


@dataclass(slots=True)
class BjtEvaluation:
    """Currents into (c, b, e), real polarity, and their Jacobian; hybrid-pi values."""

    current_a: np.ndarray
    jacobian_s: np.ndarray
    ic_a: np.ndarray
    ib_a: np.ndarray
    gm_s: np.ndarray
    gpi_s: np.ndarray
    gmu_s: np.ndarray
    go_s: np.ndarray
    vbe_v: np.ndarray  # normalised
    vbc_v: np.ndarray
    gbe_s: np.ndarray  # d(Icc)/dvbe before qb, used by TF diffusion charge
    icc_a: np.ndarray
    qb: np.ndarray
    dqb_dvbe: np.ndarray
    region: list[str]


def _diode_current(v, isat, vtn):
    """SPICE junction current with the cubic reverse tail below -3*n*VT."""
    ex = safe_exp(v / vtn)
    fwd = v >= -3 * vtn
    with np.errstate(divide="ignore", invalid="ignore"):
        arg = (3 * vtn / (v * NEPER_E)) ** 3
        cur = np.where(fwd, isat * (ex - 1), -isat * (1 + arg))
        cond = np.where(fwd, isat * ex / vtn, isat * 3 * arg / v)
    return cur, cond


def bjt_evaluate(g: BjtGroup, vbe, vbc) -> BjtEvaluation:
    """Evaluate at normalised (NPN-sense) junction voltages.

    Notes
    -----
    O(n) in the number of devices; ``bjtload.c`` with IKF = IKR = 0.
    """
    vbe = np.asarray(vbe, float)
    vbc = np.asarray(vbc, float)
    vt = g.vt_v
    cbe, gbe = _diode_current(vbe, g.is_a, vt * g.nf)
    cbc, gbc = _diode_current(vbc, g.is_a, vt * g.nr)
    cben, gben = _diode_current(vbe, g.ise_a, vt * g.ne)
    cbcn, gbcn = _diode_current(vbc, g.isc_a, vt * g.nc)
    cben = cben + GMIN_S * vbe
    gben = gben + GMIN_S
    cbcn = cbcn + GMIN_S * vbc
    gbcn = gbcn + GMIN_S
    q1 = 1.0 / (1.0 - g.inv_vaf * vbc - g.inv_var * vbe)
    qb = q1
    dqbdve = q1 * qb * g.inv_var
    dqbdvc = q1 * qb * g.inv_vaf
    cc = (cbe - cbc) / qb - cbc / g.br - cbcn
    cb = cbe / g.bf + cben + cbc / g.br + cbcn
    gpi = gbe / g.bf + gben
    gmu = gbc / g.br + gbcn
    go = (gbc + (cbe - cbc) * dqbdvc / qb) / qb
    gm = (gbe - (cbe - cbc) * dqbdve / qb) / qb - go
    n = len(g)
    cur = np.zeros((n, 3))
    cur[:, 0] = cc
    cur[:, 1] = cb
    cur[:, 2] = -(cc + cb)
    jac = np.zeros((n, 3, 3))
    # columns (vc, vb, ve); vbe = vb - ve, vbc = vb - vc
    jac[:, 0, 0] = go + gmu
    jac[:, 0, 1] = gm - gmu
    jac[:, 0, 2] = -(gm + go)
    jac[:, 1, 0] = -gmu
    jac[:, 1, 1] = gpi + gmu
    jac[:, 1, 2] = -gpi
    jac[:, 2, :] = -(jac[:, 0, :] + jac[:, 1, :])
    on_level = np.maximum(1e-9 * g.is_a / np.maximum(g.is_a, 1e-300), 1e3 * g.is_a)
    be_on = cbe > on_level
    bc_on = cbc > on_level
    region = [
        ("saturation" if c else "forward-active") if e else ("reverse-active" if c else "cutoff")
        for e, c in zip(be_on, bc_on)
    ]
    return BjtEvaluation(
        current_a=cur * g.sign[:, None],
        jacobian_s=jac,
        ic_a=g.sign * cc,
        ib_a=g.sign * cb,
        gm_s=gm,
        gpi_s=gpi,
        gmu_s=gmu,
        go_s=go,
        vbe_v=vbe,
        vbc_v=vbc,
        gbe_s=gbe,
        icc_a=cbe,
        qb=qb,
        dqb_dvbe=dqbdve,
        region=region,
    )


def bjt_controls(g: BjtGroup, vc, vb, ve):
    return g.sign * (vb - ve), g.sign * (vb - vc)


def bjt_limit(g: BjtGroup, new, old):
    vbe_l, lim_e = limit_junction(new[0], old[0], g.vt_v, g.vcrit_v)
    vbc_l, lim_c = limit_junction(new[1], old[1], g.vt_v, g.vcrit_v)
    return (vbe_l, vbc_l), lim_e | lim_c


def bjt_capacitances(g: BjtGroup, ev: BjtEvaluation):
    """(c_be, c_bc) in farad: depletion plus TF/TR diffusion capacitance."""
    gbe_mod = (ev.gbe_s - (ev.icc_a / ev.qb) * ev.dqb_dvbe) / ev.qb
    _, gbc = _diode_current(ev.vbc_v, g.is_a, g.vt_v * g.nr)
    cbe = depletion_capacitance(ev.vbe_v, g.cje_f, g.vje_v, g.mje, g.fc) + g.tf_s * np.where(
        ev.vbe_v > 0, gbe_mod, ev.gbe_s
    )
    cbc = depletion_capacitance(ev.vbc_v, g.cjc_f, g.vjc_v, g.mjc, g.fc) + g.tr_s * gbc
    return cbe, cbc
