"""Inline netlists, one behaviour each, for the DC-path analysis and the connectivity rules.

Scenarios are our own.  Expected outcomes follow the DC-graph reasoning of
analog-knowledge.md section 4 (capacitor open, inductor short, gate draws no current:
common practice) unless a comment names another source.
"""

from __future__ import annotations

import json

import pytest

from lintamp.connectivity import dc_paths
from lintamp.api import check_text
from lintamp.cli import main

MODELS = ".model nch nmos\n.model pch pmos\n.model qn npn\n.model jn njf\n"


def found(text: str, rule: str | None = None) -> set[tuple[str, str]]:
    report = check_text("* test\n" + text + MODELS + ".end\n", "t.sp")
    return {(f.rule, f.subject) for f in report.findings if rule is None or f.rule == rule}


def findings(text: str, rule: str):
    report = check_text("* test\n" + text + MODELS + ".end\n", "t.sp")
    return [f for f in report.findings if f.rule == rule]


ISLAND_RULES = ("no-dc-path", "unbiased-gate", "current-cutset")


def islands_of(text):
    return {p for p in found(text) if p[0] in ISLAND_RULES}


# -- the analysis -------------------------------------------------------------------------
def test_device_plan_mos_joins_channel_and_body_not_gate():
    from lintamp.api import load_design
    from lintamp.netlist.parser import parse_text
    design = load_design(parse_text("* t\nM1 d g s b nch\n" + MODELS, "t.sp"))
    dev = design.top.devices[0]
    plan = dc_paths.device_plan(dev)
    assert plan.groups == ((0, 2, 3),) and plan.controls == (1,)


def test_inductor_and_resistor_conduct_capacitor_does_not():
    assert islands_of("V1 a 0 1\nL1 a b 1u\nR1 b c 1k\nC1 c d 1p\nR2 d e 1k\n") == \
        {("no-dc-path", "d")}


def test_port_counts_as_biased_from_outside():
    # inside the cell 'in' reaches only a gate, but it is a port: reported nowhere
    # in the cell, and at the parent where the port really is driven by a source
    text = ("V1 vdd 0 1\nV2 x 0 0.5\nX1 x vdd amp\n"
            ".subckt amp in vdd\nM1 vdd in 0 0 nch\n.ends\n")
    assert islands_of(text) == set()


def test_instance_port_reaching_only_a_gate_makes_an_unbiased_gate_in_the_parent():
    text = ("V1 vdd 0 1\nV2 sig 0 0\nC1 sig x 1p\nX1 x vdd amp\n"
            ".subckt amp in vdd\nM1 vdd in 0 0 nch\n.ends\n")
    got = findings(text, "unbiased-gate")
    assert [(f.subject, f.cell) for f in got] == [("x", "")]
    assert any("inside X1" in r.note or "X1" in r.note for r in got[0].related) or \
        "X1" in " ".join(got[0].explanation)


def test_instance_conducts_between_ports_it_joins_inside():
    text = ("V1 a 0 1\nX1 a b wire\nC1 b c 1p\nR1 b c 1k\n"
            ".subckt wire p q\nR1 p q 1\n.ends\n")
    assert islands_of(text) == set()


def test_unknown_subcircuit_is_not_judged():
    assert islands_of("V1 a 0 1\nC1 a b 1p\nX1 b c mystery_cell\n") == set()


def test_global_driven_in_deck_is_defined_undriven_is_not():
    driven = ".global vcc\nV1 vcc 0 5\nX1 o cell\n.subckt cell o\nR1 vcc o 1k\n.ends\n"
    assert islands_of(driven) == set()
    undriven = ".global vcc\nV1 a 0 5\nR9 a 0 1k\nX1 o cell\n.subckt cell o\nR1 vcc o 1k\n.ends\n"
    got = findings(undriven, "no-dc-path")
    assert len(got) == 1 and got[0].subject == "o"
    assert any("global vcc" in step for step in got[0].explanation)


def test_globals_of_a_library_count_as_defined():
    lib = ".global vcc\n.subckt cell o\nR1 vcc o 1k\nC1 o 0 1p\n.ends\n"
    assert islands_of(lib) == set()


def test_cell_with_unreadable_card_is_not_judged():
    # 'R2' lacks its second node: lintamp cannot know what it connects
    text = "V1 a 0 1\nC1 a b 1p\nR2 b\n"
    assert islands_of(text) == set() and found(text, "dangling-net") == set()


