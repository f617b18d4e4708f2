"""Netlists in the shapes open-PDK tools write (layout extraction, schematic export,
characterisation templates), checked for findings a reviewer keeps: one cause, one
finding, nothing wrong.  Each netlist is our own, written in the shape those tools
write (from memory of magic / KLayout / xschem output); the expected readings are
ngspice-39's where a simulator decides (named beside each check), else common practice.
"""

from __future__ import annotations

from collections import Counter

from lintamp.api import check_text
from lintamp.circuit.design import elaborate
from lintamp.netlist.parser import parse_text


def rules_of(text: str) -> Counter:
    return Counter(f.rule for f in check_text(text, "deck.spice").findings)


def loud(text: str) -> list:
    return [f for f in check_text(text, "deck.spice").findings if f.severity.label != "info"]


# -- 1. layout-extractor wrapper cells ------------------------------------------------
# magic writes one .subckt per device geometry, named after the device and six random
# characters, with its pins in its own order (here: source, drain, body, gate)
WRAPPED_INVERTER = """\
* NGSPICE file created from inv.ext - technology: sky130A

.subckt sky130_fd_pr__nfet_01v8_lvt_3HBZVM a_n73_n100# a_15_n100# VSUBS a_n33_n188#
X0 a_15_n100# a_n33_n188# a_n73_n100# VSUBS sky130_fd_pr__nfet_01v8_lvt ad=0.29 pd=2.58 as=0.29 ps=2.58 w=1 l=0.15
.ends

.subckt sky130_fd_pr__pfet_01v8_hvt_6WH9DB a_n73_n100# a_15_n100# w_n211_n319# a_n33_n197#
X0 a_15_n100# a_n33_n197# a_n73_n100# w_n211_n319# sky130_fd_pr__pfet_01v8_hvt ad=0.29 pd=2.58 as=0.29 ps=2.58 w=1 l=0.15
.ends

.subckt inv vdd vss a y
XXM1 vss y vss a sky130_fd_pr__nfet_01v8_lvt_3HBZVM
XXM2 vdd y vdd a sky130_fd_pr__pfet_01v8_hvt_6WH9DB
.ends
"""


def test_extractor_wrapper_cell_is_the_cell_it_defines_not_a_pdk_device_by_prefix():
    # read as bare transistors (d g s b) the two wrappers would put both bodies on
    # the input 'a' (a false body-tie); read as the cells they are, the transistors
    # inside have their bodies on vss and vdd (common practice: a .subckt read is
    # the definition a simulator uses, ngspice-39 included)
    design = elaborate(parse_text(WRAPPED_INVERTER))
    inv = next(v for v in design.cells if v.name == "inv")
    assert [d.kind for d in inv.devices] == ["instance", "instance"]
    assert all(d.subcell is not None for d in inv.devices)
    assert not loud(WRAPPED_INVERTER)


def test_builtin_map_names_full_device_names_only():
    from lintamp.circuit.devicemap import DeviceMap
    devmap = DeviceMap()
    assert devmap.lookup("sky130_fd_pr__nfet_01v8").kind == "nmos"
    assert devmap.lookup("SKY130_FD_PR__PFET_01V8_HVT").kind == "pmos"
    # the extractor's suffix makes another name, which the map does not claim
    assert devmap.lookup("sky130_fd_pr__nfet_01v8_lvt_3HBZVM") is None
    assert all("*" not in e.pattern and "?" not in e.pattern for e in devmap.entries)


def test_project_device_entry_overrides_a_definition():
    from lintamp.circuit.devicemap import DeviceMap, spec_from_config
    spec = spec_from_config("sky130_fd_pr__*_3HBZVM", {"kind": "nmos", "pins": ["s", "d", "b", "g"]})
    design = elaborate(parse_text(WRAPPED_INVERTER), devmap=DeviceMap((spec,)))
    inv = next(v for v in design.cells if v.name == "inv")
    assert inv.devices[0].kind == "nmos" and inv.devices[0].net("g") == "a"


# -- 2. control scripts -----------------------------------------------------------------
# the file a testbench's .control block sources: ngspice commands, no circuit
SWEEP_SCRIPT = """\
* sweep commands sourced by the testbench's .control block
let vstart = 0
let vstop = 1.8
alter v1 dc = 0.9
alterparam rl = 2k
meas tran tdel trig v(in) val=0.9 rise=1 targ v(out) val=0.9 fall=1
let x = v(out)
plot v(out) v(in)
wrdata out.txt v(out)
meas tran t2 when v(out)=0.5
"""


def test_a_control_script_is_read_as_commands_not_as_circuit():
    # ngspice-39 runs these lines as commands ('meas' is a measurement, not a MOSFET
    # named 'meas'), so none is an element, a parse error or a duplicate name
    report = check_text(SWEEP_SCRIPT, "sweep.spice")
    assert [f.rule for f in report.findings] == []
    assert not list(parse_text(SWEEP_SCRIPT).top.elements)


def test_a_circuit_with_a_few_command_like_names_stays_a_circuit():
    deck = "t\nset1 a 0 c 0 sw\nrun1 a 0 1k\nV1 a 0 1\nVc c 0 1\n.model sw sw\n.end\n"
    assert len(list(parse_text(deck).top.elements)) == 4


# -- 3. cascades: one cause, one finding -------------------------------------------------
# an xschem testbench whose PDK lives on the author's machine (absolute and home paths)
TESTBENCH_WITHOUT_PDK = """\
** sch_path: /home/user/tb_amp.sch
**.subckt tb_amp
V1 vdd 0 1.8
V2 in 0 0.9
x1 vdd out in 0 amp
x2 vdd out2 in 0 amp
x3 out2 0 bias_cell
R1 out 0 {rload}
R2 out2 0 {rload}
.lib /nowhere/pdks/sky130A/libs.tech/combined/sky130.lib.spice tt
.include /nowhere/pdks/sky130A/libs.ref/sky130_fd_sc_hd/spice/sky130_fd_sc_hd.spice
.include /nowhere/pdks/sky130A/libs.tech/ngspice/corners/tt/specialized_cells.spice
.end
"""


