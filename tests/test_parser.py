"""Parser: cards -> typed statements, one tiny netlist per syntax feature.

Sources: ngspice User's Manual ch. 3-5 (element lines, .subckt, .model, .param,
.func, .global, .options); Berkeley SPICE3 User's Guide "Circuit elements";
../shared/reference/spice-syntax.md (sections 2 and 4) for dialect details.
"""

from __future__ import annotations

import pytest

from lintamp.netlist.parser import parse_text


def parse(body: str):
    return parse_text("title\n" + body)


def only(body: str):
    netlist = parse(body)
    assert [d for d in netlist.diagnostics if d.rule == "parse-error"] == []
    return netlist.top.elements[0]


def test_resistor_capacitor_inductor_values_and_models():
    # ngspice manual 3.2: R/C/L 'n+ n- [value] [model] [params]'
    r = only("R1 A b 10k tc1=1e-3\n")
    assert (r.name, r.nodes, r.value, r.params) == ("R1", ("a", "b"), "10k", {"tc1": "1e-3"})
    assert r.raw_nodes == ("A", "b")
    c = only("C1 a 0 {cval*2} ic=0\n")
    assert c.value == "{cval*2}" and c.params == {"ic": "0"}
    semi = only("Rp a b rpoly l=10u w=1u\n")
    assert semi.model == "rpoly" and semi.value is None and semi.params["l"] == "10u"
    assert only("R2 a b r=5kohm\n").value == "5kohm"


def test_mosfet_nodes_model_and_params():
    # ngspice manual 11.1: 'Mname nd ng ns nb mname [L= W= AD= AS= PD= PS= NRD= NRS= M= ...]'
    m = only("M1 d g s b nch W=1u L=0.18u AD=1p AS=1p PD=4u PS=4u nf=2 m=4\n")
    assert m.nodes == ("d", "g", "s", "b") and m.model == "nch"
    assert m.params["nf"] == "2" and m.params["m"] == "4" and m.params["w"] == "1u"


def test_mosfet_positional_sizes_after_the_model():
    # HSPICE positional L and W after the model (spice-syntax.md 2, from memory)
    m = only("M1 d g s b nch 1u 0.18u\n")
    assert m.model == "nch" and m.params == {"l": "1u", "w": "0.18u"}


def test_mosfet_with_numeric_nodes():
    m = only("M1 1 2 3 4 nch\n")
    assert m.nodes == ("1", "2", "3", "4") and m.model == "nch"


def test_bjt_with_and_without_substrate():
    # SPICE3 user's guide: 'Qname nc nb ne [ns] mname [area]'
    q3 = only("Q1 c b e qn\n")
    assert q3.nodes == ("c", "b", "e") and q3.model == "qn"
    q4 = only("Q2 c b e sub qn 2\n")
    assert q4.nodes == ("c", "b", "e", "sub") and q4.model == "qn" and q4.params["area"] == "2"


def test_model_name_that_looks_like_a_number():
    # ngspice accepts model names starting with a digit once the .model exists
    netlist = parse("D1 a 0 1n4002\n.model 1n4002 d is=1.3f\n")
    assert not netlist.diagnostics
    assert netlist.top.elements[0].model == "1n4002"


def test_device_flags_are_not_models():
    assert only("Q1 3 2 4 qstd off\n").model == "qstd"
    assert only("D1 1 0 tj dmod thermal\n").nodes == ("1", "0", "tj")


def test_independent_sources():
    # ngspice manual 4.1: '[DC] value [AC mag [phase]] [waveform]'
    v = only("V1 vdd 0 DC 3.3 AC 1 90 SIN(0 1 1k)\n")
    assert (v.source.dc, v.source.ac_mag, v.source.ac_phase) == ("3.3", "1", "90")
    assert v.source.waveform == "sin" and v.source.waveform_args == ("0", "1", "1k")
    assert only("V2 a 0 5V\n").source.dc == "5V"
    i = only("I1 0 pd AC 1\n")
    assert i.source.dc is None and i.source.ac_mag == "1"
    assert only("Vn 21 0 DC trnoise(1m 1u 1.0 0.1m)\n").source.waveform == "trnoise"
    assert only("V3 x 0 portnum 3 z0 200\n").source.dc is None


