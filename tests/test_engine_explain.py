"""Explanations, stage names, op tables, report shape, and failures that must not give numbers.

Formula references: Razavi ch. 3 (CG input, degenerated drain, follower, diode
load), Sedra & Smith ch. 7 (BJT base/emitter); shunt feedback Rf/(1+A) (Sedra &
Smith feedback chapter, from memory).  Exact values: ngspice-39 AC (same decks as
test_engine_ngspice).
"""

from __future__ import annotations

import json
import math

import pytest

import ngspice_harness as ng
from engine_builder import flat_from_text
from lintamp.rulekit.impedance_report import impedance_report
from lintamp.engine.looking_into import explain_node
from lintamp.engine.op_table import impedance_class_by_inspection, load_op_table, operating_point_from_table
from lintamp.engine.operating_point import (
    CannotEvaluateError,
    OperatingPointError,
    SolveOptions,
    solve_operating_point,
)
from lintamp.engine.small_signal import ImpedanceSolver
from lintamp.engine.stages import recognise_stages
from lintamp.circuit.flat import FlatCircuit, FlatDevice, SourceValues
from lintamp.location import Location

NCH = ".model nch nmos level=1 vto=0.5 kp=200u gamma=0.5 phi=0.7 lambda=0.1\n"
CG = "cg\n" + NCH + "vdd vdd 0 3\nvg g 0 1.5\ni1 s 0 100u\nrd vdd d 10k\nm1 d g s 0 nch w=10u l=1u\n"


def test_cg_source_branch_formula_and_exact_agree():
    # Razavi CG input (R_D + r_o)/(1 + (g_m+g_mb) r_o); 1301.1 ohm (analog-knowledge 5.3, ngspice-39)
    expl = explain_node(flat_from_text(CG), "s", 1e3)
    assert abs(expl.z_ohm) == pytest.approx(1301.1, abs=0.1)
    src = [b for b in expl.branches if b.elements == ["m1"]][0]
    assert "source of m1" in src.via and src.formula.startswith("(R_D + r_o)")
    assert abs(src.z_ohm) == pytest.approx(1301.1, abs=0.1)
    assert src.terms["R_D_ohm"] == pytest.approx(10e3, rel=1e-6)
    assert not src.note and not expl.notes


def test_branch_shares_combine_to_the_headline():
    # KCL: the exact branch shares are in parallel to the driving-point impedance (MNA, common practice)
    deck = ("d\n" + NCH + "vdd vdd 0 3\nvg1 g1 0 1.5\nvg2 g2 0 1.5\nit t 0 200u\nrt t 0 50k\n"
            "rd1 vdd d1 10k\nrd2 vdd d2 10k\nm1 d1 g1 t 0 nch w=10u l=1u\nm2 d2 g2 t 0 nch w=10u l=1u\n")
    expl = explain_node(flat_from_text(deck), "t", 1e3)
    total = sum(1 / b.z_mna_ohm for b in expl.branches if not math.isinf(abs(b.z_mna_ohm)))
    assert 1 / total == pytest.approx(expl.z_ohm, rel=1e-9)


def test_shunt_feedback_branch():
    # Rf/(1+A) for an ideal inverting gain of 9 (analog-knowledge 5.6): 1.000 kohm
    deck = "t\nvb b 0 0\nrb b in 1e12\ne1 out 0 in 0 -9\nrf in out 10k\n"
    expl = explain_node(flat_from_text(deck), "in", 0.0)
    rf = [b for b in expl.branches if b.elements == ["rf"]][0]
    assert rf.formula.startswith("R_rf/(1 + A)")
    assert rf.terms["A_v"] == pytest.approx(9.0)
    assert abs(rf.z_ohm) == pytest.approx(1000.0, rel=1e-9)