def test_an_unread_pdk_library_is_one_warning_with_its_consequences():
    findings = check_text(TESTBENCH_WITHOUT_PDK, "tb.spice").findings
    assert [f.severity.label for f in findings if f.severity.label != "info"] == ["warning"]
    (cause,) = [f for f in findings if f.rule == "bad-include"]
    assert cause.subject == "/nowhere/pdks/sky130A" and cause.values["files"] == 3
    assert len(cause.related) == 2
    # 2 cells used 3 times, 1 parameter used twice
    assert (cause.values["undefined_cells"], cause.values["undefined_params"],
            cause.values["uses"]) == (2, 1, 5)
    consequences = Counter(f.rule for f in findings if f.severity.label == "info")
    assert consequences["unknown-cell"] == 1 and consequences["undefined-param"] == 1


def test_one_floating_body_is_one_finding_not_three():
    deck = "t\nV1 vdd 0 1.8\nV2 g 0 0.9\nR1 vdd d 10k\nM1 d g 0 bx nch\n.model nch nmos\n.end\n"
    assert [(f.rule, f.subject) for f in loud(deck)] == [("body-tie", "m1")]


def test_unknown_cells_are_one_finding_per_cell_and_name():
    deck = ("t\nV1 vdd 0 1.8\n" + "".join(f"X{i} vdd n{i} 0 amp\nR{i} n{i} 0 1k\n" for i in range(6))
            + ".end\n")
    (found,) = [f for f in loud(deck) if f.rule == "unknown-cell"]
    assert found.values["count"] == 6 and len(found.related) == 5


def test_a_net_on_one_instance_input_pin_alone_is_one_unbiased_gate():
    # a synthesised block whose flip-flop was lost: the mux select net touches only the
    # select pin, which inside is MOS gates; ngspice-39 would warn 'singular matrix'
    deck = """* block
.subckt inv A VGND VPWR Y
M0 Y A VGND VGND nch w=1u l=0.15u
M1 Y A VPWR VPWR pch w=2u l=0.15u
.ends
.model nch nmos level=1
.model pch pmos level=1
.subckt blk VGND VPWR out
X1 sel VGND VPWR out inv
.ends
"""
    assert [f.rule for f in loud(deck)] == ["unbiased-gate"]


# -- 4. layout dummies --------------------------------------------------------------------
# a schematic export with dummies drawn for matching (d = g = s on a rail or a net)
# and a dummy resistor and capacitor with both ends on one net
WITH_DUMMIES = """\
** sch_path: /home/user/mirror.sch
.subckt mirror vdd vss iref iout
XM1 iref iref vss vss sky130_fd_pr__nfet_01v8 L=1 W=2 nf=1 m=1
XM2 iout iref vss vss sky130_fd_pr__nfet_01v8 L=1 W=2 nf=1 m=1
XM3 vss vss vss vss sky130_fd_pr__nfet_01v8 L=1 W=2 nf=1 m=2
XM4 iref iref iref vss sky130_fd_pr__nfet_01v8 L=1 W=2 nf=1 m=1
XR1 vss vss vss sky130_fd_pr__res_high_po_0p35 L=8.4 mult=1 m=1
XC1 vdd vdd sky130_fd_pr__cap_mim_m3_1 W=10 L=10 m=1
.ends
"""


def test_layout_dummies_are_one_info_per_cell():
    findings = check_text(WITH_DUMMIES, "mirror.spice").findings
    shorted = [f for f in findings if f.rule == "shorted-device"]
    assert [(f.severity.label, f.values["count"]) for f in shorted] == [("info", 3)]


def test_a_plain_card_with_a_terminal_typed_twice_is_still_a_warning():
    deck = "t\nV1 vdd 0 1.8\nR1 vdd out 10k\nR3 out out 10k\nM4 n1 n1 n1 0 nch\nR4 vdd n1 1k\n" \
           ".model nch nmos\n.end\n"
    assert {(f.rule, f.subject) for f in loud(deck) if f.rule == "shorted-device"} == {
        ("shorted-device", "r3"), ("shorted-device", "m4")}


# -- 5. parasitic networks ------------------------------------------------------------------
def _extracted_cell(stubs: int, floating: int) -> str:
    """A cell as an RC extractor writes it: the wire of each net as a chain of
    resistors with coupling capacitors, dead-end stubs, floating fill metal."""
    lines = ["* extracted by an RC extractor", ".subckt inv_rc a y vdd vss"]
    lines.append("X0 y.t0 a.t0 vss.t0 vss.t0 sky130_fd_pr__nfet_01v8 w=1 l=0.15")
    lines.append("X1 y.t1 a.t1 vdd.t0 vdd.t0 sky130_fd_pr__pfet_01v8 w=2 l=0.15")
    n = 0
    for net in ("a", "y", "vdd", "vss"):
        lines.append(f"R{n} {net} {net}.t0 12.5"); n += 1
        lines.append(f"R{n} {net}.t0 {net}.t1 8.25"); n += 1
        for k in range(5):
            lines.append(f"C{n} {net}.t{k % 2} vss 0.0{k + 1}f"); n += 1
    for k in range(stubs):
        lines.append(f"R{n} y.t1 y.n{k} 3.{k}"); n += 1
    for k in range(floating):
        lines.append(f"C{n} m1_{100 + k}_n20# a.t0 0.02f"); n += 1
        lines.append(f"C{n} m1_{100 + k}_n20# y.t0 0.03f"); n += 1
    lines.append(".ends")
    return "\n".join(lines) + "\n"