def test_controlled_sources():
    # ngspice manual 5: E/G 'n+ n- nc+ nc- gain', F/H 'n+ n- vname gain', VALUE=, POLY(k)
    e = only("E1 o 0 a b 1e4\n")
    assert e.nodes == ("o", "0", "a", "b") and e.value == "1e4"
    f = only("F1 x 0 vsense 2\n")
    assert f.nodes == ("x", "0") and f.controls == ("vsense",) and f.value == "2"
    ev = only("E2 o 0 VALUE={V(a,b)*1e4}\n")
    assert ev.model == "value" and ev.nodes == ("o", "0", "a", "b")
    gp = only("G2 0 n1 POLY(2) a 0 b 0 0 1m 1m\n")
    assert gp.model == "poly" and gp.nodes == ("0", "n1", "a", "0", "b", "0")
    hp = only("H1 o 0 POLY(2) v1 v2 0 1 1\n")
    assert hp.controls == ("v1", "v2")
    # HSPICE writes the kind after the output nodes (spice-syntax.md 2, from memory)
    ek = only("E2 vgout vg VCVS net9 vcm 1\n")
    assert ek.nodes == ("vgout", "vg", "net9", "vcm") and ek.value == "1"


def test_behavioural_source():
    b = only("B1 o 0 V={V(in)*2}\n")
    assert b.model == "v" and b.nodes == ("o", "0", "in")


def test_subcircuit_call_params_and_pspice_params_keyword():
    # ngspice manual 2.4.3 (X lines with name=value); PSPICE 'PARAMS:' (spice-syntax.md 4)
    x = only("X7 in out vdd 0 opamp gain=1e5\n")
    assert x.nodes == ("in", "out", "vdd", "0") and x.model == "opamp" and x.params == {"gain": "1e5"}
    xp = only("X8 a b filt PARAMS: fc=1k q=0.7\n")
    assert xp.model == "filt" and xp.params == {"fc": "1k", "q": "0.7"}


def test_parameter_value_with_blanks_and_parentheses():
    r = only("R4 out2 OUT R = (time<12ms ? {Rload} : {2*Rload})\n")
    assert r.value == "(time<12ms ? {Rload} : {2*Rload})"


def test_other_letters_read_their_nodes():
    s = only("S1 a b c d swmod on\n")
    assert s.nodes == ("a", "b", "c", "d") and s.model == "swmod"
    w = only("W1 a b vctl wmod\n")
    assert w.nodes == ("a", "b") and w.controls == ("vctl",)
    t = only("T1 a 0 b 0 z0=50 td=1n\n")
    assert t.nodes == ("a", "0", "b", "0")
    a = only("A1 [in1 ~in2 %v in3] out and1\n")
    assert a.nodes == ("in1", "in2", "in3", "out") and a.model == "and1"


def test_too_few_nodes_is_a_parse_error_with_column():
    netlist = parse("M1 d g W=1u\n")
    (diag,) = netlist.diagnostics
    assert diag.rule == "parse-error" and diag.location.line == 2
    assert "nodes and a model" in diag.message


def test_unknown_letter_is_a_parse_error():
    netlist = parse("%junk a b\n")
    assert netlist.diagnostics[0].rule == "parse-error"


def test_subckt_nesting_defaults_and_mismatched_ends():
    netlist = parse(".subckt outer a b w=1u\n.subckt inner x y\nR1 x y 1k\n.ends inner\n"
                    "X1 a b inner\n.ends wrong\n")
    outer = netlist.top.cells["outer"]
    assert outer.ports == ("a", "b") and outer.defaults == {"w": "1u"}
    assert "inner" in outer.cells
    assert [d.rule for d in netlist.diagnostics] == ["mismatched-ends"]


def test_unclosed_subckt_and_stray_ends():
    netlist = parse(".ends\n.subckt open a\nR1 a 0 1\n")
    assert sorted(d.message.split()[0] for d in netlist.diagnostics) == [".ends", ".subckt"]


def test_model_global_options_temp_analyses():
    netlist = parse(".model nch nmos (level=1 vto=0.5 kp=200u)\n.global vdd! vss!\n"
                    ".option scale=1e-6 gmin=1e-12\n.temp 85\n.ac dec 10 1 1g\n.op\n")
    model = netlist.top.models["nch"]
    assert model.type == "nmos" and model.params["kp"] == "200u"
    assert netlist.globals == {"vdd!", "vss!"}
    assert netlist.options["scale"] == "1e-6"
    assert netlist.temperature_c == "85"
    assert [a.kind for a in netlist.analyses] == ["ac", "op"]
    assert netlist.analyses[0].args == ("dec", "10", "1", "1g")


def test_param_and_func():
    netlist = parse(".param a=1 b = {a*2} c='a+b'\n.func sq(x) {x*x}\n")
    assert [(p.name, p.text) for p in netlist.top.params] == [("a", "1"), ("b", "{a*2}"), ("c", "'a+b'")]
    assert netlist.top.funcs["sq"].args == ("x",) and netlist.top.funcs["sq"].body == "x*x"