def test_floating_mos_body_is_not_a_no_dc_path():
    # the bulk junctions conduct; ngspice-39 runs this deck without a singular matrix
    assert islands_of("V1 vdd 0 5\nR1 vdd d 1k\nM1 d vdd 0 bb nch\n") == set()


def test_summary_is_computed_once_per_cell_not_per_instance():
    body = "".join(f"X{i} a{i} 0 leaf\nV{i} a{i} 0 1\n" for i in range(50))
    text = body + ".subckt leaf p n\nR1 p mid 1k\nC1 mid n 1p\n.ends\n"
    assert islands_of(text) == set()


# -- no-dc-path ----------------------------------------------------------------------------
def test_series_capacitors_middle_node():
    assert islands_of("V1 in 0 1\nC1 in n3 1p\nC2 n3 0 1p\n") == {("no-dc-path", "n3")}


def test_one_finding_per_island_listing_its_nets():
    got = findings("V1 in 0 1\nC1 in a 1p\nR1 a b 1k\nR2 b c 1k\nC2 c 0 1p\n", "no-dc-path")
    assert len(got) == 1 and set(got[0].nets) == {"a", "b", "c"}
    assert got[0].location.line == 3  # the island's first element, C1


def test_island_inside_a_subcircuit_is_reported_once_with_its_instances():
    text = ("V1 a 0 1\nX1 a inner\nX2 a inner\n"
            ".subckt inner p\nC1 p m 1p\nC2 m 0 1p\n.ends\n")
    got = findings(text, "no-dc-path")
    assert len(got) == 1 and got[0].cell == "inner" and set(got[0].instances) == {"x1", "x2"}


def test_uninstantiated_library_cell_is_checked():
    assert islands_of(".subckt lonely p\nC1 p m 1p\nC2 m 0 1p\n.ends\n") == \
        {("no-dc-path", "m")}


def test_vcvs_control_input_alone_floats():
    # an E element's control pins draw no current (MNA: no stamp on those rows)
    assert islands_of("V1 a 0 1\nE1 o 0 c 0 2\nR1 o 0 1k\nC1 a c 1p\n") == \
        {("no-dc-path", "c")}


# -- unbiased-gate -------------------------------------------------------------------------
def test_mirror_gate_without_diode_connection_message():
    text = ("V1 vdd 0 1.8\nI0 vdd nd 10u\nM0 nd nb 0 0 nch\nM1 o1 nb 0 0 nch\n"
            "M2 o2 nb 0 0 nch\nR1 vdd o1 1k\nR2 vdd o2 1k\n")
    (f,) = findings(text, "unbiased-gate")
    assert f.subject == "nb" and set(f.elements) == {"m0", "m1", "m2"}
    assert "gates of M0, M1, M2" in f.message


def test_floating_bjt_base_is_a_warning_because_the_simulator_settles_it():
    # ngspice-39 .op: base at ~0.39 V, IC ~ 0.4 nA, no error [analog-knowledge 4.2, NG39]
    (f,) = findings("V1 vcc 0 5\nR1 vcc c 1k\nC1 0 b 1n\nQ1 c b 0 qn\n", "unbiased-gate")
    assert f.subject == "b" and f.severity.label == "warning"


def test_base_fed_by_a_current_source_is_biased():
    assert islands_of("V1 vcc 0 5\nR1 vcc c 1k\nI1 vcc b 5u\nQ1 c b 0 qn\n") == set()


def test_diode_connected_bjt_fed_by_current_is_biased():
    assert islands_of("V1 vcc 0 5\nI1 vcc b 5u\nQ1 b b 0 qn\nQ2 c b 0 qn\nR1 vcc c 1k\n") == set()


def test_floating_jfet_gate():
    got = found("V1 vdd 0 5\nR1 vdd d 1k\nC1 g 0 1p\nJ1 d g 0 jn\n", "unbiased-gate")
    assert got == {("unbiased-gate", "g")}


# -- current-cutset ------------------------------------------------------------------------
def test_current_source_into_capacitor():
    assert islands_of("I1 0 a 1u\nC1 a 0 1p\n") == {("current-cutset", "a")}


def test_current_source_into_gate_is_a_cutset():
    assert islands_of("V1 vdd 0 1\nI1 vdd g 1u\nM1 vdd g 0 0 nch\n") == {("current-cutset", "g")}


def test_current_source_inside_a_floating_island_is_no_dc_path():
    # both ends of I1 inside the island: nothing feeds the island from outside
    assert islands_of("V1 a 0 1\nC1 a x 1p\nI1 x y 1u\nR1 x y 1k\n") == {("no-dc-path", "x")}