def test_mos_shunt_feedback_gate_and_drain():
    # CS with RF drain->gate: Rin = (RF + R_D')/(1 + g_m R_D') (KCL, from memory), here held to
    # ngspice-39's AC analysis of the same deck; the drain sees r_o || 1/g_m because the gate
    # follows the drain at DC
    deck = "s\n" + NCH + "vdd vdd 0 3\nrd vdd d 10k\nrf d g 100k\nm1 d g 0 0 nch w=10u l=1u\n"
    circuit = flat_from_text(deck)
    op = solve_operating_point(circuit)
    expl = explain_node(circuit, "g", 0.0, op)
    (z_ref,) = ng.impedance(deck, "g", [1.0])  # ngspice-39 AC analysis (no capacitances: DC value)
    assert abs(expl.z_ohm) == pytest.approx(abs(z_ref), rel=1e-3)
    expl_d = explain_node(circuit, "d", 0.0, op)
    m1 = [b for b in expl_d.branches if b.elements == ["m1"]][0]
    assert abs(m1.z_ohm) == pytest.approx(abs(m1.z_mna_ohm), rel=1e-6)


def test_mismatch_is_noted_not_hidden():
    # with the gate capacitances the resistive drain form is off at 1 GHz; the explainer must say so
    deck = ("c\n.model nc nmos level=1 vto=0.5 kp=200u lambda=0.1 tox=9n cgdo=3e-10\n"
            "vdd vdd 0 3\nvg gg 0 0.8\nrg gg g 10k\nrd vdd d 10k\nm1 d g 0 0 nc w=10u l=1u\n")
    expl = explain_node(flat_from_text(deck), "d", 1e9)
    assert any("apart" in n for n in expl.notes)


def test_bjt_emitter_branch():
    # Sedra & Smith: emitter (R_B + r_pi)/(beta+1) || r_o = 121.82 ohm (analog-knowledge 5.4)
    deck = ("e\n.model qn npn is=1e-16 bf=100 vaf=100\nvcc vcc 0 5\nvbb bb 0 2\nrb bb b 10k\nie e 0 1m\n"
            "q1 vcc b e qn\n")
    expl = explain_node(flat_from_text(deck), "e", 1e3)
    q = [b for b in expl.branches if b.elements == ["q1"]][0]
    assert "emitter" in q.via and q.terms["R_B_ohm"] == pytest.approx(10e3)
    assert abs(q.z_ohm) == pytest.approx(121.82, abs=0.02)


def test_stage_names():
    # textbook stage vocabulary (Razavi ch. 3 and 5); AC on an input source marks it as a signal
    deck = ("s\n" + NCH + "vdd vdd 0 3\nvin in 0 dc 1.5 ac 1\nvin2 in2 0 dc 1.5 ac 1\nvb b 0 0.8\n"
            "vcas cas 0 1.8\nit t 0 200u\nm1 d1 in t 0 nch w=10u l=1u\nm2 d2 in2 t 0 nch w=10u l=1u\n"
            "rd1 vdd d1 10k\nrd2 vdd d2 10k\nm3 vdd d1 o 0 nch w=10u l=1u\nio o 0 100u\n"
            "iref vdd r 50u\nm4 r r 0 0 nch w=10u l=1u\nm5 x r 0 0 nch w=10u l=1u\n"
            "m6 y cas x 0 nch w=10u l=1u\nry vdd y 10k\nm7 z b 0 0 nch w=10u l=1u\nrz vdd z 10k\n")
    roles = {s.device: s.role for s in recognise_stages(flat_from_text(deck))}
    assert roles["m1"] == roles["m2"] == "differential pair"
    assert roles["m3"] == "common drain (source follower)"
    assert roles["m4"] == "current-mirror reference (diode-connected)"
    assert roles["m5"] == "current-mirror output"
    assert roles["m6"] == "cascode"
    assert roles["m7"] == "current source (fixed bias)"