def test_extraction_stubs_and_floating_metal_are_one_info_each_per_cell():
    findings = check_text(_extracted_cell(stubs=7, floating=4), "inv.pex.spice").findings
    assert not [f for f in findings if f.severity.label != "info"]
    by_rule = {f.rule: f for f in findings if f.rule in ("dangling-net", "no-dc-path")}
    assert by_rule["dangling-net"].values["count"] == 7
    assert by_rule["no-dc-path"].values["count"] == 4


def test_a_hand_drawn_floating_node_is_still_an_error():
    # Razavi-style series capacitors with nothing at DC in the middle (common practice)
    deck = "t\nV1 in 0 dc 0 ac 1\nC1 in n3 1p\nC2 n3 0 1p\n.end\n"
    assert [(f.rule, f.severity.label) for f in loud(deck)] == [("no-dc-path", "error")]


# magic writes the substrate node of each device wrapper as a port (VSUBS) that, in a
# PMOS wrapper, holds only the wrapper's capacitors to substrate; a parent cell that
# does not bring VSUBS out leaves it floating (ngspice-39 .op on such a cell: 'singular
# matrix: check node ...vsubs'), an extraction fact like floating metal
SUBSTRATE_NOT_BROUGHT_OUT = """\
* NGSPICE file created from pmos_load.ext - technology: sky130A

.subckt sky130_fd_pr__pfet_01v8_8RMJP2 a_n73_n100# a_15_n100# w_n211_n319# a_n33_n197# VSUBS
X0 a_15_n100# a_n33_n197# a_n73_n100# w_n211_n319# sky130_fd_pr__pfet_01v8 ad=0.29 pd=2.58 as=0.29 ps=2.58 w=1 l=0.15
C0 a_15_n100# VSUBS 0.11f
C1 a_n73_n100# VSUBS 0.11f
C2 w_n211_n319# VSUBS 0.21f
.ends

.subckt pmos_load VDDE D G
Xsky130_fd_pr__pfet_01v8_8RMJP2_0 VDDE D VDDE G VSUBS sky130_fd_pr__pfet_01v8_8RMJP2
Xsky130_fd_pr__pfet_01v8_8RMJP2_1 VDDE G VDDE G VSUBS sky130_fd_pr__pfet_01v8_8RMJP2
C0 G D 2.06f
.ends
"""


def test_substrate_node_a_cell_does_not_bring_out_is_one_info():
    found = check_text(SUBSTRATE_NOT_BROUGHT_OUT, "pmos_load.spice").findings
    assert not [f for f in found if f.severity.label != "info"]
    metal = [f for f in found if f.rule == "no-dc-path"]
    assert len(metal) == 1 and metal[0].subject == "floating metal"
    assert "substrate node" in " ".join(metal[0].explanation)


def test_a_substrate_node_that_reaches_a_gate_is_still_reported():
    # the same wrapper with VSUBS also on a transistor gate inside: not parasitic only
    deck = SUBSTRATE_NOT_BROUGHT_OUT.replace(
        "C2 w_n211_n319# VSUBS 0.21f",
        "C2 w_n211_n319# VSUBS 0.21f\nX1 a_15_n100# VSUBS a_n73_n100# w_n211_n319# "
        "sky130_fd_pr__pfet_01v8 w=1 l=0.15")
    deck += "vdd vdd 0 1.8\nx1 vdd out bias pmos_load\nr1 out 0 10k\nvb bias 0 1\n.op\n.end\n"
    assert [f.rule for f in loud(deck) if "vsubs" in f.message.lower()] == ["unbiased-gate"]


# KLayout's LVS extraction writes one cell per device variant (``pmos$1``) with a
# substrate terminal the device inside may not use; the parent ties it to the
# substrate net, which is the NMOS bodies (shape from memory of KLayout netlists)
KLAYOUT_DEVICE_CELLS = """\
* Extracted by KLayout

.SUBCKT TOP
X$1 4 3 5 1 pmos$1
X$2 3 2 1 nmos$1
X$3 4 2 1 rppd$1
.ENDS TOP

.SUBCKT pmos$1 1 2 3 4
M$1 1 2 3 3 sg13_lv_pmos L=0.15u W=0.5u
.ENDS pmos$1

.SUBCKT nmos$1 1 2 3
M$1 1 2 3 3 sg13_lv_nmos L=0.15u W=0.5u
.ENDS nmos$1

.SUBCKT rppd$1 1 2 3
R$1 1 2 rppd w=1u l=12u
.ENDS rppd$1
"""


def test_an_extractor_device_cells_spare_substrate_pin_is_an_info():
    found = [f for f in check_text(KLAYOUT_DEVICE_CELLS, "top.cir").findings
             if f.rule == "unused-port"]
    assert sorted((f.subject, f.severity.label) for f in found) == [("3", "info"), ("4", "info")]


def test_a_device_cells_unused_pin_on_a_signal_net_stays_a_warning():
    # the same pmos$1 cell with its spare pin tied to a net no body is on
    deck = KLAYOUT_DEVICE_CELLS.replace("X$1 4 3 5 1 pmos$1", "X$1 4 3 5 6 pmos$1")
    found = {f.subject: f.severity.label for f in check_text(deck, "top.cir").findings
             if f.rule == "unused-port"}
    assert found["4"] == "warning"