def test_transconductor_into_capacitor_with_feedback_is_not_judged():
    # a G output that its own control input observes acts as a conductance (OTA follower)
    assert islands_of("V1 inp 0 1\nG1 0 out inp out 1m\nC1 out 0 1p\n") == set()
    assert islands_of("V1 inp 0 1\nG1 0 out inp 0 1m\nC1 out 0 1p\n") == \
        {("current-cutset", "out")}


# -- source-loop ---------------------------------------------------------------------------
def test_parallel_supplies_name_both():
    (f,) = findings("V1 vdd 0 1.8\nV2 vdd 0 1.8\nR1 vdd 0 1k\n", "source-loop")
    assert f.subject == "v2" and f.elements == ("v2", "v1")


def test_loop_of_three_in_order():
    (f,) = findings("V1 a 0 1\nL1 a b 1u\nE1 b 0 a 0 1\n", "source-loop")
    assert f.elements == ("e1", "v1", "l1") or f.elements == ("e1", "l1", "v1")
    assert f.values["loop_branches"] == 3


def test_ground_names_are_one_node():
    # ngspice-39 treats gnd as 0: 'instance v4 is a shorted VSRC' (our run)
    assert found("V4 gnd 0 0\nR1 gnd 0 1k\n", "source-loop") == {("source-loop", "v4")}


def test_zero_ohm_resistor_from_a_parameter():
    assert found(".param rs=0\nV1 a 0 1\nR1 a 0 {rs}\n", "source-loop") == {("source-loop", "r1")}


def test_resistor_breaks_the_loop():
    assert found("V1 a 0 1\nR1 a b 1m\nV2 b 0 1\n", "source-loop") == set()


def test_loop_through_a_subcircuit_is_reported_in_the_parent():
    got = findings("V1 p 0 1\nX1 p 0 tie\n.subckt tie a b\nL1 a b 1u\n.ends\n", "source-loop")
    assert [(f.subject, f.cell) for f in got] == [("x1", "")]


# -- shorted-device ------------------------------------------------------------------------
def test_shorted_voltage_source_is_an_error():
    (f,) = findings("V1 a a 1\nR1 a 0 1k\n", "shorted-device")
    assert f.severity.label == "error"


def test_mos_capacitor_and_diode_connections_are_not_defects():
    text = ("V1 vdd 0 1\nR1 vdd g 1k\nM1 0 g 0 0 nch\nI1 vdd d 1u\nM2 d d 0 0 nch\n"
            "I2 vdd b 1u\nQ1 b b 0 qn\n")
    assert found(text, "shorted-device") == set()


def test_mos_with_gate_drain_and_source_on_one_net_is_shorted():
    assert found("V1 a 0 1\nM1 a a a 0 nch\n", "shorted-device") == {("shorted-device", "m1")}


# -- body-tie -------------------------------------------------------------------------------
def test_body_forward_biased_on_an_intermediate_rail():
    text = "V1 vdd 0 3\nV2 mid 0 1.5\nM1 vdd g 0 mid nch\nR1 vdd g 1k\n"
    (f,) = findings(text, "body-tie")
    assert f.values["forward_v"] == 1.5


def test_body_on_its_own_source_is_fine():
    assert found("V1 vdd 0 3\nR1 vdd s 1k\nM1 vdd vdd s s nch\n", "body-tie") == set()


def test_rail_value_inherited_through_every_instance():
    text = ("V1 vdd 0 1.8\nX1 vdd cell\nX2 vdd cell\n"
            ".subckt cell sup\nR1 sup o 1k\nM1 o o 0 sup nch\n.ends\n")
    assert found(text, "body-tie") == {("body-tie", "m1")}


def test_disagreeing_instances_give_no_value():
    text = ("V1 vdd 0 1.8\nX1 vdd cell\nX2 0 cell\n"
            ".subckt cell sup\nR1 sup o 1k\nM1 o o 0 sup nch\n.ends\n")
    assert found(text, "body-tie") == set()


def test_library_cell_shared_nmos_pmos_body():
    text = ".subckt c a b w\nM1 a b 0 w nch\nM2 a b w w2 pch\nM3 a b 0 w pch\n.ends\n"
    # m1/m3 share body port w; m2's body w2 touches nothing else (floats)
    assert found(text, "body-tie") == {("body-tie", "m1"), ("body-tie", "m2")}


def test_names_alone_are_no_evidence():
    # a library cell whose body port is called vdd: no voltage known, nothing reported
    assert found(".subckt c a vdd vss\nM1 a a vss vdd nch\n.ends\n", "body-tie") == set()


