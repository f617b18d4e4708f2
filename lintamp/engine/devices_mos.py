"""MOSFET level 1 (Shichman-Hodges) as ngspice's MOS1 evaluates it.

Model defaults and equations: ngspice MOS1 (``mos1set.c``, ``mos1temp.c``,
``mos1load.c``), summarised in analog-knowledge section 2.  Everything is written
for arrays so that a whole group of transistors is evaluated in one numpy pass.

Left out: subthreshold current (level 1 has none), drain/source series
resistances RD/RS/RSH (reported as unsupported), temperature dependence of PHI,
VTO and junction parameters when the circuit temperature differs from TNOM
(only KP and VT are scaled), the Meyer transcapacitances' charge conservation.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lintamp.engine.devices_common import (
    CHARGE_C,
    EPS_OX_F_PER_M,
    EPS_SI_F_PER_M,
    GMIN_S,
    critical_voltage,
    depletion_capacitance,
    limit_drain_source,
    limit_fet_gate,
    limit_junction,
    safe_exp,
    thermal_voltage,
)
from lintamp.circuit.flat import FlatDevice
from lintamp.engine.engine_kinds import EngineError

DEFAULT_L_M = 100e-6  # ngspice DEFL / DEFW
DEFAULT_W_M = 100e-6
INTRINSIC_CARRIERS_PER_M3 = 1.45e16


class UnsupportedModel(EngineError, ValueError):
    """The device's model is outside what lintamp evaluates (reason in the message)."""


@dataclass(slots=True)
class MosParams:
    """Resolved level-1 parameters of one transistor (type-normalised: VTO > 0 = enhancement)."""

    name: str
    sign: float  # +1 NMOS, -1 PMOS
    vto_v: float  # already multiplied by sign
    beta_a_per_v2: float  # KP * M * W / Leff
    gamma_sqrt_v: float
    phi_v: float
    lambda_per_v: float
    is_drain_a: float
    is_source_a: float
    vt_v: float
    leff_m: float
    w_m: float
    m: float
    kp_a_per_v2: float
    cox_total_f: float  # Cox' * W * Leff * M, 0 when TOX not given
    cgso_f: float
    cgdo_f: float
    cgbo_f: float
    cbd0_f: float
    cbs0_f: float
    cbdsw0_f: float
    cbssw0_f: float
    pb_v: float
    mj: float
    mjsw: float
    fc: float


def _area_factor(dev: FlatDevice) -> float:
    """``area`` times ``m``; junction parasitics divide by it, so it must be positive."""
    area = float(dev.params.get("area", 1.0)) * float(dev.params.get("m", 1.0))
    if not area > 0.0:  # also false for nan
        raise UnsupportedModel(f"area x m is {area:g}; a device needs a positive area")
    return area


def _model_value(p: dict[str, float], *names: str, default: float | None = None) -> float | None:
    for n in names:
        if n in p:
            return float(p[n])
    return default