# a spare-cell CDL written in layout pin order (A Y VPB VNB VPWR VGND) against cell
# definitions in alphabetical order (A VGND VNB VPB VPWR Y): shape from memory of
# standard-cell CDL; SPICE connects by position (ngspice-39 manual, sec. 2.4.3)
SPARE_CELL = """\
* spare cell CDL
.subckt inv_2 A VGND VNB VPB VPWR Y
X0 VGND A Y VNB sky130_fd_pr__nfet_01v8 w=0.65 l=0.15
X1 VPWR A Y VPB sky130_fd_pr__pfet_01v8 w=1 l=0.15
.ends
.subckt spare VGND VNB VPB VPWR LO
Xinv_0 LO inv_0/Y VPB VNB VPWR VGND inv_2
Xinv_1 LO inv_1/Y VPB VNB VPWR VGND inv_2
.ends
"""


def test_an_instance_in_another_pin_order_is_one_finding_for_its_cell():
    found = loud(SPARE_CELL)
    assert [(f.rule, f.values["instances"]) for f in found] == [("swapped-pins", 2)]
    assert "vgnd on pin y" in " ".join(found[0].explanation)


def test_a_supply_on_a_body_pin_and_a_plain_short_are_no_swapped_pins():
    # VPWR on VPB is a body tie by choice; VGND on both VGND and VPWR is a short (the
    # port of its own name carries it), which is not an order
    ordered = SPARE_CELL.replace("LO inv_0/Y VPB VNB VPWR VGND", "LO VGND VNB VPWR VPWR inv_0/Y")
    ordered = ordered.replace("LO inv_1/Y VPB VNB VPWR VGND", "LO VGND VGND VGND VGND inv_1/Y")
    assert "swapped-pins" not in [f.rule for f in check_text(ordered, "deck.spice").findings]


# a standard-cell CDL that takes VDD and VSS as global by name, as LVS tools join
# power nets (shape from memory of OSU cell CDL); SPICE reads them local to the cell
TIE_CELL_LIBRARY = """\
* tie cells
.subckt tiehi Y
X0 a_19_14 a_19_14 VSS VSS nmos_3p3 w=17 l=6
X1 Y a_19_14 VDD VDD pmos_3p3 w=34 l=6
.ends
"""


def test_a_library_cells_rail_without_a_port_is_one_info():
    found = check_text(TIE_CELL_LIBRARY, "cells.spice").findings
    assert not [f for f in found if f.severity.label != "info"]
    assert [(f.rule, f.subject) for f in found if f.rule == "no-dc-path"] == [("no-dc-path", "vss")]


def test_a_used_cells_rail_without_a_port_is_still_reported():
    # instantiated by a testbench, the local vss really floats under ngspice-39
    deck = TIE_CELL_LIBRARY + "vdd vdd 0 3.3\nx1 out tiehi\nr1 out 0 1meg\n.op\n.end\n"
    assert "unbiased-gate" in [f.rule for f in loud(deck)]


# a project that vendors a PDK's standard-cell netlist (sky130_fd_sc_hvl, as the PDK
# publishes it: a level shifter whose PMOS source goes nowhere) checks the PDK's
# netlist, not its design; the same cell used by the project's deck stays loud
PDK_CELL = """\
* vendored cell library
.subckt sky130_fd_sc_hvl__lsbuf_1 A VGND VNB VPB VPWR X
X0 X A VGND VNB sky130_fd_pr__nfet_g5v0d10v5 w=1.5 l=0.5
X1 X A VPWR VPB sky130_fd_pr__pfet_g5v0d10v5 w=1.5 l=0.5
X2 X A a_1793_563# VPB sky130_fd_pr__pfet_g5v0d10v5 w=0.42 l=1
.ends
"""


def test_findings_inside_an_unused_pdk_standard_cell_are_infos():
    found = [f for f in check_text(PDK_CELL, "cells.spice").findings if f.rule == "dangling-net"]
    assert [f.severity.label for f in found] == ["info"]
    assert "standard-cell library" in " ".join(found[0].explanation)


def test_a_pdk_standard_cell_the_deck_uses_keeps_its_severity():
    deck = PDK_CELL + ("vdd vdd 0 5\nvin in 0 1\nx1 in 0 0 vdd vdd out sky130_fd_sc_hvl__lsbuf_1\n"
                       "r1 out 0 10k\n.op\n.end\n")
    assert "dangling-net" in [f.rule for f in loud(deck)]


# a post-layout cell whose ports the extraction did not join to its nets (magic with
# port labels that no net carries): the testbench's output net then touches only
# that pin; one cause, one finding (common practice)
UNJOINED_PORTS_TB = """\
* testbench of an extraction
vdd vdd 0 1.2
vin in 0 pulse(0 1.2 0 1n 1n 5n 10n)
x1 in out vdd 0 div
.subckt div clk_in clk_out vdd vss
M0 a_10_20# a_30_40# a_50_60# a_50_60# nmos_lv w=1u l=0.13u
R0 a_10_20# a_30_40# 1k
R1 a_30_40# a_50_60# 1k
.ends
.model nmos_lv nmos level=1
.tran 1n 100n
.end
"""


def test_a_net_open_only_through_an_unused_port_is_one_finding():
    found = loud(UNJOINED_PORTS_TB)
    assert [f.rule for f in found] == ["unused-port"]
    assert "out, on x1 pin clk_out, has no other terminal" in " ".join(found[0].explanation)


# a synthesised netlist whose standard cells are black-box entries for their abstract
# views (empty .subckts): a tie cell's unused output is not known to be an output
BLACK_BOX_NETLIST = """\
* Black-box entry subcircuit for conb_1 abstract view
.subckt conb_1 VGND VNB VPB VPWR HI LO
.ends
.subckt dig VGND VPWR en
X_1_ VGND VGND VPWR VPWR en _1_/LO conb_1
.ends
"""


def test_a_net_on_a_black_box_pin_alone_is_one_info():
    found = [f for f in check_text(BLACK_BOX_NETLIST, "dig.spice").findings
             if f.rule == "dangling-net"]
    assert [(f.severity.label, f.subject) for f in found] == [("info", "nets on black boxes")]