# -- dangling-net and unused-port ----------------------------------------------------------
def test_dangling_skips_ports_globals_and_voltage_outputs():
    text = (".global vcc\nV1 vcc 0 1\nR1 vcc 0 1k\nE1 probe 0 vcc 0 1\nR2 vcc x 1k\n"
            ".subckt c p q\nR1 p q 1k\n.ends\n")
    assert found(text, "dangling-net") == {("dangling-net", "x")}


def test_unused_port():
    text = ".subckt c a b unused\nR1 a b 1k\n.ends\n"
    assert found(text, "unused-port") == {("unused-port", "unused")}


# PSPICE 'OPTIONAL:' ports (from memory of the PSPICE reference; ngspice-39 runs the 13
# corpus decks of imr__ngspice/examples/digital/digital_devices that use them): an
# instance may leave them out, last first, and a cell need not use them
OPTIONAL_CELL = (".subckt buf a y\n+ optional: dpwr=$g_dpwr dgnd=$g_dgnd\n+ params: td=1n\n"
                 "R1 a y 1k\n.ends\n")


def test_optional_ports_may_be_left_out():
    from lintamp.netlist.parser import parse_text
    cell = parse_text("* t\n" + OPTIONAL_CELL).top.cells["buf"]
    assert cell.ports == ("a", "y", "dpwr", "dgnd")
    assert cell.optional_ports == {"dpwr": "$g_dpwr", "dgnd": "$g_dgnd"}
    assert cell.defaults == {"td": "1n"}
    for nets in ("in out", "in out vcc", "in out vcc gnd"):
        text = OPTIONAL_CELL + f"X1 {nets} buf\nV1 in 0 1\nR9 out 0 1k\n"
        assert not findings(text, "pin-mismatch"), nets
        assert not findings(text, "unused-port"), nets
    for nets in ("in", "in out vcc gnd extra"):
        text = OPTIONAL_CELL + f"X1 {nets} buf\nV1 in 0 1\n"
        assert [f.values for f in findings(text, "pin-mismatch")] == [
            {"nets_given": len(nets.split()), "ports": 4}], nets


def test_optional_ports_of_a_real_digital_library():
    from pathlib import Path

    from lintamp.api import check_file
    corpus = Path(__file__).resolve().parent.parent.parent / "shared" / "corpus"
    deck = corpus / "imr__ngspice" / "examples" / "digital" / "digital_devices" / "behav-tristate.cir"
    if not deck.is_file():
        pytest.skip(f"corpus not found at {corpus} (checked out beside the repo as ../shared/corpus)")
    rules = {f.rule for f in check_file(deck).findings}
    assert not rules & {"pin-mismatch", "unused-port", "no-dc-path"}


def test_digital_gates_are_not_analog_cards():
    # PSPICE digital primitive syntax (from memory): type(size), power, ground, nodes,
    # timing and I/O models; a SPICE3 U card is a uniform RC line with a .model
    # (ngspice-39 manual, URC): that one is still checked
    digital = ("U1 AND(2) $G_DPWR $G_DGND a b y d0_gate io_std mntymxdly={dly} io_level=0\n"
               "UADD1 ADD dig_pn 0 in_1 in_2 carry_in sum_out carry_out dmod IC=FALSE,FALSE\n"
               "R1 a 0 1k\nR2 b 0 1k\nR3 y 0 1k\n")
    assert not findings(digital, "unknown-model")
    assert not findings(digital, "undefined-param")
    urc = "U1 1 2 0 urcmod l=50u\nR1 1 0 1k\nR2 2 0 1k\n"
    assert [f.subject for f in findings(urc, "unknown-model")] == ["u1"]


# -- the JSON report carries every field of INTERFACE.md -----------------------------------
INTERFACE_FIELDS = {"rule", "severity", "path", "line", "column", "cell", "instances", "subject",
                    "nets", "elements", "message", "explanation", "fix", "values", "related",
                    "fingerprint"}


def test_json_findings_have_every_interface_field(tmp_path, capsys):
    from pathlib import Path
    fixtures = Path(__file__).resolve().parent / "fixtures" / "rules"
    paths = [str(p / "bad.sp") for p in sorted(fixtures.iterdir()) if (p / "bad.sp").is_file()]
    out = tmp_path / "r.json"
    main(["check", "--no-config", "--no-cache", "--format", "json", "-o", str(out), *paths])
    data = json.loads(out.read_text())
    assert data["schema"] == 1 and data["findings"]
    rules = set()
    for f in data["findings"]:
        assert INTERFACE_FIELDS <= set(f), f
        assert f["explanation"] and f["fix"] and f["message"]
        for r in f["related"]:
            assert {"path", "line", "note"} <= set(r)
        rules.add(f["rule"])
    assert {"dangling-net", "no-dc-path", "unbiased-gate", "source-loop", "current-cutset",
            "shorted-device", "body-tie", "unused-port"} <= rules