def mos_params(dev: FlatDevice, temp_c: float = 27.0) -> MosParams:
    """Resolve a level-1 transistor's parameters with ngspice's defaults.

    Raises
    ------
    UnsupportedModel
        Level other than 1, series resistances, or a non-positive effective length.
    """
    model = dev.model
    p = dict(model.params) if model is not None else {}
    level = model.level if model is not None else 1
    if level != 1:
        raise UnsupportedModel(f"MOS level {level} (only level 1 is evaluated)")
    for key in ("rd", "rs", "rsh"):
        if p.get(key, 0.0):
            raise UnsupportedModel(f"model parameter {key.upper()} (series resistance) is not evaluated")
    sign = -1.0 if dev.kind == "pmos" else 1.0
    inst = dev.params
    w = float(inst.get("w", DEFAULT_W_M))
    length = float(inst.get("l", DEFAULT_L_M))
    mult = float(inst.get("m", 1.0))
    ld = _model_value(p, "ld", default=0.0)
    leff = length - 2 * ld
    if leff <= 0 or w <= 0:
        raise UnsupportedModel(f"effective length {leff:g} m or width {w:g} m is not positive")
    tnom_c = _model_value(p, "tnom", default=27.0)
    vt_nom = thermal_voltage(tnom_c)
    tox = _model_value(p, "tox", default=0.0)
    cox_per_m2 = EPS_OX_F_PER_M / tox if tox > 0 else 0.0
    kp = _model_value(p, "kp")
    if kp is None:
        if cox_per_m2 > 0:
            u0 = _model_value(p, "u0", "uo", default=600.0)
            kp = u0 * cox_per_m2 * 1e-4
        else:
            kp = 2e-5
    phi = _model_value(p, "phi")
    gamma = _model_value(p, "gamma")
    vto = _model_value(p, "vto", "vt0")
    nsub = _model_value(p, "nsub")
    if cox_per_m2 > 0 and nsub is not None and nsub * 1e6 > INTRINSIC_CARRIERS_PER_M3:
        # Process-parameter path of mos1temp.c: user-given VTO/GAMMA/PHI win.
        if phi is None:
            phi = max(0.1, 2 * vt_nom * np.log(nsub * 1e6 / INTRINSIC_CARRIERS_PER_M3))
        tnom_k = tnom_c + 273.15
        egfet1 = 1.16 - (7.02e-4 * tnom_k * tnom_k) / (tnom_k + 1108)
        fermis = sign * 0.5 * phi
        tpg = _model_value(p, "tpg", default=1.0)
        wkfng = 3.2
        if tpg != 0:
            fermig = sign * tpg * 0.5 * egfet1
            wkfng = 3.25 + 0.5 * egfet1 - fermig
        wkfngs = wkfng - (3.25 + 0.5 * egfet1 + fermis)
        if gamma is None:
            gamma = np.sqrt(2 * EPS_SI_F_PER_M * CHARGE_C * nsub * 1e6) / cox_per_m2
        if vto is None:
            nss = _model_value(p, "nss", default=0.0)
            vfb = wkfngs - nss * 1e4 * CHARGE_C / cox_per_m2
            vto = vfb + sign * (gamma * np.sqrt(phi) + phi)
    phi = 0.6 if phi is None else phi
    gamma = 0.0 if gamma is None else gamma
    vto = 0.0 if vto is None else vto
    ratio = (temp_c + 273.15) / (tnom_c + 273.15)
    kp_t = kp * ratio ** -1.5
    is_a = _model_value(p, "is", default=1e-14)
    js = _model_value(p, "js", default=0.0)
    ad = float(inst.get("ad", 0.0))
    as_ = float(inst.get("as", 0.0))
    pd = float(inst.get("pd", 0.0))
    ps = float(inst.get("ps", 0.0))
    if js == 0 or ad == 0 or as_ == 0:
        is_d = is_s = is_a * mult
    else:
        is_d, is_s = js * ad * mult, js * as_ * mult
    cj = _model_value(p, "cj", default=0.0)
    cjsw = _model_value(p, "cjsw", default=0.0)
    cbd = _model_value(p, "cbd")
    cbs = _model_value(p, "cbs")
    return MosParams(
        name=dev.name,
        sign=sign,
        vto_v=sign * vto,
        beta_a_per_v2=kp_t * mult * w / leff,
        gamma_sqrt_v=gamma,
        phi_v=phi,
        lambda_per_v=_model_value(p, "lambda", default=0.0),
        is_drain_a=is_d,
        is_source_a=is_s,
        vt_v=thermal_voltage(temp_c),
        leff_m=leff,
        w_m=w,
        m=mult,
        kp_a_per_v2=kp_t,
        cox_total_f=cox_per_m2 * leff * w * mult,
        cgso_f=_model_value(p, "cgso", default=0.0) * w * mult,
        cgdo_f=_model_value(p, "cgdo", default=0.0) * w * mult,
        cgbo_f=_model_value(p, "cgbo", default=0.0) * leff * mult,
        cbd0_f=(cbd * mult) if cbd is not None else cj * ad * mult,
        cbs0_f=(cbs * mult) if cbs is not None else cj * as_ * mult,
        cbdsw0_f=cjsw * pd * mult,
        cbssw0_f=cjsw * ps * mult,
        pb_v=_model_value(p, "pb", default=0.8),
        mj=_model_value(p, "mj", default=0.5),
        mjsw=_model_value(p, "mjsw", default=0.5),
        fc=_model_value(p, "fc", default=0.5),
    )