# xschem netlisting a block as the top level: the .subckt line is commented out and
# the pins are *.iopin lines; well pins that only bodies touch inside are still the
# block's pins, biased by whatever instantiates it (shape from memory of xschem output)
EXPORTED_WELL_PINS = """\
** sch_path: /foss/designs/op.sch
**.subckt op vo vdd vss vi psubs nwell
*.iopin vss
*.iopin vdd
*.opin vo
*.ipin vi
*.iopin psubs
*.iopin nwell
XM1 vo vi vss psubs sky130_fd_pr__nfet_01v8 L=1 W=2 nf=1
XM2 vo vo vdd nwell sky130_fd_pr__pfet_01v8 L=1 W=4 nf=1
**.ends
.end
"""


def test_an_exported_blocks_well_pins_are_not_floating_bodies():
    assert "body-tie" not in [f.rule for f in loud(EXPORTED_WELL_PINS)]
    # the same bodies on nets that are not pins float (common practice)
    bare = EXPORTED_WELL_PINS.replace("*.iopin psubs\n", "").replace("*.iopin nwell\n", "")
    assert "body-tie" in [f.rule for f in loud(bare)]


def test_ports_an_extractor_named_after_their_metal_are_an_info_when_unused():
    # magic writes a port named after the metal ('m2_1725_n286520#') where the parent's
    # wiring overlaps unlabelled metal of the cell (shape from memory of magic output)
    deck = """* NGSPICE file created from por.ext - technology: sky130A
.subckt delay in out vdd vss m2_1725_n286520# m2_1729_n290386#
X0 out in vss vss sky130_fd_pr__nfet_01v8 w=1 l=0.15
X1 out in vdd vdd sky130_fd_pr__pfet_01v8 w=2 l=0.15
.ends
"""
    found = [f for f in check_text(deck, "por.spice").findings if f.rule == "unused-port"]
    assert [f.severity.label for f in found] == ["info"]
    # a port with a designer's name stays a warning (common practice)
    named = deck.replace("m2_1729_n290386#", "en")
    found = [f for f in check_text(named, "por.spice").findings if f.rule == "unused-port"]
    assert [f.severity.label for f in found] == ["warning"]


# -- 6. include paths as ngspice reads them -------------------------------------------------
def test_home_path_expands_as_ngspice_does(tmp_path, monkeypatch):
    # ngspice-39 reads '.include ~/m.inc' from $HOME (checked); $NAME it does not expand
    from lintamp.api import check_file
    from lintamp.config import Config
    home = tmp_path / "home"
    (home / "lib").mkdir(parents=True)
    (home / "lib" / "m.inc").write_text(".subckt amp a b\nR1 a b 1k\n.ends\n")
    monkeypatch.setenv("HOME", str(home))
    (tmp_path / "project").mkdir()
    deck = tmp_path / "project" / "tb.spice"
    deck.write_text("t\nV1 a 0 1\nX1 a 0 amp\n.include ~/lib/m.inc\n.end\n")
    allowed = check_file(deck, Config(), include_paths=[home]).findings
    assert not [f for f in allowed if f.rule in ("missing-include", "bad-include", "unknown-cell")]
    outside = check_file(deck, Config()).findings
    # not read (outside the allowed folders): the same warning as an absolute path
    assert [(f.rule, f.severity.label) for f in outside if f.rule.endswith("include")] == [
        ("bad-include", "warning")]


def test_dollar_names_stay_placeholders_as_in_ngspice():
    deck = "t\nV1 a 0 1\n.include '$PDK_ROOT/sky130A/libs.tech/ngspice/sky130.lib.spice'\n.end\n"
    (found,) = [f for f in check_text(deck).findings if f.rule == "missing-include"]
    assert found.severity.label == "warning" and "placeholder" in found.message


# -- 7. templates ---------------------------------------------------------------------------
CHARACTERISATION_TEMPLATE = """\
* characterisation template: the flow writes one deck per condition from it
.include {DUT_path}
Vavdd avdd GND DC {Vavdd}
Vdvdd dvdd GND DC {Vdvdd}
Vavss avss GND DC {Vavss}
Vena ena GND DC [{ena}*{Vdvdd}]
Vtrim0 trim[0] GND DC [{trim[0]}*{Vdvdd}]
Vtrim1 trim[1] GND DC [{trim[1]}*{Vdvdd}]
XDUT avdd dvdd avss ena trim[0] trim[1] out dut
.tran 1n 1u
"""


def test_a_template_full_of_placeholders_is_one_info():
    findings = check_text(CHARACTERISATION_TEMPLATE, "template.spice").findings
    params = [f for f in findings if f.rule == "undefined-param"]
    assert [(f.severity.label, f.values["count"]) for f in params] == [("info", 6)]


# a characterisation template whose block under test comes from a placeholder include
# and whose instance line is a template directive: the top level is what the flow fills
TEMPLATE_WITH_DUT = """\
* temperature sensor template
.include '${netlist_path}'
vVDD VDD 0 1.8
*@verification+ VDD VSS en lc_out out ${design_name}
c0 lc_out 0 1f
.tran 1p 1u
.end
"""


def test_a_templates_top_level_is_not_judged_without_its_block():
    found = check_text(TEMPLATE_WITH_DUT, "tempsense.sp").findings
    assert not [f for f in found if f.severity.label != "info"]
    # the same deck with its block written out (no placeholder) is judged: the open
    # capacitor node is the finding (ngspice-39: singular matrix)
    plain = TEMPLATE_WITH_DUT.replace(".include '${netlist_path}'\n", "")
    assert "no-dc-path" in [f.rule for f in loud(plain)]