def test_dangling_net_observed_by_the_deck_is_not_reported():
    # a testbench output that only the simulation commands look at (common practice)
    deck = ("ring\nvdd vdd 0 1.8\nrl vdd x 1k\nm1 x x 0 0 nch\nm2 out x 0 0 nch\n"
            ".model nch nmos\n")
    rules = lambda text: [f.subject for f in check_text(text, "t.sp").findings
                          if f.rule == "dangling-net"]
    assert rules(deck) == ["out"]
    assert rules(deck + ".control\nrun\nplot v(out)\n.endc\n") == []
    assert rules(deck + ".print tran v(out)\n") == []
    assert rules(deck + ".save out\n") == []


def test_rf_port_sources_close_no_zero_impedance_loop():
    # ngspice-39: a V source with 'portnum' has z0 (default 50 ohm) in series in every
    # analysis ('V1 in 0 dc 1 portnum 1 z0 50' into 50 ohm: op gives V(in) = 0.5 V);
    # the two-port deck of the ngspice examples (sp2.cir) runs without a singular matrix
    deck = ("V1 in 0 dc 0 ac 1 portnum 1 z0 50\nC1 in 0 318.3n\nL1 in out 1.592m\n"
            "C2 out 0 318.3n\nV2 out 0 dc 0 ac 0 portnum 2\n")
    assert found(deck, "source-loop") == set()
    # the same loop with plain sources is one
    plain = deck.replace(" portnum 1 z0 50", "").replace(" portnum 2", "")
    assert found(plain, "source-loop") != set()


def test_rf_port_source_sets_no_rail():
    # a port source has z0 in series (ngspice-39, as above): the voltage of its net
    # depends on what loads it, so it is no rail; with a plain source the same body
    # is on the highest rail of the deck
    deck = "V1 vdd 0 1.8\nV2 p 0 dc 1.8 ac 1 portnum 1 z0 50\nR1 vdd d 1k\nM1 d g 0 p nch\nR2 g 0 1k\n"
    assert found(deck, "body-tie") == set()
    assert found(deck.replace(" ac 1 portnum 1 z0 50", ""), "body-tie") == {("body-tie", "m1")}


def test_body_tie_looks_each_body_net_up_once(monkeypatch):
    # a body net shared by thousands of devices (an extracted block: no sources, one
    # substrate net) must not be scanned once per device: the structural checks look
    # each body net's terminals up once (common practice: per-net work done per net)
    import sys
    from pathlib import Path

    from lintamp.circuit.design import NetTerminals
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "bench"))
    from shapes import shared_body  # bench generator: a scenario of our own

    looked: list[str] = []
    real = NetTerminals.__getitem__

    def counting(self, net):
        looked.append(net)
        return real(self, net)

    monkeypatch.setattr(NetTerminals, "__getitem__", counting)
    report = check_text(shared_body(400), "shared.sp")
    body = [f for f in report.findings if f.rule == "body-tie"]
    # 'sub' touches nothing but bodies: one finding, at its first transistor
    assert [f.subject for f in body] == ["m0"] and "floats" in body[0].message
    assert looked.count("sub") <= 3  # body-tie once; other rules may look it up too


def test_duplicate_names_in_a_big_cell_are_found_past_the_hash_check():
    # SPICE names are unique within a cell, case-insensitively (ngspice-39 refuses a deck
    # with 'device already exists'; spice-syntax.md section 2): a cell of 150,000
    # resistors is checked by hashes first, and a repeated name still comes out
    rows = "".join(f"r{i} n{i} n{i + 1} 1k\n" for i in range(150_000))
    deck = "v1 n0 0 1\n" + rows + "R77 n5 0 2k\n"
    hits = findings(deck, "duplicate-name")
    assert [f.subject for f in hits] == ["r77"] and hits[0].location.line == 150_003
    assert findings("v1 n0 0 1\n" + rows, "duplicate-name") == []
    # both copies inside the runs of plain cards (hashed as the parser read them), one
    # spelt in capitals
    inside = rows.replace("r90000 n90000", "R12 n90000")
    hits = findings("v1 n0 0 1\n" + inside, "duplicate-name")
    assert [(f.subject, f.location.line) for f in hits] == [("r12", 90_003)]
