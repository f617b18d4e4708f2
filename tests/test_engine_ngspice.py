"""Engine against ngspice-39: the same deck text goes to both.

Every check here is "ngspice-39 operating point / AC analysis" unless a comment
says otherwise.  Impedance probe: ``I 0 node AC 1`` with no other AC stimulus,
reading V(node).  Tolerances: |Z| within 1 %, node voltages within 1 mV.
A drain that a test wants "held at a DC voltage but free at AC" is fed through
a 1e9 H inductor from a voltage source (DC short, about 6e12 ohm at 1 kHz).
"""

from __future__ import annotations

import pytest

import ngspice_harness as ng
from engine_builder import flat_from_text
from lintamp.engine.operating_point import solve_operating_point
from lintamp.engine.small_signal import ImpedanceSolver

NCH = ".model nch nmos level=1 vto=0.5 kp=200u gamma=0.5 phi=0.7 lambda=0.1\n"
PCH = ".model pch pmos level=1 vto=-0.5 kp=100u gamma=0.4 phi=0.8 lambda=0.1\n"
QN = ".model qn npn is=1e-16 bf=100 vaf=100\n"
QP = ".model qp pnp is=1e-16 bf=80 vaf=60\n"

CASES = {
    # analog-knowledge 5.3: CG with RD = 10k (Razavi ch. 3 CG section)
    "cg_rd10k": ("cg\n" + NCH + "vdd vdd 0 3\nvg g 0 1.5\ni1 s 0 100u\nrd vdd d 10k\n"
                 "m1 d g s 0 nch w=10u l=1u\n", ["s", "d"], [1e3]),
    # 5.3: CG whose drain sees 1 Mohm and an ideal 100 uA source
    "cg_high_rd": ("cg2\n" + NCH + "vdd vdd 0 3\nvb vb 0 2\nvg g 0 1.5\ni1 s 0 100u\nid vdd d 100u\n"
                   "rd d vb 1meg\nm1 d g s 0 nch w=10u l=1u\n", ["s", "d"], [1e3]),
    # 5.3: CG with a 20k source resistance at the input, 75 uA sink
    "cg_rsrc": ("cg3\n" + NCH + "vdd vdd 0 3\nvg g 0 1.5\ni1 s 0 75u\nrsrc s 0 20k\nrd vdd d 10k\n"
                "m1 d g s 0 nch w=10u l=1u\n", ["s"], [1e3]),
    "cs_plain": ("cs\n" + NCH + "vdd vdd 0 3\nvg g 0 0.7\nrd vdd d 10k\nm1 d g 0 0 nch w=10u l=1u\n",
                 ["d"], [1e3]),
    # 5.3: degenerated CS, drain held at 2 V by the bias inductor
    "cs_degenerated": ("csd\n" + NCH + "vd vd 0 2\nlbias vd d 1e9\nvg g 0 0.95\nrs s 0 1k\n"
                       "m1 d g s 0 nch w=10u l=1u\n", ["d", "s"], [1e3]),
    # 5.3: cascode output, VG1 = 0.85, VG2 = 1.8, VD = 2.5
    "cascode": ("casc\n" + NCH + "vd vd 0 2.5\nlbias vd d 1e9\nvg1 g1 0 0.85\nvg2 g2 0 1.8\n"
                "m1 x g1 0 0 nch w=10u l=1u\nm2 d g2 x 0 nch w=10u l=1u\n", ["d", "x"], [1e3]),
    # 5.3: source follower, 100 uA sink
    "source_follower": ("sf\n" + NCH + "vdd vdd 0 3\nvg g 0 1.5\ni1 s 0 100u\nm1 vdd g s 0 nch w=10u l=1u\n",
                        ["s"], [1e3]),
    # 5.3: diode-connected at 100 uA
    "mos_diode": ("md\n" + NCH + "vdd vdd 0 3\ni1 vdd d 100u\nm1 d d 0 0 nch w=10u l=1u\n", ["d"], [1e3]),
    "nmos_mirror": ("mir\n" + NCH + "vdd vdd 0 3\ni1 vdd ref 50u\nm1 ref ref 0 0 nch w=10u l=1u\n"
                    "m2 out ref 0 0 nch w=20u l=1u\nvo vo 0 1.5\nlbias vo out 1e9\n", ["ref", "out"], [1e3]),
    "pmos_mirror": ("pmir\n" + PCH + "vdd vdd 0 3\ni1 ref 0 40u\nm1 ref ref vdd vdd pch w=20u l=1u\n"
                    "m2 out ref vdd vdd pch w=20u l=1u\nvo vo 0 1.0\nlbias vo out 1e9\n", ["ref", "out"], [1e3]),
    "pmos_cs": ("pcs\n" + PCH + "vdd vdd 0 3\nvg g 0 2.2\nrd d 0 20k\nm1 d g vdd vdd pch w=20u l=1u\n",
                ["d"], [1e3]),
    "diff_pair": ("dp\n" + NCH + "vdd vdd 0 3\nvg1 g1 0 1.5\nvg2 g2 0 1.5\nit t 0 200u\n"
                  "rd1 vdd d1 10k\nrd2 vdd d2 10k\nm1 d1 g1 t 0 nch w=10u l=1u\nm2 d2 g2 t 0 nch w=10u l=1u\n",
                  ["d1", "t"], [1e3]),
    # shunt feedback around a MOS CS: self-biased through RF
    "mos_shunt_feedback": ("sfb\n" + NCH + "vdd vdd 0 3\nrd vdd d 10k\nrf d g 100k\nm1 d g 0 0 nch w=10u l=1u\n",
                           ["g", "d"], [1e3]),
    # 5.6: shunt TIA with an ideal inverting gain of 9, Rf = 10k, Cpd = 1 pF
    "e_tia": ("tia\nvb b 0 0\nrb b in 1e12\ne1 out 0 in 0 -9\nrf in out 10k\ncpd in 0 1p\n",
              ["in"], [1e3, 159.2e6]),
    # 5.4: BJT base with RE = 1k, IB = 10 uA
    "bjt_base": ("qb\n" + QN + "vcc vcc 0 5\nib vcc b 10u\nre e 0 1k\nq1 vcc b e qn\n", ["b"], [1e3]),
    # 5.4: BJT emitter with RB = 10k, 1 mA
    "bjt_emitter": ("qe\n" + QN + "vcc vcc 0 5\nvbb bb 0 2\nrb bb b 10k\nie e 0 1m\nq1 vcc b e qn\n",
                    ["e"], [1e3]),
    # 5.4: BJT collector, VB = 1.75, RE = 1k, VC = 3
    "bjt_collector": ("qc\n" + QN + "vb b 0 1.75\nre e 0 1k\nvc vc 0 3\nlbias vc c 1e9\nq1 c b e qn\n",
                      ["c"], [1e3]),
    "bjt_diode": ("qd\n" + QN + "vcc vcc 0 5\ni1 vcc c 1m\nq1 c c 0 qn\n", ["c"], [1e3]),
    "emitter_follower": ("ef\n" + QN + "vcc vcc 0 5\nvbb bb 0 2\nrb bb b 1k\nre e 0 2k\nq1 vcc b e qn\n",
                         ["e", "b"], [1e3]),
    "pnp_ce": ("pce\n" + QP + "vcc vcc 0 5\nvb b 0 4.3\nrc c 0 2k\nq1 c b vcc qp\n", ["c"], [1e3]),
    # 5.5: diode at 1 mA
    "diode": ("d\n.model dd d is=1e-14 n=1\ni1 0 a 1m\nd1 a 0 dd\n", ["a"], [1e3]),
    # capacitances at two frequencies: MOS Meyer (TOX given) + overlap + junction caps
    "mos_caps": ("mc\n.model nc nmos level=1 vto=0.5 kp=200u gamma=0.5 phi=0.7 lambda=0.1 tox=9n "
                 "cgso=3e-10 cgdo=3e-10 cgbo=2e-10 cbd=20f cbs=20f\n"
                 "vdd vdd 0 3\nvg gg 0 0.8\nrg gg g 10k\nrd vdd d 10k\nm1 d g 0 0 nc w=10u l=1u\n",
                 ["g", "d"], [1e6, 1e9]),
    "bjt_caps": (".model qc npn is=1e-16 bf=100 vaf=100 cje=100f cjc=50f tf=20p\n"
                 "vcc vcc 0 5\nvbb bb 0 0.8\nrb bb b 1k\nrc vcc c 2k\nq1 c b 0 qc\n", ["b", "c"], [1e6, 1e9]),
    "diode_caps": ("dc\n.model dc d is=1e-14 n=1.5 cjo=1p tt=1n\ni1 0 a 100u\nd1 a 0 dc\n", ["a"], [1e6, 1e8]),
    # process-parameter path: KP from U0/TOX, GAMMA/PHI/VTO from NSUB
    "mos_process": ("mp\n.model np nmos level=1 tox=20n u0=450 nsub=1e16 lambda=0.05\n"
                    "vdd vdd 0 3\nvg g 0 1.6\nrd vdd d 20k\nm1 d g 0 0 np w=20u l=2u\n", ["d"], [1e3]),
    # controlled sources: F, G, H
    "controlled": ("ctl\nvin in 0 1\nr1 in a 1k\nvs a b 0\nr2 b 0 1k\nf1 0 c vs 3\nrc c 0 2k\n"
                   "g1 0 d c 0 1m\nrdd d 0 5k\nh1 e 0 vs 500\nre e f 1k\nrf f 0 3k\n", ["c", "d", "f"], [1e3]),
    # R values written as bare parameter names, two resistors sharing one name
    # (ngspice-39 warns "can't find model 'rval'" and then uses the parameter)
    "bare_param_values": ("bp\n.param rval=10k rlow=4.7k\nv1 in 0 3\nr1 in mid rval\n"
                          "r2 mid 0 rval\nr3 mid 0 rlow\n", ["mid"], [1e3]),
    # an RF port source: ngspice-39 puts z0 in series with it in op and AC alike
    "port_source_z0": ("ps\nv1 in 0 dc 1 portnum 1 z0 75\nr1 in mid 50\nr2 mid 0 100\n",
                       ["mid", "in"], [1e3]),
}
# the title line of the BJT/diode cap decks doubles as the first card otherwise
CASES["bjt_caps"] = ("bc\n" + CASES["bjt_caps"][0], *CASES["bjt_caps"][1:])