# -- 8. severities that do not flip -------------------------------------------------------------
def test_undefined_param_severity_does_not_depend_on_an_unrelated_param():
    deck = "t\nV1 a 0 1\nR1 a b rval\nR2 b 0 {rtop}\n.end\n"
    with_param = deck.replace("t\n", "t\n.param unrelated=3\n", 1)
    def severities(text):
        return sorted((f.subject, f.severity.label) for f in check_text(text).findings
                      if f.rule == "undefined-param")
    assert severities(deck) == severities(with_param)


# -- 9. a testbench that powers nothing ---------------------------------------------------------
def test_testbench_that_powers_nothing_is_a_warning():
    deck = (".subckt amp in out vdd vss\nR1 vdd out 10k\nM1 out in vss vss nch\n.ends\n"
            "V1 vin 0 dc 0.9\nX1 vin out vdd 0 amp\nVDDA vdda 0 1.8\n.model nch nmos\n.end\n")
    found = [(f.rule, f.subject, f.severity.label) for f in check_text("t\n" + deck).findings
             if f.rule in ("undriven-supply", "dangling-net") and f.severity.label != "info"]
    assert found == [("undriven-supply", "vdd", "warning")]
    powered = deck.replace("VDDA vdda", "VDDA vdd")
    assert not [f for f in check_text("t\n" + powered).findings if f.rule == "undriven-supply"]


# -- reading as ngspice-39 reads ------------------------------------------------------------
def test_a_node_inside_an_instance_named_from_outside_is_that_node():
    # ngspice-39: 'rp x1.mid probe 1' reads the divider's midpoint (v(probe) = 1 V)
    deck = ("t\n.subckt dv a\nr1 a mid 1k\nr2 mid 0 1k\n.ends\nv1 in 0 2\nx1 in dv\n"
            "rp x1.mid probe 1\nrl probe 0 1meg\n.end\n")
    assert not [f for f in loud(deck) if f.rule in ("no-dc-path", "dangling-net")]


def test_cells_after_end_are_read():
    # ngspice-39 reads a .subckt written after .end (checked in a batch run)
    deck = "t\nv1 a 0 1\nx1 a 0 rr\n.op\n.end\n.subckt rr p n\nr1 p n 1k\n.ends\n"
    assert not [f for f in loud(deck) if f.rule == "unknown-cell"]


def test_dollar_comment_after_a_card():
    # ngspice-39 takes ' $d g s b' after a blank as a comment (xschem writes pin notes so)
    deck = "t\nV1 vdd 0 1.8\nx1 d g 0 0 sky130_fd_pr__nfet_01v8 w=1 l=0.15 $d g s b\nR1 vdd d 1k\nV2 g 0 1\n.end\n"
    (x1,) = [d for d in elaborate(parse_text(deck)).top.devices if d.name == "x1"]
    assert x1.kind == "nmos" and list(x1.nets) == ["d", "g", "0", "0"]


def test_unused_ports_of_one_cell_are_one_finding():
    # a tiny-tapeout style wrapper with spare pins (common practice: the template
    # lists every pad whether the design uses it or not)
    deck = ".subckt wrap ui_in[0] ui_in[1] ui_in[2] uo_out[0] vdd vss\nR1 vdd uo_out[0] 1k\n.ends\n"
    found = [f for f in check_text("t\n" + deck).findings if f.rule == "unused-port"]
    assert [(f.subject, f.values["ports"]) for f in found] == [("ui_in[0]", 4)]


# an xschem export of a block's schematic: its own pins are '*.ipin' / '*.iopin' lines
EXPORTED_SCHEMATIC = """\
** sch_path: /home/user/buf.sch
**.subckt buf vin vout vdd vss
*.ipin vin
*.opin vout
*.iopin vdd
*.iopin vss
XM1 vout vin vss vss sky130_fd_pr__nfet_01v8 L=0.15 W=1 nf=1 m=1
XM2 vout vin vdd vdd sky130_fd_pr__pfet_01v8 L=0.15 W=2 nf=1 m=1
I1 vdd vout 1u
**.ends
.end
"""


def test_a_schematic_exports_own_pins_are_ports():
    # the gate net vin is a pin (driven by whatever instantiates the block): no
    # unbiased-gate, no-dc-path or undriven-supply for it (xschem writes *.ipin so)
    assert not loud(EXPORTED_SCHEMATIC)


# an xschem export whose inverter symbol was not found: the exporter writes a note
# instead of the instance, and the nets the instance would join are open
EXPORT_WITH_MISSING_SYMBOL = """\
** sch_path: /home/user/ring.sch
.subckt ring vdd vss out
XM1 net1 bias vdd vdd sky130_fd_pr__pfet_01v8 L=0.15 W=1 nf=1 m=1
XM2 net2 bias vdd vdd sky130_fd_pr__pfet_01v8 L=0.15 W=1 nf=1 m=1
XM3 bias bias vdd vdd sky130_fd_pr__pfet_01v8 L=0.15 W=1 nf=1 m=1
I1 bias vss 10u
C1 net3 vss 10f m=1
C2 out vss 10f m=1
*  x1 -  ring_inverter  IS MISSING !!!!
*  x2 -  ring_inverter  IS MISSING !!!!
.ends
"""


def test_instances_an_export_left_out_are_one_finding_with_the_open_nets_attached():
    findings = check_text(EXPORT_WITH_MISSING_SYMBOL, "ring.spice").findings
    assert [(f.rule, f.values.get("count")) for f in findings if f.severity.label != "info"] == [
        ("unknown-cell", 2)]
    (opened,) = [f for f in findings if f.rule == "dangling-net"]
    assert opened.severity.label == "info" and set(opened.nets) == {"net1", "net2", "net3"}