def test_op_table_replaces_an_unevaluable_model():
    # a BSIM-level model cannot be evaluated; the user's table (values of the 5.3 CG op, ngspice-39)
    # gives the same 1301.1 ohm
    deck = CG.replace("level=1", "level=54")
    circuit = flat_from_text(deck)
    with pytest.raises(CannotEvaluateError) as err:
        solve_operating_point(circuit)
    assert "m1" in str(err.value) and "level 54" in str(err.value)
    table = load_op_table("name,gm,gds,gmb,ids,region\nm1,6.764272785e-4,8.742140256e-6,1.505834190e-4,1e-4,saturation\n")
    op = operating_point_from_table(circuit, table)
    assert abs(ImpedanceSolver(circuit, op, 1e3).z("s")) == pytest.approx(1301.1, abs=0.1)
    js = load_op_table(json.dumps({"devices": [{"name": "m1", "gm": 6.764272785e-4, "gds": 8.742140256e-6,
                                                "gmb": 1.505834190e-4}]}))
    assert js["m1"].values["gm"] == pytest.approx(6.764272785e-4)
    report = impedance_report(circuit, "s", 1e3, table=table)
    assert report["operating_point"] == "table"
    assert report["z_ohm"]["mag"] == pytest.approx(1301.1, abs=0.1)


def test_report_shape_and_assumed_fallback():
    # INTERFACE.md `lintamp impedance --format json` keys
    report = impedance_report(flat_from_text(CG), "s", 1000.0)
    assert set(report) >= {"node", "freq_hz", "z_ohm", "operating_point", "branches", "notes"}
    assert set(report["z_ohm"]) >= {"mag", "phase_deg", "re", "im"}
    assert report["operating_point"] == "level1"
    assert all({"via", "formula", "z_ohm"} <= set(b) for b in report["branches"])
    json.dumps(report, allow_nan=False)
    assumed = impedance_report(flat_from_text(CG.replace("level=1", "level=54")), "s", 1000.0)
    assert assumed["operating_point"] == "assumed" and assumed["class"] == "low"
    assert any("by inspection" in n for n in assumed["notes"])


def test_inspection_classes():
    # impedance classes by inspection (analog-knowledge section 3, common practice)
    circuit = flat_from_text(CG)
    assert impedance_class_by_inspection(circuit, "s")[0] == "low"
    assert impedance_class_by_inspection(circuit, "g")[0] == "ac-ground"
    assert impedance_class_by_inspection(circuit, "d")[0] == "resistive"


def test_singular_gate_names_the_node():
    # a gate reached only through a capacitor has no DC path (analog-knowledge 4.1; ngspice: singular matrix)
    deck = "f\n" + NCH + "vdd vdd 0 3\nvin in 0 1\ncc in g 1p\nrd vdd d 10k\nm1 d g 0 0 nch w=10u l=1u\n"
    with pytest.raises(OperatingPointError) as err:
        solve_operating_point(flat_from_text(deck))
    assert "singular" in str(err.value) and " g" in str(err.value)


def test_voltage_source_loop_is_singular():
    # two ideal sources in parallel (analog-knowledge 4.4)
    deck = "l\nv1 a 0 1\nv2 a 0 2\nr1 a 0 1k\n"
    with pytest.raises(OperatingPointError) as err:
        solve_operating_point(flat_from_text(deck))
    assert "v1" in str(err.value) or "v2" in str(err.value)


def test_no_convergence_gives_an_error_not_numbers():
    # an iteration budget too small for a stiff diode string: must fail loudly (from memory: SPICE itl limits)
    deck = "d\n.model dd d is=1e-14\nv1 a 0 50\nd1 a b dd\nd2 b c dd\nd3 c 0 dd\n"
    with pytest.raises(OperatingPointError) as err:
        solve_operating_point(flat_from_text(deck), SolveOptions(max_iterations=3, max_total_iterations=10))
    assert "no DC convergence" in str(err.value)


def test_other_devices_cannot_be_evaluated():
    c = FlatCircuit()
    loc = Location("<t>", 1)
    c.add(FlatDevice("v1", "vsource", (c.net("a"), 0), loc, source=SourceValues(dc=1.0)))
    c.add(FlatDevice("b1", "other", (c.net("a"), 0), loc, kind_detail="behavioural source"))
    with pytest.raises(CannotEvaluateError) as err:
        solve_operating_point(c)
    assert err.value.devices == [("b1", "behavioural source")]