class MosGroup:
    """Arrays of :class:`MosParams` for vectorised evaluation."""

    def __init__(self, params: list[MosParams]):
        self.params = params
        self.names = [q.name for q in params]
        for field in MosParams.__slots__:
            if field == "name":
                continue
            setattr(self, field, np.array([getattr(q, field) for q in params], dtype=float))
        self.vcrit_d_v = critical_voltage(self.vt_v, self.is_drain_a)
        self.vcrit_s_v = critical_voltage(self.vt_v, self.is_source_a)

    def __len__(self) -> int:
        return len(self.params)


@dataclass(slots=True)
class MosEvaluation:
    """Result of evaluating a group at normalised controlling voltages.

    ``current_a[k, t]`` is the current into terminal t (d, g, s, b) of device k
    (real polarity); ``jacobian_s[k, t, u]`` = d current[t] / d V[u].
    """

    current_a: np.ndarray
    jacobian_s: np.ndarray
    ids_a: np.ndarray  # channel current drain -> source, real polarity
    gm_s: np.ndarray
    gds_s: np.ndarray
    gmb_s: np.ndarray
    gbd_s: np.ndarray
    gbs_s: np.ndarray
    vth_v: np.ndarray  # real polarity (negative for PMOS)
    vdsat_v: np.ndarray  # magnitude
    von_v: np.ndarray  # normalised
    vgs_v: np.ndarray
    vds_v: np.ndarray
    vbs_v: np.ndarray  # normalised controlling voltages
    mode: np.ndarray  # +1 normal, -1 drain and source swapped
    region: list[str]


