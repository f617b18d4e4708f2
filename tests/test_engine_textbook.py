"""Engine against textbook forms and the worked numbers of analog-knowledge section 5.

Sources per check: Razavi, Design of Analog CMOS Integrated Circuits, ch. 3
(CS §3.2 with degeneration §3.2.5, diode-connected load §3.2.2, source follower
§3.3, common gate §3.4, cascode §3.5, 1st ed. numbering); Sedra & Smith ch. 7 and
Gray & Meyer ch. 3 for bipolar forms; level-1 equations as in ngspice MOS1
(analog-knowledge section 2).  The 5.x numbers were also reproduced by ngspice-39.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from engine_builder import flat_from_text
from lintamp.engine import formulas as fm
from lintamp.engine.devices_common import thermal_voltage
from lintamp.engine.devices_mos import MosGroup, mos_evaluate, mos_params
from lintamp.engine.operating_point import solve_operating_point
from lintamp.engine.small_signal import ImpedanceSolver
from lintamp.circuit.flat import FlatDevice, ModelCard
from lintamp.location import Location

LOC = Location("<test>", 1)
NCH = ".model nch nmos level=1 vto=0.5 kp=200u gamma=0.5 phi=0.7 lambda=0.1\n"
QN = ".model qn npn is=1e-16 bf=100 vaf=100\n"


def mos(vgs, vds, vbs, kind="nmos", **model):
    params = {"vto": 0.5, "kp": 200e-6, "lambda": 0.1, "gamma": 0.5, "phi": 0.7}
    params.update(model)
    inst = {"w": 10e-6, "l": 1e-6}
    inst.update(params.pop("inst", {}))
    dev = FlatDevice("m1", kind, (1, 2, 3, 4), LOC, model=ModelCard("m", kind, params), params=inst)
    g = MosGroup([mos_params(dev)])
    s = g.sign[0]
    ev = mos_evaluate(g, [s * vgs], [s * vds], [s * vbs])
    return g, ev


def test_thermal_voltage():
    # analog-knowledge section 2 constants (ngspice const.h): 25.865 mV at 27 C
    assert thermal_voltage(27.0) == pytest.approx(25.865e-3, abs=1e-6)


def test_5_1a_saturation():
    # 5.1 a): ID 44.0 uA, gm 440 uS, gds 4.00 uS, gmb 131.5 uS, VDSAT 0.2 V (level-1 square law, Razavi ch. 2)
    _, ev = mos(0.7, 1.0, 0.0)
    assert ev.ids_a[0] == pytest.approx(44.0e-6, rel=1e-3)
    assert ev.gm_s[0] == pytest.approx(440e-6, rel=1e-3)
    assert ev.gds_s[0] == pytest.approx(4.00e-6, rel=1e-3)
    assert ev.gmb_s[0] == pytest.approx(131.5e-6, rel=1e-3)
    assert ev.vdsat_v[0] == pytest.approx(0.2, abs=1e-9)
    assert ev.gm_s[0] / ev.ids_a[0] == pytest.approx(10.0, rel=1e-3)
    assert ev.region == ["saturation"]


def test_5_1b_body_effect():
    # 5.1 b): VTH 0.73359 V, ID 78.07 uA, gm 586.1 uS, gds 7.097 uS, gmb 112.4 uS
    _, ev = mos(1.0, 1.0, -1.0)
    assert ev.vth_v[0] == pytest.approx(0.73359, abs=1e-5)
    assert ev.ids_a[0] == pytest.approx(78.07e-6, rel=1e-3)
    assert ev.gm_s[0] == pytest.approx(586.1e-6, rel=1e-3)
    assert ev.gds_s[0] == pytest.approx(7.097e-6, rel=1e-3)
    assert ev.gmb_s[0] == pytest.approx(112.4e-6, rel=1e-3)


def test_5_1c_triode():
    # 5.1 c): ID 30.30 uA, gm 202 uS, gds 205 uS
    _, ev = mos(0.7, 0.1, 0.0)
    assert ev.region == ["triode"]
    assert ev.ids_a[0] == pytest.approx(30.30e-6, rel=1e-3)
    assert ev.gm_s[0] == pytest.approx(202e-6, rel=1e-3)
    assert ev.gds_s[0] == pytest.approx(205e-6, rel=1e-3)


def test_5_1d_lateral_diffusion():
    # 5.1 d): LD = 0.1u -> Leff = 0.8 um, ID 55.0 uA
    g, ev = mos(0.7, 1.0, 0.0, ld=0.1e-6)
    assert g.leff_m[0] == pytest.approx(0.8e-6)
    assert ev.ids_a[0] == pytest.approx(55.0e-6, rel=1e-3)


def test_5_1e_pmos_sign_flip():
    # 5.1 e): PMOS KP 100u, VTO -0.5, W/L 10, VSG 0.7, VSD 1: |ID| 22.0 uA, gm 220 uS, gds 2.0 uS
    _, ev = mos(-0.7, -1.0, 0.0, kind="pmos", vto=-0.5, kp=100e-6, gamma=0.0)
    assert abs(ev.ids_a[0]) == pytest.approx(22.0e-6, rel=1e-3)
    assert ev.ids_a[0] < 0  # current flows source -> drain in a PMOS
    assert ev.gm_s[0] == pytest.approx(220e-6, rel=1e-3)
    assert ev.gds_s[0] == pytest.approx(2.0e-6, rel=1e-3)


@pytest.mark.parametrize(
    "model,kp",
    [({"tox": 9e-9, "u0": 350}, 134.29e-6), ({"tox": 9e-9}, 230.2e-6), ({}, 2e-5)],
)
def test_5_1f_kp_derivation(model, kp):
    # 5.1 f): KP from U0*eps_ox/TOX (U0 default 600 when TOX given), else 2e-5 (ngspice mos1temp.c)
    dev = FlatDevice("m1", "nmos", (1, 2, 3, 4), LOC, model=ModelCard("m", "nmos", dict(model)), params={})
    p = mos_params(dev)
    assert p.kp_a_per_v2 == pytest.approx(kp, rel=1e-3)
    assert p.w_m == 100e-6 and p.leff_m == 100e-6  # ngspice DEFW/DEFL
    g = MosGroup([p])
    ev = mos_evaluate(g, [1.0], [5.0], [0.0])  # VGS - VTO = 1 V, W = L, LAMBDA 0: ID = KP/2
    assert ev.ids_a[0] == pytest.approx(p.kp_a_per_v2 / 2, rel=1e-9)


def test_5_1g_cs_gain():
    # 5.1 g): Av = -gm (RD || ro) = -4.231 with RD = 10k (Razavi §3.2)
    _, ev = mos(0.7, 1.0, 0.0)
    av = -ev.gm_s[0] * fm.parallel(10e3, 1 / ev.gds_s[0])
    assert av == pytest.approx(-4.231, abs=1e-3)


def test_5_2_formula_values():
    # 5.2: gm 1 mS, gmb 0.2 mS, ro 50k (Razavi ch. 3 CG, SF, degeneration, cascode)
    gm, gmb, ro = 1e-3, 0.2e-3, 50e3
    assert fm.cg_input_ohm(gm, gmb, ro, 0.0) == pytest.approx(819.7, abs=0.1)
    assert fm.cg_input_ohm(gm, gmb, ro, 10e3) == pytest.approx(983.6, abs=0.1)
    assert fm.cg_input_ohm(gm, gmb, ro, 1e6) == pytest.approx(17.21e3, rel=1e-3)
    assert fm.follower_output_ohm(gm, gmb, ro) == pytest.approx(819.7, abs=0.1)
    # SF gain gm/(gm + gmb + 1/ro) = 0.8197, 0.4505 with RL 1k (Razavi §3.3), from the
    # MNA solve of the follower's small-signal model: gm(vg - vs) into s, 1/gmb and ro to ground
    model = "sf\ng1 0 s g s 1m\nrgmb s 0 5k\nro s 0 50k\n"
    for load, av in (("", 0.8197), ("rl s 0 1k\n", 0.4505)):
        solver = ImpedanceSolver(flat_from_text(model + load), None, 0.0, driven="g")
        assert abs(solver.gain_to("s")) == pytest.approx(av, abs=1e-4)
    assert fm.degenerated_drain_ohm(gm, gmb, ro, 1e3) == pytest.approx(111e3, rel=1e-3)
    assert fm.cascode_output_ohm(gm, gmb, ro, ro) == pytest.approx(3.10e6, rel=1e-3)


def z_at(deck, node, freq_hz=1e3):
    circuit = flat_from_text(deck)
    return ImpedanceSolver(circuit, None, freq_hz).z(node)


def test_5_3_common_gate():
    # 5.3: CG op gm 676.4u, gmb 150.6u, gds 8.742u; Rin 1301.1 ohm, Zt 10.00 kohm
    deck = "cg\n" + NCH + "vdd vdd 0 3\nvg g 0 1.5\ni1 s 0 100u\nrd vdd d 10k\nm1 d g s 0 nch w=10u l=1u\n"
    circuit = flat_from_text(deck)
    op = solve_operating_point(circuit)
    v = op.devices["m1"].values
    assert (v["gm_s"], v["gmb_s"], v["gds_s"]) == pytest.approx((676.4e-6, 150.6e-6, 8.742e-6), rel=1e-3)
    solver = ImpedanceSolver(circuit, op, 1e3)
    assert abs(solver.z("s")) == pytest.approx(1301.1, abs=0.1)
    assert abs(solver.transfer("s", "d")) == pytest.approx(10.00e3, rel=1e-3)
    # the same formula from the op values (Razavi CG input)
    assert fm.cg_input_ohm(v["gm_s"], v["gmb_s"], 1 / v["gds_s"], 10e3) == pytest.approx(1301.1, abs=0.1)


def test_5_3_common_gate_high_load_and_poles():
    # 5.3: with a 1 Mohm drain load Rin = 10.403 kohm vs naive 1/(gm+gmb) = 1.161 kohm; Zt = 1.000 Mohm;
    # input poles with 1 pF: 122 MHz vs 15.3 MHz
    # the load is an ideal 100 uA source from VDD in parallel with 1 Mohm to VDD
    deck = ("cg\n" + NCH + "vdd vdd 0 3\nvg g 0 1.5\ni1 s 0 100u\nid vdd d 100u\nrd d vdd 1meg\n"
            "m1 d g s 0 nch w=10u l=1u\n")
    circuit = flat_from_text(deck)
    op = solve_operating_point(circuit)
    solver = ImpedanceSolver(circuit, op, 1e3)
    rin = abs(solver.z("s"))
    v = op.devices["m1"].values
    naive = 1 / (v["gm_s"] + v["gmb_s"])
    assert naive == pytest.approx(1.161e3, rel=1e-3)
    assert rin == pytest.approx(10.403e3, rel=1e-3)
    assert abs(solver.transfer("s", "d")) == pytest.approx(1.000e6, rel=1e-3)
    assert 1 / (2 * math.pi * 1301.1 * 1e-12) == pytest.approx(122e6, rel=0.01)
    assert 1 / (2 * math.pi * 10.403e3 * 1e-12) == pytest.approx(15.3e6, rel=0.01)


def test_5_3_cg_with_source_resistance():
    # 5.3: Rsrc 20k at the source, 75 uA sink: Rin 1286.9 ohm, Zt 9.395 kohm
    deck = ("cg\n" + NCH + "vdd vdd 0 3\nvg g 0 1.5\ni1 s 0 75u\nrsrc s 0 20k\nrd vdd d 10k\n"
            "m1 d g s 0 nch w=10u l=1u\n")
    circuit = flat_from_text(deck)
    # Rin is the CG input itself (Rsrc detached); Zt is with Rsrc in place
    rin = ImpedanceSolver(circuit, None, 1e3, detach=["rsrc"]).z("s")
    assert abs(rin) == pytest.approx(1286.9, abs=0.2)
    solver = ImpedanceSolver(circuit, None, 1e3)
    assert abs(solver.transfer("s", "d")) == pytest.approx(9.395e3, rel=1e-3)


def test_5_3_follower_degeneration_cascode_diode():
    # 5.3: SF Rout 1150.1; degenerated drain 206.7 kohm; cascode 7.050 Mohm (gm2 ro2 ro1 alone 5.70 Mohm);
    # diode-connected at 100 uA 1500.0 ohm (Razavi §3.3, §3.2.5, §3.5, §3.2.2)
    sf = "sf\n" + NCH + "vdd vdd 0 3\nvg g 0 1.5\ni1 s 0 100u\nm1 vdd g s 0 nch w=10u l=1u\n"
    assert abs(z_at(sf, "s")) == pytest.approx(1150.1, abs=0.1)
    csd = "c\n" + NCH + "vd vd 0 2\nlb vd d 1e9\nvg g 0 0.95\nrs s 0 1k\nm1 d g s 0 nch w=10u l=1u\n"
    assert abs(z_at(csd, "d")) == pytest.approx(206.7e3, rel=1e-3)
    casc = ("c\n" + NCH + "vd vd 0 2.5\nlb vd d 1e9\nvg1 g1 0 0.85\nvg2 g2 0 1.8\nm1 x g1 0 0 nch w=10u l=1u\n"
            "m2 d g2 x 0 nch w=10u l=1u\n")
    circuit = flat_from_text(casc)
    op = solve_operating_point(circuit)
    z = abs(ImpedanceSolver(circuit, op, 1e3).z("d"))
    assert z == pytest.approx(7.050e6, rel=1e-3)
    m1, m2 = op.devices["m1"].values, op.devices["m2"].values
    gm_ro_ro = m2["gm_s"] * m2["ro_ohm"] * m1["ro_ohm"]
    assert gm_ro_ro == pytest.approx(5.70e6, rel=1e-2)
    assert fm.cascode_output_ohm(m2["gm_s"], m2["gmb_s"], m1["ro_ohm"], m2["ro_ohm"]) == pytest.approx(z, rel=1e-4)
    md = "d\n" + NCH + "vdd vdd 0 3\ni1 vdd d 100u\nm1 d d 0 0 nch w=10u l=1u\n"
    assert abs(z_at(md, "d")) == pytest.approx(1500.0, abs=0.1)


def test_5_4_bjt_formula_values():
    # 5.4 formula-only (Sedra & Smith ch. 7; Gray & Meyer ch. 3): IC 1 mA, beta 100, VA 100 V
    vt = thermal_voltage(27.0)
    gm = 1e-3 / vt
    rpi, ro = 100 / gm, 100e3
    assert gm == pytest.approx(38.66e-3, rel=1e-3)
    assert rpi == pytest.approx(2.586e3, rel=1e-3)
    assert fm.bjt_base_ohm(gm, rpi, math.inf, 1e3) == pytest.approx(103.6e3, rel=1e-3)
    assert fm.bjt_emitter_ohm(gm, rpi, math.inf, 10e3) == pytest.approx(124.6, abs=0.1)
    assert fm.bjt_collector_ohm(gm, rpi, ro, 1e3) == pytest.approx(2.889e6, rel=1e-3)
    ceiling = (100 + 1) * ro + rpi
    assert ceiling == pytest.approx(10.1e6, rel=1e-2)


def test_5_4_bjt_circuits():
    # 5.4 circuit level: base 105.71 kohm (beta_ac 103.16, r_pi 2586.5), emitter 121.82 ohm,
    # collector 2.963 Mohm, diode-connected 25.865 ohm
    base = "b\n" + QN + "vcc vcc 0 5\nib vcc b 10u\nre e 0 1k\nq1 vcc b e qn\n"
    circuit = flat_from_text(base)
    op = solve_operating_point(circuit)
    v = op.devices["q1"].values
    assert v["beta_ac"] == pytest.approx(103.16, rel=1e-3)
    assert v["rpi_ohm"] == pytest.approx(2586.5, rel=1e-3)
    assert abs(ImpedanceSolver(circuit, op, 1e3).z("b")) == pytest.approx(105.71e3, rel=1e-3)
    emit = "e\n" + QN + "vcc vcc 0 5\nvbb bb 0 2\nrb bb b 10k\nie e 0 1m\nq1 vcc b e qn\n"
    assert abs(z_at(emit, "e")) == pytest.approx(121.82, abs=0.02)
    coll = "c\n" + QN + "vb b 0 1.75\nre e 0 1k\nvc vc 0 3\nlb vc c 1e9\nq1 c b e qn\n"
    assert abs(z_at(coll, "c")) == pytest.approx(2.963e6, rel=1e-3)
    diode = "d\n" + QN + "vcc vcc 0 5\ni1 vcc c 1m\nq1 c c 0 qn\n"
    assert abs(z_at(diode, "c")) == pytest.approx(25.865, abs=0.01)


def test_5_5_diode():
    # 5.5: IS 1e-14, N 1, 1 mA, 27 C: VD 0.65512 V, rd 25.865 ohm (ngspice diode model)
    deck = "d\n.model dd d is=1e-14 n=1\ni1 0 a 1m\nd1 a 0 dd\n"
    circuit = flat_from_text(deck)
    op = solve_operating_point(circuit)
    assert op.v("a") == pytest.approx(0.65512, abs=1e-5)
    assert abs(ImpedanceSolver(circuit, op, 0.0).z("a")) == pytest.approx(25.865, abs=0.01)


def test_5_6_shunt_tia():
    # 5.6: A 9, Rf 10k, Cpd 1 pF: Rin 1.000 kohm, Zt 9.000 kohm, f-3dB 159.2 MHz (shunt feedback, Rf/(1+A))
    deck = "t\nvb b 0 0\nrb b in 1e12\ne1 out 0 in 0 -9\nrf in out 10k\ncpd in 0 1p\n"
    circuit = flat_from_text(deck)
    low = ImpedanceSolver(circuit, None, 1.0)
    assert abs(low.z("in")) == pytest.approx(1.000e3, rel=1e-3)
    assert abs(low.transfer("in", "out")) == pytest.approx(9.000e3, rel=1e-3)
    assert fm.shunt_feedback_ohm(10e3, 9) == pytest.approx(1.000e3)
    corner = ImpedanceSolver(circuit, None, 159.2e6)
    assert abs(corner.z("in")) == pytest.approx(1.000e3 / np.sqrt(2), rel=2e-3)