# -- a layout extraction with no pin labels --------------------------------------------
# KLayout writes '.SUBCKT name' with no ports when the layout carries no pin labels
# (common practice: LVS then has nothing to compare); every net inside floats.  That is
# one cause: one finding for the cell, not one unbiased-gate, dangling-net and body-tie
# per net.
PORTLESS_BIAS = """\
* Extracted by KLayout with an LVS runset

.SUBCKT bias_core
R$1 11 13 rhigh w=1u l=12u
M$3 10 6 2 1 lv_nmos L=1u W=1u
M$5 6 6 2 1 lv_nmos L=1u W=1u
M$7 6 4 2 1 lv_nmos L=0.15u W=0.5u
M$9 6 8 11 9 lv_pmos L=1u W=4u
M$11 13 8 8 9 lv_pmos L=1u W=2u
M$15 13 14 10 9 lv_pmos L=0.15u W=0.5u
.ENDS bias_core
"""


def test_a_cell_with_no_ports_is_one_warning_for_the_cell():
    report = check_text(PORTLESS_BIAS, "bias_core.cir")
    noisy = [f for f in report.findings if f.severity.label != "info"]
    assert [(f.rule, f.subject) for f in noisy] == [("no-dc-path", "bias_core")]
    assert noisy[0].values["gates"] > 0 and noisy[0].values["islands"] >= 1


def test_a_cell_with_ports_still_gets_its_unbiased_gate():
    # the same cell with its pins labelled, but one gate net (4) left to nothing: that
    # gate is still an unbiased-gate error (ngspice-39 .op: 'singular matrix: check node 4')
    text = PORTLESS_BIAS.replace(".SUBCKT bias_core", ".SUBCKT bias_core 2 9 13 8")
    rules = rules_of(text)
    assert rules["unbiased-gate"] >= 1
    assert not [f for f in check_text(text, "b.cir").findings
                if f.rule == "no-dc-path" and f.subject == "bias_core"]


# -- a standard-cell library's unused supply and well pins ----------------------------
# sky130-style standard cells keep VGND VNB VPB VPWR on every cell; a tie or diode cell
# leaves some unused by design (common practice in open PDK cell libraries)
CELL_LIBRARY = """\
* a cell library in CDL
.subckt lib__conb_1 HI LO VGND VNB VPB VPWR
R0 VGND LO 0.01 short
R1 HI VPWR 0.01 short
.ends
.subckt lib__diode_2 DIODE VGND VNB VPB VPWR
D0 VNB DIODE ndiode area=0.43
.ends
.subckt lib__buf_1 A X VGND VNB VPB VPWR SPARE
M0 X A VGND VNB nshort w=0.42 l=0.15
M1 X A VPWR VPB pshort w=0.64 l=0.15
.ends
"""


def test_a_library_cells_unused_power_pins_are_infos_and_a_signal_pin_stays_a_warning():
    found = [f for f in check_text(CELL_LIBRARY, "lib.cdl").findings if f.rule == "unused-port"]
    by_cell = {f.cell: f.severity.label for f in found}
    assert by_cell["lib__conb_1"] == "info" and by_cell["lib__diode_2"] == "info"
    assert by_cell["lib__buf_1"] == "warning"  # SPARE is no supply or well pin


def test_an_instantiated_cells_unused_supply_pin_stays_a_warning():
    # in a deck that uses the cell, its ignored supply is what the rule is for
    deck = ("* deck\n" + CELL_LIBRARY.split("\n", 1)[1]
            + "x1 hi lo 0 0 vdd vdd lib__conb_1\nv1 vdd 0 1.8\n.end\n")
    found = [f for f in check_text(deck, "deck.sp").findings
             if f.rule == "unused-port" and f.cell == "lib__conb_1"]
    assert [f.severity.label for f in found] == ["warning"]

def test_a_dummy_is_no_load_or_diode_in_stage_recognition():
    # Razavi, Design of Analog CMOS ICs, 2nd ed., sec. 5.1: the diode-connected device of
    # a mirror has its gate on its drain and its source on the rail; a dummy (drain,
    # gate and source on one net) carries no current and is neither load nor diode
    from lintamp.api import flat_circuit_from_text
    from lintamp.engine.stages import recognise_stages
    deck = ("t\n.model nch nmos\nV1 vdd 0 1.8\nI1 vdd ref 10u\nM1 ref ref 0 0 nch w=1u l=1u\n"
            "M2 out ref 0 0 nch w=1u l=1u\nR1 vdd out 10k\nM3 ref ref ref 0 nch w=1u l=1u\n.end\n")
    roles = {s.device: s.role for s in recognise_stages(flat_circuit_from_text(deck))}
    assert "diode" in roles["m1"]
    assert "diode" not in roles.get("m3", "") and "load" not in roles.get("m3", "")


def test_gf180_capacitors_and_diodes_are_devices_by_their_full_names():
    # gf180mcu's MIM and MOS capacitors and its diodes, as its xschem exports instantiate
    # them (names from the PDK's model library, from memory); their .subckt lives in the
    # PDK's model files, which a design repository does not hold
    text = ("* gf180 block\n.subckt blk vout net1 vdd vss\n"
            "XC1 vout net1 cap_mim_2f0fF c_width=25e-6 c_length=20e-6\n"
            "XC2 vdd vss cap_nmos_06v0 c_width=3000 c_length=3000\n"
            "XD1 vss vout diode_nd2ps_03v3 area=1e-12\n.ends\n")
    design = elaborate(parse_text(text))
    view = next(v for v in design.cells if v.cell.name == "blk")
    assert {d.name: d.kind for d in view.devices} == {"xc1": "capacitor", "xc2": "capacitor",
                                                      "xd1": "diode"}
    assert not [f for f in check_text(text, "blk.spice").findings if f.rule == "unknown-cell"]