def mos_evaluate(g: MosGroup, vgs, vds, vbs) -> MosEvaluation:
    """Evaluate a level-1 group at normalised (NMOS-sense) vgs, vds, vbs.

    Notes
    -----
    O(n) in the number of devices.  Equations of ngspice ``mos1load.c``.
    """
    vgs = np.asarray(vgs, float)
    vds = np.asarray(vds, float)
    vbs = np.asarray(vbs, float)
    vbd = vbs - vds
    vgd = vgs - vds
    vt = g.vt_v
    # bulk junctions (with GMIN, as SPICE)
    def junction(v, isat):
        ex = safe_exp(v / vt)
        cond = np.where(v <= -3 * vt, GMIN_S, isat * ex / vt + GMIN_S)
        cur = np.where(v <= -3 * vt, GMIN_S * v - isat, isat * (ex - 1) + GMIN_S * v)
        return cur, cond

    cbs, gbs = junction(vbs, g.is_source_a)
    cbd, gbd = junction(vbd, g.is_drain_a)
    mode = np.where(vds >= 0, 1.0, -1.0)
    normal = mode > 0
    vb_eff = np.where(normal, vbs, vbd)
    vg_eff = np.where(normal, vgs, vgd)
    vd_eff = np.abs(vds)
    sqrt_phi = np.sqrt(g.phi_v)
    sarg = np.where(
        vb_eff <= 0,
        np.sqrt(np.maximum(g.phi_v - vb_eff, 0.0)),
        np.maximum(0.0, sqrt_phi - vb_eff / (2 * sqrt_phi)),
    )
    von = g.vto_v + g.gamma_sqrt_v * (sarg - sqrt_phi)
    vgst = vg_eff - von
    vdsat = np.maximum(vgst, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        arg = np.where(sarg <= 0, 0.0, g.gamma_sqrt_v / (2 * sarg))
    beta = g.beta_a_per_v2
    lam = g.lambda_per_v
    betap = beta * (1 + lam * vd_eff)
    on = vgst > 0
    sat = vgst <= vd_eff
    cdrain = np.where(on, np.where(sat, 0.5 * betap * vgst**2, betap * vd_eff * (vgst - 0.5 * vd_eff)), 0.0)
    gm = np.where(on, np.where(sat, betap * vgst, betap * vd_eff), 0.0)
    gds = np.where(
        on,
        np.where(
            sat,
            0.5 * lam * beta * vgst**2,
            betap * (vgst - vd_eff) + lam * beta * vd_eff * (vgst - 0.5 * vd_eff),
        ),
        0.0,
    )
    gmb = gm * arg
    n = len(g)
    # channel current d->s (normalised) and its derivatives w.r.t. (vd, vg, vs, vb)
    ich = mode * cdrain
    dch = np.zeros((n, 4))
    dch[:, 0] = np.where(normal, gds, gm + gds + gmb)
    dch[:, 1] = np.where(normal, gm, -gm)
    dch[:, 2] = np.where(normal, -(gm + gds + gmb), -gds)
    dch[:, 3] = np.where(normal, gmb, -gmb)
    cur = np.zeros((n, 4))
    cur[:, 0] = ich - cbd
    cur[:, 2] = -ich - cbs
    cur[:, 3] = cbd + cbs
    jac = np.zeros((n, 4, 4))
    jac[:, 0, :] = dch
    jac[:, 0, 0] += gbd
    jac[:, 0, 3] -= gbd
    jac[:, 2, :] = -dch
    jac[:, 2, 2] += gbs
    jac[:, 2, 3] -= gbs
    jac[:, 3, 0] = -gbd
    jac[:, 3, 2] = -gbs
    jac[:, 3, 3] = gbd + gbs
    region = ["cutoff" if not o else ("saturation" if s else "triode") for o, s in zip(on, sat)]
    return MosEvaluation(
        current_a=cur * g.sign[:, None],
        jacobian_s=jac,
        ids_a=g.sign * ich,
        gm_s=gm,
        gds_s=gds,
        gmb_s=gmb,
        gbd_s=gbd,
        gbs_s=gbs,
        vth_v=g.sign * von,
        vdsat_v=vdsat,
        von_v=von,
        vgs_v=vgs,
        vds_v=vds,
        vbs_v=vbs,
        mode=mode,
        region=region,
    )


def mos_controls(g: MosGroup, vd, vg, vs, vb):
    """Normalised (vgs, vds, vbs) from real terminal voltages."""
    s = g.sign
    return s * (vg - vs), s * (vd - vs), s * (vb - vs)


def mos_limit(g: MosGroup, new, old):
    """Limit Newton steps of (vgs, vds, vbs) as mos1load.c does; returns (limited, any_limited)."""
    vgs_n, vds_n, vbs_n = (np.asarray(a, float) for a in new)
    vgs_o, vds_o, vbs_o = (np.asarray(a, float) for a in old)
    von = g.vto_v  # threshold without body effect is a fine pivot for the limiter
    vgd_n = vgs_n - vds_n
    vgd_o = vgs_o - vds_o
    fwd = vds_o >= 0
    # forward: limit vgs, then vds
    vgs_f = limit_fet_gate(vgs_n, vgs_o, von)
    vds_f = limit_drain_source(vgs_f - vgd_n, vds_o)
    # reverse: limit vgd, then -vds
    vgd_r = limit_fet_gate(vgd_n, vgd_o, von)
    vds_r = -limit_drain_source(-(vgs_n - vgd_r), -vds_o)
    vgs_r = vgd_r + vds_r
    vgs_l = np.where(fwd, vgs_f, vgs_r)
    vds_l = np.where(fwd, vds_f, vds_r)
    vbs_s, lim_s = limit_junction(vbs_n, vbs_o, g.vt_v, g.vcrit_s_v)
    vbd_d, lim_d = limit_junction(vbs_n - vds_l, vbs_o - vds_o, g.vt_v, g.vcrit_d_v)
    use_source = vds_l >= 0
    vbs_l = np.where(use_source, vbs_s, vbd_d + vds_l)
    lim_j = np.where(use_source, lim_s, lim_d)
    limited = (np.abs(vgs_l - vgs_n) > 1e-12) | (np.abs(vds_l - vds_n) > 1e-12) | lim_j
    return (vgs_l, vds_l, vbs_l), limited


def meyer_capacitances(g: MosGroup, ev: MosEvaluation):
    """Gate capacitances (cgs, cgd, cgb) in farad at the operating point.

    Meyer model as ngspice's ``DEVqmeyer`` (only when TOX is given, i.e. Cox > 0),
    plus the CGSO/CGDO/CGBO overlap capacitances.  AC uses twice the stored
    half-capacitance, as ngspice does at a DC operating point.
    """
    cox = g.cox_total_f
    phi = g.phi_v
    normal = ev.mode > 0
    vgs = np.where(normal, ev.vgs_v, ev.vgs_v - ev.vds_v)
    vds = np.abs(ev.vds_v)
    vgst = vgs - ev.von_v
    vdsat = np.maximum(ev.vdsat_v, 0.0)
    n = len(g)
    cgs = np.zeros(n)
    cgd = np.zeros(n)
    cgb = np.zeros(n)
    for k in range(n):
        c, ph, vst, vd, vsat = cox[k], phi[k], vgst[k], vds[k], vdsat[k]
        if c == 0:
            continue
        if vst <= -ph:
            cgb[k] = c / 2
        elif vst <= -ph / 2:
            cgb[k] = -vst * c / (2 * ph)
        elif vst <= 0:
            cgb[k] = -vst * c / (2 * ph)
            cs = vst * c / (1.5 * ph) + c / 3
            if vd >= vsat:
                cgs[k] = cs
            else:
                vddif = 2 * vsat - vd
                vddif1 = vsat - vd
                cgd[k] = cs * (1 - vsat * vsat / vddif**2)
                cgs[k] = cs * (1 - vddif1 * vddif1 / vddif**2)
        else:
            if vsat <= vd:
                cgs[k] = c / 3
            else:
                vddif = 2 * vsat - vd
                vddif1 = vsat - vd
                cgd[k] = c * (1 - vsat * vsat / vddif**2) / 3
                cgs[k] = c * (1 - vddif1 * vddif1 / vddif**2) / 3
    # swapped mode: the Meyer "source" is the real drain
    cgs_real = np.where(normal, cgs, cgd)
    cgd_real = np.where(normal, cgd, cgs)
    return 2 * cgs_real + g.cgso_f, 2 * cgd_real + g.cgdo_f, 2 * cgb + g.cgbo_f


def junction_capacitances(g: MosGroup, ev: MosEvaluation):
    """Bulk-drain and bulk-source depletion capacitances (F) at the operating point."""
    vbs = ev.vbs_v
    vbd = ev.vbs_v - ev.vds_v
    cbd = depletion_capacitance(vbd, g.cbd0_f, g.pb_v, g.mj, g.fc) + depletion_capacitance(
        vbd, g.cbdsw0_f, g.pb_v, g.mjsw, g.fc
    )
    cbs = depletion_capacitance(vbs, g.cbs0_f, g.pb_v, g.mj, g.fc) + depletion_capacitance(
        vbs, g.cbssw0_f, g.pb_v, g.mjsw, g.fc
    )
    return cbd, cbs