def test_case_insensitive_names_keep_original_spelling():
    netlist = parse(".SUBCKT Amp IN OUT\nRload IN OUT 1K\n.ENDS Amp\nXA n1 n2 AMP\n")
    assert "amp" in netlist.top.cells
    x = netlist.top.elements[0]
    assert x.model == "amp" and x.name == "XA" and x.key == "xa"
    assert not netlist.diagnostics


def test_cdl_names():
    # CDL: '!' globals, '#' and '<>' in names (spice-syntax.md 2)
    m = only("MM1 net<3> a_n2577_n5175# vss! vss! nch w=1u l=1u\n")
    assert m.nodes == ("net<3>", "a_n2577_n5175#", "vss!", "vss!")


def test_coupling_with_a_core_model():
    # Xyce: 'K1 L1 L2 1 nlcore' -- the nonlinear core's model follows the factor
    k = only("K1 L1 L2 1 nlcore\n")
    assert k.controls == ("l1", "l2") and k.value == "1" and k.model == "nlcore"


def test_subcircuit_spelled_out():
    # '.subcircuit' for '.subckt' occurs in schematic exports (corpus: OpenFASOC lc-dco)
    netlist = parse(".subcircuit ind_top outp outn vdd\nL1 outp outn 1n\n.ends\n")
    assert "ind_top" in netlist.top.cells and not netlist.diagnostics


def test_cdl_instance_slash_separates_nets_from_the_cell():
    # CDL as a schematic tool's layout-comparison export writes 'XI3 n1 n2 / cell' (from
    # memory; 76 ALIGN corpus decks, e.g. fully_differential_gain_boosting_*.sp): the slash
    # is no net
    x = only(".subckt inv a y\nm1 y a 0 0 nch\n.ends\nXI3 in out / inv\n")
    assert x.nodes == ("in", "out") and x.model == "inv"
    x = only(".subckt inv a y\nm1 y a 0 0 nch\n.ends\nXI3 in out inv\n")
    assert x.nodes == ("in", "out") and x.model == "inv"


def test_cdl_slash_instances_of_a_real_export_match_their_cells():
    from pathlib import Path

    from lintamp.api import check_file
    corpus = Path(__file__).resolve().parent.parent.parent / "shared" / "corpus"
    deck = (corpus / "ALIGN-analoglayout__ALIGN-public" / "CircuitsDatabase" / "Unsized_Netlists"
            / "Low frequency analog" / "OTA_topologies" / "full_OTA" / "fully_differential_OTA"
            / "fully_differential_gain_boosting_LG_pnmos_4_cr2_2.sp")
    if not deck.is_file():
        pytest.skip(f"corpus not found at {corpus} (checked out beside the repo as ../shared/corpus)")
    findings = check_file(deck).findings
    assert not [f for f in findings if f.rule == "pin-mismatch"]
    assert not [f for f in findings if f.subject == "/"]


IF_DECK = """* one branch of .if/.elseif/.else is the deck
.param sel={sel}
v1 a 0 1
.if (sel == 1)
r1 a b 1k
.elseif (sel == 2)
r1 a b 3k
.else
r1 a b 9k
.endif
r2 b 0 1k
.end
"""


@pytest.mark.parametrize("sel, r1", [(1, "1k"), (2, "3k"), (5, "9k")])
def test_if_elseif_else_reads_the_branch_the_simulator_reads(sel, r1):
    # ngspice-39 manual, section 2.12 (.if/.elseif/.else/.endif), and ngspice-39's own
    # operating point of the same deck: V(b) = 1 V * 1k / (R1 + 1k)
    from ngspice_harness import ngspice_path, run_deck
    from lintamp.api import check_text

    text = IF_DECK.format(sel=sel)
    netlist = parse_text(text, "if.sp")
    assert [(e.name, e.value) for e in netlist.top.elements] == [("v1", "1"), ("r1", r1), ("r2", "1k")]
    assert not [f for f in check_text(text, "if.sp").findings if f.rule == "duplicate-name"]
    if ngspice_path() is not None:
        got = run_deck(text, ["op", "print v(b)"])
        r1_ohm = {"1k": 1e3, "3k": 3e3, "9k": 9e3}[r1]
        assert got["v(b)"] == pytest.approx(1e3 / (r1_ohm + 1e3), rel=1e-9)