@pytest.mark.parametrize("name", sorted(CASES))
def test_operating_point_matches_ngspice(name):
    deck, _nodes, _f = CASES[name]
    circuit = flat_from_text(deck, f"{name}.cir")
    nets = [n for n in circuit.nets if n != "0"]
    ref = ng.operating_point(deck, nets)  # ngspice-39 op
    op = solve_operating_point(circuit)
    for net in nets:
        assert op.v(net) == pytest.approx(ref[net], abs=1e-3), net


@pytest.mark.parametrize("name", sorted(CASES))
def test_impedance_matches_ngspice(name):
    deck, nodes, freqs = CASES[name]
    circuit = flat_from_text(deck, f"{name}.cir")
    op = solve_operating_point(circuit)
    for f in freqs:
        solver = ImpedanceSolver(circuit, op, f)
        for node in nodes:
            (z_ref,) = ng.impedance(deck, node, [f])  # ngspice-39 AC analysis
            z = solver.z(node)
            assert abs(z - z_ref) <= 0.01 * abs(z_ref), (node, f, z, z_ref)


@pytest.mark.parametrize(
    "name,dev,params",
    [
        ("cg_rd10k", "m1", ["gm", "gds", "gmbs", "vdsat"]),
        ("cascode", "m2", ["gm", "gds", "gmbs"]),
        ("pmos_mirror", "m2", ["gm", "gds", "gmbs"]),
        ("mos_process", "m1", ["gm", "gds", "gmbs", "von"]),
        ("bjt_collector", "q1", ["gm", "gpi", "go", "gmu"]),
        ("pnp_ce", "q1", ["gm", "gpi", "go"]),
    ],
)
def test_device_parameters_match_ngspice(name, dev, params):
    deck, _n, _f = CASES[name]
    circuit = flat_from_text(deck, f"{name}.cir")
    ref = ng.operating_point(deck, (), [(dev, p) for p in params])  # ngspice-39 @dev[param]
    values = solve_operating_point(circuit).devices[dev].values
    key = {"gm": "gm_s", "gds": "gds_s", "gmbs": "gmb_s", "vdsat": "vdsat_v", "von": "vth_v",
           "gpi": "gpi_s", "go": "go_s", "gmu": "gmu_s"}
    for p in params:
        assert values[key[p]] == pytest.approx(ref[f"@{dev}[{p}]"], rel=1e-3, abs=1e-15), p


def test_transfer_matches_ngspice():
    # ngspice-39 AC: transimpedance of the 5.3 CG stage, source -> drain (about RD = 10k)
    deck = CASES["cg_rd10k"][0]
    circuit = flat_from_text(deck)
    zt = ImpedanceSolver(circuit, None, 1e3).transfer("s", "d")
    ref = ng.transfer(deck, "s", "d", 1e3)
    assert abs(zt - ref) <= 0.01 * abs(ref)