def test_a_templates_code_lines_are_one_info():
    # the shape of a characterisation flow's template (Mako-style '<% %>' code between
    # SPICE cards; common practice in generator flows): one info for the deck, no errors
    text = ("* load step template\n.include ${model_file}\nxldo vin vout ldoinst\n"
            "<% for i in range(3): %>\n<% endfor %>\n.tran 1n 1u\n.end\n")
    found = check_text(text, "ldo_template.sp").findings
    parse = [f for f in found if f.rule == "parse-error"]
    assert [(f.severity.label, f.values.get("count")) for f in parse] == [("info", 2)]


def test_a_pdk_library_absent_for_many_testbenches_is_one_finding(tmp_path):
    # xschem testbenches each include the PDK's model library by its install path
    # (common practice); on a machine without the PDK that is one cause for the run
    from lintamp.api import check_paths
    from lintamp.config import Config
    (tmp_path / ".git").mkdir()
    for k in range(3):
        (tmp_path / f"tb{k}.spice").write_text(
            f"** tb{k}\n.lib /opt/no-such-pdk/libs.tech/ngspice/models.lib.spice tt\n"
            "v1 a 0 1\nr1 a 0 1k\n.end\n")
    report, _ = check_paths(sorted(tmp_path.glob("*.spice")), Config(root=tmp_path))
    found = [f for f in report.findings if f.rule == "bad-include"]
    assert len(found) == 1 and found[0].values["decks"] == 3
    assert len(found[0].related) >= 2


def test_a_symbolic_link_stored_as_text_is_an_empty_deck_with_one_info(tmp_path):
    # git writes a link as a file holding the target's path when links are off; ngspice-39
    # reads that one line as the title of an empty deck (checked: no error, no circuit)
    from lintamp.api import check_file
    from lintamp.config import Config
    stored = tmp_path / "dig.out.spice"
    stored.write_bytes(b"xspice/dig.out.spice")
    found = check_file(stored, Config()).findings
    assert [(f.rule, f.severity.label) for f in found] == [("unsupported-syntax", "info")]


def test_an_included_symbolic_link_stored_as_text_is_a_missing_include(tmp_path):
    # included, the same file is a card to ngspice-39 ('Error on line 1', checked): the
    # include does not bring in the target, which is the finding, at the include line
    from lintamp.api import check_file
    from lintamp.config import Config
    (tmp_path / "dig.out.spice").write_bytes(b"xspice/dig.out.spice")
    deck = tmp_path / "tb.spice"
    deck.write_text("* tb\n.include dig.out.spice\nv1 a 0 1\nr1 a 0 1k\n.op\n.end\n")
    found = check_file(deck, Config()).findings
    assert [(f.rule, f.location.line) for f in found] == [("missing-include", 2)]


def test_a_hint_names_a_slip_not_another_block():
    # 'brownout_dig' is a block of its own beside 'brownout_ana', not a misspelling of
    # it; 'brownout_anna' is one edit from it (common practice for suggestions)
    deck = ("* top\n.subckt brownout_ana a b\nr1 a b 1k\n.ends\n"
            "x1 n1 0 brownout_dig\nx2 n1 0 brownout_anna\nv1 n1 0 1\n.op\n.end\n")
    messages = {f.subject: f.message for f in check_text(deck, "top.spice").findings
                if f.rule == "unknown-cell"}
    joined = " ".join(messages.values())
    assert "did you mean 'brownout_ana'" in joined
    assert joined.count("did you mean") == 1


def test_a_kicad_schematic_netlist_as_esim_writes_it_is_read_for_what_it_is(tmp_path):
    # eSim (KiCad EESchema netlist): U cards are its plot and model placeholders and
    # subcircuits come from .sub files beside it, which its converter includes in
    # <name>.cir.out (shape from memory of eSim projects); ngspice-39 reads U as an RC line
    from lintamp.api import check_file
    from lintamp.config import Config
    (tmp_path / "amp.cir").write_text(
        "* /home/user/eSim-Workspace/amp/amp.cir\n\n"
        "* EESchema Netlist Version 1.1 (Spice format) creation date: Mon Jan  6 10:00:00 2025\n\n"
        "* Sheet Name: /\nv1 in GND sine(0 0.1 1k)\nR1 in Net-_X1-Pad2_ 10k\n"
        "X1 GND Net-_X1-Pad2_ out vcc vee opamp\nR2 out Net-_X1-Pad2_ 100k\nU1 out plot_v1\n.end\n")
    (tmp_path / "opamp.sub").write_text("* Subcircuit opamp\n.subckt opamp p n o vp vn\n"
                                       "e1 o 0 p n 1e5\n.ends opamp\n")
    (tmp_path / "amp.cir.out").write_text("* amp\n.include opamp.sub\n.end\n")
    found = check_file(tmp_path / "amp.cir", Config()).findings
    assert sorted((f.rule, f.severity.label) for f in found
                  if f.rule in ("parse-error", "unknown-cell")) == [("parse-error", "info"),
                                                                    ("unknown-cell", "info")]
    # the same cards without the schematic header are errors (a deck ngspice refuses)
    (tmp_path / "plain.cir").write_text((tmp_path / "amp.cir").read_text().replace("EESchema", "Other"))
    found = check_file(tmp_path / "plain.cir", Config()).findings
    assert {f.severity.label for f in found if f.rule in ("parse-error", "unknown-cell")} == {"error"}


def test_a_library_parameter_is_not_offered_itself_as_a_hint():
    # a vendor's cell library takes 'speed' from the deck that includes it; the
    # parameter being defined ('speed1') is no spelling of it (common practice)
    lib = "* logic library\n.subckt inv1 a y vcc vgnd speed1={speed}\nr1 a y {speed1}\n.ends\n"
    found = [f for f in check_text(lib, "logic.lib").findings if f.rule == "undefined-param"]
    assert [f.severity.label for f in found] == ["info"]
    assert "did you mean" not in found[0].message