def test_if_nesting_unknown_conditions_and_unbalanced_cards():
    # from memory (ngspice-39 manual 2.12): blocks nest; a branch inside one not
    # taken is not read; a condition lintamp cannot evaluate (an instance parameter)
    # takes its branch with a note; a stray .endif and an unclosed .if are errors
    text = ("* nesting\n.param a=1 b=0\n.if (a)\n.if (b)\nr1 x 0 1\n.else\nr2 x 0 2\n.endif\n"
            ".else\n.if (1)\nr3 x 0 3\n.endif\nr4 x 0 4\n.endif\n"
            ".subckt cell p q w=1\n.if (w > 1)\nra p q 1\n.else\nra p q 2\n.endif\n.ends\n"
            ".endif\n.if (1)\nr9 x 0 9\n.end\n")
    netlist = parse_text(text, "nest.sp")
    assert [e.name for e in netlist.top.elements] == ["r2", "r9"]
    assert [e.value for e in netlist.top.cells["cell"].elements] == ["1"]
    diags = [(d.rule, d.severity, d.location.line) for d in netlist.diagnostics]
    assert ("unsupported-syntax", "info", 16) in diags
    assert ("parse-error", "error", 22) in diags  # .endif without .if
    assert ("parse-error", "error", 23) in diags  # .if never closed


def test_if_elseif_regression_deck_of_ngspice():
    # ngspice's own regression test tests/regression/misc/if-elseif.cir: nested .if,
    # several .elseif, and a lone '=' as comparison ('.elseif (select2 = 2)'); its
    # control block fails unless R1 = 300 ohm is the one read
    from pathlib import Path
    corpus = Path(__file__).resolve().parent.parent.parent / "shared" / "corpus"
    deck = corpus / "imr__ngspice" / "tests" / "regression" / "misc" / "if-elseif.cir"
    if not deck.is_file():
        pytest.skip(f"corpus not found at {corpus} (checked out beside the repo as ../shared/corpus)")
    netlist = parse_text(deck.read_text(encoding="utf-8"), str(deck))
    assert [(e.name, e.value) for e in netlist.top.elements if e.name.lower() == "r1"] == [("R1", "300")]
    assert not [d for d in netlist.diagnostics if d.rule in ("unsupported-syntax", "parse-error")]


def test_include_inside_a_branch_not_taken_is_not_opened(tmp_path):
    # a corner switch (common practice in PDK decks): only the chosen branch's file is
    # read; the other branch's missing file is no warning, and is one when chosen
    from pathlib import Path as _Path

    from lintamp.api import check_file
    from lintamp.config import Config
    (tmp_path / "tt.lib").write_text("r9 a 0 1k\n")
    deck = ("* corners\n.param corner={c}\nv1 a 0 1\n.if (corner == 1)\n.include tt.lib\n.else\n"
            ".include ff.lib\n.lib other.lib fast\n.endif\n.end\n")
    for corner, missing in ((1, []), (2, [7, 8])):
        path = _Path(tmp_path / "top.sp")
        path.write_text(deck.format(c=corner))
        result = check_file(path, Config(root=tmp_path))
        assert [f.location.line for f in result.findings if f.rule == "missing-include"] == missing
        assert ("tt.lib" in " ".join(result.files_read)) == (corner == 1)


@pytest.mark.parametrize("card", ["v39 vdd 0 dc=3.5 pulse ( 0 3.5 10u 10n 10n 1 2 )",
                                  "V39 vdd 0 DC=3.5 PULSE(0 1 6400u 100n 100n 6400u 12800u)"])
def test_dc_assignment_before_a_waveform(card):
    # corpus: ngspice examples/soa/nic_soa.cir and xspice/d_lut/mult4bit.spi; ngspice-39's
    # operating point puts vdd at the dc value, 3.5 V, and the pulse is the waveform
    import ngspice_harness as ng
    from lintamp.engine.operating_point import solve_operating_point
    from lintamp.api import flat_circuit_from_text
    deck = f"dc then waveform\n{card}\nr1 vdd 0 1k\n.end\n"
    source = only(card + "\nr1 vdd 0 1k\n").source
    assert source.dc == "3.5" and source.waveform == "pulse" and len(source.waveform_args) == 7
    assert solve_operating_point(flat_circuit_from_text(deck, "d.sp")).v("vdd") == pytest.approx(3.5)
    assert ng.operating_point(deck, ["vdd"])["vdd"] == pytest.approx(3.5, abs=1e-6)  # ngspice-39 op


@pytest.mark.parametrize("card", ["v1 a 0 dc=1 (2 3)", "v1 a 0 dc=1 ( pulse 2 3)", "v1 a 0 dc={x} (",
                                  "v1 a 0 dc=1\tpulse(0 1 1u)", "v1 a 0 dc=", "i1 a 0 dc=1 ac", "v1 a 0 dc=1 )"])
def test_odd_dc_assignments_never_crash(card):
    # untrusted input (house rule): whatever follows 'dc=' is read or reported, never a traceback
    netlist = parse(card + "\n")
    for element in netlist.top.elements:
        assert element.source is not None

